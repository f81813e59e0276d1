"""Worst case of the output current over a :class:`~kit.analysis.spec.Spec`, three ways.

* **Extreme-value analysis** (EVA): the exact solve at every corner of the
  tolerance box, plus a search for interior extrema — the sign of each
  exact sensitivity is compared across the corners, and a dense random sample
  of the box (and, for any factor whose sensitivity changes sign, a sweep
  along it) is solved too, so a non-monotonic parameter cannot hide.  This
  is the guaranteed bound.
* **RSS**: ``sigma_I^2 = sum (dI/dp_i sigma_i)^2`` from the exact
  sensitivities, with a ± tolerance taken as 3 sigma (an assumption, stated
  with every result), at each corner of the conditions (temperature, supply,
  load are not random).
* **Monte Carlo**: seeded samples of the parts (resistors uniform within
  tolerance, TCRs uniform within their bound, gain log-uniform or uniform,
  matched groups drawing one gain), each evaluated over the conditions;
  percentiles and the yield against the spec.

Every point is solved with self-heating (junction = ambient + theta_JA P_D)
unless ``self_heating=False``, and counts as failing if any transistor leaves
the region its topology needs, exceeds its ratings or the spec's
dissipation limit.  References: extreme-value and RSS methods as in
ECSS-Q-ST-30-01 worst-case analysis practice, Monte Carlo propagation as in
JCGM 101:2008 (from memory).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np
from scipy import special

from kit.analysis import mismatch
from kit.analysis.evaluation import model_of
from kit.analysis.spec import SIGMA_PER_TOLERANCE, factors
from kit.analysis.streaming import RunningHistogram, SeededColumns, wilson_interval
from kit.analysis.thermal import runaway_error, solve_self_heated
from kit.model.solve import solve_points
from kit.errors import ParameterError
from kit.quantities import format_quantity

MAX_CORNER_FACTORS = 14  # 2^14 = 16384 corners; above, extreme corners come from the signs
INTERIOR_SAMPLES = 2048
INTERIOR_SLACK = 1e-9  # relative; below it, "beyond the corners" is solver noise
AXIS_POINTS = 33
METHODS = ("extreme-value", "RSS", "Monte Carlo")
# Monte Carlo: points solved at once (samples x condition points), tens of MB of
# solver arrays; the leading samples kept whole for plots and checks; the
# percentiles reported; the coverage of the yield's interval.
MONTE_CARLO_CHUNK_POINTS = 1 << 14
KEPT_SAMPLES = 10_000
PERCENTILES = (0.135, 1, 50, 99, 99.865)
YIELD_CONFIDENCE = 0.95


@dataclass(frozen=True)
class MethodResult:
    """The current range one method finds, against the spec."""

    method: str
    low: float
    high: float
    passed: bool
    margin: float  # fraction of the target to spare (< 0: out of spec)
    detail: dict = field(default_factory=dict)
    # For plots and checks, left out of to_dict.  Monte Carlo: "histogram" (a
    # RunningHistogram of the valid points' currents, every sample), and for
    # the first detail["kept_samples"] samples "current" (samples, condition
    # points), "ok" (same shape), "passed" (per sample) and "draws" (name -> values).
    arrays: dict = field(default_factory=dict, repr=False)

    def texts(self, digits=4):
        """``(low, high, margin)`` as text; ``—`` where no point was valid."""
        if self.low is None:
            return "—", "—", "—"
        return (format_quantity(self.low, "A", digits), format_quantity(self.high, "A", digits),
                f"{self.margin:+.3%}")

    def to_dict(self):
        return {"method": self.method, "low": self.low, "high": self.high, "passed": self.passed,
                "margin": self.margin, "detail": self.detail}


@dataclass(frozen=True)
class BudgetEntry:
    """What one factor alone does to the current."""

    name: str
    label: str
    kind: str
    swing: float  # A, largest exact change when this factor alone goes to an end
    linear: float  # A, |dI/dp| x half range at the nominal point
    share: float  # of the sum of swings

    def to_dict(self):
        return dict(self.__dict__)


@dataclass(frozen=True)
class OutputMismatch:
    """What the mismatch within one matched group does to the output current, at nominal.

    ``sigma`` is the first-order standard deviation from the exact
    sensitivities and the members' sigmas; ``bound`` the largest exact change
    over every corner of the members' mismatch bounds (the budget's row);
    ``linear_bound`` the first-order sum of the same.
    """

    group: tuple
    sigma: float  # A
    relative_sigma: float
    bound: float  # A
    linear_bound: float  # A
    coverage: str = (f"bound: 3 sigma of the difference of two members, each member within "
                     f"±{mismatch.EVA_MEMBER_SIGMAS:.3g} sigma of the group's mean")

    def to_dict(self):
        return {"group": list(self.group), "sigma": self.sigma, "relative_sigma": self.relative_sigma,
                "bound": self.bound, "linear_bound": self.linear_bound, "coverage": self.coverage}


def _output_mismatch(box, box_factors, nominal_points, budget):
    rows = {b.name: b for b in budget if b.kind == "mismatch"}
    slope = box.slopes(nominal_points, box_factors)[:, 0]
    out = []
    nominal = float(nominal_points.i_out[0])
    for text, figures in mismatch.output_mismatch(box_factors, slope, nominal).items():
        group = tuple(text.split(", "))
        out.append(OutputMismatch(group, figures["sigma"], figures["relative_sigma"],
                                  rows["+".join(group) + ".mismatch"].swing, figures["linear_bound"]))
    return out


class _Box:
    """Solve the design at many points of the tolerance box and judge each point.

    Points are given by factor values; a factor with targets (a matched
    group's common gain, a member's mismatch) is expanded to the parameters
    it moves (:func:`kit.analysis.mismatch.expand`).
    """

    def __init__(self, spec, design, self_heating, edge, box_factors=None):
        self.spec = spec
        self.design = design
        self.model = model_of(design)
        self.base = design.parameters()
        self.self_heating = self_heating
        self.edge = edge
        self.factors = list(factors(spec, design) if box_factors is None else box_factors)
        self.v_t = mismatch.BOLTZMANN_OVER_CHARGE * self.base["t_ref"]

    def flat(self, changes):
        """The parameter values the factor values ``changes`` stand for."""
        return mismatch.expand(self.factors, changes, self.base, self.v_t)

    def slopes(self, points, box_factors):
        """``dI/dx`` of each of ``box_factors`` (rows) at every point (columns)."""
        return mismatch.slopes(box_factors, points.di_dp, self.model.parameter_index, self.base, self.v_t)

    def solve(self, changes):
        values = self.base | {k: np.asarray(v, dtype=float) for k, v in self.flat(changes).items()}
        if self.self_heating:
            return solve_self_heated(self.model, values)
        return solve_points(self.model, values)

    def judge(self, points):
        """``(ok, reason)`` per point: in the needed regions, within ratings and limit."""
        worst, keys = points.worst_margin(self.edge)
        ok = worst >= 0
        reasons = np.array([None] * points.size, dtype=object)
        for k in np.flatnonzero(~ok):
            part, cause = keys[k]
            reasons[k] = "no converged solution" if part is None else \
                f"{part} {points.cause_text(part, cause)}"
        if self.spec.p_max is not None:
            for name, power in points.dissipation.items():
                over = ok & (power > self.spec.p_max)
                reasons[over] = f"{name} dissipates more than the spec's limit"
                ok &= ~over
        return ok, reasons


def _valid_range(current, ok):
    """``(low, high)`` of the currents at valid points, or ``(None, None)`` if there are none."""
    if not np.any(ok):
        return None, None
    return float(np.min(current[ok])), float(np.max(current[ok]))


def _verdict(spec, low, high, all_ok):
    """``(passed, margin)``; no valid point means failed with no margin to state."""
    if low is None:
        return False, None
    return bool(all_ok) and spec.limits[0] <= low and high <= spec.limits[1], float(spec.margin(low, high))


def _corner_values(box_factors):
    grid = np.array(list(itertools.product((0, 1), repeat=len(box_factors))), dtype=float)
    return {f.name: f.low + grid[:, i] * (f.high - f.low) for i, f in enumerate(box_factors)}


def _extreme_value(box, box_factors, nominal_points):
    spec = box.spec
    note = []
    if len(box_factors) <= MAX_CORNER_FACTORS:
        corners = _corner_values(box_factors)
        note.append(f"all {2 ** len(box_factors)} corners")
    else:
        # Too many for every corner: the two extreme corners by the sign of each
        # exact sensitivity at nominal, plus random corners.
        slope = box.slopes(nominal_points, box_factors)[:, 0]
        rng = np.random.default_rng(spec.seed)
        pick = rng.integers(0, 2, size=(4096, len(box_factors))).astype(float)
        signs = np.array(slope > 0, dtype=float)
        pick = np.vstack([pick, signs, 1 - signs])
        corners = {f.name: f.low + pick[:, i] * (f.high - f.low) for i, f in enumerate(box_factors)}
        note.append(f"{len(pick)} corners (extreme pair by sensitivity signs, rest random)")
    points = box.solve(corners)
    ok, reasons = box.judge(points)
    current = points.i_out
    # Interior extrema: does any sensitivity change sign across the corners?
    slopes = box.slopes(points, box_factors)[:, points.converged] if box_factors else np.empty((0, 0))
    turning = [f for f, s in zip(box_factors, slopes) if s.size and np.any(s > 0) and np.any(s < 0)]
    rng = np.random.default_rng(spec.seed + 1)
    inside = {f.name: rng.uniform(f.low, f.high, INTERIOR_SAMPLES) for f in box_factors}
    if not box_factors:
        inside = None  # the box is the nominal point: nothing inside it to search
    sweeps = []
    for f in turning:
        # Sweep the turning factor with the others at the corners of the extremes found so far.
        for k in (int(np.argmin(np.where(ok, current, np.inf))), int(np.argmax(np.where(ok, current, -np.inf)))):
            line = {g.name: np.full(AXIS_POINTS, corners[g.name][k]) for g in box_factors}
            line[f.name] = np.linspace(f.low, f.high, AXIS_POINTS)
            sweeps.append(line)
    for extra in ([inside] if inside else []) + sweeps:
        more = box.solve(extra)
        more_ok, more_reasons = box.judge(more)
        points_current = more.i_out
        current = np.concatenate([current, points_current])
        ok = np.concatenate([ok, more_ok])
        reasons = np.concatenate([reasons, more_reasons])
    corner_count = points.size
    corner_low, corner_high = _valid_range(current[:corner_count], ok[:corner_count])
    low, high = _valid_range(current, ok)
    # Interior beyond the corners by more than the self-heated solve resolves (~1e-12).
    slack = INTERIOR_SLACK * abs(corner_high or 0.0)
    interior = bool(corner_low is not None and (low < corner_low - slack or high > corner_high + slack))
    note.append(f"{INTERIOR_SAMPLES} interior samples" + (f", sweeps along {', '.join(f.name for f in turning)}"
                                                          if turning else ""))
    failures = sorted({r for r in reasons[~ok] if r})
    passed, margin = _verdict(spec, low, high, ok.all())
    return MethodResult("extreme-value", low, high, passed, margin, {
        "points": int(current.size), "failing_points": int((~ok).sum()), "failures": failures,
        "non_monotonic": [f.name for f in turning], "interior_beyond_corners": interior,
        "how": "; ".join(note)})


def _condition_corners(box_factors):
    conditions = [f for f in box_factors if f.kind == "condition"]
    if not conditions:
        return {}, 1
    return _corner_values(conditions), 2 ** len(conditions)


def _rss(box, box_factors):
    spec = box.spec
    parts = [f for f in box_factors if f.kind != "condition"]
    corners, count = _condition_corners(box_factors)
    points = box.solve(corners)
    ok, _ = box.judge(points)
    sigma = np.zeros(points.size)
    for f, slope in zip(parts, box.slopes(points, parts)):
        # a ± tolerance is 3 sigma; a mismatch carries its own sigma (kit.analysis.mismatch)
        sigma += (slope * (f.sigma if f.sigma is not None else f.half_range / SIGMA_PER_TOLERANCE)) ** 2
    sigma = np.sqrt(sigma)
    k = SIGMA_PER_TOLERANCE
    low, _ = _valid_range(points.i_out - k * sigma, ok)
    _, high = _valid_range(points.i_out + k * sigma, ok)
    passed, margin = _verdict(spec, low, high, ok.all())
    return MethodResult("RSS", low, high, passed, margin, {
        "sigma_max": float(sigma.max()), "coverage": f"±{k:g} sigma",
        "mapping": f"a ± tolerance is taken as ±{SIGMA_PER_TOLERANCE:g} sigma (an assumption)",
        "condition_corners": count,
        "how": "linear in the exact sensitivities, at every corner of the conditions"})


def _draw_parts(parts, block):
    """One block of samples of the parts (see SeededColumns: one column per call, in this order).

    A matched group draws one common value (one factor); each member's
    mismatch is Gaussian with its own sigma, cut at the guarantee's bound (a
    datasheet's maximum: parts beyond it are not shipped, and a Monte Carlo
    sample stays a point of the box), by the inverse normal CDF of a uniform
    column between the bound's probabilities (so every column stays one
    uniform draw of the seed).
    """
    draws = {}
    for f in parts:
        if f.distribution == "normal":
            ends = special.ndtr(np.array([f.low, f.high]) / f.sigma)
            draws[f.name] = f.sigma * special.ndtri(block.uniform(*ends))
        elif f.distribution == "log-uniform" and f.low > 0:
            draws[f.name] = np.exp(block.uniform(np.log(f.low), np.log(f.high)))
        else:
            draws[f.name] = block.uniform(f.low, f.high)
    return draws


class _MonteCarloTally:
    """What a Monte Carlo run keeps: bounded whatever the number of samples.

    The currents of valid points go into a running histogram (exact counts,
    minimum and maximum; percentiles within one bin width); the passing
    samples are counted; the first KEPT_SAMPLES samples are kept whole
    (draws, currents, validity, verdict) for plots and checks.
    """

    def __init__(self, samples, condition_points, names):
        kept = min(samples, KEPT_SAMPLES)
        self.histogram = RunningHistogram()
        self.passing = 0
        self.all_valid = True
        self.current = np.empty((kept, condition_points))
        self.ok = np.zeros((kept, condition_points), dtype=bool)
        self.passed = np.zeros(kept, dtype=bool)
        self.draws = {name: np.empty(kept) for name in names}

    def add(self, start, current, ok, passed, draws):
        self.histogram.add(current[ok])
        self.passing += int(passed.sum())
        self.all_valid &= bool(ok.all())
        keep = max(0, min(len(passed), self.passed.size - start))
        if keep:
            rows = slice(start, start + keep)
            self.current[rows], self.ok[rows], self.passed[rows] = current[:keep], ok[:keep], passed[:keep]
            for name, values in draws.items():
                self.draws[name][rows] = values[:keep]


def _monte_carlo(box, box_factors):
    spec = box.spec
    parts = [f for f in box_factors if f.kind != "condition"]
    n = spec.samples
    conditions = [f for f in box_factors if f.kind == "condition"]
    levels = [np.linspace(f.low, f.high, 3 if f.name == "temp" else 2) for f in conditions]
    grid = list(itertools.product(*levels)) or [()]
    at_conditions = {f.name: np.array([g[i] for g in grid]) for i, f in enumerate(conditions)}
    lo, hi = spec.limits
    columns = SeededColumns(spec.seed, n)
    # kept draws: each factor, and the parameters a grouped factor moves (a member's gain)
    targets = list(dict.fromkeys(t for f in parts for t, _, _ in f.targets))
    tally = _MonteCarloTally(n, len(grid), [f.name for f in parts] + targets)
    # Solve a chunk of samples at a time: the solver's arrays, not the sample
    # count, set the memory (about 1 kB per point while it runs).
    per_chunk = max(1, MONTE_CARLO_CHUNK_POINTS // len(grid))
    for start in range(0, n, per_chunk):
        size = min(per_chunk, n - start)
        draws = _draw_parts(parts, columns.block(start, size))
        changes = {name: np.repeat(values, len(grid)) for name, values in draws.items()}
        if targets:  # kept for plots and checks; the solve expands the factors itself
            draws = draws | {k: np.broadcast_to(v, size) for k, v in box.flat(draws).items() if k in targets}
        changes |= {name: np.tile(values, size) for name, values in at_conditions.items()}
        if not changes:  # nothing varies: every sample is the nominal point
            changes = {"temp": np.full(size * len(grid), box.base["temp"])}
        points = box.solve(changes)
        ok = box.judge(points)[0].reshape(size, len(grid))
        current = points.i_out.reshape(size, len(grid))
        passed = ok.all(axis=1) & np.all((current >= lo) & (current <= hi), axis=1)
        tally.add(start, current, ok, passed, draws)
    hist = tally.histogram
    low, high = (hist.low, hist.high) if hist.count else (None, None)
    _, margin = _verdict(spec, low, high, tally.all_valid)
    interval = wilson_interval(tally.passing, n, YIELD_CONFIDENCE)
    percentiles = {str(p): hist.percentile(p) for p in PERCENTILES} if hist.count else {}
    return MethodResult("Monte Carlo", low, high, tally.passing == n, margin, {
        "samples": n, "seed": spec.seed, "condition_points": len(grid), "yield": tally.passing / n,
        "yield_interval": list(interval), "yield_confidence": YIELD_CONFIDENCE,
        "yield_interval_method": "Wilson score interval (Wilson 1927)",
        "percentiles": percentiles, "percentile_resolution": hist.width if hist.count else None,
        "valid_points": int(hist.count), "failing_samples": n - tally.passing,
        "kept_samples": int(tally.passed.size),
        "distributions": {f.name: (f"normal, sigma {f.sigma:.4g}, cut at ±{f.high:.4g}"
                                   if f.distribution == "normal" else
                                   "log-uniform" if f.distribution == "log-uniform" else "uniform")
                          for f in parts},
        "matched": [list(g) for g in dict.fromkeys(f.group for f in parts if f.group)],
        "how": ("parts drawn per sample, each sample solved at every condition level; percentiles from "
                f"a running histogram of {hist.bins} bins (within one bin width)")},
        arrays={"histogram": hist, "current": tally.current, "ok": tally.ok, "passed": tally.passed,
                "draws": tally.draws})


def _budget(box, box_factors, nominal_points):
    """Each factor alone: parts at every corner of the conditions, conditions from nominal.

    A part's swing is taken at the condition corner where it is largest, so a
    TCR (which does nothing at the reference temperature) is charged what it
    does at the temperature extremes.  The mismatch of a matched group is one
    row (kind "mismatch"): every corner of its members' mismatch bounds
    together, the rest nominal.
    """
    parts = [f for f in box_factors if f.kind == "part"]
    conditions = [f for f in box_factors if f.kind == "condition"]
    groups = {}
    for f in box_factors:
        if f.kind == "mismatch":
            groups.setdefault(f.group, []).append(f)
    corners, count = _condition_corners(box_factors)
    slope = dict(zip((f.name for f in box_factors), box.slopes(nominal_points, box_factors)[:, 0]))
    grids = [_mismatch_corners(members, slope) for members in groups.values()]
    # nominal parts, then each part at its low and high end, then each group's mismatch corners
    blocks = [1] + [2] * len(parts) + [len(grid[members[0].name]) for grid, members in zip(grids, groups.values())]
    rows = sum(blocks)
    changes = {f.name: np.full((rows, count), f.nominal) for f in parts}
    for i, f in enumerate(parts):
        changes[f.name][1 + 2 * i] = f.low
        changes[f.name][2 + 2 * i] = f.high
    start = 1 + 2 * len(parts)
    for grid, members in zip(grids, groups.values()):
        for f in members:
            changes[f.name] = np.full((rows, count), f.nominal)
            changes[f.name][start:start + len(grid[f.name])] = grid[f.name][:, None]
        start += len(grid[members[0].name])
    for name, values in corners.items():
        changes[name] = np.broadcast_to(values, (rows, count))
    points = box.solve({k: np.ravel(v) for k, v in changes.items()})
    ok = box.judge(points)[0].reshape(rows, count)
    current = points.i_out.reshape(rows, count)
    # Only solved, valid points count: a run-away or saturated point has no current to compare.
    edges = np.cumsum(blocks)
    swings = [_largest_change(current[a:b], current[0], ok[a:b] & ok[0]) for a, b in zip(edges[:-1], edges[1:])]
    if conditions:
        alone = {f.name: np.full(2 * len(conditions), f.nominal) for f in conditions}
        for i, f in enumerate(conditions):
            alone[f.name][2 * i], alone[f.name][2 * i + 1] = f.low, f.high
        moved_points = box.solve(alone)
        moved_ok = box.judge(moved_points)[0].reshape(len(conditions), 2)
        moved = moved_points.i_out.reshape(len(conditions), 2)
        swings += [_largest_change(m, nominal_points.i_out[0], k) for m, k in zip(moved, moved_ok)]
    total = float(sum(swings)) or 1.0
    slope = {name: abs(value) for name, value in slope.items()}
    rows_of = ([(f.name, f.label, f.kind, slope[f.name] * f.half_range) for f in parts]
               + [("+".join(group) + ".mismatch", f"mismatch within {', '.join(group)}", "mismatch",
                   sum(slope[f.name] * f.half_range for f in members)) for group, members in groups.items()]
               + [(f.name, f.label, f.kind, slope[f.name] * f.half_range) for f in conditions])
    entries = [BudgetEntry(name, label, kind, float(s), float(linear), float(s / total))
               for (name, label, kind, linear), s in zip(rows_of, swings)]
    return sorted(entries, key=lambda e: -e.swing)


def _mismatch_corners(members, slope):
    """Corners of one group's mismatch bounds: all of them, or for a large group the two
    extreme corners by the signs of the exact sensitivities and random ones besides."""
    if len(members) <= MAX_CORNER_FACTORS:
        return _corner_values(members)
    signs = np.array([slope[f.name] > 0 for f in members], dtype=float)
    pick = np.random.default_rng(len(members)).integers(0, 2, size=(1024, len(members))).astype(float)
    pick = np.vstack([signs, 1 - signs, pick])
    return {f.name: f.low + pick[:, i] * (f.high - f.low) for i, f in enumerate(members)}


def _largest_change(values, reference, ok):
    changes = np.abs(np.asarray(values) - reference)[np.asarray(ok)]
    return float(changes.max()) if changes.size else 0.0


class WorstCase:
    """The spec checked three ways (see the module docstring).

    ``met`` is the guarantee when the extreme-value analysis ran: its bound
    inside the limits and no point out of the needed regions, ratings or
    limits.  Without it the verdict rests on RSS (if run), else on Monte
    Carlo; ``decided_by`` names the method and :meth:`verdict` says so.
    """

    def __init__(self, spec, design, nominal, methods, budget, box_factors, self_heating, mismatch=()):
        self.spec = spec
        self.design = design
        self.nominal = nominal
        self.methods = methods
        self.budget = budget
        self.factors = box_factors
        self.self_heating = self_heating
        self.mismatch = tuple(mismatch)  # OutputMismatch per matched group with a mismatch

    @property
    def decided_by(self):
        """The method the verdict rests on: ``"extreme-value"`` when it ran (the guarantee)."""
        return next(name for name in METHODS if name in self.methods)

    @property
    def met(self):
        return self.methods[self.decided_by].passed

    def verdict(self):
        """The verdict in one line, naming the method it rests on."""
        method = self.methods[self.decided_by]
        if self.decided_by == "extreme-value":
            return "spec met (extreme-value bound)" if self.met else "spec NOT met (extreme-value bound)"
        if self.decided_by == "RSS":
            basis = f"RSS, ±{SIGMA_PER_TOLERANCE:g} sigma"
        else:
            basis = (f"Monte Carlo, {method.detail['samples'] - method.detail['failing_samples']} of "
                     f"{method.detail['samples']} samples passing")
        return (f"spec {'met' if self.met else 'NOT met'} ({basis}; no guarantee: "
                "the extreme-value bound was not run)")

    def reasons(self):
        """Why the spec is not met, in words (empty when it is)."""
        decisive = self.methods[self.decided_by]
        out = list(decisive.detail.get("failures", ()))
        band = 2 * self.spec.tolerance * self.spec.i_target
        for entry in self.budget:
            if entry.swing > band / 2:
                out.append(f"{entry.label} alone moves the current by {entry.swing / self.spec.i_target:.2%} "
                           f"of the target (the spec allows ±{self.spec.tolerance:.2%})")
        if not out and not decisive.passed:
            low, high, _ = decisive.texts()
            if decisive.method == "extreme-value":
                out.append(f"worst case {low} … {high} leaves the spec")
            elif decisive.method == "RSS":
                out.append(f"the RSS range {low} … {high} leaves the spec")
            else:
                out.append(f"{decisive.detail['failing_samples']} of {decisive.detail['samples']} "
                           f"Monte Carlo samples fail (range {low} … {high})")
        return out

    def to_dict(self):
        return {"spec": self.spec.to_dict(), "design": self.design.to_dict(), "nominal": self.nominal,
                "met": self.met, "decided_by": self.decided_by, "verdict": self.verdict(),
                "self_heating": self.self_heating,
                "methods": {k: m.to_dict() for k, m in self.methods.items()},
                "budget": [b.to_dict() for b in self.budget], "reasons": self.reasons(),
                "mismatch": [m.to_dict() for m in self.mismatch],
                "factors": [{"name": f.name, "nominal": f.nominal, "low": f.low, "high": f.high,
                             "kind": f.kind, "distribution": f.distribution}
                            | ({"sigma": f.sigma} if f.sigma is not None else {})
                            | ({"targets": [t for t, _, _ in f.targets]} if f.targets else {})
                            for f in self.factors]}


def _checked_methods(methods):
    """``methods`` as a tuple of known names, each once (a single name may be given as text)."""
    if isinstance(methods, str):
        methods = (methods,)
    try:
        names = tuple(dict.fromkeys(methods))
    except TypeError:
        raise ParameterError("must be a sequence of method names", parameter="methods", value=methods,
                             valid=", ".join(METHODS)) from None
    unknown = [name for name in names if name not in METHODS]
    if unknown or not names:
        raise ParameterError("unknown method" if unknown else "no method given", parameter="methods",
                             value=unknown[0] if unknown else names, valid=", ".join(METHODS))
    return names


def worst_case(design, spec, *, self_heating=True, edge="vce_sat", methods=METHODS):
    """Check ``design`` against ``spec`` by extreme values, RSS and Monte Carlo.

    Parameters
    ----------
    design : kit.model.design.Design
    spec : kit.analysis.spec.Spec
    self_heating : bool
        Solve every point with its junctions at ambient + theta_JA x dissipation.
    edge : {"vce_sat", "vcb_zero"}
        Saturation criterion.
    methods : sequence of str
        Any of ``"extreme-value"``, ``"RSS"``, ``"Monte Carlo"``.  Without
        ``"extreme-value"`` the verdict is RSS's (else Monte Carlo's) and is
        no guarantee; :meth:`WorstCase.verdict` says so.

    Examples
    --------
    >>> import kit
    >>> from kit.analysis.spec import Spec
    >>> d = kit.design("divider_source")
    >>> wc = worst_case(d, Spec(0.95e-3, 0.10, v_load=(4.0, 10.0)), methods=("extreme-value",))
    >>> wc.met
    True
    """
    methods = _checked_methods(methods)
    box_factors = factors(spec, design)
    box = _Box(spec, design, self_heating, edge, box_factors)
    nominal_points = box.solve({})
    problem = runaway_error(nominal_points, "nominal design point")
    if problem is not None:
        raise problem
    nominal = float(nominal_points.i_out[0])
    runners = {"extreme-value": lambda: _extreme_value(box, box_factors, nominal_points),
               "RSS": lambda: _rss(box, box_factors),
               "Monte Carlo": lambda: _monte_carlo(box, box_factors)}
    results = {name: runners[name]() for name in methods}
    budget = _budget(box, box_factors, nominal_points)
    return WorstCase(spec, design, nominal, results, budget, box_factors, self_heating,
                     _output_mismatch(box, box_factors, nominal_points, budget))
