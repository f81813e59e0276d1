"""Output compliance: the load-voltage range over which the source holds.

A load voltage is inside compliance when every part is within its limits:
each transistor in the region it must work in (not saturated, by the chosen
edge criterion, and not cut off), below its breakdown voltage and within
its dissipation rating at the design temperature, and every other part
within its own limits (a zener above its knee, an op-amp inside its output
swing, a reference current with headroom).

The range is found on the exact solve: a scan over load voltage locates the
edges, and a bracketing secant search refines both on the limiting margin
together (each round one vectorised solve), so the report names the part and
the cause at each end.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

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
    worst, keys = points.worst_margin(edge)
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
    low, high = _refine_edges(model, values, edge, (grid, worst, keys, points),
                              [(chosen[0], -1), (chosen[1], +1)])
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


def _refine_edges(model, values, edge, scan, ends):
    """Refine each edge between ``grid[index]`` (inside) and its outside neighbour, all at once.

    ``scan`` is ``(grid, worst margin, its keys, points)`` of the scan; ``ends``
    holds ``(index, direction)`` pairs.  Every round solves a few load
    voltages in each remaining bracket in one vectorised call: a secant estimate
    with a point just either side of it (the bracket then closes around the
    root in two or three rounds, the margin being near linear in the load
    voltage) and the quarter points (the bracket at least quarters even where
    the margin bends or the outside end did not solve).  An edge ends when its
    bracket is narrower than a quarter of ``EDGE_TOLERANCE``: its voltage is the
    inside end (a load set at the edge is accepted), its part and cause those
    limiting at the outside end, just beyond.
    """
    grid, worst, keys, points = scan
    edges, active = [None] * len(ends), []
    for k, (index, direction) in enumerate(ends):
        outside = index + direction
        if outside < 0 or outside >= len(grid):
            edges[k] = Edge(float(grid[index]), None, None)
        else:  # edge, inside end, outside end, margins there, key at the outside end
            active.append([k, grid[index], grid[outside], worst[index], worst[outside], keys[outside]])
    done = []
    for _ in range(60):
        done += [br for br in active if abs(br[2] - br[1]) <= EDGE_TOLERANCE / 4]
        active = [br for br in active if abs(br[2] - br[1]) > EDGE_TOLERANCE / 4]
        if not active:
            break
        trial = [_trial_points(*br[1:5]) for br in active]
        points = solve_points(model, values | {"v_load": np.concatenate(trial)})
        margin, limits = points.worst_margin(edge)
        at = 0
        for br, v_load in zip(active, trial):
            here = slice(at, at + len(v_load))
            at += len(v_load)
            # Walk from the inside end: the first point outside closes the bracket.
            order = np.argsort((v_load - br[1]) * np.sign(br[2] - br[1]))
            for x, fx, key in zip(v_load[order], margin[here][order], np.array(limits[here], dtype=object)[order]):
                if np.isfinite(fx) and fx >= 0:
                    br[1], br[3] = x, fx
                else:
                    br[2], br[4], br[5] = x, fx, tuple(key)
                    break
    for k, a, _, _, _, (part, cause) in done + active:
        edges[k] = Edge(float(a), part, cause, points.cause_text(part, cause))
    return edges


def _trial_points(a, b, fa, fb):
    """Load voltages to try strictly inside the bracket ``(a, b)``."""
    width = b - a
    quarters = a + width * np.array([0.25, 0.5, 0.75])
    if not (np.isfinite(fa) and np.isfinite(fb)) or fa == fb:
        return quarters
    secant = a - fa * width / (fb - fa)
    delta = max(abs(width) * 1e-3, EDGE_TOLERANCE / 8) * np.sign(width)
    near = np.array([secant - delta, secant, secant + delta])
    inside = (near - a) * (near - b) < 0  # strictly between the ends
    return np.concatenate([near[inside], quarters])
