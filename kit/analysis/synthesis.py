"""From a spec to standard values: size each topology, snap to an E-series, rank by margin.

For every topology (and polarity) that could serve, :func:`synthesize`

1. starts from the topology's default design at the spec's nominal supply and
   mid load voltage;
2. finds the value that sets the current (the one with the largest normalised
   sensitivity) and solves for it so the exact nominal current hits the target;
3. tries the neighbouring standard values of every resistor in the E-series
   that matches the spec's resistor tolerance (IEC 60063, via
   :mod:`kit.analysis.eseries`), solving each candidate exactly at every
   corner of the spec's tolerance box in one vectorised run;
4. confirms the best candidates with the full extreme-value analysis
   (:func:`kit.analysis.worstcase.worst_case`, self-heating and interior
   search included), and ranks them by their margin to the spec.

A topology that cannot meet the spec comes back with the reasons its best
candidate fails (for example "β_F of Q1 alone moves the current by 9 % of the
target").
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq

from kit.analysis import eseries
from kit.analysis.spec import factors
from kit.analysis.worstcase import _Box, _corner_values, worst_case
from kit.model.design import make_design
from kit.errors import DesignError, ParameterError
from kit.quantities import format_quantity

CONFIRMED = 3  # candidates per topology given the full extreme-value analysis, at most
MAX_CANDIDATES = 729  # 3 standard values for each of up to 6 resistors


@dataclass(frozen=True)
class Candidate:
    """One sized design with standard values, judged against the spec."""

    design: object
    nominal: float
    low: float
    high: float
    margin: float
    passed: bool
    method: str
    reasons: tuple = ()

    def to_dict(self):
        return {"topology": self.design.topology.key, "polarity": self.design.polarity,
                "values": dict(self.design.values), "nominal": self.nominal, "low": self.low,
                "high": self.high, "margin": self.margin, "passed": self.passed, "method": self.method,
                "reasons": list(self.reasons)}


@dataclass(frozen=True)
class Synthesis:
    """Ranked candidates and the topologies that cannot meet the spec."""

    spec: object
    series: str
    candidates: list
    infeasible: dict = field(default_factory=dict)  # "topology/polarity" -> reasons

    @property
    def best(self):
        passing = [c for c in self.candidates if c.passed]
        return passing[0] if passing else None

    def to_dict(self):
        return {"spec": self.spec.to_dict(), "series": self.series,
                "candidates": [c.to_dict() for c in self.candidates],
                "infeasible": {k: list(v) for k, v in self.infeasible.items()}}


def _start(topology, polarity, spec):
    values = {v.name: v.default_for(polarity) for v in topology.values}
    if spec.v_supply is not None:
        values["v_supply"] = 0.5 * sum(spec.v_supply)
    if spec.v_load is not None:
        values["v_load"] = 0.5 * sum(spec.v_load)
    temp = 0.5 * sum(spec.temp) if spec.temp is not None else None
    kwargs = {"temp": temp} if temp is not None else {}
    return make_design(topology.key, polarity, **kwargs, **values)


def _setting_value(design):
    """The resistor or current value with the largest normalised sensitivity of I_out."""
    from kit.analysis.evaluation import model_of
    from kit.model.solve import solve_points

    model = model_of(design)
    points = solve_points(model, design.parameters()).require("starting design")
    top = design.topology
    candidates = [v.name for v in top.values
                  if v.kind == "resistor" or (v.kind == "other" and v.unit == "A")]
    slope = points.di_dp[:, 0]
    params = design.parameters()
    return max(candidates, key=lambda n: abs(slope[model.parameter_index[n]] * params[n]))


def _size(design, name, target):
    """Scale value ``name`` so the exact nominal current equals ``target``."""
    from kit.analysis.evaluation import model_of
    from kit.model.solve import solve_points

    model = model_of(design)
    spec = design.topology.value(name)
    base = design.parameters()

    def errors(log_values):
        points = solve_points(model, base | {name: np.exp(np.atleast_1d(log_values))})
        current = np.where(points.i_out > 0, points.i_out, 1e-300)
        return np.where(points.converged, np.log(current / target), np.nan)

    start = np.log(base[name])
    grid = start + np.linspace(-4, 4, 33)
    grid = grid[(grid >= np.log(spec.low)) & (grid <= np.log(spec.high))]
    values = errors(grid)  # one vectorised solve brackets the root
    finite = np.isfinite(values)
    crossings = np.flatnonzero(finite[:-1] & finite[1:] & (np.sign(values[:-1]) != np.sign(values[1:])))
    if crossings.size == 0:
        return None
    k = crossings[np.argmin(np.abs(grid[crossings] - start))]
    root = brentq(lambda v: float(errors(v)[0]), grid[k], grid[k + 1], xtol=1e-10)
    return design.with_values(**{name: float(np.exp(root))})


PLAN_SCALES = (0.3, 1.0, 3.3)  # other resistors tried at these multiples of their defaults
MAX_PLANNED_RESISTORS = 3


def _plans(design, setting):
    """Starting designs: the other resistors at a few multiples of their defaults.

    Moving them moves the bias point (a divider's ratio sets the emitter
    voltage, so the headroom and the supply sensitivity); sizing then fixes
    the current with the setting value.
    """
    others = [n for n in design.topology.resistors if n != setting]
    if not others or len(others) > MAX_PLANNED_RESISTORS:
        return [design]
    plans = []
    for scales in itertools.product(PLAN_SCALES, repeat=len(others)):
        changes = {}
        for n, k in zip(others, scales):
            spec = design.topology.value(n)
            changes[n] = float(np.clip(design.values[n] * k, spec.low, spec.high))
        plans.append(design.with_values(**changes))
    return plans


def _why_unsized(design, spec, name):
    """Reasons no value of ``name`` reaches the target: first, what the load range does."""
    reasons = []
    if spec.v_load is not None:
        box = _Box(spec, design, self_heating=False, edge="vce_sat")
        points = box.solve({"v_load": np.array(spec.v_load)})
        ok, why = box.judge(points)
        reasons += [f"{why[k]} at v_load = {format_quantity(spec.v_load[k], 'V')}" for k in range(2) if not ok[k]]
    return reasons + [f"no value of {name} in its range gives {format_quantity(spec.i_target, 'A')}"]


def _candidates(design, series, setting):
    """Designs with every resistor at one of its neighbouring standard values.

    With more resistors than :data:`MAX_CANDIDATES` allows, only the value
    that sets the current keeps its neighbours; the rest take the nearest.
    """
    top = design.topology
    choices = {}
    for spec in top.values:
        if spec.kind == "resistor":
            near = eseries.neighbours(design.values[spec.name], series, count=1)
            choices[spec.name] = [float(v) for v in near if spec.low <= v <= spec.high]
    if np.prod([len(v) for v in choices.values()]) > MAX_CANDIDATES:
        choices = {n: (v if n == setting else [float(eseries.nearest(design.values[n], series))])
                   for n, v in choices.items()}
    names = list(choices)
    return [design.with_values(**dict(zip(names, combo)))
            for combo in itertools.product(*(choices[n] for n in names))]


def _screen(spec, candidates):
    """Corner-only extreme values of many candidates in one vectorised solve."""
    box = _Box(spec, candidates[0], self_heating=False, edge="vce_sat")
    box_factors = factors(spec, candidates[0])
    corners = _corner_values(box_factors)
    count = len(next(iter(corners.values()))) if corners else 1
    changes = {}
    for name in candidates[0].values:
        changes[name] = np.repeat([c.values[name] for c in candidates], count)
    for f in box_factors:
        # Part tolerances are relative: centre each candidate's box on its own value.
        if f.kind == "part" and f.name in candidates[0].values:
            scale = np.repeat([c.values[f.name] / f.nominal for c in candidates], count)
            changes[f.name] = np.tile(corners[f.name], len(candidates)) * scale
        else:
            changes[f.name] = np.tile(corners[f.name], len(candidates))
    points = box.solve(changes)
    ok, _ = box.judge(points)
    current = points.i_out.reshape(len(candidates), count)
    ok = ok.reshape(len(candidates), count).all(axis=1)
    low, high = current.min(axis=1), current.max(axis=1)
    margins = np.array([spec.margin(lo, hi) for lo, hi in zip(low, high)])
    return np.where(ok, margins, -np.inf)


def synthesize(spec, *, topologies=None, polarities=None):
    """Ranked standard-value designs meeting ``spec`` (see the module docstring).

    Parameters
    ----------
    spec : kit.analysis.spec.Spec
    topologies : sequence of str, optional
        Topology keys to try (default: all).
    polarities : sequence of str, optional
        ``("npn",)`` for a sink, ``("pnp",)`` for a source (default: both).

    Examples
    --------
    >>> from kit.analysis.spec import Spec
    >>> result = synthesize(Spec(2e-3, 0.20, v_load=(2.0, 8.0), resistor_tolerance=0.05),
    ...                     topologies=["divider_source"], polarities=["npn"])
    >>> result.best.passed, result.best.design.values["r_e"] > 0
    (True, True)
    """
    from kit import topologies as registry

    series = eseries.series_for_tolerance(spec.resistor_tolerance or 0.01)
    chosen = [registry.get(k) for k in topologies] if topologies else registry.all_topologies()
    if polarities is not None:
        if isinstance(polarities, str):
            polarities = (polarities,)
        known = sorted({pol for top in chosen for pol in top.polarities})
        if not any(pol in known for pol in polarities):
            # Nothing to try: say so rather than return an empty ranking.
            raise ParameterError("no chosen topology has this polarity", parameter="polarities",
                                 value=list(polarities), valid=", ".join(known))
    ranked, infeasible = [], {}
    for top in chosen:
        for polarity in polarities or top.polarities:
            if polarity not in top.polarities:
                infeasible[f"{top.key}/{polarity}"] = [
                    f"{top.title} has no {polarity} form (it has {' and '.join(top.polarities)})"]
                continue
            key = f"{top.key}/{polarity}"
            try:
                start = _start(top, polarity, spec)
                name = _setting_value(start)
                sized = [d for d in (_size(plan, name, spec.i_target) for plan in _plans(start, name))
                         if d is not None]
                if not sized:
                    infeasible[key] = _why_unsized(start, spec, name)
                    continue
                candidates = [c for d in sized for c in _candidates(d, series, name)]
                margins = _screen(spec, candidates)
                # Confirm in screening order; the first to pass the full analysis is kept.
                confirmed = []
                for k in np.argsort(-margins)[:CONFIRMED]:
                    wc = worst_case(candidates[k], spec, methods=("extreme-value",))
                    eva = wc.methods["extreme-value"]
                    margin = -np.inf if eva.margin is None else eva.margin
                    confirmed.append(Candidate(candidates[k], wc.nominal, eva.low, eva.high, margin,
                                               wc.met, eva.method, tuple(wc.reasons())))
                    if wc.met:
                        break
                best = max(confirmed, key=lambda c: c.margin)
                if best.passed:
                    ranked.append(best)
                else:
                    infeasible[key] = list(best.reasons) or ["worst case leaves the spec"]
            except DesignError as err:
                infeasible[key] = [err.message if err.parameter is None else str(err)]
    ranked.sort(key=lambda c: -c.margin)
    return Synthesis(spec, series, ranked, infeasible)
