"""A design: one topology, its values, its parts and its conditions.

:class:`Design` is immutable and validated on creation against the one
parameter vocabulary (:mod:`kit.model.vocabulary`); change it with
:meth:`Design.with_values` or :meth:`Design.with_parameter`, which validate
again.  :meth:`Design.parameters` flattens it into the parameter vector the
exact solve works on.

Examples
--------
>>> d = make_design("divider_source", r1="33k", r2="10k", r_e="2k2", v_supply="12 V", v_load="8 V")
>>> d.values["r_e"], d.topology.key, d.polarity
(2200.0, 'divider_source', 'npn')
>>> d.with_values(r_e=2000).values["r_e"]
2000.0
>>> d.parameters()["Q1.beta_f"]
200.0
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from types import MappingProxyType

from kit.devices.base import DeviceModel
from kit.errors import ParameterError
from kit.model.structure import structure
from kit.model.vocabulary import DEFAULT_TEMPERATURE, HAND, entry, hand_default, vocabulary


def _frozen(mapping=None):
    return MappingProxyType(dict(mapping or {}))


@dataclass(frozen=True)
class Design:
    """A validated design point (see the module docstring for the names).

    Build it with :func:`make_design`, which reads text such as ``"4k7"``.

    Attributes
    ----------
    topology : kit.topologies.base.Topology
    polarity : str
        One of the topology's polarity words (``"npn"``, ``"nmos"``, ...).
    values : mapping
        The topology's values (SI units).
    devices : mapping
        Part name -> :class:`kit.devices.base.DeviceModel` for every part with
        a model of its own (transistors, diodes, zeners, op-amps).
    temp, t_ref : float
        Temperature of the point and reference temperature of every value (K).
    tcr, ratings : mapping
        Resistor value name -> TCR (1/K) and power rating (W).
    hand : mapping
        Hand-analysis values for the closed forms (``v_be_on``, ``v_be_tc``).
    t_rise : mapping
        Part name -> junction temperature above ``temp`` (K; self-heating).
    title : str
    """

    topology: object
    polarity: str
    values: MappingProxyType
    devices: MappingProxyType
    temp: float = DEFAULT_TEMPERATURE
    t_ref: float = DEFAULT_TEMPERATURE
    tcr: MappingProxyType = field(default_factory=_frozen)
    ratings: MappingProxyType = field(default_factory=_frozen)
    hand: MappingProxyType = field(default_factory=_frozen)
    t_rise: MappingProxyType = field(default_factory=_frozen)
    title: str = ""

    def __post_init__(self):
        top = self.topology
        top.check_polarity(self.polarity)
        words = vocabulary(top, self.polarity)
        s = self.structure
        values = dict(self.values)
        unknown = sorted(set(values) - set(top.value_names))
        if unknown:
            raise ParameterError(f"not a value of {top.key}", parameter=unknown[0],
                                 valid=", ".join(top.value_names))
        checked = {v.name: words[v.name].check(values.get(v.name, v.default_for(self.polarity)))
                   for v in top.values}
        object.__setattr__(self, "values", _frozen(checked))
        object.__setattr__(self, "devices", _frozen(_check_devices(s, dict(self.devices))))
        for name in ("temp", "t_ref"):
            object.__setattr__(self, name, words[name].check(getattr(self, name)))
        for table, prefix in (("tcr", "tcr_"), ("ratings", "p_rated_")):
            given = dict(getattr(self, table))
            checked = {}
            for name, value in given.items():
                if f"{prefix}{name}" not in words:
                    raise ParameterError("no such resistor", parameter=f"{prefix}{name}",
                                         valid=", ".join(top.resistors))
                checked[name] = words[f"{prefix}{name}"].check(value)
            object.__setattr__(self, table, _frozen(checked))
        hand = {name: hand_default(name) for name in s.hand_parameters}
        for name, value in dict(self.hand).items():
            if name not in HAND:
                raise ParameterError("unknown hand-analysis value", parameter=name, valid=", ".join(HAND))
            if name in hand:
                hand[name] = words[name].check(value)
        object.__setattr__(self, "hand", _frozen(hand))
        rises = {}
        for name, value in dict(self.t_rise).items():
            if f"{name}.t_rise" not in words:
                raise ParameterError("no such part", parameter=f"{name}.t_rise",
                                     valid=", ".join(s.device_names))
            rises[name] = words[f"{name}.t_rise"].check(value)
        object.__setattr__(self, "t_rise", _frozen(rises))
        if not isinstance(self.title, str):
            raise ParameterError("must be text", parameter="title", value=self.title)

    @property
    def structure(self):
        """What the topology's circuit says about itself (:mod:`kit.model.structure`)."""
        return structure(self.topology, self.polarity)

    @property
    def sense(self):
        return self.topology.sense(self.polarity)

    @property
    def vocabulary(self):
        return vocabulary(self.topology, self.polarity)

    def parameters(self):
        """The full parameter vector as a name -> float dict (every name of the vocabulary)."""
        out = {}
        for name, e in self.vocabulary.items():
            if e.group == "value":
                out[name] = self.values[name]
            elif e.group == "device":
                out[name] = self.devices[e.part].values[name.split(".", 1)[1]]
            elif e.group == "rise":
                out[name] = self.t_rise.get(e.part, 0.0)
            elif e.group == "tcr":
                out[name] = self.tcr.get(name[len("tcr_"):], 0.0)
            elif e.group == "rating":
                out[name] = self.ratings.get(name[len("p_rated_"):], float("inf"))
            elif e.group == "condition":
                out[name] = getattr(self, name)
            else:
                out[name] = self.hand[name]
        return out

    def with_values(self, **changes):
        """A new design with some values changed (text such as ``"4k7"`` is read)."""
        parsed = {name: _read(self.topology, self.polarity, name, value) for name, value in changes.items()}
        return replace(self, values=dict(self.values) | parsed)

    def with_parameter(self, name, value):
        """A new design with one flat parameter (``"Q1.beta_f"``, ``"temp"``, ``"tcr_r1"``) set."""
        e = entry(self.topology, self.polarity, name)
        value = _read(self.topology, self.polarity, name, value)
        if e.group == "value":
            return replace(self, values=dict(self.values) | {name: value})
        if e.group == "device":
            part, key = name.split(".", 1)
            return replace(self, devices=dict(self.devices) | {part: self.devices[part].with_values(**{key: value})})
        if e.group == "rise":
            return replace(self, t_rise=dict(self.t_rise) | {e.part: value})
        if e.group == "tcr":
            return replace(self, tcr=dict(self.tcr) | {name[len("tcr_"):]: value})
        if e.group == "rating":
            return replace(self, ratings=dict(self.ratings) | {name[len("p_rated_"):]: value})
        if e.group == "condition":
            return replace(self, **{name: value})
        return replace(self, hand=dict(self.hand) | {name: value})

    def to_dict(self):
        """Plain fields for JSON."""
        return {
            "title": self.title,
            "topology": self.topology.key,
            "polarity": self.polarity,
            "values": dict(self.values),
            "devices": {name: model.numbers() | {"label": model.label} for name, model in self.devices.items()},
            "temp": self.temp,
            "t_ref": self.t_ref,
            "tcr": dict(self.tcr),
            "ratings": dict(self.ratings),
            "hand": dict(self.hand),
            "t_rise": dict(self.t_rise),
        }


