"""Evaluate a design: the exact operating point and everything a review asks of it.

:func:`evaluate` solves the exact equations at the design point and returns
an :class:`Evaluation` — plain numbers, frozen: output current, compliance
range with the part that limits each end (with self-heating, an end where
the electrothermal loop runs away inside the electrical range: compliance
ends there, its cause :data:`kit.analysis.thermal.RUNAWAY_CAUSE`), exact
output resistance beside
the small-signal forms, sensitivities to every parameter (absolute and
normalised), the tempco and its budget, every part's operating point and
dissipation across the compliance range, and the ledger — each named
simplification's closed form, its value and its error against the exact
solution.  Reports (:mod:`kit.report`) render it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from kit.analysis.thermal import RUNAWAY_CAUSE, RUNAWAY_TEMPERATURE, ThermalNetwork, heated_parts, stable_load_range
from kit.errors import ConvergenceError, OperatingPointError, ParameterError
from kit.model.compiled import compile_model
from kit.model.compliance import Edge, compliance_and_point
from kit.model.solve import check_drift, check_edge, check_laws, solve_points

DISSIPATION_POINTS = 101
PPM = 1e6


def model_of(design):
    """The compiled exact model of a design's topology and polarity."""
    return compile_model(design.topology, design.polarity)


def sweep(design, name, values, **fixed):
    """Exact operating points with parameter ``name`` swept over ``values``.

    Other parameters may be overridden by keyword (flat names, e.g.
    ``**{"Q1.beta_f": 150}``).  Every value is checked against its valid
    range first.  Returns :class:`kit.model.solve.OperatingPoints`.

    Examples
    --------
    >>> import kit
    >>> d = kit.design("divider_source")
    >>> pts = sweep(d, "v_load", [4.0, 8.0])
    >>> bool(pts.converged.all()), bool(pts.i_out[1] > pts.i_out[0])
    (True, True)
    """
    from kit.model.vocabulary import entry

    changes = fixed | {name: values}
    for key, value in changes.items():
        e = entry(design.topology, design.polarity, key)
        array = np.asarray(value, dtype=float)
        bad = ~((array >= e.low) & (array <= e.high)) & ~(e.allow_inf & np.isposinf(array))
        if np.any(bad):
            raise ParameterError("out of range", parameter=key, value=float(array[bad].flat[0]), valid=e.valid)
        if e.whole and np.any(array != np.round(array)):
            raise ParameterError("must be a whole number", parameter=key,
                                 value=float(array[array != np.round(array)].flat[0]), valid=e.valid)
    params = design.parameters() | {k: np.asarray(v, dtype=float) for k, v in changes.items()}
    return solve_points(model_of(design), params)


@dataclass(frozen=True)
class Sensitivity:
    """dI_out/dp of one parameter at the design point."""

    parameter: str
    value: float
    unit: str
    derivative: float  # A per unit of the parameter
    normalised: float  # (p / I) dI/dp; for temperature, (1/I) dI/dT in 1/K

    def to_dict(self):
        return dict(self.__dict__)


@dataclass(frozen=True)
class LedgerEntry:
    """One named simplification weighed against the exact solution."""

    key: str
    label: str
    assumptions: tuple  # their words
    source: str
    latex: str
    value: float
    error: float  # (closed form - exact) / exact
    sensitivities: dict  # parameter -> closed-form dI/dp
    tempco: float  # closed-form (1/I) dI/dT, 1/K

    def to_dict(self):
        out = dict(self.__dict__)
        out["assumptions"] = list(self.assumptions)
        return out


@dataclass(frozen=True)
class PartPoint:
    """One device at the design point: kind, region, exported quantities, dissipation."""

    name: str
    kind: str
    polarity: str
    region: str
    quantities: dict
    dissipation: float

    def to_dict(self):
        out = dict(self.quantities)
        if "i_b" in out and out["i_b"]:
            out["beta_measured"] = out["i_c"] / out["i_b"]
        return out | {"kind": self.kind, "polarity": self.polarity, "region": self.region,
                      "dissipation": self.dissipation}


