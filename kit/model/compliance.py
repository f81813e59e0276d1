"""Output compliance: the load-voltage range over which the source holds.

A load voltage is inside compliance when every part is within its limits:
each transistor in the region it must work in (not saturated, by the chosen
edge criterion, and not cut off), below its breakdown voltage and within
its dissipation rating at the design temperature, and every other part
within its own limits (a zener above its knee, an op-amp inside its output
swing, a reference current with headroom).

The range is found on the exact solve: a scan over load voltage locates the
edges, and Brent's method refines each one on the limiting margin, so the
report names the part and the cause at each end.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from kit.errors import OperatingPointError
from kit.model.solve import check_edge, solve_points

SCAN_POINTS = 241
EDGE_TOLERANCE = 1e-6  # V


@dataclass(frozen=True)
class Edge:
    """One end of the compliance range: where, which part, why (in the part's own words)."""

    voltage: float
    part: str | None
    cause: str | None
    text: str = ""

    def describe(self):
        if self.part is None:
            return "end of the searched range"
        return f"{self.part} {self.text}"

    def to_dict(self):
        return {"voltage": self.voltage, "part": self.part, "cause": self.cause,
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


def search_window(model, values):
    """Load voltages searched by default: both rails and the largest breakdown voltage beyond."""
    ratings = [values[part.params[part.kind.breakdown]] for part in model.parts
               if getattr(part.kind, "breakdown", None)]
    supply = abs(values["v_supply"])
    reach = supply + max(ratings, default=supply)
    return (-reach, reach)


def find_compliance(model, values, *, edge="vce_sat", window=None):
    """The compliance range around ``values["v_load"]``.

    Parameters
    ----------
    model : kit.model.compiled.CompiledModel
    values : dict
        Full parameter vector (name -> float).
    edge : {"vce_sat", "vcb_zero"}
    window : (float, float), optional
        Load voltages searched; default :func:`search_window`.

    Raises
    ------
    OperatingPointError
        If no load voltage keeps the source in compliance.
    """
    check_edge(edge)
    window = window or search_window(model, values)
    grid = np.linspace(window[0], window[1], SCAN_POINTS)
    nominal = float(values["v_load"])
    grid = np.unique(np.append(grid, nominal))
    points = solve_points(model, values | {"v_load": grid})
    worst, _ = points.worst_margin(edge)
    inside = worst >= 0
    if not inside.any():
        raise OperatingPointError(
            "no load voltage keeps every part within its limits",
            parameter="v_supply", value=values["v_supply"],
            valid="a supply and bias that turn the circuit on")
    # The inside stretch that holds the nominal load voltage, else the widest one.
    runs = _runs(inside)
    at = int(np.searchsorted(grid, nominal))
    chosen = next((r for r in runs if r[0] <= at <= r[1]), max(runs, key=lambda r: r[1] - r[0]))
    low = _refine(model, values, edge, grid, chosen[0], -1)
    high = _refine(model, values, edge, grid, chosen[1], +1)
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


def _refine(model, values, edge, grid, index, direction):
    """Refine the edge between grid[index] (inside) and its outside neighbour."""
    outside = index + direction
    if outside < 0 or outside >= len(grid):
        return Edge(float(grid[index]), None, None)

    def margin(v_load):
        points = solve_points(model, values | {"v_load": np.array([v_load])})
        return points.worst_margin(edge)[0][0]

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
    _, keys = probe.worst_margin(edge)
    part, cause = keys[0]
    return Edge(float(voltage), part, cause, probe.cause_text(part, cause))
