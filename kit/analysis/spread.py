"""The four questions asked of every current source, answered in one call.

For one design, :func:`spread` gives

1. the output current and the compliance range, with what limits each end;
2. how much the current moves when the transistors' gain spreads, split into
   its two mechanisms: the *base-current part* (the α effect: I_out changes
   with β at the design's load voltage) and the *output-conductance part*
   (the Early effect: I_out changes across the load-voltage range at nominal
   β), and the envelope over both together;
3. the temperature coefficient with β held constant and with β rising
   (at a stated rate, or by the devices' own law), each with its budget;
4. optionally, how much the current moves over a supply range.

Every figure comes from the exact solve (:func:`kit.analysis.evaluation.sweep`
and :func:`kit.analysis.evaluation.evaluate`); nothing is linearised.  Every
bipolar transistor takes the same β at a corner: the parts of one design
come from one batch, which is the spread a reviewer asks about.  Reports
(:mod:`kit.report.spread`) render the result.

Examples
--------
>>> import kit
>>> d = kit.design("divider_source", r1="36k", r2="12k", r_e="1k6", v_supply=15, v_load=9)
>>> s = spread(d, beta=(80, 400))
>>> s.load_range_source
'low compliance edge up to the supply (a sink)'
>>> round(s.base_current_part / s.i_out, 2)  # the gain spread moves it by 6 %
0.06
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from kit.analysis.evaluation import evaluate, model_of, own_rail_loads, sweep
from kit.errors import ParameterError
from kit.model.compliance import find_compliance

LOAD_POINTS = 41
# With no β range given: half to twice the nominal gain, the spread a
# small-signal transistor's data sheet typically allows (common practice, no source).
DEFAULT_BETA_FACTORS = (0.5, 2.0)
BETA_LIMITS = (1.0, 1e5)
BETA_RISE_LIMITS = (-0.05, 0.05)  # 1/K, the device kind's range of the linear β coefficient


@dataclass(frozen=True)
class Spread:
    """The answers of :func:`spread`, in SI units (see the module docstring).

    Attributes
    ----------
    design : kit.model.design.Design
    i_out : float
        Exact output current at the design point, A.
    compliance : kit.model.compliance.Compliance
        At nominal gain.
    bipolar : tuple of str
        The bipolar transistors whose gain is spread (empty for MOS-only designs).
    beta_range : (float, float) or None
        Gain at the two corners; ``None`` when there is no bipolar transistor.
    beta_source : str
        Where the gain range came from.
    load_range : (float, float)
        Load voltages of the output-conductance part, V.
    load_range_source : str
        Where the load range came from.
    base_current_part : float
        I_out(β high) - I_out(β low) at the design's load voltage, A.
    output_conductance_part : float
        I_out(load high) - I_out(load low) at nominal gain, A.
    i_out_range : (float, float)
        Lowest and highest I_out over the gain range and the load range together, A.
    tempco_beta_constant, tempco_beta_rising : float
        (1/I) dI/dT in 1/K with β held constant and with β rising.
    budget_beta_constant, budget_beta_rising : tuple of (str, float)
        Each tempco split into its mechanisms, 1/K.
    beta_rise_law : str
        How β rises in ``tempco_beta_rising``.
    supply_range : (float, float) or None
        Supply voltages of the supply part, V.
    supply_part : float or None
        I_out(supply high) - I_out(supply low) at the design's load voltage, A.
    curves : dict
        ``{"v_load": array, "low": array, "nominal": array, "high": array}``:
        I_out across the load range at each gain (for the plot).
    """

    design: object
    i_out: float
    compliance: object
    bipolar: tuple
    beta_range: tuple | None
    beta_source: str
    load_range: tuple
    load_range_source: str
    base_current_part: float
    output_conductance_part: float
    i_out_range: tuple
    tempco_beta_constant: float
    budget_beta_constant: tuple
    tempco_beta_rising: float
    budget_beta_rising: tuple
    beta_rise_law: str
    supply_range: tuple | None
    supply_part: float | None
    curves: dict

    def to_dict(self):
        """Plain JSON-ready numbers under the field names of the ``spread`` command."""
        c = self.compliance
        return {
            "topology": self.design.topology.key,
            "polarity": self.design.polarity,
            "i_out": self.i_out,
            "compliance": {"low": c.low.voltage, "high": c.high.voltage,
                           "low_limited_by": c.low.describe(), "high_limited_by": c.high.describe()},
            "beta": {
                "transistors": list(self.bipolar),
                "range": list(self.beta_range) if self.beta_range else None,
                "range_source": self.beta_source,
                "load_range": list(self.load_range),
                "load_range_source": self.load_range_source,
                "base_current_part": self.base_current_part,
                "output_conductance_part": self.output_conductance_part,
                "i_out_range": list(self.i_out_range),
            },
            "tempco_ppm_per_k": {
                "beta_constant": self.tempco_beta_constant * 1e6,
                "beta_rising": self.tempco_beta_rising * 1e6,
                "beta_rising_law": self.beta_rise_law,
                "budget": {"beta_constant": {k: v * 1e6 for k, v in self.budget_beta_constant},
                           "beta_rising": {k: v * 1e6 for k, v in self.budget_beta_rising}},
            },
            "supply": None if self.supply_range is None else {
                "range": list(self.supply_range), "supply_part": self.supply_part,
                "per_volt": self.supply_part / (self.supply_range[1] - self.supply_range[0])},
        }


def spread(design, *, beta=None, beta_rise=None, supply=None, v_load=None, edge="vce_sat",
           beta_source="given", load_source="given", network=None):
    """Answer the four questions for ``design`` (see the module docstring).

    Parameters
    ----------
    design : kit.model.design.Design
    beta : (float, float), optional
        Lowest and highest forward gain β_F of the bipolar transistors.  Default:
        the record's spec range if the caller passes it, else half to twice
        the nominal gain of each transistor (said in ``beta_source``).
    beta_rise : float, optional
        Linear rise of β with temperature in 1/K (0.005 for 0.5 %/K) for the
        "β rising" tempco; default: the devices' own temperature law.
    supply : (float, float), optional
        Supply range in V for the supply part.
    v_load : (float, float), optional
        Load-voltage range in V; default: from the low compliance edge up to the
        supply for a sink, from 0 V up to the high edge for a source, within
        compliance at every gain.
    edge : {"vce_sat", "vcb_zero"}
        Saturation criterion.
    beta_source, load_source : str
        How to say where a given ``beta`` or ``v_load`` range came from (the
        command line says "the record's [spec]" for a range it took there).
    network : kit.analysis.thermal.ThermalNetwork, optional
        How the parts share heat, for the self-heated compliance (a record's
        ``[thermal]``); default one package each.

    Returns
    -------
    Spread

    Raises
    ------
    kit.errors.ParameterError
        A range out of order or out of its valid range, or a range that leaves
        compliance (named, with the range that would do).
    """
    nominal = evaluate(design, edge=edge, network=network)  # compliance ends where self-heating runs away
    model = model_of(design)
    values = design.parameters()
    bipolar = tuple(p.name for p in model.structure.devices if "beta_f" in p.params)
    beta_range, beta_source = _beta_range(beta, bipolar, values, beta_source)
    corners = [{}] if beta_range is None else [_with_beta(bipolar, b) for b in beta_range]

    compliance = nominal.compliance
    low, high = compliance.low.voltage, compliance.high.voltage
    for change in corners:
        other = find_compliance(model, values | change, edge=edge)
        low, high = max(low, other.low.voltage), min(high, other.high.voltage)
    load_range, load_source = _load_range(v_load, design, model.output_sign > 0, (low, high), load_source)

    grid = np.linspace(*load_range, LOAD_POINTS)
    curves = {"v_load": grid, "nominal": _currents(design, grid, {})}
    if beta_range is not None:
        curves["low"] = _currents(design, grid, corners[0])
        curves["high"] = _currents(design, grid, corners[1])
    at_design = {name: _currents(design, [values["v_load"]], change)[0]
                 for name, change in zip(("low", "high"), corners)} if beta_range else {}
    base_part = at_design["high"] - at_design["low"] if beta_range else 0.0
    output_part = float(curves["nominal"][-1] - curves["nominal"][0])
    every = np.concatenate([curves[k] for k in ("nominal", "low", "high") if k in curves])
    constant = _tempco(design, bipolar, {"beta_temp_exponent": 0.0, "beta_tc": 0.0}, edge)
    if beta_rise is None:
        rising, law = (nominal.tempco, nominal.tempco_budget), "the devices' own temperature law of β"
    else:
        rate = _checked_rate(beta_rise)
        rising = _tempco(design, bipolar, {"beta_temp_exponent": 0.0, "beta_tc": rate}, edge)
        law = f"β rising linearly at {rate * 100:+.3g} %/K"
    supply_range, supply_part = _supply_part(design, supply, edge)
    return Spread(
        design=design, i_out=nominal.i_out, compliance=compliance, bipolar=bipolar,
        beta_range=beta_range, beta_source=beta_source, load_range=load_range,
        load_range_source=load_source, base_current_part=float(base_part),
        output_conductance_part=output_part, i_out_range=(float(every.min()), float(every.max())),
        tempco_beta_constant=constant[0], budget_beta_constant=constant[1],
        tempco_beta_rising=rising[0], budget_beta_rising=rising[1], beta_rise_law=law,
        supply_range=supply_range, supply_part=supply_part, curves=curves)


def _pair(name, pair, low, high, unit):
    try:
        a, b = (float(v) for v in pair)
    except (TypeError, ValueError):
        raise ParameterError("needs two numbers, low and high", parameter=name, value=pair,
                             valid=f"{low:g} … {high:g} {unit}".strip()) from None
    if not (low <= a < b <= high):
        raise ParameterError("range out of order or out of bounds", parameter=name, value=(a, b),
                             valid=f"low < high within {low:g} … {high:g} {unit}".strip())
    return a, b


def _beta_range(beta, bipolar, values, given):
    if not bipolar:
        return None, "no bipolar transistor: the gain spread does not apply"
    if beta is not None:
        return _pair("beta", beta, *BETA_LIMITS, ""), given
    gains = [values[f"{name}.beta_f"] for name in bipolar]
    lo, hi = min(gains) * DEFAULT_BETA_FACTORS[0], max(gains) * DEFAULT_BETA_FACTORS[1]
    return (max(lo, BETA_LIMITS[0]), min(hi, BETA_LIMITS[1])), "not given: half to twice the nominal β"


def _with_beta(bipolar, value):
    return {f"{name}.beta_f": value for name in bipolar}


def _load_range(v_load, design, sinks, edges, given):
    low, high = edges
    if low >= high:
        raise ParameterError("no load voltage keeps every gain in compliance", parameter="beta",
                             value=None, valid="a narrower gain range")
    if v_load is not None:
        a, b = _pair("v_load", v_load, -1000.0, 1000.0, "V")
        if a < low or b > high:
            raise ParameterError("load range leaves compliance at some gain", parameter="v_load",
                                 value=(a, b), valid=f"{low:.4g} … {high:.4g} V")
        return (a, b), given
    a, b, words = own_rail_loads(design, sinks, low, high)
    ends = {"up to the supply (a sink)": "low compliance edge up to the supply (a sink)",
            "from 0 V (a source)": "0 V up to the high compliance edge (a source)"}
    return (a, b), ends.get(words, words)


def _currents(design, v_load, change):
    points = sweep(design, "v_load", np.asarray(v_load, dtype=float), **change)
    if not points.converged.all():
        raise ParameterError("the exact solve did not converge across the load range",
                             parameter="v_load", value=(float(np.min(v_load)), float(np.max(v_load))),
                             valid="a range inside compliance")
    return np.asarray(points.i_out, dtype=float)


def _tempco(design, bipolar, law, edge):
    if not bipolar:
        ev = evaluate(design, edge=edge, self_heating=False)
        return ev.tempco, ev.tempco_budget
    changed = design
    for name in bipolar:
        for param, value in law.items():
            changed = changed.with_parameter(f"{name}.{param}", value)
    ev = evaluate(changed, edge=edge, self_heating=False)  # a tempco at the design temperature
    return ev.tempco, ev.tempco_budget


def _checked_rate(rate):
    low, high = BETA_RISE_LIMITS
    try:
        rate = float(rate)
    except (TypeError, ValueError):
        raise ParameterError("not a number", parameter="beta_rise", value=rate,
                             valid=f"{low * 100:g} … {high * 100:g} %/K") from None
    if not (low <= rate <= high):
        raise ParameterError("out of range", parameter="beta_rise", value=rate,
                             valid=f"{low * 100:g} … {high * 100:g} %/K")
    return rate


def _supply_part(design, supply, edge):
    if supply is None:
        return None, None
    a, b = _pair("supply", supply, 0.1, 1000.0, "V")
    currents = []
    for v in (a, b):
        try:
            currents.append(evaluate(design.with_values(v_supply=v), edge=edge, self_heating=False).i_out)
        except ParameterError as err:
            raise ParameterError(f"at a supply of {v:g} V: {err}", parameter="supply", value=(a, b),
                                 valid="a range over which the design's load voltage stays in compliance") from None
    return (a, b), float(currents[1] - currents[0])
