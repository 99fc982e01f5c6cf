#!/usr/bin/env python3
"""Independent check of the stage-effort sizing of a chain of stages, with scipy.

Reads one JSON object per line on standard input: a cell's SPICE netlist as widthwise writes it
("netlist"), the nets of one path through its stages from the pin to the output ("path", e.g.
["s", "s_n", "y_n", "y"]) and the mobility ratio ("mobility"). Everything else comes from the
netlist: each device's stage is the net it drives (its name after the first "_": MN2_y_n drives
y_n), each stage's drive d is 1 over the resistance of its weakest pull-down path (every path from
its output to vss, found by walking the netlist; the unit NMOS is 1 R at W/L 1), and a net's load is
the gate capacitance W/L of every device it gates (unit-NMOS gate capacitances).

Along the path, stage i (driving path[i]) has the delay g h = C_load / (d C_inv) in tau; scaling
the stage's widths by s scales its drive and its input capacitance by s (its parasitic delay p does
not change, so it drops out). With the first stage's input capacitance and the output stage fixed
(scale 1), scipy.optimize.minimize (BFGS, on log s) minimises the sum over the inner stages' scales.
Prints one JSON object per line: the inner stages' optimal scales (the tool's sizes are at 1),
the delays before and after, and scipy's success.

Exit status 3 when scipy is not installed (the caller decides whether that is a failure).
"""

import json
import re
import sys

try:
    import numpy as np
    from scipy.optimize import minimize
except ImportError:
    print("scipy is not installed: pip install scipy", file=sys.stderr)
    sys.exit(3)

SCALE = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3, "": 1.0}


def value(text):
    number, suffix = re.fullmatch(r"([0-9.eE+-]+?)([fpnum]?)", text).groups()
    return float(number) * SCALE[suffix]


def devices(netlist):
    found = []
    for line in netlist.splitlines():
        words = line.split()
        if not words or not words[0].startswith("M"):
            continue
        params = dict(w.split("=") for w in words[6:])
        ratio = value(params["W"]) * int(params.get("m", "1")) / value(params["L"])
        found.append({
            "name": words[0], "drain": words[1], "gate": words[2], "source": words[3],
            "pmos": words[5].lower().startswith("p"), "w_over_l": ratio,
            "stage": words[0].split("_", 1)[1],
        })
    return found


def weakest_pull_down(stage_devices, output):
    """The largest resistance over every simple path from `output` to vss through NMOS."""
    edges = {}
    for device in stage_devices:
        if device["pmos"]:
            continue
        for a, b in ((device["drain"], device["source"]), (device["source"], device["drain"])):
            edges.setdefault(a, []).append((device, b))
    worst = 0.0

    def walk(node, visited, resistance):
        nonlocal worst
        if node == "vss":
            worst = max(worst, resistance)
            return
        for device, other in edges.get(node, []):
            if other not in visited:
                walk(other, visited | {other}, resistance + 1.0 / device["w_over_l"])

    walk(output, {output}, 0.0)
    return worst


def check(problem):
    every = devices(problem["netlist"])
    path = problem["path"]
    c_inv = 1.0 + problem["mobility"]
    stages = path[1:]
    drive = {net: 1.0 / weakest_pull_down([d for d in every if d["stage"] == net], net) for net in stages}

    def load(net, scales):
        # Gate capacitance of every device the net gates, each scaled with its stage.
        return sum(d["w_over_l"] * scales.get(d["stage"], 1.0) for d in every if d["gate"] == net)

    inner = stages[1:-1]

    def delay(logs):
        scales = {net: float(np.exp(x)) for net, x in zip(inner, logs)}
        total = 0.0
        for net in stages[:-1]:  # the output stage is fixed: its delay is a constant
            total += load(net, scales) / (scales.get(net, 1.0) * drive[net] * c_inv)
        return total

    def gradient(logs):
        # d delay / d log s_j: the stage's own term falls as 1/s_j; each term whose load holds the
        # stage's gates grows with s_j.
        scales = {net: float(np.exp(x)) for net, x in zip(inner, logs)}
        result = np.zeros(len(inner))
        for j, stage in enumerate(inner):
            own = load(stage, scales) / (scales[stage] * drive[stage] * c_inv)
            loading = sum(
                d["w_over_l"] * scales[stage] / (scales.get(d["gate"], 1.0) * drive[d["gate"]] * c_inv)
                for d in every
                if d["stage"] == stage and d["gate"] in stages[:-1]
            )
            result[j] = loading - own
        return result

    start = np.full(len(inner), np.log(3.0))  # start away from the tool's answer
    result = minimize(delay, start, jac=gradient, method="BFGS", options={"gtol": 1e-10, "maxiter": 10_000})
    return {
        "path": path,
        "scales": [float(np.exp(x)) for x in result.x],
        "delay_tool": delay(np.zeros(len(inner))),
        "delay_scipy": float(result.fun),
        # BFGS may stop for precision loss on the flat bottom itself (the delay is known to about
        # 1e-15 of itself there, so log s to about 1e-8): converged when the gradient there is
        # below 1e-6 of the delay.
        "scipy_success": bool(result.success or np.abs(gradient(result.x)).max() <= 1e-6 * result.fun),
        "scipy_message": str(result.message),
    }


def main():
    for line in sys.stdin:
        if line.strip():
            print(json.dumps(check(json.loads(line))), flush=True)


if __name__ == "__main__":
    main()
