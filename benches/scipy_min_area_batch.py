#!/usr/bin/env python3
"""Min-area over a library, as a user runs it, against scipy's SLSQP on the same problems.

A seeded generator (the same 40 expressions on every run) draws random series-parallel pull-down
networks of 6 to 9 devices, each device on its own input, each gate the complement of its network.
Each gate is sized once by `widthwise size EXPR --method min-area --format json` (not timed) and both
its networks are solved by SLSQP through tests/reference/scipy_min_area.py's solver (the reference
test's code: every path found from the netlist, the sum of W/L minimised with every path at most its
target), timed in-process, best of --rounds. Then a library of the 40 expressions repeated
--repeat times (10,000 gates by default) is sized by `widthwise batch LIB --format csv -o FILE` as a
process, whole, timed by wall clock and by the CPU time of the process (user + system, from
os.wait4), best of --rounds. The script prints SLSQP's mean time per gate, widthwise's per gate (CPU
and wall) and their ratios, and checks that every gate's total W/L in the CSV equals SLSQP's
optimum (largest relative difference).

Usage: python3 benches/scipy_min_area_batch.py [--widthwise PATH] [--repeat N] [--rounds N]
       (default binary: target/release/widthwise)
"""

import csv
import json
import os
import random
import statistics
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from scipy_min_area import load_solver  # noqa: E402  (the reference test's solver, loaded once)

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
COUNT = 40
SEED = 20261202


def network(rng, devices, names, series):
    """A series-parallel network of `devices` devices as expression text (series = AND)."""
    if devices == 1:
        return names.pop(0)
    parts = rng.randint(2, min(3, devices))
    cuts = sorted(rng.sample(range(1, devices), parts - 1))
    sizes = [b - a for a, b in zip([0] + cuts, cuts + [devices])]
    inner = [network(rng, size, names, not series) for size in sizes]
    inner = [f"({text})" if size > 1 else text for text, size in zip(inner, sizes)]
    return (" & " if series else " | ").join(inner)


def expressions():
    rng = random.Random(SEED)
    found = []
    while len(found) < COUNT:
        devices = rng.randint(6, 9)
        names = [chr(ord("a") + i) for i in range(devices)]
        text = f"!({network(rng, devices, names, rng.random() < 0.5)})"
        if text not in found:
            found.append(text)
    return found


def library(texts, repeat):
    lines = ['[defaults]\nmethod = "min-area"\n']
    for copy in range(repeat):
        for index, text in enumerate(texts):
            lines.append(f'[[gate]]\nname = "g{index}_{copy}"\nexpr = "{text}"\n')
    return "\n".join(lines)


def run_process(args):
    """Wall seconds and CPU seconds (user + system) of one run of the command."""
    began = time.perf_counter()
    process = subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(process.pid, 0)
    wall = time.perf_counter() - began
    if status != 0:
        sys.exit(f"{' '.join(args)} failed: {process.stderr.read().decode()}")
    return wall, usage.ru_utime + usage.ru_stime


def main():
    arguments = sys.argv[1:]
    option = lambda name, default: arguments[arguments.index(name) + 1] if name in arguments else default
    binary = option("--widthwise", os.path.join(ROOT, "target", "release", "widthwise"))
    repeat = int(option("--repeat", "250"))
    rounds = int(option("--rounds", "3"))
    solver = load_solver()
    import scipy

    texts = expressions()
    slsqp, optimum = [], []
    worst_feasibility = 0.0
    for text in texts:
        gate = json.loads(subprocess.run([binary, "size", text, "--method", "min-area", "--format", "json"],
                                         capture_output=True, text=True, check=True).stdout)
        total, seconds = 0.0, 0.0
        for net in gate["networks"]:
            runs = [solver.solve(gate, net) for _ in range(rounds)]
            if not runs[0]["scipy_success"]:
                print(f"  SLSQP did not converge on {text} {net['network']}")
            worst_feasibility = max(worst_feasibility, runs[0]["scipy_worst_over_target"])
            total += runs[0]["scipy_area"]
            seconds += min(r["seconds"] for r in runs)
        slsqp.append(seconds)
        optimum.append(total)

    with tempfile.TemporaryDirectory() as directory:
        path = os.path.join(directory, "library.toml")
        output = os.path.join(directory, "out.csv")
        with open(path, "w") as file:
            file.write(library(texts, repeat))
        runs = [run_process([binary, "batch", path, "--format", "csv", "-o", output]) for _ in range(rounds)]
        with open(output) as file:
            rows = list(csv.DictReader(file))
    gates = COUNT * repeat
    assert len(rows) == gates, f"{len(rows)} rows for {gates} gates"
    # Gate g<index>_<copy>, written as its variant g<index>_<copy>_x1.
    theirs = lambda row: optimum[int(row["gate"].split("_")[0][1:])]
    largest = max(abs(float(row["total_w_over_l"]) - theirs(row)) / theirs(row) for row in rows)
    wall = min(r[0] for r in runs) / gates
    cpu = min(r[1] for r in runs) / gates
    mean = statistics.mean(slsqp)
    print(f"scipy {scipy.__version__} SLSQP against {binary} batch --format csv")
    print(f"{COUNT} random series-parallel gates of 6 to 9 devices per network (seed {SEED}), "
          f"library of {gates} gates ({repeat} copies)")
    print(f"largest relative difference in total W/L, batch CSV against SLSQP: {largest:.2e} "
          f"(SLSQP's worst path over target {worst_feasibility:.9f})")
    print(f"SLSQP, both networks, in-process: mean {mean * 1e3:.3f} ms per gate "
          f"(median {statistics.median(slsqp) * 1e3:.3f}, range {min(slsqp) * 1e3:.3f} to {max(slsqp) * 1e3:.3f})")
    print(f"widthwise batch, whole process: {cpu * 1e6:.2f} us CPU per gate, {wall * 1e6:.2f} us wall per gate "
          f"(best of {rounds})")
    print(f"ratio (SLSQP mean per gate / widthwise per gate): {mean / cpu:.0f}x by CPU time, "
          f"{mean / wall:.0f}x by wall time")


if __name__ == "__main__":
    main()
