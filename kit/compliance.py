"""Output compliance: the load-voltage range over which the source holds.

A load voltage is inside compliance when every transistor is forward active
(not saturated, by the chosen edge criterion, and not cut off), below its
collector–emitter breakdown voltage, and dissipating no more than its
package allows at the design temperature, ``(T_J,max - T) / theta_JA``.

The range is found on the exact solve: a scan over load voltage locates the
edges, and Brent's method refines each one on the limiting margin, so the
report names the transistor and the cause at each end.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from kit.devices import KINDS
from kit.errors import OperatingPointError, ParameterError
from kit.solve import EDGES, solve_points

SCAN_POINTS = 241
EDGE_TOLERANCE = 1e-6  # V

# Wording of causes that are not a device's own (each device kind words its own).
CAUSES = {
    "saturation": "saturates",
    "cutoff": "cuts off",
    "breakdown": "reaches its breakdown voltage",
    "power": "reaches its dissipation limit",
    "output_swing": "reaches its output swing limit",
    "zener_current": "falls below its least zener current",
    "headroom": "has no headroom under the supply",
    "solve": "has no converged operating point",
}


def cause_text(model, part, cause):
    """How a report words ``cause`` for ``part`` (a device of ``model`` or another part)."""
    kind = model.transistor_kinds.get(part)
    if kind is not None and cause in KINDS[kind].CAUSE_TEXT:
        return KINDS[kind].CAUSE_TEXT[cause]
    return CAUSES.get(cause, cause.replace("_", " "))


@dataclass(frozen=True)
class Edge:
    """One end of the compliance range: where, which transistor, why."""

    voltage: float
    transistor: str | None
    cause: str | None
    text: str = ""  # the cause in words, as the part's kind puts it

    def describe(self):
        if self.transistor is None:
            return "end of the searched range"
        return f"{self.transistor} {self.text or CAUSES.get(self.cause, self.cause.replace('_', ' '))}"

    def to_dict(self):
        return {"voltage": self.voltage, "transistor": self.transistor, "cause": self.cause,
                "description": self.describe()}


@dataclass(frozen=True)
class Compliance:
    """Load-voltage range ``[low.voltage, high.voltage]`` inside compliance."""

    low: Edge
    high: Edge
    edge: str

    def contains(self, v_load):
        return self.low.voltage <= v_load <= self.high.voltage

    def to_dict(self):
        return {"low": self.low.to_dict(), "high": self.high.to_dict(), "edge": self.edge}


def check_edge(edge):
    """Refuse an unknown saturation criterion."""
    if edge not in EDGES:
        raise ParameterError("unknown saturation edge", parameter="edge", value=edge,
                             valid=" or ".join(EDGES))


def margins(points, devices, edge="vce_sat"):
    """Per-transistor margins (V or W; >= 0 is inside) of solved points.

    Returns a dict ``(transistor, cause) -> array``; a point that did not
    converge gets ``-inf`` under cause ``"solve"``.
    """
    check_edge(edge)
    temp = points.p[points.model.parameter_index["temp"]]
    v_t = points.q[points.model.operating_index["V_T"]]
    out = {}
    for name, j in points.junctions.items():
        kind = KINDS[points.model.transistor_kinds[name]]
        for cause, margin in kind.margins(j, v_t, temp, devices[name], edge).items():
            out[name, cause] = margin
    # Limits of other parts (an op-amp's output swing, say) come from the topology.
    limits = getattr(points.model.topology, "limits", None)
    if limits is not None:
        out.update(limits(points))
    out[None, "solve"] = np.where(points.converged, np.inf, -np.inf)
    return out


def worst_margin(points, devices, edge):
    """Smallest margin at each point and its (transistor, cause) key."""
    table = margins(points, devices, edge)
    keys = list(table)
    stack = np.stack([table[k] for k in keys])
    worst = np.argmin(stack, axis=0)
    return stack[worst, np.arange(stack.shape[1])], [keys[i] for i in worst]


def find_compliance(model, values, devices, *, edge="vce_sat", window=None):
    """The compliance range around ``values["v_load"]``.

    Parameters
    ----------
    model : kit.derive.CompiledModel
    values : dict
        Full parameter vector (name -> float).
    devices : dict
        Transistor name -> :class:`kit.devices.BJTModel` (for the ratings).
    edge : {"vce_sat", "vcb_zero"}
    window : (float, float), optional
        Load voltages searched; default spans both rails and the largest
        breakdown voltage.

    Raises
    ------
    OperatingPointError
        If no load voltage keeps the source in compliance.
    """
    if window is None:
        reach = abs(values["v_supply"]) + max(d.bv_ceo for d in devices.values())
        window = (-reach, reach)
    grid = np.linspace(window[0], window[1], SCAN_POINTS)
    nominal = float(values["v_load"])
    grid = np.unique(np.append(grid, nominal))
    points = solve_points(model, values | {"v_load": grid})
    worst, _ = worst_margin(points, devices, edge)
    inside = worst >= 0
    if not inside.any():
        raise OperatingPointError(
            "no load voltage keeps every transistor forward active within its ratings",
            parameter="v_supply", value=values["v_supply"],
            valid="a supply and bias that turn the circuit on")
    # The inside stretch that holds the nominal load voltage, else the widest one.
    runs = _runs(inside)
    at = int(np.searchsorted(grid, nominal))
    chosen = next((r for r in runs if r[0] <= at <= r[1]), max(runs, key=lambda r: r[1] - r[0]))
    low = _refine(model, values, devices, edge, grid, chosen[0], -1)
    high = _refine(model, values, devices, edge, grid, chosen[1], +1)
    return Compliance(low, high, edge)


def _runs(mask):
    runs, start = [], None
    for k, flag in enumerate(mask):
        if flag and start is None:
            start = k
        if not flag and start is not None:
            runs.append((start, k - 1))
            start = None
    if start is not None:
        runs.append((start, len(mask) - 1))
    return runs


def _refine(model, values, devices, edge, grid, index, direction):
    """Refine the edge between grid[index] (inside) and its outside neighbour."""
    outside = index + direction
    if outside < 0 or outside >= len(grid):
        return Edge(float(grid[index]), None, None)

    def margin(v_load):
        points = solve_points(model, values | {"v_load": np.array([v_load])})
        return worst_margin(points, devices, edge)[0][0]

    a, b = grid[index], grid[outside]
    fb = margin(b)
    for _ in range(60):
        # Shrink towards the inside point until the outside end has a converged solve.
        if np.isfinite(fb):
            break
        mid = 0.5 * (a + b)
        fm = margin(mid)
        if np.isfinite(fm) and fm >= 0:
            a = mid
        else:
            b, fb = mid, fm
    voltage = brentq(margin, a, b, xtol=EDGE_TOLERANCE) if np.isfinite(fb) else a
    # Name the cause just outside the edge, where the limiting margin goes negative.
    probe = solve_points(model, values | {"v_load": np.array([voltage + direction * 2 * EDGE_TOLERANCE])})
    _, keys = worst_margin(probe, devices, edge)
    transistor, cause = keys[0]
    return Edge(float(voltage), transistor, cause, cause_text(model, transistor, cause))
