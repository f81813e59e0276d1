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

from kit import display
from kit.analysis.spec import SIGMA_PER_TOLERANCE, factors
from kit.analysis.thermal import solve_self_heated
from kit.compliance import cause_text, worst_margin
from kit.evaluation import model_of
from kit.quantities import format_quantity
from kit.solve import solve_points

MAX_CORNER_FACTORS = 14  # 2^14 = 16384 corners; above, extreme corners come from the signs
INTERIOR_SAMPLES = 2048
INTERIOR_SLACK = 1e-9  # relative; below it, "beyond the corners" is solver noise
AXIS_POINTS = 33
METHODS = ("extreme-value", "RSS", "Monte Carlo")


@dataclass(frozen=True)
class MethodResult:
    """The current range one method finds, against the spec."""

    method: str
    low: float
    high: float
    passed: bool
    margin: float  # fraction of the target to spare (< 0: out of spec)
    detail: dict = field(default_factory=dict)
    # Raw arrays for plots (Monte Carlo: "current" (samples, condition points),
    # "ok", "passed" per sample); left out of to_dict.
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


class _Box:
    """Solve the design at many points of the tolerance box and judge each point."""

    def __init__(self, spec, design, self_heating, edge):
        self.spec = spec
        self.design = design
        self.model = model_of(design)
        self.base = design.parameters()
        self.self_heating = self_heating
        self.edge = edge

    def solve(self, changes):
        values = self.base | {k: np.asarray(v, dtype=float) for k, v in changes.items()}
        if self.self_heating:
            return solve_self_heated(self.model, values, self.design.devices)
        return solve_points(self.model, values)

    def judge(self, points):
        """``(ok, reason)`` per point: in the needed regions, within ratings and limit."""
        worst, keys = worst_margin(points, self.design.devices, self.edge)
        ok = worst >= 0
        reasons = np.array([None] * points.size, dtype=object)
        for k in np.flatnonzero(~ok):
            part, cause = keys[k]
            reasons[k] = "no converged solution" if part is None else \
                f"{part} {cause_text(self.model, part, cause)}"
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
        slope = nominal_points.di_dp[:, 0]
        index = box.model.parameter_index
        rng = np.random.default_rng(spec.seed)
        pick = rng.integers(0, 2, size=(4096, len(box_factors))).astype(float)
        signs = np.array([slope[index[f.name]] > 0 for f in box_factors], dtype=float)
        pick = np.vstack([pick, signs, 1 - signs])
        corners = {f.name: f.low + pick[:, i] * (f.high - f.low) for i, f in enumerate(box_factors)}
        note.append(f"{len(pick)} corners (extreme pair by sensitivity signs, rest random)")
    points = box.solve(corners)
    ok, reasons = box.judge(points)
    current = points.i_out
    # Interior extrema: does any sensitivity change sign across the corners?
    index = box.model.parameter_index
    slopes = points.di_dp[[index[f.name] for f in box_factors]][:, points.converged]
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
    parts = [f for f in box_factors if f.kind == "part"]
    corners, count = _condition_corners(box_factors)
    points = box.solve(corners)
    ok, _ = box.judge(points)
    index = box.model.parameter_index
    sigma = np.zeros(points.size)
    for f in parts:
        sigma += (points.di_dp[index[f.name]] * f.half_range / SIGMA_PER_TOLERANCE) ** 2
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


def _draw_parts(spec, design, parts, rng, n):
    draws = {}
    for f in parts:
        if f.distribution == "log-uniform" and f.low > 0:
            draws[f.name] = np.exp(rng.uniform(np.log(f.low), np.log(f.high), n))
        else:
            draws[f.name] = rng.uniform(f.low, f.high, n)
    # Matched groups: one gain for the group, each member within the mismatch of
    # it, kept inside the spec's gain range (clipped at its ends).
    ranges = {f.name: (f.low, f.high) for f in parts}
    for group in spec.matched:
        names = [f"{t}.beta_f" for t in group if f"{t}.beta_f" in draws]
        if names:
            common = draws[names[0]]
            for name in names:
                draws[name] = np.clip(common * (1 + spec.mismatch * rng.uniform(-1, 1, n)), *ranges[name])
    return draws