@dataclass(frozen=True)
class Evaluation:
    """Everything :func:`evaluate` finds at one design point (see the module docstring)."""

    design: object
    edge: str
    i_out: float
    compliance: object
    r_out: float
    r_out_forms: dict
    parts: dict  # device name -> PartPoint
    derivatives: dict  # flat parameter name -> exact dI_out/dp
    sensitivities: tuple
    tempco: float  # (1/I) dI/dT in 1/K
    tempco_budget: tuple  # (label, contribution in 1/K), largest first
    ledger: tuple
    dissipation_sweep: tuple  # (load voltages, {device: watts})
    max_dissipation: tuple  # (device, watts, load voltage)
    hottest: tuple | None  # (device, watts, load voltage, junction temperature in K) of the hottest junction
    node_voltages: dict
    points: object  # the exact operating point (kit.model.solve.OperatingPoints, one point)
    # Self-heating cuts the electrical compliance range: where the stable points end
    # (kit.analysis.thermal.RunawayThreshold; the high end's if both are cut), else None.
    thermal_runaway: object = None
    self_heating: bool = True  # compliance judged with the junctions heated (runaway ends it)
    thermal_network: object = None  # kit.analysis.thermal.ThermalNetwork, None: one package each
    electrical_compliance: object = None  # the range before self-heating cut it (same when not cut)
    ledger_undefined: tuple = ()  # (label, why) of closed forms with no real value here

    def derivative(self, name):
        """Exact dI_out/dp of flat parameter ``name``."""
        return self.derivatives[name]

    @property
    def regions(self):
        return {name: part.region for name, part in self.parts.items()}

    @property
    def structure(self):
        return self.design.structure

    def to_dict(self):
        part, watts, at = self.max_dissipation
        return {
            "design": self.design.to_dict(),
            "i_out": self.i_out,
            "compliance": self.compliance.to_dict(),
            "r_out": self.r_out,
            "r_out_forms": dict(self.r_out_forms),
            "tempco_ppm_per_k": self.tempco * PPM,
            "tempco_budget_ppm_per_k": {label: v * PPM for label, v in self.tempco_budget},
            "sensitivities": [s.to_dict() for s in self.sensitivities],
            "devices": {name: p.to_dict() for name, p in self.parts.items()},
            "max_dissipation": {"part": part, "watts": watts, "v_load": at},
            "ledger": [e.to_dict() for e in self.ledger],
            "ledger_undefined": [{"label": label, "why": why} for label, why in self.ledger_undefined],
            "node_voltages": dict(self.node_voltages),
            "thermal_runaway": self.thermal_runaway.to_dict() if self.thermal_runaway is not None else None,
            "self_heating": self.self_heating,
            "thermal_network": self.thermal_network.to_dict() if self.thermal_network is not None else None,
            "electrical_compliance": (self.electrical_compliance or self.compliance).to_dict(),
        }


def _sensitivities(design, gradient, i_out):
    """Values (but the load voltage), each device's reported parameters, and temperature."""
    params = design.parameters()
    words = design.vocabulary
    names = [v.name for v in design.topology.values if v.kind != "load"]
    for part in design.structure.devices:
        names += [f"{part.name}.{key}" for key in part.kind.sensitivity]
    names.append("temp")
    out = []
    for name in names:
        if name not in gradient:
            continue
        d = gradient[name]
        scale = 1.0 if name == "temp" else params[name]
        normalised = scale * d / i_out if np.isfinite(scale) else 0.0
        out.append(Sensitivity(name, params[name], words[name].unit, d, normalised))
    return tuple(out)


def _tempco_budget(points, model, i_out):
    temp_index = model.parameter_index["temp"]
    di_dq = points.di_dq[:, 0]
    dq_dt = points.dq_dp[:, temp_index, 0]
    out = []
    for name, a, b in zip(model.operating_names, di_dq, dq_dt):
        if b != 0 and a != 0:
            label = model.structure.budget_label(name) or f"temperature law of {name}"
            out.append((label, float(a * b / i_out)))
    return tuple(sorted(out, key=lambda item: -abs(item[1])))


