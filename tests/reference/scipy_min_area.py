#!/usr/bin/env python3
"""Independent check of widthwise's min-area optimum with scipy's SLSQP.

Reads widthwise JSON (one gate object, or an array of them) on standard input. For each network it
finds every conducting path itself, by walking the netlist (drain and source nodes of the
transistors) from the output to the rail, then minimises the sum of W/L subject to every path's
resistance being at most the network's target, with scipy.optimize.minimize(method="SLSQP").
Prints one JSON object per network: gate, network, scipy_area, paths, seconds.

Exit status 3 when scipy is not installed (the caller decides whether that is a failure).
"""

import json
import sys
import time

try:
    import numpy as np
    from scipy.optimize import minimize
except ImportError:
    print("scipy is not installed: pip install scipy", file=sys.stderr)
    sys.exit(3)


def paths(devices, output, rail):
    """Every simple path from output to rail; each is a list of device indices."""
    edges = {}
    for index, device in enumerate(devices):
        for a, b in ((device["drain"], device["source"]), (device["source"], device["drain"])):
            edges.setdefault(a, []).append((index, b))
    found = []

    def walk(node, visited, used):
        if node == rail:
            found.append(list(used))
            return
        for index, other in edges.get(node, []):
            if other not in visited:
                visited.add(other)
                used.append(index)
                walk(other, visited, used)
                used.pop()
                visited.remove(other)

    walk(output, {output}, [])
    return found


def solve(gate, network):
    kind = network["network"]
    devices = [t for t in gate["transistors"] if t["network"] == kind]
    rail = "vss" if kind == "pull-down" else "vdd"
    unit = 1.0 if kind == "pull-down" else gate["mobility_ratio"]
    target = network["target_resistance"]
    conducting = paths(devices, gate["output"], rail)
    count = len(devices)
    longest = max(len(p) for p in conducting)
    start = np.full(count, unit * longest / target)  # feasible: every path at or under target

    constraints = [
        {
            "type": "ineq",
            "fun": (lambda w, p=p: target - sum(unit / w[i] for i in p)),
            "jac": (lambda w, p=p: np.array([unit / w[i] ** 2 if i in p else 0.0 for i in range(count)])),
        }
        for p in conducting
    ]
    began = time.perf_counter()
    result = minimize(
        lambda w: float(np.sum(w)),
        start,
        jac=lambda w: np.ones(count),
        method="SLSQP",
        bounds=[(1e-6, None)] * count,
        constraints=constraints,
        options={"ftol": 1e-12, "maxiter": 1000},
    )
    seconds = time.perf_counter() - began
    worst = max(sum(unit / result.x[i] for i in p) for p in conducting)
    return {
        "gate": gate["name"],
        "expression": gate["expression"],
        "network": kind,
        "scipy_area": float(np.sum(result.x)),
        "scipy_success": bool(result.success),
        "scipy_worst_over_target": worst / target,
        "paths": len(conducting),
        "seconds": seconds,
    }


def main():
    data = json.load(sys.stdin)
    gates = data if isinstance(data, list) else [data]
    for gate in gates:
        for network in gate["networks"]:
            print(json.dumps(solve(gate, network)))


if __name__ == "__main__":
    main()