def _monte_carlo(box, box_factors):
    spec = box.spec
    rng = np.random.default_rng(spec.seed)
    parts = [f for f in box_factors if f.kind == "part"]
    n = spec.samples
    draws = _draw_parts(spec, box.design, parts, rng, n)
    conditions = [f for f in box_factors if f.kind == "condition"]
    levels = [np.linspace(f.low, f.high, 3 if f.name == "temp" else 2) for f in conditions]
    grid = list(itertools.product(*levels)) or [()]
    changes = {name: np.repeat(values, len(grid)) for name, values in draws.items()}
    for i, f in enumerate(conditions):
        changes[f.name] = np.tile([g[i] for g in grid], n)
    if not changes:  # nothing varies: every sample is the nominal point
        changes = {"temp": np.full(n * len(grid), box.base["temp"])}
    points = box.solve(changes)
    ok, _ = box.judge(points)
    current = points.i_out.reshape(n, len(grid))
    ok = ok.reshape(n, len(grid))
    lo, hi = spec.limits
    good = ok.all(axis=1) & np.all((current >= lo) & (current <= hi), axis=1)
    yield_ = float(good.mean())
    valid = current[ok]
    percentiles = {str(p): float(np.percentile(valid, p)) for p in (0.135, 1, 50, 99, 99.865)} \
        if valid.size else {}
    low, high = _valid_range(current, ok)
    _, margin = _verdict(spec, low, high, ok.all())
    passed = yield_ == 1.0
    return MethodResult("Monte Carlo", low, high, passed, margin, {
        "samples": n, "seed": spec.seed, "condition_points": len(grid), "yield": yield_,
        "yield_standard_error": float(np.sqrt(max(yield_ * (1 - yield_), 1e-300) / n)),
        "percentiles": percentiles, "failing_samples": int((~good).sum()),
        "distributions": {f.name: ("log-uniform" if f.distribution == "log-uniform" else "uniform")
                          for f in parts},
        "matched": [list(g) for g in spec.matched], "mismatch": spec.mismatch,
        "how": "parts drawn per sample, each sample solved at every condition level"},
        arrays={"current": current, "ok": ok, "passed": good, "draws": draws})


def _budget(box, box_factors, nominal_points):
    """Each factor alone: parts at every corner of the conditions, conditions from nominal.

    A part's swing is taken at the condition corner where it is largest, so a
    TCR (which does nothing at the reference temperature) is charged what it
    does at the temperature extremes.
    """
    index = box.model.parameter_index
    parts = [f for f in box_factors if f.kind == "part"]
    conditions = [f for f in box_factors if f.kind == "condition"]
    corners, count = _condition_corners(box_factors)
    rows = 1 + 2 * len(parts)  # nominal parts, then each part at its low and high end
    changes = {f.name: np.full((rows, count), f.nominal) for f in parts}
    for i, f in enumerate(parts):
        changes[f.name][1 + 2 * i] = f.low
        changes[f.name][2 + 2 * i] = f.high
    for name, values in corners.items():
        changes[name] = np.broadcast_to(values, (rows, count))
    points = box.solve({k: np.ravel(v) for k, v in changes.items()})
    ok = box.judge(points)[0].reshape(rows, count)
    current = points.i_out.reshape(rows, count)
    # Only solved, valid points count: a run-away or saturated point has no current to compare.
    swings = [_largest_change(current[1 + 2 * i: 3 + 2 * i], current[0], ok[1 + 2 * i: 3 + 2 * i] & ok[0])
              for i in range(len(parts))]
    if conditions:
        alone = {f.name: np.full(2 * len(conditions), f.nominal) for f in conditions}
        for i, f in enumerate(conditions):
            alone[f.name][2 * i], alone[f.name][2 * i + 1] = f.low, f.high
        moved_points = box.solve(alone)
        moved_ok = box.judge(moved_points)[0].reshape(len(conditions), 2)
        moved = moved_points.i_out.reshape(len(conditions), 2)
        swings += [_largest_change(m, nominal_points.i_out[0], k) for m, k in zip(moved, moved_ok)]
    ordered = parts + conditions
    total = float(sum(swings)) or 1.0
    slope = nominal_points.di_dp[:, 0]
    entries = [BudgetEntry(f.name, f.label, f.kind, float(s), float(abs(slope[index[f.name]]) * f.half_range),
                           float(s / total)) for f, s in zip(ordered, swings)]
    return sorted(entries, key=lambda e: -e.swing)


def _largest_change(values, reference, ok):
    changes = np.abs(np.asarray(values) - reference)[np.asarray(ok)]
    return float(changes.max()) if changes.size else 0.0