def _ledger(points, model, i_out, wanted):
    q = points.q
    values = model.closed_forms(q)
    grads = model.closed_form_gradients(q)
    dq_dp = points.dq_dp[..., 0]
    latex = model.manifest.get("latex", {})
    names = model.parameter_names
    out = []
    for form in model.structure.closed_forms:
        value = float(values[form.key][0])
        if not math.isfinite(value):
            continue  # outside the form's own domain here: listed by _undefined_forms, not weighed
        di_dp = grads[form.key][:, 0] @ dq_dp
        gradient = dict(zip(names, (float(v) for v in di_dp)))
        out.append(LedgerEntry(
            key=form.key, label=form.label, assumptions=form.assumption_texts, source=form.source,
            latex=latex.get(form.key, ""), value=value, error=(value - i_out) / i_out,
            sensitivities={n: gradient[n] for n in wanted if n in gradient},
            tempco=gradient["temp"] / value if value else 0.0,
        ))
    return tuple(out)


def _undefined_forms(model, ledger):
    """``(label, why)`` of each closed form with no real value at the point (left out of the ledger).

    A hand formula can leave its own domain where the exact solve does not:
    Widlar's relation with the supply below V_BE(on) asks for the logarithm of
    a negative reference current.
    """
    weighed = {e.key for e in ledger}
    return tuple((form.label, "no real value at this design point (outside the hand formula's own domain)")
                 for form in model.structure.closed_forms if form.key not in weighed)


def own_rail_loads(design, sinks, low, high):
    """``(low, high, words)``: the part of compliance a load on the circuit's own rails gives.

    A load returned to the supply puts a sink's output at most at the supply;
    a source's load returned to 0 V puts its output at least at 0 V.  Beyond
    that a load needs a rail of its own, so the stress a reviewer reads first
    is quoted inside this range (a bidirectional pump keeps its whole range).

    Examples
    --------
    >>> import kit
    >>> own_rail_loads(kit.design("divider_source"), True, 2.3, 42.1)
    (2.3, 12.0, 'up to the supply (a sink)')
    """
    if len(design.topology.polarities) != 2:
        return low, high, "across compliance"
    if sinks:
        return low, min(high, design.values["v_supply"]), "up to the supply (a sink)"
    return max(low, 0.0), high, "from 0 V (a source)"