def typical_device(part):
    """The typical model of a part in its topology: its kind's typical values with the topology's own."""
    base = part.kind.typical(part.sense)
    return base.with_values(**part.typical) if part.typical else base


def _check_devices(s, devices):
    names = s.device_names
    unknown = sorted(set(devices) - set(names))
    if unknown:
        raise ParameterError("no such part in this topology", parameter=unknown[0], valid=", ".join(names))
    out = {}
    for part in s.devices:
        typical = typical_device(part)
        model = devices.get(part.name, typical)
        if isinstance(model, dict):
            try:
                model = typical.with_values(**{k: _read_device(part, k, v) for k, v in model.items()})
            except ParameterError as err:  # name the part too: "Q2.beta_f"
                raise ParameterError(err.message, parameter=f"{part.name}.{err.parameter}", value=err.value,
                                     valid=err.valid) from None
        if not isinstance(model, DeviceModel) or model.kind is not part.kind:
            raise ParameterError(f"must be a {part.kind.title} model or a dict of its parameters",
                                 parameter=part.name, value=type(model).__name__)
        if model.sense != part.sense:
            raise ParameterError(f"{part.name} must be {part.polarity.upper()}", parameter=f"{part.name}.polarity",
                                 value=model.polarity, valid=part.polarity)
        out[part.name] = model
    return out


