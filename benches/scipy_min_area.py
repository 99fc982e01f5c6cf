#!/usr/bin/env python3
"""Speed and optimum of widthwise's min-area closed form against scipy's SLSQP, a general solver.

The solver side is tests/reference/scipy_min_area.py (the same code the reference test runs): it
finds every conducting path from the netlist and minimises the sum of W/L with every path at most the
target. Here each gate is sized by `widthwise size --method min-area --format json`, both networks
are solved by SLSQP (best of 3), and the script reports per gate both totals, their relative
difference and the times, then the largest difference and the speed ratios. The in-process widthwise
time per gate (microseconds) comes from `cargo bench --bench throughput -- scipy`, which the script
runs and which sizes the same gates; the speed ratio is scipy's solve over that.

Usage: python3 benches/scipy_min_area.py [--widthwise PATH]   (default: target/release/widthwise)
"""

import importlib.util
import json
import os
import statistics
import subprocess
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
GATES = [
    "nand3", "nor3", "aoi21", "aoi22", "aoi221", "aoi32", "oai21", "oai22", "oai321",
    "!(a & (b | c))", "!(a & b | c & (d | e))", "!((a | b) & (c | d) & e)", "!(a & (b | c & (d | e)))",
    "!((a | b & c) & (d | e & (f | g)))", "!(a & b | a & c)",
]


def load_solver():
    path = os.path.join(ROOT, "tests", "reference", "scipy_min_area.py")
    spec = importlib.util.spec_from_file_location("scipy_min_area", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)  # exits 3 with a message where scipy is missing
    return module


def in_process_times():
    """Seconds per gate of in-process min-area sizing, from `cargo bench --bench throughput -- scipy`."""
    try:
        result = subprocess.run(["cargo", "bench", "--bench", "throughput", "--", "scipy"], cwd=ROOT,
                                capture_output=True, text=True, check=True)
    except (OSError, subprocess.CalledProcessError) as error:
        print(f"in-process times not measured ({error}); speed ratio left out", file=sys.stderr)
        return {}
    times = {}
    for line in result.stdout.splitlines():
        name, _, value = line.strip().rpartition(" ")
        if value == "us" and not name.startswith("median"):
            name, _, number = name.strip().rpartition(" ")
            times[name.strip()] = float(number) * 1e-6
    return times


def main():
    arguments = sys.argv[1:]
    binary = arguments[arguments.index("--widthwise") + 1] if "--widthwise" in arguments else os.path.join(
        ROOT, "target", "release", "widthwise")
    solver = load_solver()
    import scipy

    def command(args):
        began = time.perf_counter()
        result = subprocess.run([binary] + args, capture_output=True, text=True, check=True)
        return result.stdout, time.perf_counter() - began

    in_process = in_process_times()
    print(f"scipy {scipy.__version__} SLSQP against {binary}")
    print(f"{'gate':<40} {'widthwise W/L':>14} {'scipy W/L':>12} {'rel. diff':>10} {'widthwise ms':>13} {'scipy ms':>10}")
    worst, ratios = 0.0, []
    for text in GATES:
        args = ["size", text, "--method", "min-area", "--format", "json"]
        gate = json.loads(command(args)[0])
        ours = sum(n["total_w_over_l"] for n in gate["networks"])
        theirs, solve_time = 0.0, 0.0
        for network in gate["networks"]:
            runs = [solver.solve(gate, network) for _ in range(3)]
            theirs += runs[0]["scipy_area"]
            solve_time += min(r["seconds"] for r in runs)
        difference = abs(ours - theirs) / theirs
        worst = max(worst, difference)
        command_time = statistics.median(command(args)[1] for _ in range(5))
        if text in in_process:
            ratios.append(solve_time / in_process[text])
        print(f"{text:<40} {ours:>14.6f} {theirs:>12.6f} {difference:>10.2e} {command_time * 1e3:>13.3f} {solve_time * 1e3:>10.3f}")
    print(f"largest relative difference in optimum area: {worst:.2e}")
    if ratios:
        print(f"scipy solve / widthwise in-process sizing (both methods and every figure, from the bench): "
              f"median {statistics.median(ratios):.0f}x, range {min(ratios):.0f}x to {max(ratios):.0f}x")


if __name__ == "__main__":
    main()