def evaluate(design, *, edge="vce_sat", reuse=None, self_heating=True, network=None):
    """Solve a design exactly and weigh everything a review asks of it.

    Parameters
    ----------
    design : kit.model.design.Design
    edge : {"vce_sat", "vcb_zero"}
        Saturation criterion for regions and compliance.
    reuse : Evaluation, optional
        An earlier evaluation of the same design at another load voltage: its
        compliance edges and its dissipation across them are taken as they are
        (neither depends on the load voltage), which saves the edge search.
        Ignored unless only ``v_load`` differs.
    self_heating : bool
        Judge compliance with the junctions heated by their power: where
        the electrothermal loop runs away inside the electrical range, the
        compliance ends (cause ``"thermal_runaway"``).  The numbers at the
        design point are solved at the design temperature either way.
    network : kit.analysis.thermal.ThermalNetwork, optional
        How the parts share heat (one die, a heatsink); default one package each.

    Returns
    -------
    Evaluation

    Raises
    ------
    kit.errors.OperatingPointError
        If the load voltage is outside compliance (``parameter="v_load"``; beyond
        a runaway edge the message says "thermal runaway"), the supply cannot
        turn the circuit on (``parameter="v_supply"``), or with self-heating no
        load voltage has a stable electrothermal point (``parameter`` the
        hottest part's ``theta_ja``).
    kit.errors.ConvergenceError
        If the exact solve did not converge.
    """
    check_edge(edge)
    model = model_of(design)
    values = design.parameters()
    check_laws(model, values)  # device laws and resistors inside their domains
    check_drift(model, values)  # rails and reference currents keep their sign
    if network is not None and not isinstance(network, ThermalNetwork):
        raise ParameterError("must be a thermal network", parameter="network", value=type(network).__name__,
                             valid="kit.analysis.thermal.ThermalNetwork or None")
    same = _same_but_load(reuse, design, values, edge, self_heating, network)
    points = cold = None
    try:
        if same:
            electrical = same.electrical_compliance
        else:  # the compliance scan solves the design point among its own
            electrical, points, cold = compliance_and_point(model, values, edge=edge)
    except OperatingPointError as err:
        raise _supply_error(model, values, design, edge) from err
    if points is None:
        points = solve_points(model, values)
    if same:
        compliance, thermal = same.compliance, same.thermal_runaway
    elif self_heating:
        compliance, thermal = _thermal_limits(model, values, electrical, network, cold)
    else:
        compliance, thermal = electrical, None
    v_load = values["v_load"]
    if electrical.contains(v_load) and not compliance.contains(v_load):
        end = compliance.low if v_load < compliance.low.voltage else compliance.high
        raise OperatingPointError(
            f"load voltage outside compliance: {end.part} {end.text}",
            parameter="v_load", value=v_load,
            valid=f"{compliance.low.voltage:.4g} … {compliance.high.voltage:.4g} V with self-heating")
    if not points.converged[0] and compliance.contains(v_load):
        points = _continue_in_load(model, values, compliance)
    worst, keys = points.worst_margin(edge)
    if (worst[0] < 0 or not compliance.contains(v_load)) and points.converged[0] and keys[0][1] == "cutoff":
        # Starved rather than misloaded: say so if a higher supply serves this load.
        starved = _supply_error(model, values, design, edge)
        if starved.parameter == "v_supply" and starved.valid.startswith("≥"):
            raise starved
    if worst[0] < 0 or not compliance.contains(v_load):
        # A load voltage far outside compliance may have no operating point
        # at all: the refusal is the same as just outside, with the range.
        part, cause = keys[0] if points.converged[0] else _nearest_edge(electrical, v_load)
        here = "here" if points.converged[0] else "beyond this end"
        raise OperatingPointError(
            f"load voltage outside compliance: {part} {points.cause_text(part, cause)} {here}",
            parameter="v_load", value=v_load,
            valid=f"{compliance.low.voltage:.4g} … {compliance.high.voltage:.4g} V")
    i_out = float(points.i_out[0])
    if i_out == 0.0:
        # Sensitivities, tempco and ledger errors are relative to I_out; a bidirectional
        # source (the Howland pump) reaches exactly zero at zero drive without offsets.
        raise OperatingPointError(
            "the output current is exactly zero here: nothing to weigh sensitivities and errors against",
            parameter="i_out", value=i_out, valid="a design point with a nonzero output current")
    if i_out < 0 and len(design.topology.polarities) == 2:
        # A sink or a source (two polarity words) reports its current positive in
        # its own sense; a negative one means the circuit does not work as drawn.
        raise OperatingPointError(
            "the output current flows the wrong way at this point (the circuit does not source "
            "or sink as drawn)", parameter="v_load", value=v_load,
            valid=f"{compliance.low.voltage:.4g} … {compliance.high.voltage:.4g} V")
    gradient = dict(zip(model.parameter_names, (float(v) for v in points.di_dp[:, 0])))
    sensitivities = _sensitivities(design, gradient, i_out)
    regions = points.regions(edge)
    parts = {}
    for part in model.structure.devices:
        j = {k: float(v[0]) for k, v in points.junctions[part.name].items()}
        parts[part.name] = PartPoint(part.name, part.kind.key, part.polarity, str(regions[part.name][0]), j,
                                     float(points.dissipation[part.name][0]))
    if same:
        v_sweep, power = same.dissipation_sweep
        biggest, k = same.max_dissipation[0], int(np.argmax(power[same.max_dissipation[0]]))
        hottest = same.hottest
    else:
        v_sweep = np.linspace(compliance.low.voltage, compliance.high.voltage, DISSIPATION_POINTS)
        swept = sweep(design, "v_load", v_sweep)
        power = dict(swept.dissipation)
        # The headline's stress: only load voltages a load on the circuit's own rails
        # can give (not "1 W at 51 V" on a 24 V rail); the sweep keeps the whole range.
        low, high, _ = own_rail_loads(design, model.output_sign > 0, compliance.low.voltage,
                                      compliance.high.voltage)
        inside = (v_sweep >= low - 1e-12) & (v_sweep <= high + 1e-12)
        if not inside.any():
            inside[:] = True
        biggest = max(power, key=lambda n: power[n][inside].max())
        k = int(np.flatnonzero(inside)[np.argmax(power[biggest][inside])])
        hottest = _hottest(model, values, v_sweep[inside], {n: w[inside] for n, w in power.items()}, network)
    with np.errstate(divide="ignore"):  # an ideal part (V_A = inf) gives an infinite small-signal form
        extras = model.extras(points.x, points.q)
    ledger = _ledger(points, model, i_out, [s.parameter for s in sensitivities])
    return Evaluation(
        design=design, edge=edge, i_out=i_out, compliance=compliance, r_out=float(points.r_out[0]),
        r_out_forms={k: float(v[0]) for k, v in extras.items() if k.startswith("r_out")},
        parts=parts, derivatives=gradient, sensitivities=sensitivities,
        tempco=gradient["temp"] / i_out, tempco_budget=_tempco_budget(points, model, i_out),
        ledger=ledger,
        ledger_undefined=_undefined_forms(model, ledger),
        dissipation_sweep=(v_sweep, power), max_dissipation=(biggest, float(power[biggest][k]), float(v_sweep[k])),
        hottest=hottest,
        node_voltages=dict(zip(model.unknowns, (float(v) for v in points.x[:, 0]))), points=points,
        thermal_runaway=thermal, self_heating=bool(self_heating), thermal_network=network,
        electrical_compliance=electrical)


