#!/usr/bin/env python3
"""Independent check of widthwise's exact sizing over input vectors with scipy's SLSQP.

Reads a JSON array of networks on standard input, each with its transistors as a netlist: for
every device its drain and source node and its input, the output and rail node, how many inputs
there are, the unit resistance (the resistance of a device of W/L 1, in units of R), the target
resistance and, optionally, the least W/L of each device ("lower"). An input vector is taken as the set of inputs at the level that turns their devices on
(1 for NMOS, 0 for PMOS): every vector is one such set, whatever the device type.

For each network it works out everything itself from the netlist: which input vectors make the
network conduct (a search from the output through the devices that are on), which of those are
minimal (no input holding devices on can be released without the network ceasing to conduct), and
the effective conductance between the output and the rail under a vector (node-voltage analysis:
output at 1 V, rail at 0 V, the node equations solved with numpy). The derivative of that
conductance with respect to a device's conductance is the square of the voltage across it (the
Dirichlet principle). It then minimises the sum of W/L subject to every minimal vector's effective
resistance being at most the target, with scipy.optimize.minimize(method="SLSQP"), and checks the
answer against every conducting vector (not only the minimal ones).

Prints one JSON object per network: name, scipy_total, scipy_success, scipy_message,
worst_over_target, minimal_vectors, seconds.

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


class Netlist:
    def __init__(self, network):
        names = {network["output"]: 0, network["rail"]: 1}
        self.edges = []
        for device in network["devices"]:
            ends = []
            for node in (device["drain"], device["source"]):
                ends.append(names.setdefault(node, len(names)))
            self.edges.append((ends[0], ends[1], device["input"]))
        self.nodes = len(names)
        self.inputs = network["input_count"]

    def on_devices(self, on_set):
        """Devices that are on when the inputs in on_set (a bit set) hold their devices on."""
        return [k for k, (_, _, i) in enumerate(self.edges) if on_set >> i & 1]

    def reach(self, devices, start):
        seen = {start}
        frontier = [start]
        while frontier:
            node = frontier.pop()
            for k in devices:
                a, b, _ = self.edges[k]
                for here, there in ((a, b), (b, a)):
                    if here == node and there not in seen:
                        seen.add(there)
                        frontier.append(there)
        return seen

    def conducts(self, on_set):
        return 1 in self.reach(self.on_devices(on_set), 0)

    def conductance(self, devices, g):
        """Effective conductance output-to-rail through `devices` with conductances g (by device),
        and its gradient with respect to g."""
        connected = self.reach(devices, 0)
        if 1 not in connected:
            return 0.0, np.zeros(len(self.edges))
        unknown = sorted(n for n in connected if n > 1)
        row = {n: r for r, n in enumerate(unknown)}
        size = len(unknown)
        matrix = np.zeros((size, size))
        right = np.zeros(size)
        for k in devices:
            a, b, _ = self.edges[k]
            if a not in connected:
                continue
            for here, there in ((a, b), (b, a)):
                if here in row:
                    matrix[row[here], row[here]] += g[k]
                    if there in row:
                        matrix[row[here], row[there]] -= g[k]
                    elif there == 0:
                        right[row[here]] += g[k]
        solved = np.linalg.solve(matrix, right) if size else np.zeros(0)
        voltage = lambda n: 1.0 if n == 0 else 0.0 if n == 1 else solved[row[n]]
        gradient = np.zeros(len(self.edges))
        total = 0.0
        for k in devices:
            a, b, _ = self.edges[k]
            if a not in connected:
                continue
            drop = voltage(a) - voltage(b)
            gradient[k] = drop * drop
            total += g[k] * drop * drop
        return total, gradient


def solve(network):
    net = Netlist(network)
    unit = network["unit_resistance"]
    target = network["target"]
    count = len(net.edges)
    # Optional least W/L of each device (default: none beyond staying positive).
    lower = network.get("lower") or [1e-9] * count
    on_sets = range(1 << net.inputs)
    conducting = [u for u in on_sets if net.conducts(u)]
    conducting_set = set(conducting)
    minimal = [
        u for u in conducting if all((u & ~(1 << i)) not in conducting_set for i in range(net.inputs) if u >> i & 1)
    ]
    device_sets = [net.on_devices(u) for u in minimal]

    def resistance(devices, w):
        g, _ = net.conductance(devices, w / unit)
        return 1.0 / g if g > 0 else float("inf")

    # Start: equal widths scaled so that the worst minimal vector sits on the target (scaling every
    # width by s divides every resistance by s).
    ones = np.ones(count)
    start = ones * max(resistance(d, ones) for d in device_sets) / target
    start = np.maximum(start, np.array(lower) * 1.01)

    def constraint(devices):
        def value(w):
            g, _ = net.conductance(devices, w / unit)
            return target * g - 1.0

        def jacobian(w):
            _, gradient = net.conductance(devices, w / unit)
            return target * gradient / unit

        return {"type": "ineq", "fun": value, "jac": jacobian}

    began = time.perf_counter()
    result = minimize(
        lambda w: float(np.sum(w)),
        start,
        jac=lambda w: np.ones(count),
        method="SLSQP",
        bounds=[(max(low, 1e-9), None) for low in lower],
        constraints=[constraint(d) for d in device_sets],
        options={"ftol": 1e-12, "maxiter": 2000},
    )
    seconds = time.perf_counter() - began
    worst = max(resistance(net.on_devices(u), result.x) for u in conducting)
    return {
        "name": network["name"],
        "scipy_total": float(np.sum(result.x)),
        "scipy_success": bool(result.success),
        "scipy_message": str(result.message),
        "worst_over_target": worst / target,
        "minimal_vectors": len(minimal),
        "seconds": seconds,
    }


def main():
    for network in json.load(sys.stdin):
        print(json.dumps(solve(network)), flush=True)


if __name__ == "__main__":
    main()
