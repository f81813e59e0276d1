"""One parameter vocabulary: for every flat name, its group, unit, valid range, record field and label.

Designs, specs, records, panels and reports all name parameters the same
way and check them against the same ranges, read from here:

=============  =====================  ======================  ==========================
group          flat name              record field            from
=============  =====================  ======================  ==========================
``value``      ``r1``, ``v_load``     ``values.r1``           the topology's values
``device``     ``Q1.beta_f``          ``devices.Q1.beta_f``   the part's kind
``rise``       ``Q1.t_rise``          ``devices.Q1.t_rise``   junction above the point
``tcr``        ``tcr_r1``             ``tcr.r1``              the resistor kind
``rating``     ``p_rated_r1``         ``ratings.r1``          the resistor kind
``condition``  ``temp``, ``t_ref``    ``conditions.temp``     here
``hand``       ``v_be_on``            ``hand.v_be_on``        hand analysis (closed forms)
=============  =====================  ======================  ==========================

Examples
--------
>>> from kit import topologies
>>> words = vocabulary(topologies.get("divider_source"), "npn")
>>> words["Q1.beta_f"].field, words["tcr_r_e"].unit, words["temp"].valid
('devices.Q1.beta_f', '1/K', '150 … 500 K')
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from kit.devices.base import check_range
from kit.devices.resistor import RESISTOR
from kit.errors import ParameterError
from kit.model.structure import structure

DEFAULT_TEMPERATURE = 298.15  # K, 25 degC
TEMPERATURE_RANGE = (150.0, 500.0)  # K; far outside any rated silicon part
T_RISE_RANGE = (-100.0, 300.0)  # K, junction above (or below) the temperature of the point
HAND = {  # common practice, no source: V_BE(on) about 0.65 V, falling about 2 mV/K
    "v_be_on": (0.65, 0.2, 1.2, "V", "hand-analysis V_BE(on)", "V_BE(on)"),
    "v_be_tc": (-2e-3, -5e-3, 0.0, "V/K", "hand-analysis slope of V_BE(on)", "dV_BE(on)/dT"),
}
GROUPS = ("value", "device", "rise", "tcr", "rating", "condition", "hand")


@dataclass(frozen=True)
class Entry:
    """One flat parameter name of a topology (see the module docstring)."""

    name: str
    group: str
    unit: str
    low: float
    high: float
    description: str
    symbol: str
    field: str
    part: str | None = None
    allow_inf: bool = False
    whole: bool = False

    @property
    def valid(self):
        return f"{self.low:g} … {self.high:g} {self.unit}".rstrip()

    def check(self, value):
        """``value`` as a float, or a :class:`ParameterError` naming this parameter and its range."""
        check_range(self.name, value, self.low, self.high, self.unit, allow_inf=self.allow_inf)
        if self.whole and float(value) != round(float(value)):
            raise ParameterError("must be a whole number", parameter=self.name, value=float(value),
                                 valid=f"{self.low:g}, {self.low + 1:g}, … {self.high:g}")
        return float(value)


def vocabulary(topology, polarity):
    """Flat name -> :class:`Entry` for designs of ``topology`` and ``polarity``, in a stable order."""
    topology.check_polarity(polarity)
    return _vocabulary(topology.key, polarity)


@lru_cache(maxsize=None)
def _vocabulary(topology_key, polarity):
    from kit import topologies

    topology = topologies.get(topology_key)
    s = structure(topology, polarity)
    out = {}
    for v in topology.values:
        out[v.name] = Entry(v.name, "value", v.unit, v.low, v.high, v.description, v.name,
                            f"values.{v.name}", whole=v.whole)
    for part in s.devices:
        for param in part.kind.params:
            name = f"{part.name}.{param.name}"
            out[name] = Entry(name, "device", param.unit, param.low, param.high, param.description,
                              f"{param.symbol or param.name} of {part.name}", f"devices.{name}", part.name,
                              param.allow_inf)
        name = f"{part.name}.t_rise"
        out[name] = Entry(name, "rise", "K", *T_RISE_RANGE, "junction temperature above the point's",
                          f"ΔT_J of {part.name}", f"devices.{name}", part.name)
    for part in s.parts:
        if part.kind is RESISTOR:
            value = part.value
            for param, group, table in (("tcr", "tcr", "tcr"), ("p_rated", "rating", "ratings")):
                spec = RESISTOR.param(param)
                name = RESISTOR.flat_name(value, param)
                out[name] = Entry(name, group, spec.unit, spec.low, spec.high,
                                  f"{spec.description} of {part.name}", f"{spec.symbol} of {part.name}",
                                  f"{table}.{value}", part.name, spec.allow_inf)
    out["temp"] = Entry("temp", "condition", "K", *TEMPERATURE_RANGE, "temperature of the point", "T",
                        "conditions.temp")
    out["t_ref"] = Entry("t_ref", "condition", "K", *TEMPERATURE_RANGE,
                         "temperature at which every value and part parameter is given", "T_ref",
                         "conditions.t_ref")
    for name in s.hand_parameters:
        default, low, high, unit, description, symbol = HAND[name]
        out[name] = Entry(name, "hand", unit, low, high, description, symbol, f"hand.{name}")
    return out


def entry(topology, polarity, name):
    """The :class:`Entry` of ``name``, or a :class:`ParameterError` listing what exists."""
    words = vocabulary(topology, polarity)
    try:
        return words[name]
    except KeyError:
        raise ParameterError(f"no such parameter of {topology.key}", parameter=name,
                             valid="a flat parameter name: " + ", ".join(words)) from None


def hand_default(name):
    return HAND[name][0]