def _thermal_limits(model, values, electrical, network, cold=None):
    """``(compliance, threshold)``: the electrical range cut where self-heating runs away, and the cut.

    The evaluation holds the junctions at the design temperature; this asks
    along the electrical range whether each load voltage has a stable
    electrothermal point (:func:`kit.analysis.thermal.stable_load_range`).
    An end where it has none is a compliance edge of its own, named
    after the hottest part there; ``threshold`` is None when nothing is cut.
    ``cold`` is the compliance scan (load voltages, points at no rise): the
    self-heated iteration starts from the powers it found.
    """
    if not heated_parts(model):
        return electrical, None
    span = (electrical.low.voltage, electrical.high.voltage)
    try:
        low, high = stable_load_range(model, values, span, network, cold=cold)
    except ConvergenceError:  # no load voltage has a stable point: nothing is in compliance
        from kit.analysis.thermal import runaway_error, solve_self_heated

        points = solve_self_heated(model, values, network)
        named = runaway_error(points, "design point") if points.runaway[0] or points.too_hot[0] else None
        raise OperatingPointError(
            f"thermal runaway: no load voltage inside the electrical compliance range "
            f"{span[0]:.4g} … {span[1]:.4g} V has a stable temperature (electrothermal loop gain >= 1, "
            f"or a junction past {RUNAWAY_TEMPERATURE:g} K)",
            parameter=named.parameter if named else "v_load", value=named.value if named else values["v_load"],
            valid="a package (θ_JA) or operating point with an electrothermal loop gain below 1, "
                  "or evaluate without self-heating") from None
    cut = replace(electrical, low=_runaway_edge(low) if low else electrical.low,
                  high=_runaway_edge(high) if high else electrical.high)
    return cut, high or low


def _runaway_edge(threshold):
    return Edge(threshold.v_load, threshold.part, RUNAWAY_CAUSE, threshold.edge_text())


def _same_but_load(earlier, design, values, edge, self_heating=True, network=None):
    """``earlier`` if it evaluated this design at another load voltage with the same edge, else None."""
    if earlier is None or earlier.edge != edge or earlier.design.topology is not design.topology \
            or earlier.design.polarity != design.polarity:
        return None
    if earlier.self_heating != bool(self_heating) or earlier.thermal_network != network \
            or earlier.electrical_compliance is None:
        return None
    before = earlier.design.parameters()
    if before.keys() != values.keys() or any(before[k] != v for k, v in values.items() if k != "v_load"):
        return None
    return earlier