def _read_device(part, key, value):
    """A device parameter given as text (``"1e-14 A"``) read with its unit; numbers pass."""
    if key == "label" or not isinstance(value, str):
        return value
    from kit.quantities import parse_quantity

    try:
        unit = part.kind.param(key).unit
    except ParameterError:
        return value  # the model names the unknown parameter
    return parse_quantity(value, unit or None, name=key, allow_inf=True)


def _read(topology, polarity, name, value):
    """A value given as text read with its unit; numbers pass (and are range-checked later)."""
    if not isinstance(value, str):
        return value
    from kit.quantities import parse_quantity

    e = entry(topology, polarity, name)
    return parse_quantity(value, e.unit or None, name=name, allow_inf=e.allow_inf)


def _rises_from_devices(devices, t_rise):
    """Move a part's ``t_rise`` given among its parameters (as a record keeps it) to ``t_rise``.

    A record keeps a junction's rise beside its model (``[devices.Q1]
    t_rise = 5``); a design may be given it the same way.
    """
    devices, t_rise = dict(devices or {}), dict(t_rise or {})
    for name, model in list(devices.items()):
        if isinstance(model, dict) and "t_rise" in model:
            model = dict(model)
            rise = model.pop("t_rise")
            if name in t_rise and t_rise[name] != rise:
                raise ParameterError("given twice, in devices and in t_rise", parameter=f"{name}.t_rise",
                                     value=rise, valid="one value")
            t_rise[name] = rise
            devices[name] = model
    return devices, t_rise


def make_design(topology, polarity=None, *, devices=None, temp=DEFAULT_TEMPERATURE, t_ref=DEFAULT_TEMPERATURE,
                tcr=None, ratings=None, hand=None, t_rise=None, title="", **values):
    """Build a :class:`Design`, reading text values (``"4k7"``, ``"12 V"``, ``"25 degC"``).

    Parameters
    ----------
    topology : str or kit.topologies.base.Topology
        A topology or its key (``biasbook topologies`` lists them).
    polarity : str, optional
        One of the topology's polarity words; default its first (the sink).
    devices : dict, optional
        Part name -> :class:`kit.devices.base.DeviceModel` or a dict of
        overrides of the part's typical model (``{"Q1": {"beta_f": 120}}``).
    temp, t_ref : float or str
        Temperature of the point and reference temperature of all given
        values (K, or text such as ``"25 degC"``).
    tcr, ratings : dict, optional
        Resistor value name -> TCR (1/K or ``"100 ppm/K"``) and power rating (W).
    hand : dict, optional
        Hand-analysis values ``v_be_on``, ``v_be_tc`` for the closed forms.
    t_rise : dict, optional
        Part name -> junction temperature above ``temp`` (K); it may also be
        given among a part's parameters (``devices={"Q1": {"t_rise": 5}}``).
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

    top = topologies.get(topology) if isinstance(topology, str) else topology
    polarity = top.polarities[0] if polarity is None else polarity
    top.check_polarity(polarity)
    unknown = sorted(set(values) - set(top.value_names))
    if unknown:
        raise ParameterError(f"not a value of {top.key}", parameter=unknown[0], valid=", ".join(top.value_names))
    parsed = {n: _read(top, polarity, n, v) for n, v in values.items()}
    temps = {n: _read(top, polarity, n, v) for n, v in (("temp", temp), ("t_ref", t_ref))}
    tcr = {n: _read(top, polarity, f"tcr_{n}", v) if f"tcr_{n}" in vocabulary(top, polarity) else v
           for n, v in (tcr or {}).items()}
    ratings = {n: _read(top, polarity, f"p_rated_{n}", v) if f"p_rated_{n}" in vocabulary(top, polarity) else v
               for n, v in (ratings or {}).items()}
    hand = {n: _read(top, polarity, n, v) if n in vocabulary(top, polarity) else v for n, v in (hand or {}).items()}
    devices, t_rise = _rises_from_devices(devices, t_rise)
    rises = {n: _read(top, polarity, f"{n}.t_rise", v) if f"{n}.t_rise" in vocabulary(top, polarity) else v
             for n, v in (t_rise or {}).items()}
    return Design(top, polarity, parsed, dict(devices or {}), temps["temp"], temps["t_ref"], tcr, ratings,
                  hand, rises, title)


__all__ = ["Design", "make_design", "typical_device"]
