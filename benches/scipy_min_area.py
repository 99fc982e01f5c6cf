#!/usr/bin/env python3
"""Solve widthwise's min-area problems with a general-purpose solver (scipy SLSQP) and compare.

For each gate and each network: variables are the W/L of the network's devices; minimise their sum
subject to every conducting path's resistance being at most the network's target, where a device of
W/L x has resistance unit / x (unit 1 for NMOS, the mobility ratio for PMOS; resistances in units of
R). The paths come from `widthwise paths --format json`, the targets and widthwise's own optimum from
`widthwise size --method min-area --format json`.

Reports, per gate: widthwise's total W/L, scipy's, their relative difference, and the time each took
(widthwise: the whole command, process start included; scipy: the solve alone, best of 3), then the
largest difference and the speed ratios over all gates. The in-process widthwise time per gate (a
few microseconds) comes from `cargo bench --bench throughput -- scipy`, which sizes the same gates.

Usage: python3 benches/scipy_min_area.py [--quick] [--check] [--widthwise PATH]
  --quick      a few gates only (what the test suite runs)
  --check      exit 1 if any relative area difference exceeds 1e-5 or a solve fails
  --widthwise  the binary (default: target/release/widthwise, else target/debug/widthwise)

Where scipy is not installed it says so and exits 0, or 1 with WIDTHWISE_REQUIRE_SCIPY=1.
"""

import json
import os
import statistics
import subprocess
import sys
import time

GATES = [
    "nand3",
    "nor3",
    "aoi21",
    "aoi22",
    "aoi221",
    "aoi32",
    "oai21",
    "oai22",
    "oai321",
    "!(a & (b | c))",
    "!(a & b | c & (d | e))",
    "!((a | b) & (c | d) & e)",
    "!(a & (b | c & (d | e)))",
    "!((a | b & c) & (d | e & (f | g)))",
    "!(a & b | a & c)",
]
QUICK = ["aoi21", "!(a & (b | c))", "!((a | b & c) & (d | e & (f | g)))"]
TOLERANCE = 1e-5


def find_binary(arguments):
    if "--widthwise" in arguments:
        return arguments[arguments.index("--widthwise") + 1]
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    for profile in ("release", "debug"):
        path = os.path.join(root, "target", profile, "widthwise")
        if os.path.exists(path):
            return path
    sys.exit("no widthwise binary: run `cargo build --release` first, or pass --widthwise PATH")


def run_json(binary, arguments):
    result = subprocess.run([binary] + arguments, capture_output=True, text=True, check=True)
    return json.loads(result.stdout)