def _nearest_edge(compliance, v_load):
    """``(part, cause)`` of the compliance end nearer ``v_load``."""
    end = compliance.low if v_load < compliance.low.voltage else compliance.high
    return end.part, end.cause


def _continue_in_load(model, values, compliance, steps=24):
    """The design point reached from inside compliance, one load step at a time.

    Used when the solve from the declared start or by source stepping
    misses a point that lies inside compliance: the middle of the range
    solved, each step starting from the last.
    """
    v_load = values["v_load"]
    middle = 0.5 * (compliance.low.voltage + compliance.high.voltage)
    x = None
    for v in np.linspace(middle, v_load, steps):
        points = solve_points(model, values | {"v_load": v}, x0=x)
        if not points.converged[0]:
            break
        x = points.x
    if x is None or not points.converged[0]:
        raise ConvergenceError("the exact solve did not converge at the design point, although the "
                               "load voltages around it solve", parameter="v_load", value=v_load,
                               valid=f"{compliance.low.voltage:.4g} … {compliance.high.voltage:.4g} V")
    return points


def _hottest(model, values, v_load, power, network=None):
    """``(part, watts, load voltage, junction temperature)`` of the hottest junction across compliance.

    Each part with a thermal resistance of its own rises by the thermal
    network times the powers at the design temperature (``theta_JA P_D``
    for parts in packages of their own), without the loop of self-heating.
    """
    best = None
    heated = [p.name for p in model.structure.devices if "theta_ja" in p.params and p.name in power]
    if not heated:
        return None
    theta = (network or ThermalNetwork()).matrix(heated, {n: values[f"{n}.theta_ja"] for n in heated})
    rises = theta @ np.stack([np.asarray(power[n], dtype=float) for n in heated])
    for i, name in enumerate(heated):
        part = model.structure.part(name)
        rise = rises[i]
        k = int(np.argmax(rise))
        junction = values["temp"] + float(rise[k])
        if best is None or junction > best[3]:
            best = (part.name, float(power[part.name][k]), float(v_load[k]), junction)
    return best


def _supply_error(model, values, design, edge):
    """The error for a design no load voltage can serve, with the supply it would need."""
    spec = design.topology.value("v_supply")
    trial = np.geomspace(max(values["v_supply"], spec.low), spec.high, 60)
    points = solve_points(model, values | {"v_supply": trial})
    worst, _ = points.worst_margin(edge)
    good = np.flatnonzero(worst >= 0)
    if good.size:
        return OperatingPointError(
            "too low to bias the circuit", parameter="v_supply",
            value=values["v_supply"], valid=f"≥ {trial[good[0]]:.3g} V at v_load = {values['v_load']:.3g} V")
    # Name what stops it at the design's own load voltage: in a circuit whose supply
    # biases nothing (a Howland pump's input drives it) that is the true cause.
    nominal = solve_points(model, values)
    _, keys = nominal.worst_margin(edge)
    part, cause = keys[0]
    if part is not None and nominal.converged[0]:
        # A limit of the part itself (an op-amp's output swing) that no supply
        # or load voltage can cure: name that parameter.
        info = model.structure.part(part)
        limit = info.kind.limit_parameter(cause, nominal.junctions[part], model.params(nominal.p, info))
        if limit is not None:
            name = f"{part}.{limit}"
            return OperatingPointError(
                f"{part} {nominal.cause_text(part, cause)} at every load voltage, whatever the supply",
                parameter=name, value=values[name], valid="a limit the circuit's operating point stays inside")
    where = f"{part} {nominal.cause_text(part, cause)}" if part else "the solve fails"
    return OperatingPointError(
        f"no load voltage and no higher supply bias the circuit ({where} at "
        f"v_load = {values['v_load']:.3g} V); check the bias values",
        parameter="v_supply", value=values["v_supply"], valid="a supply and bias that turn the circuit on")
