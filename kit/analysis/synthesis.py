"""From a spec to standard values: size each topology, snap to an E-series, rank by margin.

Synthesis starts from the engineer's record when it is given one
(``start=``): every value, part and condition it does not search is kept
exactly — the reference's drift, the op-amp's offset and its drift, the
load voltage, the temperature, the title, each part's model (gain, thermal
resistance, breakdown).  Only the resistors and the one value that sets the
current are searched.  For every topology (and polarity) that could serve,
:func:`synthesize`

1. starts from the record's values where the topology has them, else the
   topology's defaults (without a record: the defaults at the spec's mid
   supply, load voltage and temperature);
2. fits the spec to the topology: an entry that names nothing in it (a bound
   on an op-amp's offset for a circuit with no op-amp, a resistor's own
   tolerance) is skipped, and the skip is reported with its reason;
3. finds the value that sets the current (the one with the largest normalised
   sensitivity) and solves for it so the exact nominal current hits the target;
4. tries the neighbouring standard values of every resistor in the chosen
   E-series (by default the one customary for the spec's resistor tolerance;
   any series can be asked for with any tolerance), IEC 60063 via
   :mod:`kit.analysis.eseries`;
5. screens every candidate in one batched exact solve: at each corner of the
   conditions (supply, load, temperature) the exact sensitivities give the
   corner of the parts' box where the current is lowest and where it is
   highest, and those points are solved exactly (3 points per condition
   corner instead of every corner of the whole box);
6. confirms the best screened candidates with the full extreme-value analysis
   (:func:`kit.analysis.worstcase.worst_case`: every corner, interior search,
   self-heating), and ranks them by their margin to the spec.

Candidates that lean on something from outside the circuit — an ideal
reference current, a set voltage — are ranked apart from self-contained
ones; each held value that is ideal (a zero tolerance, a zero drift) is
flagged.  A topology that cannot meet the spec comes back with the reasons
its best candidate fails (for example "β_F of Q1 alone moves the current by
9 % of the target").
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field, replace

import numpy as np

from kit.analysis import eseries
from kit.analysis.spec import factors
from kit.analysis.worstcase import _Box, worst_case
from kit.errors import DesignError, ParameterError
from kit.model.design import make_design, typical_device
from kit.quantities import format_quantity

CONFIRMED = 3  # candidates per topology given the full extreme-value analysis, at most
MAX_CANDIDATES = 729  # 3 standard values for each of up to 6 resistors
# Values fed from outside the circuit as ideal sources: set by an ideal voltage
# (an op-amp's set input, a cascode's bias, a transconductor's input).  An ideal
# reference *current* is found from the circuit itself (a current-source part).
REFERENCE_VOLTAGES = ("v_set", "v_bias", "v_in")
SOURCE_KIND = "source"
# Held values whose zero is an idealisation: a drift (per kelvin) of a reference
# value, or a part parameter with volts per kelvin (an offset's drift).
DRIFT_UNITS = ("1/K", "V/K", "A/K")


@dataclass(frozen=True)
class Candidate:
    """One sized design with standard values, judged against the spec.

    ``searched`` names the values the synthesis chose; ``held`` maps every
    other value and condition to ``(value, source)`` with source
    ``"record"``, ``"default"`` (the topology's or the part's typical value)
    or ``"spec"`` (the middle of the spec's range); ``parts`` maps each part
    to ``"record"`` or ``"typical"``.  ``ideal`` lists ``(name, why)`` for
    held values that are idealisations (``why``: ``"reference current"``,
    ``"reference voltage"``, ``"zero tolerance"``, ``"zero drift"``);
    ``references`` names what must come from outside (empty: self-contained).
    ``bounds`` says how each of the spec's bounds was applied, ``skipped``
    which spec entries did not apply to this topology and why.
    """

    design: object
    nominal: float
    low: float
    high: float
    margin: float
    passed: bool
    method: str
    reasons: tuple = ()
    searched: tuple = ()
    held: dict = field(default_factory=dict)
    parts: dict = field(default_factory=dict)
    ideal: tuple = ()
    references: tuple = ()
    bounds: tuple = ()
    skipped: tuple = ()

    @property
    def self_contained(self):
        """True when nothing but the supply comes from outside the circuit."""
        return not self.references

    def to_dict(self):
        return {"topology": self.design.topology.key, "polarity": self.design.polarity,
                "values": dict(self.design.values), "nominal": self.nominal, "low": self.low,
                "high": self.high, "margin": self.margin, "passed": self.passed, "method": self.method,
                "reasons": list(self.reasons), "searched": list(self.searched),
                "held": {k: {"value": v, "source": s} for k, (v, s) in self.held.items()},
                "parts": dict(self.parts), "self_contained": self.self_contained,
                "references": list(self.references),
                "ideal": [{"name": n, "why": w} for n, w in self.ideal],
                "bounds": [dict(b) for b in self.bounds],
                "skipped": [{"entry": e, "why": w} for e, w in self.skipped],
                "design": self.design.to_dict()}


@dataclass(frozen=True)
class Synthesis:
    """Ranked candidates, apart by whether they need an external reference.

    ``candidates`` holds the designs that meet the spec in two rankings one
    after the other: the self-contained ones, best margin first
    (:attr:`self_contained`), then those that need an external (ideal)
    reference, ranked among themselves (:attr:`referenced`).  ``infeasible`` maps
    ``"topology/polarity"`` to the reasons it cannot meet the spec,
    ``skipped`` to the spec entries that did not apply to it; ``rejected``
    holds the best confirmed (failing) candidate of each topology that had
    one, so the nearest miss can be looked at.  ``defaults``
    lists what the analysis assumed: ``{"name", "value", "given"}`` with
    ``given`` False where nobody wrote it.
    """

    spec: object
    series: str
    candidates: list
    infeasible: dict = field(default_factory=dict)
    skipped: dict = field(default_factory=dict)
    defaults: tuple = ()
    tolerance: float = 0.0
    rejected: list = field(default_factory=list)

    @property
    def self_contained(self):
        """The candidates that need nothing from outside but the supply, ranked."""
        return [c for c in self.candidates if c.self_contained]

    @property
    def referenced(self):
        """The candidates that need an external (ideal) reference, ranked apart."""
        return [c for c in self.candidates if not c.self_contained]

    @property
    def best(self):
        """The best passing self-contained design, else the best needing a reference, else None."""
        passing = [c for c in self.candidates if c.passed]
        return passing[0] if passing else None

    def to_dict(self):
        return {"spec": self.spec.to_dict(), "series": self.series,
                "resistor_tolerance": self.tolerance,
                "defaults": [dict(d) for d in self.defaults],
                "candidates": [c.to_dict() for c in self.candidates],
                "infeasible": {k: list(v) for k, v in self.infeasible.items()},
                "rejected": [c.to_dict() for c in self.rejected],
                "skipped": {k: [{"entry": e, "why": w} for e, w in v] for k, v in self.skipped.items()}}


# --- the starting design: the record's values, parts and conditions ------------------

def _polarity_for(top, sense):
    """The topology's polarity word for a sink (``"n"``) or a source (``"p"``), or None."""
    index = 0 if sense == "n" else 1
    return top.polarities[index] if index < len(top.polarities) else None


def _start(top, polarity, spec, record):
    """``(design, held sources, part sources)``: the record's where it fits, else the defaults."""
    from kit.model.structure import structure

    sources = {}
    if record is None:
        values = {v.name: v.default_for(polarity) for v in top.values}
        sources = {v.name: "default" for v in top.values}
        for name, bounds in (("v_supply", spec.v_supply), ("v_load", spec.v_load)):
            if bounds is not None:
                values[name], sources[name] = 0.5 * sum(bounds), "spec"
        temp = 0.5 * sum(spec.temp) if spec.temp is not None else None
        kwargs = {"temp": temp} if temp is not None else {}
        design = make_design(top.key, polarity, **kwargs, **values)
        sources["temp"] = "spec" if temp is not None else "default"
        sources["t_ref"] = "default"
        return design, sources, {p.name: "typical" for p in design.structure.devices}
    values = {}
    for v in top.values:
        own = record.values.get(v.name)
        if own is not None and v.low <= own <= v.high:
            values[v.name], sources[v.name] = own, "record"
        else:
            values[v.name], sources[v.name] = v.default_for(polarity), "default"
    s = structure(top, polarity)
    devices, parts = {}, {}
    for part in s.devices:
        mine = record.devices.get(part.name)
        if mine is not None and mine.kind is part.kind and mine.sense == part.sense:
            devices[part.name], parts[part.name] = mine, "record"
        else:
            devices[part.name], parts[part.name] = typical_device(part), "typical"
    resistors = set(top.resistors)
    design = make_design(top.key, polarity, devices=devices, temp=record.temp, t_ref=record.t_ref,
                         tcr={k: v for k, v in record.tcr.items() if k in resistors},
                         ratings={k: v for k, v in record.ratings.items() if k in resistors},
                         hand={k: v for k, v in record.hand.items() if k in s.hand_parameters},
                         t_rise={k: v for k, v in record.t_rise.items() if parts.get(k) == "record"},
                         title=record.title, **values)
    sources["temp"] = sources["t_ref"] = "record"
    return design, sources, parts


# --- the spec fitted to one topology --------------------------------------------------

def _fit_spec(spec, design):
    """``(spec, skipped)``: the spec without the entries that name nothing in ``design``.

    ``skipped`` is a tuple of ``(entry, why)``.  The polarity words ``npn``
    and ``pnp`` name every transistor of that kind; where there is none the
    gain range does not apply and is reported as skipped.
    """
    params = design.parameters()
    words = design.vocabulary
    transistors = {name: m for name, m in design.devices.items() if "beta_f" in m.values}
    polarities = {m.polarity for m in transistors.values()}
    skipped = []
    beta = {}
    for key, bounds in spec.beta.items():
        if key in transistors or key in polarities:
            beta[key] = bounds
        else:
            skipped.append((f"beta.{key}", f"no {key} transistor with a forward gain β_F here"
                            if key in ("npn", "pnp") else f"no bipolar transistor {key} here"))
    resistors = set(design.topology.resistors)
    tables = {}
    for table in ("tolerances", "tcrs"):
        tables[table] = {k: v for k, v in getattr(spec, table).items() if k in resistors}
        skipped += [(f"{table}.{k}", f"no resistor {k} here") for k in getattr(spec, table) if k not in resistors]
    varied = set()
    for name in design.topology.resistors:
        if tables["tolerances"].get(name, spec.resistor_tolerance):
            varied.add(name)
    varied |= {n for n, b in (("v_supply", spec.v_supply), ("v_load", spec.v_load), ("temp", spec.temp))
               if b is not None}
    bounds = {}
    for name, (low, high) in spec.bounds.items():
        if name not in params:
            skipped.append((f"bounds.{name}", f"{name} is no value or part parameter here"))
        elif name in varied:
            skipped.append((f"bounds.{name}", f"{name} is already varied by the spec here"))
        elif not (words[name].low <= low <= high <= words[name].high):
            skipped.append((f"bounds.{name}", f"outside the valid range of {name} here ({words[name].valid})"))
        else:
            bounds[name] = (low, high)
    matched = []
    for group in spec.matched:
        stray = [n for n in group if n not in design.devices]
        if stray:
            skipped.append(("matched", f"no transistor {stray[0]} here"))
        else:
            matched.append(group)
    fitted = replace(spec, beta=beta, tolerances=tables["tolerances"], tcrs=tables["tcrs"], bounds=bounds,
                     matched=tuple(matched))
    return fitted, tuple(skipped)


def _inside_bounds(design, spec, sources, searched):
    """Move each held value outside its spec bound to the bound's middle (an absolute bound rules)."""
    params = design.parameters()
    for name, (low, high) in spec.bounds.items():
        if name in searched or low <= params[name] <= high:
            continue
        design = design.with_parameter(name, 0.5 * (low + high))
        sources[name] = "spec"
    return design


def _bounds_around(spec, design, start_params, searched):
    """``(spec, how)``: bounds on searched values moved with the chosen value.

    A bound on a held value is absolute (applied as written).  A bound on a
    searched value keeps its ratio to the starting value (relative); from a
    starting value of zero, its offset.
    """
    bounds, how = dict(spec.bounds), []
    params = design.parameters()
    for name, (low, high) in spec.bounds.items():
        if name not in searched:
            how.append({"name": name, "low": low, "high": high, "applied": "absolute"})
            continue
        origin, now = start_params[name], params[name]
        if origin != 0:
            bounds[name] = (low * now / origin, high * now / origin)
            applied = "relative"
        else:
            bounds[name] = (now + low, now + high)
            applied = "offset"
        bounds[name] = tuple(sorted(bounds[name]))
        how.append({"name": name, "low": bounds[name][0], "high": bounds[name][1], "applied": applied})
    return replace(spec, bounds=bounds), tuple(how)


# --- held values: where each came from and which are ideal ---------------------------

def _references(design):
    """What must come from outside the circuit: its ideal current sources and set voltages."""
    out = [f"{p.name} (ideal reference current)" for p in design.structure.parts
           if getattr(p.kind, "key", None) == SOURCE_KIND]
    out += [name for name in REFERENCE_VOLTAGES if name in design.values]
    return tuple(out)


def _ideal(design, spec, searched):
    """``(name, why)`` for each held value that is an idealisation."""
    out = []
    for p in design.structure.parts:
        if getattr(p.kind, "key", None) == SOURCE_KIND:
            out.append((p.name, "reference current"))
    for name in REFERENCE_VOLTAGES:
        if name in design.values:
            out.append((name, "reference voltage"))
    params = design.parameters()
    words = design.vocabulary
    varied = set(spec.bounds)
    for name in design.topology.resistors:
        if spec.tolerances.get(name, spec.resistor_tolerance) == 0:
            out.append((name, "zero tolerance"))
        if spec.temp is not None and params[f"tcr_{name}"] == 0 and spec.tcrs.get(name, spec.resistor_tcr) == 0:
            out.append((f"tcr_{name}", "zero drift"))
    for name, e in words.items():
        if name in searched or name in varied or params.get(name) != 0:
            continue
        drift = (e.group == "value" and e.unit == "1/K") or (e.group == "device" and e.unit in DRIFT_UNITS[1:])
        if drift:
            out.append((name, "zero drift"))
    return tuple(out)


def _held(design, sources, searched):
    held = {n: (float(v), sources.get(n, "default")) for n, v in design.values.items() if n not in searched}
    held["temp"] = (design.temp, sources.get("temp", "default"))
    held["t_ref"] = (design.t_ref, sources.get("t_ref", "default"))
    for name in design.topology.resistors:
        held[f"tcr_{name}"] = (float(design.tcr.get(name, 0.0)), "record" if name in design.tcr else "default")
    for name, source in sources.items():  # values moved into a spec bound
        if source == "spec" and name not in held and name not in searched:
            held[name] = (float(design.parameters()[name]), source)
    return held


# --- sizing ---------------------------------------------------------------------------

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


SIZE_ITERATIONS = 60
SIZE_TOLERANCE = 1e-10  # in log(current): the sized nominal current within 1e-10 of the target


def _size_all(plans, name, target):
    """Each plan with value ``name`` scaled so its exact nominal current equals ``target``.

    One batched solve over a log grid brackets every plan's root (the
    crossing nearest its starting value); then all plans are refined
    together by Newton's method on log(value) with the exact sensitivity,
    kept inside the bracket (a step leaving it bisects instead).  Plans with
    no root in the value's range are dropped.
    """
    from kit.analysis.evaluation import model_of
    from kit.model.solve import solve_points

    model = model_of(plans[0])
    spec = plans[0].topology.value(name)
    row = model.parameter_index[name]
    offsets = np.linspace(-4, 4, 33)
    bases = [p.parameters() for p in plans]
    columns = {k: np.array([b[k] for b in bases]) for k in bases[0]}
    starts = np.log(columns[name])
    grid = starts[:, None] + offsets[None, :]
    inside = (grid >= np.log(spec.low)) & (grid <= np.log(spec.high))
    values = {k: np.repeat(v, offsets.size) for k, v in columns.items()}
    values[name] = np.exp(np.clip(grid, np.log(spec.low), np.log(spec.high))).ravel()
    points = solve_points(model, values)
    current = np.where(points.i_out > 0, points.i_out, 1e-300)
    errors = np.where(points.converged, np.log(current / target), np.nan).reshape(grid.shape)
    errors = np.where(inside, errors, np.nan)
    finite = np.isfinite(errors)
    crossing = finite[:, :-1] & finite[:, 1:] & (np.sign(errors[:, :-1]) != np.sign(errors[:, 1:]))
    distance = np.where(crossing, np.abs(grid[:, :-1] - starts[:, None]), np.inf)
    found = crossing.any(axis=1)
    if not found.any():
        return []
    keep = np.flatnonzero(found)
    j = np.argmin(distance[keep], axis=1)
    a, b = grid[keep, j], grid[keep, j + 1]
    fa = errors[keep, j]
    x = np.where(np.abs(fa) < np.abs(errors[keep, j + 1]), a, b)
    sub = {k: v[keep] for k, v in columns.items()}
    done = np.zeros(keep.size, dtype=bool)
    ok = np.zeros(keep.size, dtype=bool)
    for _ in range(SIZE_ITERATIONS):
        todo = np.flatnonzero(~done)
        if todo.size == 0:
            break
        pts = solve_points(model, {k: v[todo] for k, v in sub.items()} | {name: np.exp(x[todo])})
        good = pts.converged & (pts.i_out > 0)
        e = np.where(good, np.log(np.where(good, pts.i_out, 1.0) / target), np.nan)
        converged = good & (np.abs(e) <= SIZE_TOLERANCE)
        ok[todo[converged]] = True
        done[todo[converged]] = True
        # Keep the bracket: the end whose error has the sign of e moves to x.
        same = good & (np.sign(e) == np.sign(fa[todo]))
        a[todo[same]], fa[todo[same]] = x[todo[same]], e[same]
        b[todo[good & ~same]] = x[todo[good & ~same]]
        slope = pts.di_dp[row] * np.exp(x[todo]) / np.where(good, pts.i_out, 1.0)  # dlog I / dlog value
        with np.errstate(divide="ignore", invalid="ignore"):
            step = x[todo] - e / slope
        lo, hi = np.minimum(a[todo], b[todo]), np.maximum(a[todo], b[todo])
        bisect = ~good | ~np.isfinite(step) | (step <= lo) | (step >= hi)
        x[todo] = np.where(converged, x[todo], np.where(bisect, 0.5 * (lo + hi), step))
        done[todo[(hi - lo) < 1e-13]] = True
    return [plans[keep[k]].with_values(**{name: float(np.exp(x[k]))}) for k in np.flatnonzero(ok)]


PLAN_SCALES = (0.3, 1.0, 3.3)  # other resistors tried at these multiples of their starting values
MAX_PLANNED_RESISTORS = 3


def _plans(design, setting):
    """Starting designs: the other resistors at a few multiples of their starting values.

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


def _why_unsized(design, spec, name, edge):
    """Reasons no value of ``name`` reaches the target: first, what the load range does."""
    reasons = []
    if spec.v_load is not None:
        box = _Box(spec, design, self_heating=False, edge=edge)
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


def _unique(designs):
    seen, out = set(), []
    for d in designs:
        key = tuple(sorted(d.values.items()))
        if key not in seen:
            seen.add(key)
            out.append(d)
    return out


# --- screening: exact solves at the corners the sensitivities point to -----------------

def _screen(spec, candidates, searched, edge):
    """Margins of many candidates from three exact points per corner of the conditions.

    At every corner of the conditions each candidate is solved with its
    parts nominal; the signs of the exact sensitivities there give the
    corner of the parts' box with the lowest and the highest current, and
    both are solved too.  The bound is exact for a current monotonic in
    each part (the extreme-value analysis of the survivors checks the rest).
    Part factors of searched values (a resistor's tolerance, a bound moved
    with its value) are centred on each candidate's own value.
    """
    first = candidates[0]
    box = _Box(spec, first, self_heating=False, edge=edge)
    box_factors = factors(spec, first)
    parts = [f for f in box_factors if f.kind != "condition"]  # parts, matched groups, mismatches
    conditions = [f for f in box_factors if f.kind == "condition"]
    grid = np.array(list(itertools.product((0.0, 1.0), repeat=len(conditions))))
    count = len(grid)  # condition corners (1 without any)
    n = len(candidates)
    own = {name: np.array([c.values[name] for c in candidates]) for name in first.values}

    def part_ends(f):
        """(low, nominal, high) per candidate."""
        if f.name in searched and f.name in own:
            now = own[f.name]
            if f.nominal != 0:
                return f.low * now / f.nominal, now, f.high * now / f.nominal
            return now + (f.low - f.nominal), now, now + (f.high - f.nominal)
        ones = np.ones(n)
        return f.low * ones, f.nominal * ones, f.high * ones

    ends = {f.name: part_ends(f) for f in parts}
    changes = {name: np.repeat(v, count) for name, v in own.items()}
    for i, f in enumerate(conditions):
        changes[f.name] = np.tile(f.low + grid[:, i] * (f.high - f.low), n)
    for f in parts:
        changes[f.name] = np.repeat(ends[f.name][1], count)
    nominal = box.solve(changes)
    slopes = box.slopes(nominal, parts) if parts else np.zeros((0, n * count))
    low_changes, high_changes = dict(changes), dict(changes)
    for k, f in enumerate(parts):
        lo, hi = (np.repeat(e, count) for e in (ends[f.name][0], ends[f.name][2]))
        rising = slopes[k] >= 0
        low_changes[f.name] = np.where(rising, lo, hi)
        high_changes[f.name] = np.where(rising, hi, lo)
    both = {name: np.concatenate([low_changes[name], high_changes[name]]) for name in changes}
    extremes = box.solve(both)
    ok = np.concatenate([box.judge(nominal)[0], box.judge(extremes)[0]]).reshape(3, n, count)
    current = np.concatenate([nominal.i_out, extremes.i_out]).reshape(3, n, count)
    valid = ok.all(axis=(0, 2))
    low = np.where(ok, current, np.inf).min(axis=(0, 2))
    high = np.where(ok, current, -np.inf).max(axis=(0, 2))
    lo_limit, hi_limit = spec.limits
    margins = np.minimum(low - lo_limit, hi_limit - high) / spec.i_target
    return np.where(valid, margins, -np.inf)


# --- one topology -----------------------------------------------------------------------

def _one(top, polarity, spec, record, series, self_heating, edge):
    """``(best candidate or None, reasons, skipped)`` for one topology and polarity.

    The candidate is returned whether it passed or not (``reasons`` empty
    when it did); None when no value of the setting value reaches the target.
    """
    start, sources, parts = _start(top, polarity, spec, record)
    fitted, skipped = _fit_spec(spec, start)
    name = _setting_value(start)
    searched = tuple(dict.fromkeys([*top.resistors, name]))
    start = _inside_bounds(start, fitted, sources, searched)
    start_params = start.parameters()
    plans = _plans(start, name)
    sized = _size_all(plans, name, spec.i_target)
    if not sized:
        return None, _why_unsized(start, fitted, name, edge), skipped
    candidates = _unique([c for d in sized for c in _candidates(d, series, name)])
    around = [_bounds_around(fitted, c, start_params, searched)[0] for c in candidates]
    # One screen per distinct bound set (bounds on a searched value differ per candidate).
    if any(s.bounds != fitted.bounds for s in around):
        margins = np.array([_screen(s, [c], searched, edge)[0] for s, c in zip(around, candidates)])
    else:
        margins = _screen(fitted, candidates, searched, edge)
    references = _references(start)
    confirmed = []
    for k in np.argsort(-margins)[:CONFIRMED]:
        if confirmed and margins[k] < 0:
            break  # the screen already sees it fail at exactly solved points: no second opinion needed
        c = candidates[k]
        own_spec, how = _bounds_around(fitted, c, start_params, searched)
        wc = worst_case(c, own_spec, methods=("extreme-value",), self_heating=self_heating, edge=edge)
        eva = wc.methods["extreme-value"]
        margin = -np.inf if eva.margin is None else eva.margin
        confirmed.append(Candidate(c, wc.nominal, eva.low, eva.high, margin, wc.met, eva.method,
                                   tuple(wc.reasons()), searched, _held(c, sources, searched), dict(parts),
                                   _ideal(c, own_spec, searched), references, how, skipped))
        if wc.met:
            break
    best = max(confirmed, key=lambda c: c.margin)
    if best.passed:
        return best, [], skipped
    return best, list(best.reasons) or ["worst case leaves the spec"], skipped


def _series(series, tolerance):
    """The E-series asked for, or the one customary for ``tolerance``."""
    if series is None:
        return eseries.series_for_tolerance(tolerance or 0.01)
    name = series.strip().upper() if isinstance(series, str) else series
    eseries.decade_values(name)  # refuses an unknown series, naming the valid ones
    return str(name) if isinstance(name, str) else f"E{int(name)}"


def _defaults(spec, record, series, self_heating):
    """What the analysis applies, and whether anyone wrote it."""
    assumed = set(spec.assumed)
    tcr_centre = {} if record is None else {n: float(record.tcr.get(n, 0.0)) for n in record.topology.resistors}
    return (
        {"name": "resistor_tolerance", "value": spec.resistor_tolerance,
         "given": "resistor_tolerance" not in assumed},
        {"name": "resistor_tcr", "value": spec.resistor_tcr, "given": "resistor_tcr" not in assumed},
        {"name": "tcr_centre", "value": tcr_centre,
         "given": record is not None and bool(record.tcr)},
        {"name": "self_heating", "value": True if self_heating is None else bool(self_heating),
         "given": self_heating is not None},
        {"name": "series", "value": series["name"], "given": series["given"]},
    )


def synthesize(spec, *, start=None, topologies=None, polarities=None, series=None, self_heating=None,
               edge="vce_sat", progress=None):
    """Ranked standard-value designs meeting ``spec`` (see the module docstring).

    Parameters
    ----------
    spec : kit.analysis.spec.Spec
    start : kit.model.design.Design, optional
        The record's design: every value, part and condition not searched is
        kept from it (by name, in other topologies too).  Without it each
        topology starts from its defaults at the middle of the spec's ranges.
    topologies : sequence of str, optional
        Topology keys to try (default: all).
    polarities : sequence of str, optional
        Polarity words (``("npn",)``).  Default: with ``start``, the
        polarity of each topology that works like the record's (sink or
        source); without, every polarity.
    series : str, optional
        E-series of the resistors (``"E24"``), independent of the spec's
        resistor tolerance; default the series customary for that tolerance.
    self_heating : bool, optional
        Confirm with junctions at ambient + theta_JA x dissipation (default True).
    edge : {"vce_sat", "vcb_zero"}
        Saturation criterion.
    progress : callable, optional
        Called as ``progress(index, total, "topology/polarity")`` before each
        topology is tried (index from 1).

    Examples
    --------
    >>> from kit.analysis.spec import Spec
    >>> result = synthesize(Spec(2e-3, 0.20, v_load=(2.0, 8.0), resistor_tolerance=0.05),
    ...                     topologies=["divider_source"], polarities=["npn"])
    >>> result.best.passed, result.best.design.values["r_e"] > 0
    (True, True)
    """
    from kit import topologies as registry

    if progress is not None and not callable(progress):
        raise ParameterError("must be callable", parameter="progress", value=progress,
                             valid="a function of (index, total, key)")
    chosen_series = {"name": _series(series, spec.resistor_tolerance), "given": series is not None}
    chosen = [registry.get(k) for k in topologies] if topologies else registry.all_topologies()
    if polarities is not None:
        if isinstance(polarities, str):
            polarities = (polarities,)
        known = sorted({pol for top in chosen for pol in top.polarities})
        if not any(pol in known for pol in polarities):
            # Nothing to try: say so rather than return an empty ranking.
            raise ParameterError("no chosen topology has this polarity", parameter="polarities",
                                 value=list(polarities), valid=", ".join(known))
    plan, missing = [], {}
    for top in chosen:
        if polarities:
            wanted = [p for p in polarities if p in top.polarities]
            for p in polarities:
                if p not in top.polarities:
                    missing[f"{top.key}/{p}"] = [
                        f"{top.title} has no {p} form (it has {' and '.join(top.polarities)})"]
        elif start is not None:
            wanted = [p for p in (_polarity_for(top, start.sense),) if p is not None]
        else:
            wanted = list(top.polarities)
        plan += [(top, p) for p in wanted]
    heating = True if self_heating is None else bool(self_heating)
    ranked, referenced, rejected, infeasible, skipped = [], [], [], dict(missing), {}
    for index, (top, polarity) in enumerate(plan, 1):
        key = f"{top.key}/{polarity}"
        if progress is not None:
            progress(index, len(plan), key)
        try:
            best, reasons, skips = _one(top, polarity, spec, start, chosen_series["name"], heating, edge)
        except DesignError as err:
            infeasible[key] = [err.message if err.parameter is None else str(err)]
            continue
        if skips:
            skipped[key] = list(skips)
        if best is None or not best.passed:
            infeasible[key] = reasons
            if best is not None:
                rejected.append(best)
        else:
            (ranked if best.self_contained else referenced).append(best)
    ranked.sort(key=lambda c: -c.margin)
    referenced.sort(key=lambda c: -c.margin)
    return Synthesis(spec, chosen_series["name"], ranked + referenced, infeasible, skipped,
                     _defaults(spec, start, chosen_series, self_heating), spec.resistor_tolerance, rejected)
