"""A design: one topology, its values, its transistors and its conditions.

:class:`Design` is immutable and validated on creation; change it with
:meth:`Design.with_values`, which validates again.  :meth:`Design.parameters`
flattens it into the parameter vector the exact solve works on, with the
public parameter names used everywhere in the kit:

``r1``, ``r_e``, ``v_supply``, ``v_load``, ...   topology values (SI units)
``Q1.beta_f``, ``Q1.i_s``, ``Q1.v_a``, ...       transistor parameters
``Q1.t_rise``                                    junction temperature above ``temp`` (K; self-heating)
``temp``, ``t_ref``                              temperature of the point, reference temperature (K)
``tcr_r1``, ...                                  resistor temperature coefficients (1/K)
``v_be_on``, ``v_be_tc``                         hand-analysis V_BE and its slope (closed forms only)
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from types import MappingProxyType

from kit.devices import KINDS, bjt
from kit.errors import ParameterError

DEFAULT_TEMPERATURE = 298.15  # K, 25 degC
TEMPERATURE_RANGE = (150.0, 500.0)  # K; far outside any rated silicon part
HAND_DEFAULTS = {"v_be_on": 0.65, "v_be_tc": -2e-3}  # V and V/K, common practice, no source
HAND_RANGES = {"v_be_on": (0.2, 1.2, "V"), "v_be_tc": (-5e-3, 0.0, "V/K")}
TCR_RANGE = (-5e-3, 5e-3)  # 1/K; carbon film is about -1e-3 at worst
T_RISE_RANGE = (-100.0, 300.0)  # K, junction above (or below) the temperature of the point


@dataclass(frozen=True)
class Design:
    """A validated design point (see the module docstring for the names).

    Build it with :func:`make_design`, which parses text values like ``"4k7"``.

    Examples
    --------
    >>> d = make_design("divider_source", r1="33k", r2="10k", r_e="2k2",
    ...                 v_supply="12 V", v_load="8 V")
    >>> d.values["r_e"]
    2200.0
    >>> d.with_values(r_e=2000).values["r_e"]
    2000.0
    """

    topology: str
    polarity: str
    values: MappingProxyType
    devices: MappingProxyType
    temp: float = DEFAULT_TEMPERATURE
    t_ref: float = DEFAULT_TEMPERATURE
    tcr: MappingProxyType = field(default_factory=lambda: MappingProxyType({}))
    hand: MappingProxyType = field(default_factory=lambda: MappingProxyType(dict(HAND_DEFAULTS)))
    title: str = ""
    t_rise: MappingProxyType = field(default_factory=lambda: MappingProxyType({}))

    def __post_init__(self):
        from kit import topologies

        top = topologies.get(self.topology)
        top.check_polarity(self.polarity)
        object.__setattr__(self, "values", MappingProxyType(_check_values(top, dict(self.values))))
        object.__setattr__(self, "devices", MappingProxyType(_check_devices(top, self.polarity,
                                                                           dict(self.devices))))
        for name in ("temp", "t_ref"):
            bjt.check_range(name, getattr(self, name), *TEMPERATURE_RANGE, "K")
        tcr = dict(self.tcr)
        for name, value in tcr.items():
            if name not in top.resistors:
                raise ParameterError("no such resistor for a TCR", parameter=f"tcr_{name}",
                                     valid=", ".join(top.resistors))
            bjt.check_range(f"tcr_{name}", value, *TCR_RANGE, "1/K")
        object.__setattr__(self, "tcr", MappingProxyType(tcr))
        hand = dict(HAND_DEFAULTS) | dict(self.hand)
        for name, value in hand.items():
            if name not in HAND_RANGES:
                raise ParameterError("unknown hand-analysis value", parameter=name,
                                     valid=", ".join(HAND_RANGES))
            bjt.check_range(name, value, *HAND_RANGES[name])
        object.__setattr__(self, "hand", MappingProxyType(hand))
        t_rise = dict(self.t_rise)
        for name, value in t_rise.items():
            if name not in self.devices:
                raise ParameterError("no such transistor", parameter=f"{name}.t_rise",
                                     valid=", ".join(self.devices))
            bjt.check_range(f"{name}.t_rise", value, *T_RISE_RANGE, "K")
        object.__setattr__(self, "t_rise", MappingProxyType(t_rise))
        if not isinstance(self.title, str):
            raise ParameterError("must be text", parameter="title", value=self.title)

    @property
    def spec(self):
        """The :class:`kit.topologies.base.Topology` of this design."""
        from kit import topologies

        return topologies.get(self.topology)

    def parameters(self):
        """The full parameter vector as a name -> float dict."""
        out = dict(self.values)
        for name, model in self.devices.items():
            wanted = KINDS[self.spec.kind_of(name)].EQUATION_PARAMETERS
            for key, value in model.numbers().items():
                if key in wanted:
                    out[f"{name}.{key}"] = value
        for name in self.devices:
            out[f"{name}.t_rise"] = self.t_rise.get(name, 0.0)
        out["temp"] = self.temp
        out["t_ref"] = self.t_ref
        for name in self.spec.resistors:
            out[f"tcr_{name}"] = self.tcr.get(name, 0.0)
        out.update(self.hand)
        return out

    def with_values(self, **changes):
        """A new design with some values changed (same names as :func:`make_design`)."""
        return replace(make_design(self.topology, self.polarity, devices=self.devices, temp=self.temp,
                                   t_ref=self.t_ref, tcr=self.tcr, hand=self.hand, title=self.title,
                                   **(dict(self.values) | changes)), t_rise=self.t_rise)

    def with_parameter(self, name, value):
        """A new design with one flat parameter (``"Q1.beta_f"``, ``"temp"``, ``"r1"``) set."""
        if name.endswith(".t_rise"):
            return replace(self, t_rise=dict(self.t_rise) | {name.split(".")[0]: value})
        if "." in name:
            transistor, key = name.split(".", 1)
            if transistor not in self.devices:
                raise ParameterError("no such transistor", parameter=name, valid=", ".join(self.devices))
            devices = dict(self.devices)
            devices[transistor] = devices[transistor].with_values(**{key: value})
            return replace(self, devices=devices)
        if name in ("temp", "t_ref"):
            return replace(self, **{name: value})
        if name.startswith("tcr_"):
            return replace(self, tcr=dict(self.tcr) | {name[4:]: value})
        if name in HAND_RANGES:
            return replace(self, hand=dict(self.hand) | {name: value})
        return self.with_values(**{name: value})

    def to_dict(self):
        """Plain fields for JSON."""
        return {
            "title": self.title,
            "topology": self.topology,
            "polarity": self.polarity,
            "values": dict(self.values),
            "devices": {name: model.numbers() | {"label": model.label}
                        for name, model in self.devices.items()},
            "temp": self.temp,
            "t_ref": self.t_ref,
            "tcr": dict(self.tcr),
            "hand": dict(self.hand),
            "t_rise": dict(self.t_rise),
        }


def parameter_range(top, name):
    """``(low, high, unit)`` of flat parameter ``name`` in topology ``top``.

    The same ranges :class:`Design` enforces, for checking arrays of values
    (sweeps) without building a design per point.
    """
    if name in {v.name for v in top.values}:
        spec = top.value_spec(name)
        return spec.low, spec.high, spec.unit
    if name in ("temp", "t_ref"):
        return (*TEMPERATURE_RANGE, "K")
    if name.startswith("tcr_"):
        return (*TCR_RANGE, "1/K")
    if name in HAND_RANGES:
        return HAND_RANGES[name]
    device, _, key = name.partition(".")
    if key == "t_rise":
        return (*T_RISE_RANGE, "K")
    if device in top.transistors:
        limits = getattr(KINDS[top.kind_of(device)], "MODEL_LIMITS", bjt.MODEL_LIMITS)
        if key in limits:
            return limits[key]
    raise ParameterError("no such parameter", parameter=name, valid="a flat parameter name of the design")


def check_parameter_values(top, name, values):
    """Raise :class:`ParameterError` unless every value of ``name`` lies in its range."""
    import numpy as np

    low, high, unit = parameter_range(top, name)
    array = np.asarray(values, dtype=float)
    allowed_inf = name.endswith(".v_a")
    bad = ~((array >= low) & (array <= high)) & ~(allowed_inf & np.isposinf(array))
    if np.any(bad):
        raise ParameterError("out of range", parameter=name, value=float(array[bad].flat[0]),
                             valid=f"{low:g} … {high:g} {unit}".rstrip())


def _check_values(top, values):
    names = [v.name for v in top.values]
    unknown = sorted(set(values) - set(names))
    if unknown:
        raise ParameterError(f"not a value of {top.key}", parameter=unknown[0],
                             valid=", ".join(names))
    out = {}
    for spec in top.values:
        value = values.get(spec.name, spec.default)
        bjt.check_range(spec.name, value, spec.low, spec.high, spec.unit)
        out[spec.name] = float(value)
    return out


def transistor_polarity(top, polarity, name):
    """Polarity of transistor ``name`` in a design of ``polarity``."""
    if name in getattr(top, "complementary", ()):
        return "pnp" if polarity == "npn" else "npn"
    return polarity


def _check_devices(top, polarity, devices):
    unknown = sorted(set(devices) - set(top.transistors))
    if unknown:
        raise ParameterError("no such transistor in this topology", parameter=unknown[0],
                             valid=", ".join(top.transistors))
    out = {}
    for name in top.transistors:
        wanted = transistor_polarity(top, polarity, name)
        kind = KINDS[top.kind_of(name)]
        model = devices.get(name, kind.typical(wanted))
        if isinstance(model, dict):
            try:
                model = kind.typical(wanted).with_values(**model)
            except ParameterError as err:  # name the transistor too: "Q2.beta_f"
                raise ParameterError(err.message, parameter=f"{name}.{err.parameter}", value=err.value,
                                     valid=err.valid) from None
        if not isinstance(model, kind.MODEL):
            raise ParameterError(f"must be a {kind.MODEL.__name__} or a dict of its parameters",
                                 parameter=name, value=type(model).__name__)
        if model.polarity != wanted:
            word = getattr(kind, "POLARITY_WORDS", {}).get(wanted, wanted)
            raise ParameterError(f"{name} must be {word.upper()}", parameter=f"{name}.polarity",
                                 value=model.polarity, valid=word)
        out[name] = model
    return out


def make_design(topology, polarity="npn", *, devices=None, temp=DEFAULT_TEMPERATURE,
                t_ref=DEFAULT_TEMPERATURE, tcr=None, hand=None, title="", **values):
    """Build a :class:`Design`, parsing text values (``"4k7"``, ``"12 V"``, ``"25 degC"``).

    Parameters
    ----------
    topology : str
        A key of :func:`kit.topologies.all_topologies`.
    polarity : {"npn", "pnp"}
    devices : dict, optional
        Transistor name -> :class:`kit.devices.BJTModel` or dict of overrides of
        the typical model (``{"Q1": {"beta_f": 120}}``).
    temp, t_ref : float or str
        Temperature of the point and reference temperature of all given
        values (K, or text such as ``"25 degC"``).
    tcr : dict, optional
        Resistor name -> TCR (1/K, or text such as ``"100 ppm/K"``).
    hand : dict, optional
        Hand-analysis values ``v_be_on``, ``v_be_tc`` for the closed forms.
    **values
        Topology values by name (SI, or text with units).

    Examples
    --------
    >>> make_design("divider_source", r_e="4k7").values["r_e"]
    4700.0
    >>> make_design("divider_source", r_x=1.0)
    Traceback (most recent call last):
    ...
    kit.errors.ParameterError: r_x: not a value of divider_source (valid: r1, r2, r_e, v_supply, v_load)
    """
    from kit import topologies
    from kit.quantities import parse_quantity

    top = topologies.get(topology)
    units = {v.name: v.unit for v in top.values}
    parsed = {}
    for name, value in values.items():
        parsed[name] = parse_quantity(value, units.get(name), name=name) if isinstance(value, str) else value
    temps = {n: parse_quantity(v, "K", name=n) if isinstance(v, str) else v
             for n, v in (("temp", temp), ("t_ref", t_ref))}
    tcr = {n: parse_quantity(v, "1/K", name=f"tcr_{n}") if isinstance(v, str) else v
           for n, v in (tcr or {}).items()}
    hand = {n: parse_quantity(v, None, name=n) if isinstance(v, str) else v for n, v in (hand or {}).items()}
    return Design(topology, polarity, parsed, dict(devices or {}), temps["temp"], temps["t_ref"],
                  tcr, hand, title)


__all__ = ["Design", "make_design", "transistor_polarity"]