class WorstCase:
    """The spec checked three ways (see the module docstring).

    ``met`` is the guarantee: the extreme-value bound inside the limits and
    no point out of the needed regions, ratings or limits.
    """

    def __init__(self, spec, design, nominal, methods, budget, box_factors, self_heating):
        self.spec = spec
        self.design = design
        self.nominal = nominal
        self.methods = methods
        self.budget = budget
        self.factors = box_factors
        self.self_heating = self_heating

    @property
    def met(self):
        return self.methods["extreme-value"].passed

    def reasons(self):
        """Why the spec is not met, in words (empty when it is)."""
        out = list(self.methods["extreme-value"].detail["failures"])
        band = 2 * self.spec.tolerance * self.spec.i_target
        for entry in self.budget:
            if entry.swing > band / 2:
                out.append(f"{entry.label} alone moves the current by {entry.swing / self.spec.i_target:.2%} "
                           f"of the target (the spec allows ±{self.spec.tolerance:.2%})")
        eva = self.methods["extreme-value"]
        if not out and not eva.passed:
            low, high, _ = eva.texts()
            out.append(f"worst case {low} … {high} leaves the spec")
        return out

    def to_dict(self):
        return {"spec": self.spec.to_dict(), "design": self.design.to_dict(), "nominal": self.nominal,
                "met": self.met, "self_heating": self.self_heating,
                "methods": {k: m.to_dict() for k, m in self.methods.items()},
                "budget": [b.to_dict() for b in self.budget], "reasons": self.reasons(),
                "factors": [{"name": f.name, "nominal": f.nominal, "low": f.low, "high": f.high,
                             "kind": f.kind, "distribution": f.distribution} for f in self.factors]}

    def text(self):
        lo, hi = self.spec.limits
        lines = [f"spec {format_quantity(self.spec.i_target, 'A', 4)} ± {self.spec.tolerance:.2%}"
                 f" ({format_quantity(lo, 'A', 4)} … {format_quantity(hi, 'A', 4)}),"
                 f" nominal {format_quantity(self.nominal, 'A', 4)}",
                 f"self-heating {'included' if self.self_heating else 'not included'}"]
        for m in self.methods.values():
            verdict = "PASS" if m.passed else "FAIL"
            extra = f", yield {m.detail['yield']:.2%}" if "yield" in m.detail else ""
            low, high, margin = m.texts()
            lines.append(f"  {m.method:<14} {low:>10} … {high:<10} margin {margin}  {verdict}{extra}")
        lines.append("error budget (each factor alone, exact)")
        for b in self.budget:
            lines.append(f"  {b.label:<22} {format_quantity(b.swing, 'A'):>9}  {b.share:6.1%}")
        for reason in self.reasons():
            lines.append(f"  ! {reason}")
        lines.append("verdict: " + ("spec met (extreme-value bound)" if self.met else "spec NOT met"))
        return "\n".join(lines)

    def _repr_html_(self):
        rows = []
        for m in self.methods.values():
            css = "bb-ok" if m.passed else "bb-bad"
            rows.append([m.method, *m.texts(), display.Raw(f'<span class="{css}">{"pass" if m.passed else "fail"}</span>'),
                         m.detail.get("how", "")])
        methods = display.table(["method", "lowest", "highest", "margin", "verdict", "how"], rows,
                                numeric=(1, 2, 3))
        budget = display.table(["factor", "kind", "swing alone", "linear estimate", "share"],
                               [[b.label, b.kind, format_quantity(b.swing, "A"), format_quantity(b.linear, "A"),
                                 f"{b.share:.1%}"] for b in self.budget], numeric=(2, 3, 4))
        lo, hi = self.spec.limits
        head = (f"<p>Spec {format_quantity(self.spec.i_target, 'A', 4)} ± {self.spec.tolerance:.2%} "
                f"({format_quantity(lo, 'A', 4)} … {format_quantity(hi, 'A', 4)}); nominal "
                f"{format_quantity(self.nominal, 'A', 4)}; self-heating "
                f"{'included' if self.self_heating else 'not included'}. "
                f"RSS takes ± tolerance as ±{SIGMA_PER_TOLERANCE:g} σ.</p>")
        reasons = "".join(f"<li>{display.escape(r)}</li>" for r in self.reasons())
        verdict = ('<p class="bb-ok">Spec met (extreme-value bound).</p>' if self.met
                   else f'<p class="bb-bad">Spec not met.</p><ul>{reasons}</ul>')
        return display.wrap(display.section("Worst case", head + methods + verdict)
                            + display.section("Error budget (each factor alone, exact solve)", budget))


def worst_case(design, spec, *, self_heating=True, edge="vce_sat", methods=METHODS):
    """Check ``design`` against ``spec`` by extreme values, RSS and Monte Carlo.

    Examples
    --------
    >>> import kit
    >>> from kit.analysis.spec import Spec
    >>> d = kit.design("divider_source")
    >>> wc = worst_case(d, Spec(0.95e-3, 0.10, v_load=(4.0, 10.0)), methods=("extreme-value",))
    >>> wc.met
    True
    """
    box_factors = factors(spec, design)
    box = _Box(spec, design, self_heating, edge)
    nominal_points = box.solve({})
    nominal_points.require("nominal design point")
    nominal = float(nominal_points.i_out[0])
    runners = {"extreme-value": lambda: _extreme_value(box, box_factors, nominal_points),
               "RSS": lambda: _rss(box, box_factors),
               "Monte Carlo": lambda: _monte_carlo(box, box_factors)}
    results = {name: runners[name]() for name in methods}
    return WorstCase(spec, design, nominal, results, _budget(box, box_factors, nominal_points),
                     box_factors, self_heating)
