#!/usr/bin/env python3
"""Speed and optimum of widthwise's geometric-program solver against scipy, on the same programs.

`cargo bench --bench geometric -- --json FILE` builds the elmore method's programs for a set of gates
(the programs the method last solves: its default delay target's and the least worst ratio's),
times `optimize::geometric::solve` on each in-process and writes them, with our optimum, to FILE.
This script runs that bench (or reads FILE given with --json), then solves each program with
scipy.optimize.minimize in log variables y = ln x, where every posynomial is a log-sum-exp of affine
functions (convex): the objective and all the constraints as one vector-valued constraint with its
Jacobian, analytic gradients, the same box and the same start. Each solve is timed in-process (best
of --rounds), and the script prints per program both optima, their relative difference and the
times, then the largest difference and the median and range of scipy's time over ours.

The method is SLSQP by default: on these programs trust-constr (--method trust-constr, same
functions and Jacobians) took about 40 times longer at the median and agreed with our optimum only
to 5e-7, where SLSQP agrees to 1e-10.

Usage: python3 benches/scipy_geometric.py [--json FILE] [--rounds N] [--method SLSQP|trust-constr]
"""

import json
import os
import statistics
import subprocess
import sys
import tempfile
import time

try:
    import numpy as np
    import scipy
    from scipy.optimize import minimize, NonlinearConstraint
except ImportError:
    print("scipy is not installed: pip install scipy", file=sys.stderr)
    sys.exit(3)

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


class LogSums:
    """Posynomials in log variables: value and Jacobian of every ln(sum_t exp(b_t + a_t . y))."""

    def __init__(self, posynomials, n):
        rows, groups, offsets = [], [], []
        for index, poly in enumerate(posynomials):
            offsets.append(len(rows))
            for term in poly["terms"]:
                row = np.zeros(n + 1)
                row[n] = np.log(term["coefficient"])
                for k, e in term["exponents"]:
                    row[k] += e
                rows.append(row)
                groups.append(index)
        table = np.array(rows)
        self.a, self.b = table[:, :n], table[:, n]
        self.groups = np.array(groups)
        self.offsets = np.array(offsets)
        self.count = len(posynomials)

    def value(self, y):
        z = self.a @ y + self.b
        top = np.maximum.reduceat(z, self.offsets)
        return top + np.log(np.add.reduceat(np.exp(z - top[self.groups]), self.offsets))

    def jacobian(self, y):
        z = self.a @ y + self.b
        top = np.maximum.reduceat(z, self.offsets)
        w = np.exp(z - top[self.groups])
        w /= np.add.reduceat(w, self.offsets)[self.groups]
        weighted = self.a * w[:, None]
        return np.add.reduceat(weighted, self.offsets, axis=0)


def solve(program, method):
    """scipy's optimum of one program: (objective, worst constraint, success, seconds)."""
    n = program["variables"]
    objective = LogSums([program["objective"]], n)
    constraints = LogSums(program["constraints"] + program["hard"], n)
    bounds = list(zip(np.log(program["lower"]), np.log(program["upper"])))
    y0 = np.log(program["start"])
    began = time.perf_counter()
    if method == "SLSQP":
        result = minimize(lambda y: objective.value(y)[0], y0, jac=lambda y: objective.jacobian(y)[0],
                          method="SLSQP", bounds=bounds,
                          constraints=[{"type": "ineq", "fun": lambda y: -constraints.value(y),
                                        "jac": lambda y: -constraints.jacobian(y)}],
                          options={"ftol": 1e-13, "maxiter": 2000})
    else:
        nonlinear = NonlinearConstraint(constraints.value, -np.inf, 0.0, jac=constraints.jacobian)
        result = minimize(lambda y: objective.value(y)[0], y0, jac=lambda y: objective.jacobian(y)[0],
                          method="trust-constr", bounds=scipy.optimize.Bounds(*zip(*bounds)),
                          constraints=[nonlinear], options={"gtol": 1e-10, "xtol": 1e-12, "maxiter": 5000})
    seconds = time.perf_counter() - began
    worst = float(np.exp(constraints.value(result.x).max()))
    return float(np.exp(objective.value(result.x)[0])), worst, bool(result.success), seconds


def main():
    arguments = sys.argv[1:]
    option = lambda name, default: arguments[arguments.index(name) + 1] if name in arguments else default
    rounds = int(option("--rounds", "5"))
    method = option("--method", "SLSQP")
    path = option("--json", None)
    made = path is None
    if made:
        path = os.path.join(tempfile.gettempdir(), f"widthwise-geometric-{os.getpid()}.json")
        bench = subprocess.run(["cargo", "bench", "--bench", "geometric", "--", "--json", path], cwd=ROOT,
                               capture_output=True, text=True)
        if bench.returncode != 0:
            print(bench.stdout + bench.stderr, file=sys.stderr)
            sys.exit(1)
    with open(path) as file:
        solved = json.load(file)
    if made:
        os.remove(path)
    print(f"scipy {scipy.__version__} {method} (log variables) against optimize::geometric::solve, "
          f"{len(solved)} programs")
    print(f"{'program':<64} {'ours':>12} {'scipy':>12} {'rel. diff':>9} {'ours us':>9} {'scipy us':>10} {'ratio':>7}")
    largest, ratios = 0.0, []
    for entry in solved:
        runs = [solve(entry["program"], method) for _ in range(rounds)]
        theirs, worst, success, _ = runs[0]
        seconds = min(r[3] for r in runs)
        ours = entry["objective"]
        difference = abs(ours - theirs) / abs(theirs)
        largest = max(largest, difference)
        ratio = seconds / entry["seconds"]
        ratios.append(ratio)
        flag = "" if success and worst <= 1 + 1e-6 else f"  (scipy: success {success}, worst {worst:.3g})"
        print(f"{entry['name']:<64} {ours:>12.8g} {theirs:>12.8g} {difference:>9.1e} "
              f"{entry['seconds'] * 1e6:>9.1f} {seconds * 1e6:>10.0f} {ratio:>6.1f}x{flag}")
    print(f"largest relative difference in the optimum: {largest:.2e}")
    print(f"scipy's solve / ours: median {statistics.median(ratios):.1f}x, "
          f"range {min(ratios):.1f}x to {max(ratios):.1f}x")


if __name__ == "__main__":
    main()