def timed_command(binary, arguments, repeats=5):
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        subprocess.run([binary] + arguments, capture_output=True, check=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def solve_network(optimize, numpy, devices, unit, target, paths, start):
    """Minimise sum(x) subject to sum(unit / x_k for k in path) <= target for every path."""
    index = {name: k for k, name in enumerate(devices)}
    members = [[index[name] for name in path] for path in paths]

    def constraint(x):
        return numpy.array([target - sum(unit / x[k] for k in path) for path in members])

    def constraint_jacobian(x):
        jacobian = numpy.zeros((len(members), len(x)))
        for row, path in enumerate(members):
            for k in path:
                jacobian[row, k] += unit / x[k] ** 2
        return jacobian

    return optimize.minimize(
        lambda x: float(numpy.sum(x)),
        numpy.array(start, dtype=float),
        jac=lambda x: numpy.ones_like(x),
        method="SLSQP",
        bounds=[(1e-6, None)] * len(devices),
        constraints=[{"type": "ineq", "fun": constraint, "jac": constraint_jacobian}],
        options={"ftol": 1e-12, "maxiter": 2000},
    )


def violation(devices, unit, target, paths, x):
    """The largest relative excess of a path's resistance over the target (0 when feasible)."""
    index = {name: k for k, name in enumerate(devices)}
    worst = max(sum(unit / x[index[name]] for name in path) for path in paths)
    return max(0.0, worst / target - 1.0)


def main():
    arguments = sys.argv[1:]
    try:
        import numpy
        from scipy import optimize
    except ImportError:
        message = "scipy is not installed here (python3 -m pip install scipy): min-area comparison skipped"
        print(message, file=sys.stderr)
        sys.exit(1 if os.environ.get("WIDTHWISE_REQUIRE_SCIPY") == "1" else 0)
    import scipy

    binary = find_binary(arguments)
    gates = QUICK if "--quick" in arguments else GATES
    print(f"scipy {scipy.__version__} SLSQP against {binary}")
    print(f"{'gate':<40} {'widthwise W/L':>14} {'scipy W/L':>12} {'rel. diff':>10} {'widthwise s':>12} {'scipy s':>10}")
    worst = 0.0
    ratios = []
    net_ratios = []
    notes = []
    failed = False
    startup = timed_command(binary, ["--version"], repeats=9)
    for text in gates:
        sized = run_json(binary, ["size", text, "--method", "min-area", "--format", "json"])
        listing = run_json(binary, ["paths", text, "--method", "min-area", "--format", "json", "--limit", "10000"])
        # Start from the longest-path sizes: feasible, and not the answer.
        start = run_json(binary, ["size", text, "--method", "longest-path", "--format", "json"])
        ours_total = 0.0
        theirs_total = 0.0
        solve_time = 0.0
        for network, paths in zip(sized["networks"], listing["networks"]):
            kind = network["network"]
            devices = [t["name"] for t in sized["transistors"] if t["network"] == kind]
            begin = {t["name"]: t["w_over_l"] for t in start["transistors"]}
            unit = 1.0 if kind == "pull-down" else sized["mobility_ratio"]
            if int(paths["path_count"]) != len(paths["paths"]):
                sys.exit(f"{text}: more paths than listed")
            solves = []
            for _ in range(3):
                began = time.perf_counter()
                result = solve_network(
                    optimize,
                    numpy,
                    devices,
                    unit,
                    network["target_resistance"],
                    [p["devices"] for p in paths["paths"]],
                    [begin[name] for name in devices],
                )
                solves.append(time.perf_counter() - began)
            excess = violation(devices, unit, network["target_resistance"], [p["devices"] for p in paths["paths"]], result.x)
            if excess > 1e-7:
                print(f"{text} {kind}: SLSQP's answer breaks a path constraint by {excess:.1e} ({result.message})",
                      file=sys.stderr)
                failed = True
            elif not result.success:
                notes.append(f"{text} {kind}: SLSQP stopped with '{result.message}' at a feasible point")
            solve_time += min(solves)
            ours_total += network["total_w_over_l"]
            theirs_total += float(numpy.sum(result.x))
        difference = abs(ours_total - theirs_total) / theirs_total
        worst = max(worst, difference)
        command_time = timed_command(binary, ["size", text, "--method", "min-area", "--format", "json"])
        ratios.append(solve_time / command_time)
        net_ratios.append(solve_time / max(command_time - startup, 1e-6))
        print(
            f"{text:<40} {ours_total:>14.6f} {theirs_total:>12.6f} {difference:>10.2e} "
            f"{command_time:>12.5f} {solve_time:>10.5f}"
        )
    for note in notes:
        print(note)
    print(f"largest relative difference in optimum area: {worst:.2e}")
    print(
        f"scipy solve time / widthwise command time (process start included): median "
        f"{statistics.median(ratios):.2f}x, range {min(ratios):.2f}x to {max(ratios):.2f}x"
    )
    print(
        f"scipy solve time / widthwise command time less process start ({startup * 1e3:.2f} ms, "
        f"`widthwise --version`): median {statistics.median(net_ratios):.1f}x (coarse: the difference is small)"
    )
    if "--check" in arguments and (failed or worst > TOLERANCE):
        sys.exit(f"check failed: largest relative difference {worst:.2e} (tolerance {TOLERANCE:g})")


if __name__ == "__main__":
    main()
