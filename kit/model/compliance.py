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

import math
from dataclasses import dataclass

import numpy as np

from kit.errors import OperatingPointError
from kit.model.solve import check_edge, solve_points, worst_of

SCAN_POINTS = 241
SCAN_FIRST_ITERATIONS = 12  # Newton steps of the first scan (inside compliance most points need fewer than 10)
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
    return compliance_and_point(model, values, edge=edge, window=window)[0]


def compliance_and_point(model, values, *, edge="vce_sat", window=None):
    """``(compliance, design point, scan)``: :func:`find_compliance` with what its scan solved.

    The scan holds the nominal load voltage among its points, solved exactly
    as :func:`kit.model.solve.solve_points` solves it alone (each point
    iterates on its own); the second item is that point
    (:class:`~kit.model.solve.OperatingPoints` of size 1), or None if it did
    not converge within the scan's steps (solve it on its own then).  The
    third is ``(load voltages, OperatingPoints)`` of the scan's first pass
    (a point that did not converge there is marked so).
    """
    check_edge(edge)
    window = window or search_window(model, values)
    grid = np.linspace(window[0], window[1], SCAN_POINTS)
    nominal = float(values["v_load"])
    grid = np.unique(np.append(grid, nominal))
    at = int(np.searchsorted(grid, nominal))
    scan = _Scan(model, values, grid, edge)
    chosen = scan.stretch(at)
    if chosen is None:
        raise OperatingPointError(
            "no load voltage keeps every part within its limits",
            parameter="v_supply", value=values["v_supply"],
            valid="a supply and bias that turn the circuit on")
    low, high = _refine_edges(model, values, edge, scan, [(chosen[0], -1), (chosen[1], +1)])
    return Compliance(low, high, edge), scan.point(at), (grid, scan.points)


class _Scan:
    """The scan along the load voltage: worst margin and its key at each point, as a full solve gives them.

    First every point with few Newton steps: far outside (a sink's collector
    driven far below ground) a point can need dozens, and it does not matter
    unless it borders the stretch that holds the nominal load voltage.  Those
    that do (or all, if no stretch holds it) and did not converge are solved
    again in full.  Points iterate independently, so a point that converged
    within the few steps is exactly what the full solve gives.
    """

    def __init__(self, model, values, grid, edge):
        self.model, self.values, self.grid, self.edge = model, values, grid, edge
        self.points = solve_points(model, values | {"v_load": grid}, max_iterations=SCAN_FIRST_ITERATIONS,
                                   retry=False)
        self.margin_keys, self.table = self.points.margin_table(edge)
        self.worst, keys = worst_of(self.margin_keys, self.table)
        self.keys = list(keys)
        self.solved_in_full = np.zeros(grid.size, dtype=bool)
        self.again = {}  # scan index -> (points solved in full, column)

    def stretch(self, at):
        """``(first, last)`` of the inside stretch holding ``at`` (else the widest), solved in full at and around it."""
        while True:
            chosen = _stretch(self.worst, at)
            if chosen is None or not chosen[0] <= at <= chosen[1]:
                near = np.ones(self.grid.size, dtype=bool)
            else:
                near = np.zeros(self.grid.size, dtype=bool)
                near[max(chosen[0] - 2, 0):chosen[1] + 3] = True
            redo = np.flatnonzero(near & ~self.points.converged & ~self.solved_in_full)
            if not redo.size:
                return chosen
            points = solve_points(self.model, self.values | {"v_load": self.grid[redo]})
            _, table = points.margin_table(self.edge)  # the same keys: they are the model's
            worst, keys = worst_of(self.margin_keys, table)
            self.table[:, redo] = table
            self.worst[redo] = worst
            for column, index in enumerate(redo):
                self.keys[index] = keys[column]
                self.again[index] = (points, column)
            self.solved_in_full[redo] = True

    def point(self, index):
        """The solved point at scan ``index`` as its own OperatingPoints, or None if it did not converge."""
        points, column = self.again.get(index, (self.points, index))
        if not points.converged[column]:
            return None
        return points.take(slice(column, column + 1))


def _stretch(worst, at):
    """``(first, last)`` scan indices of the inside stretch holding index ``at``, else the widest; None if none."""
    runs = _runs(worst >= 0)
    if not runs:
        return None
    return next((r for r in runs if r[0] <= at <= r[1]), max(runs, key=lambda r: r[1] - r[0]))


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

    ``scan`` is the :class:`_Scan`; ``ends`` holds ``(index, direction)``
    pairs.  Every round solves, in one vectorised call for all edges, load
    voltages around three estimates of each edge (the secant across the
    bracket and the lines through the two nearest points on either side: the
    margin is near linear on one side of an edge even where it bends on the
    other; inside, the line follows the margin of the part and cause that
    limit just outside, not the smallest margin, which may change hands
    on the way), each with points closer and closer either side, plus
    the bracket's quarter points (so it at least quarters where the estimates
    fail or the outside end did not solve).  An edge ends when its bracket is
    narrower than a quarter of ``EDGE_TOLERANCE``: its voltage is the inside
    end (a load set at the edge is accepted), its part and cause those limiting
    at the outside end, just beyond.
    """
    grid, worst, keys, points = scan.grid, scan.worst, scan.keys, scan.points
    edges, active = [None] * len(ends), []
    by_key = _MarginsByKey(scan.margin_keys, scan.table)
    for k, (index, direction) in enumerate(ends):
        outside = index + direction
        if outside < 0 or outside >= len(grid):
            edges[k] = Edge(float(grid[index]), None, None)
            continue
        near = [j for j in (index - 2 * direction, index - direction, index, outside, outside + direction)
                if 0 <= j < len(grid)]
        active.append(_Bracket(k, direction, [(grid[j], worst[j], keys[j], by_key.at(j)) for j in near]))
    done = []
    for _ in range(60):
        done += [b for b in active if b.width <= EDGE_TOLERANCE / 4]
        active = [b for b in active if b.width > EDGE_TOLERANCE / 4]
        if not active:
            break
        trial = [b.trial_points() for b in active]
        points = solve_points(model, values | {"v_load": np.concatenate(trial)})
        margin_keys, table = points.margin_table(edge)
        margin, limits = worst_of(margin_keys, table)
        by_key = _MarginsByKey(margin_keys, table)
        at = 0
        for bracket, v_load in zip(active, trial):
            bracket.add([(v, margin[j], limits[j], by_key.at(j)) for j, v in enumerate(v_load, start=at)])
            at += len(v_load)
    for bracket in done + active:
        a, (part, cause) = bracket.inside[0], bracket.outside[2]
        edges[bracket.edge] = Edge(float(a), part, cause, points.cause_text(part, cause))
    return edges


class _MarginsByKey:
    """Every margin of a solve, looked up by ``(part, cause)`` at one of its points (built only when asked)."""

    def __init__(self, keys, table):
        self.index, self.table = {key: row for row, key in enumerate(keys)}, table

    def at(self, point):
        return lambda key, default: float(self.table[self.index[key], point]) if key in self.index else default


class _Bracket:
    """The load voltages solved near one edge, in search order.

    Each sample is ``(v_load, smallest margin, its key, margin of a key)``; the
    last is a function ``(key, default) -> margin`` at that load voltage.
    """

    def __init__(self, edge, direction, samples):
        self.edge, self.direction, self.samples = edge, direction, []
        self.add(samples)

    def add(self, samples):
        # Sorted along the search direction, inside first; the bracket is the first
        # inside -> outside change (the stretch that holds the nominal load voltage).
        self.samples = sorted([*self.samples, *samples], key=lambda s: s[0] * self.direction)
        first_out = next(j for j, s in enumerate(self.samples) if j > 0 and not _inside(s[1])
                         and _inside(self.samples[j - 1][1]))
        self.at = first_out - 1
        self.samples = self.samples[max(self.at - 2, 0):first_out + 2]  # what the estimates use
        self.at = min(self.at, 2)

    @property
    def inside(self):
        return self.samples[self.at]

    @property
    def outside(self):
        return self.samples[self.at + 1]

    @property
    def width(self):
        return abs(self.outside[0] - self.inside[0])

    def trial_points(self):
        """Load voltages to solve next, strictly inside the bracket."""
        a, b = self.inside[0], self.outside[0]
        width = b - a
        estimates = [_secant((a, self.inside[1]), (b, self.outside[1]))]
        if self.at > 0:
            # Inside: the margin that ends the range, followed up to the edge.
            limiting = self.outside[2]
            behind = [(s[0], s[3](limiting, s[1])) for s in self.samples[:self.at + 1]]
            estimates.append(_secant(*behind[-2:]))
            if len(behind) == 3:  # and its curvature: a saturation margin bends gently
                estimates.append(_parabola_root(behind, a, b))
        if self.at + 2 < len(self.samples):
            estimates.append(_secant((b, self.outside[1]), self.samples[self.at + 2][:2]))
        ladder = [abs(width) * 10.0 ** -k for k in range(2, 16, 2) if abs(width) * 10.0 ** -k > EDGE_TOLERANCE / 8]
        steps = np.array([0.0, *ladder, EDGE_TOLERANCE / 8])
        out = [a + width * np.array([0.25, 0.5, 0.75])]
        for estimate in estimates:
            if estimate is not None:
                out += [estimate - steps, estimate + steps[1:]]
        trial = np.unique(np.concatenate(out))
        return trial[(trial - a) * (trial - b) < 0]


def _secant(first, second):
    """Where the line through two ``(v_load, margin)`` samples crosses zero, or None."""
    (x0, f0), (x1, f1) = first, second
    if np.isfinite(f0) and np.isfinite(f1) and f0 != f1:
        return x0 - f0 * (x1 - x0) / (f1 - f0)
    return None


def _parabola_root(samples, a, b):
    """The zero between ``a`` and ``b`` of the parabola through three ``(v_load, margin)`` samples, or None.

    Examples
    --------
    >>> _parabola_root([(0.0, 4.0), (1.0, 1.0), (1.5, 0.25)], 1.5, 3.0)  # (2 - v)², touching 0 at 2
    2.0
    """
    (x0, f0), (x1, f1), (x2, f2) = samples
    with np.errstate(all="ignore"):  # divided differences; near-equal samples give no parabola
        f01, f12 = (f1 - f0) / (x1 - x0), (f2 - f1) / (x2 - x1)
        curvature = (f12 - f01) / (x2 - x0)
        # f(v) = f0 + f01 (v - x0) + curvature (v - x0)(v - x1), written in powers of (v - a)
        u0, u1 = x0 - a, x1 - a
        coefficients = np.array([curvature, f01 - curvature * (u0 + u1), f0 - f01 * u0 + curvature * u0 * u1])
    c2, c1, c0 = coefficients
    if not np.all(np.isfinite(coefficients)) or (c2 == 0 and c1 == 0):
        return None
    if c2 == 0:
        roots = [-c0 / c1]
    else:
        discriminant = c1 * c1 - 4 * c2 * c0
        if discriminant < 0:
            return None
        # The numerically stable pair: no cancellation between c1 and the root of the discriminant.
        q = -0.5 * (c1 + math.copysign(math.sqrt(discriminant), c1))
        roots = [q / c2] + ([c0 / q] if q != 0 else [])
    between = [v for v in (r + a for r in roots) if (v - a) * (v - b) < 0]
    return float(min(between, key=lambda v: abs(v - a))) if between else None


def _inside(margin):
    return bool(np.isfinite(margin) and margin >= 0)
