"""The requirement a design must meet, and the tolerance box it must meet it over.

A :class:`Spec` says what "the current is guaranteed" means: a target
current and tolerance, the load-voltage range that must lie inside
compliance, the supply and ambient-temperature ranges, the transistor gain
range, resistor tolerance and TCR (a default and per resistor), bounds on
other values (a zener's voltage, an op-amp's offset) and a dissipation
limit.  :func:`factors` turns a spec and a design into the list of
:class:`Factor` s the worst-case methods vary.

Examples
--------
>>> spec = Spec(i_target=1e-3, tolerance=0.05, v_load=(3.0, 10.0),
...             temp=(233.15, 358.15), beta={"npn": (100.0, 300.0)})
>>> [round(limit * 1e3, 6) for limit in spec.limits]
[0.95, 1.05]
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field
from types import MappingProxyType

from kit.devices.base import is_real_number
from kit.errors import ParameterError

SIGMA_PER_TOLERANCE = 3.0  # RSS maps a ± tolerance to 3 sigma (an assumption, stated in reports)
MAX_SAMPLES = 1_000_000  # Monte Carlo runs in constant memory; this bounds the time (minutes)
DISTRIBUTIONS = ("uniform", "log-uniform")
# The spec's conditions in a reviewer's words (budget rows, panel bars).
CONDITION_WORDS = {"v_supply": "supply voltage", "v_load": "load voltage", "temp": "ambient temperature"}
# Applied where a spec does not say (common practice, no source: 1 % metal film
# of 100 ppm/K); Spec.assumed names the ones a spec left to these.
DEFAULT_RESISTOR_TOLERANCE = 0.01
DEFAULT_RESISTOR_TCR = 100e-6


def _pair(name, value, low, high, unit):
    if value is None:
        return None
    try:
        a, b = value
    except (TypeError, ValueError):
        a = b = None
    if not (is_real_number(a) and is_real_number(b)):
        raise ParameterError("must be a pair (low, high)", parameter=name, value=value,
                             valid=f"two numbers in {low:g} … {high:g} {unit}".rstrip())
    a, b = float(a), float(b)
    for v in (a, b):
        if not (low <= v <= high):
            raise ParameterError("out of range", parameter=name, value=value,
                                 valid=f"{low:g} … {high:g} {unit}".rstrip())
    if a > b:
        raise ParameterError("low end above high end", parameter=name, value=value,
                             valid="low <= high")
    return (a, b)


def _fraction(name, value, high=0.5):
    if not is_real_number(value) or not (0 <= value <= high):
        raise ParameterError("tolerance out of range", parameter=name, value=value,
                             valid=f"0 … {high:g} (a fraction: 0.01 is 1 %)")
    return float(value)


@dataclass(frozen=True)
class Spec:
    """What the output current must do, and over what.

    Parameters
    ----------
    i_target : float
        Target output current in A.
    tolerance : float
        Allowed relative deviation (0.02 for ±2 %).
    v_load : (float, float), optional
        Load voltages (V) over which the current must hold; default: the
        design's own load voltage only.
    v_supply : (float, float), optional
        Supply range in V; default: the design's supply only.
    temp : (float, float), optional
        Ambient temperature range in K; default: the design's temperature.
    beta : dict, optional
        Polarity (``"npn"``/``"pnp"``, or a transistor name) -> (min, max) of
        the forward gain beta_F; default: nominal gain only.
    resistor_tolerance : float, optional
        Resistor tolerance (fraction) of every resistor without its own;
        not given: :data:`DEFAULT_RESISTOR_TOLERANCE`, and :attr:`assumed`
        says so.
    resistor_tcr : float, optional
        TCR bound in 1/K (sign unknown: varied over ± about each resistor's
        own TCR) of every resistor without its own; not given:
        :data:`DEFAULT_RESISTOR_TCR`, and :attr:`assumed` says so.
    tolerances, tcrs : dict
        Per-resistor overrides of the two above.
    bounds : dict
        Other value name -> (low, high), e.g. a zener voltage or an offset.
    p_max : float, optional
        Dissipation limit per transistor in W (besides the junction
        temperature limit of each device model).
    matched : tuple of tuples
        Groups of transistors made together (a matched pair, one die): their
        gain takes one value over the gain range in every method, and they
        differ only by the mismatch below (see :mod:`kit.analysis.mismatch`).
    mismatch_vbe : float
        Bound on ``|ΔV_BE|`` between two bipolar members at equal current, in
        V (taken as 3 σ of the difference); 0 … 0.1 V.
    mismatch_beta : float
        Bound on ``|Δβ_F/β_F|`` between two bipolar members (fraction, 3 σ).
    mismatch_vth : float
        Bound on ``|ΔV_th|`` between two MOSFET members in V (3 σ); 0 … 1 V.
    mismatch_k : float
        Bound on ``|Δk/k|`` between two MOSFET members (fraction, 3 σ).
    a_vth, a_k : float
        Area constants of the MOSFET mismatch, ``σ(ΔV_th) = a_vth/sqrt(W L)``
        in V·m and ``σ(Δk/k) = a_k/sqrt(W L)`` in m (Pelgrom et al., IEEE
        JSSC 1989); instead of ``mismatch_vth`` / ``mismatch_k``, with
        ``gate_area``.  1 mV·µm is 1e-9 V·m.
    gate_area : float or dict
        Gate area ``W L`` in m² of every MOSFET of a matched group, or
        transistor name -> area; needed with ``a_vth`` or ``a_k``.
    beta_distribution : {"log-uniform", "uniform"}
    samples : int
        Monte Carlo samples.
    seed : int
        Monte Carlo seed (runs are reproducible).

    Attributes
    ----------
    assumed : tuple of str
        The names of the fields the caller left out and the spec filled
        with a default that changes the result (``"resistor_tolerance"``,
        ``"resistor_tcr"``), so a report can say which numbers nobody wrote.
    """

    i_target: float
    tolerance: float
    v_load: tuple | None = None
    v_supply: tuple | None = None
    temp: tuple | None = None
    beta: dict = field(default_factory=dict)
    resistor_tolerance: float | None = None
    resistor_tcr: float | None = None
    tolerances: dict = field(default_factory=dict)
    tcrs: dict = field(default_factory=dict)
    bounds: dict = field(default_factory=dict)
    p_max: float | None = None
    matched: tuple = ()
    mismatch_vbe: float = 0.0
    mismatch_beta: float = 0.0
    mismatch_vth: float = 0.0
    mismatch_k: float = 0.0
    a_vth: float = 0.0
    a_k: float = 0.0
    gate_area: object = None
    beta_distribution: str = "log-uniform"
    samples: int = 2000
    seed: int = 1
    # Kept through dataclasses.replace; not part of equality or to_dict (it says
    # where two numbers came from, not what is required).
    assumed: tuple | None = field(default=None, compare=False, repr=False)

    def __post_init__(self):
        filled = []
        for name, default in (("resistor_tolerance", DEFAULT_RESISTOR_TOLERANCE),
                              ("resistor_tcr", DEFAULT_RESISTOR_TCR)):
            if getattr(self, name) is None:
                object.__setattr__(self, name, default)
                filled.append(name)
        object.__setattr__(self, "assumed", tuple(filled) if self.assumed is None else tuple(self.assumed))
        if not is_real_number(self.i_target) or not (1e-12 <= self.i_target <= 100.0):
            raise ParameterError("target current out of range", parameter="i_target",
                                 value=self.i_target, valid="1 pA … 100 A")
        object.__setattr__(self, "i_target", float(self.i_target))
        object.__setattr__(self, "tolerance", _fraction("tolerance", self.tolerance))
        if self.tolerance == 0:
            raise ParameterError("a zero tolerance cannot be met", parameter="tolerance",
                                 value=0.0, valid="> 0")
        object.__setattr__(self, "v_load", _pair("v_load", self.v_load, -1000, 1000, "V"))
        object.__setattr__(self, "v_supply", _pair("v_supply", self.v_supply, 0.1, 1000, "V"))
        object.__setattr__(self, "temp", _pair("temp", self.temp, 150, 500, "K"))
        beta = {k: _pair(f"beta.{k}", v, 1.0, 1e5, "") for k, v in dict(self.beta).items()}
        object.__setattr__(self, "beta", MappingProxyType(beta))
        object.__setattr__(self, "resistor_tolerance", _fraction("resistor_tolerance", self.resistor_tolerance))
        object.__setattr__(self, "resistor_tcr", _tcr("resistor_tcr", self.resistor_tcr))
        object.__setattr__(self, "tolerances", MappingProxyType(
            {k: _fraction(f"tolerances.{k}", v) for k, v in dict(self.tolerances).items()}))
        object.__setattr__(self, "tcrs", MappingProxyType(
            {k: _tcr(f"tcrs.{k}", v) for k, v in dict(self.tcrs).items()}))
        object.__setattr__(self, "bounds", MappingProxyType(
            {k: _pair(f"bounds.{k}", v, -math.inf, math.inf, "") for k, v in dict(self.bounds).items()}))
        if self.p_max is not None:
            if not is_real_number(self.p_max) or not (0 < self.p_max <= 1e4):
                raise ParameterError("dissipation limit out of range", parameter="p_max",
                                     value=self.p_max, valid="0 … 10 kW")
            object.__setattr__(self, "p_max", float(self.p_max))
        self._check_mismatch()
        if self.beta_distribution not in DISTRIBUTIONS:
            raise ParameterError("unknown distribution", parameter="beta_distribution",
                                 value=self.beta_distribution, valid=" or ".join(DISTRIBUTIONS))
        object.__setattr__(self, "samples", _count("samples", self.samples, 10, MAX_SAMPLES))
        object.__setattr__(self, "seed", _count("seed", self.seed, 0, None))
        object.__setattr__(self, "matched", tuple(tuple(g) for g in self.matched))

    def _check_mismatch(self):
        for name, high, unit in (("mismatch_vbe", 0.1, "V"), ("mismatch_vth", 1.0, "V"),
                                 ("mismatch_beta", 0.5, ""), ("mismatch_k", 0.5, ""),
                                 ("a_vth", 1e-6, "V·m (1 mV·µm = 1e-9 V·m)"),
                                 ("a_k", 1e-6, "m (1 %·µm = 1e-8 m)")):
            value = getattr(self, name)
            if not is_real_number(value) or not (0 <= value <= high):
                valid = f"0 … {high:g} {unit}".rstrip() if unit else f"0 … {high:g} (a fraction: 0.01 is 1 %)"
                raise ParameterError("mismatch out of range", parameter=name, value=value, valid=valid)
            object.__setattr__(self, name, float(value))
        for constant, direct in (("a_vth", "mismatch_vth"), ("a_k", "mismatch_k")):
            if getattr(self, constant) and getattr(self, direct):
                raise ParameterError("give the mismatch or its area constant, not both", parameter=constant,
                                     value=getattr(self, constant), valid=f"0 when {direct} is given")
        area = self.gate_area
        if area is not None:
            entries = dict(area) if isinstance(area, (dict, MappingProxyType)) else {"": area}
            for key, value in entries.items():
                if not is_real_number(value) or not (1e-15 <= value <= 1e-3):
                    raise ParameterError("gate area out of range",
                                         parameter="gate_area" + (f".{key}" if key else ""), value=value,
                                         valid="1e-15 … 1e-3 m² (1 µm² = 1e-12 m²)")
            entries = {k: float(v) for k, v in entries.items()}
            object.__setattr__(self, "gate_area", entries[""] if "" in entries else MappingProxyType(entries))
        if (self.a_vth or self.a_k) and area is None:
            raise ParameterError("an area constant needs the gate area", parameter="gate_area",
                                 valid="W·L in m², e.g. 2e-11 for 20 µm²")

    def gate_area_of(self, transistor):
        """The gate area ``W L`` (m²) the spec gives ``transistor``."""
        if isinstance(self.gate_area, MappingProxyType):
            if transistor not in self.gate_area:
                raise ParameterError("no gate area for this transistor", parameter="gate_area",
                                     value=transistor, valid="an area for every matched MOSFET")
            return self.gate_area[transistor]
        return self.gate_area

    @property
    def limits(self):
        """``(low, high)`` current limits in A."""
        return (self.i_target * (1 - self.tolerance), self.i_target * (1 + self.tolerance))

    def margin(self, low, high):
        """Smallest relative distance of ``[low, high]`` to the limits (< 0: out of spec).

        Measured in units of the target current, so 0.01 means 1 % of the
        target to spare.
        """
        lo, hi = self.limits
        return min(low - lo, hi - high) / self.i_target

    def to_dict(self):
        out = {}
        for name in self.__dataclass_fields__:
            if name == "assumed":
                continue
            value = getattr(self, name)
            out[name] = dict(value) if isinstance(value, MappingProxyType) else value
        return out


def _count(name, value, low, high):
    """A whole number in ``low … high`` (``high`` None: no upper end) as an ``int``.

    Any integer (NumPy's too) or a float with no fraction (``1e5``) is a
    count; ``bool``, text, NaN and ``2.5`` are not.
    """
    valid = f"a whole number, {low} … {high}" if high is not None else f"a whole number >= {low}"
    if is_real_number(value) and not isinstance(value, numbers.Integral):
        if not (math.isfinite(value) and float(value).is_integer()):
            raise ParameterError("must be a whole number", parameter=name, value=value, valid=valid)
        value = int(value)
    if not isinstance(value, numbers.Integral) or isinstance(value, bool):
        raise ParameterError("must be a whole number", parameter=name, value=value, valid=valid)
    value = int(value)
    if value < low or (high is not None and value > high):
        raise ParameterError("out of range", parameter=name, value=value, valid=valid)
    return value


def _tcr(name, value):
    if not is_real_number(value) or not (0 <= value <= 5e-3):
        raise ParameterError("TCR bound out of range", parameter=name, value=value,
                             valid="0 … 5000 ppm/K (a bound; the sign is varied)")
    return float(value)


@dataclass(frozen=True)
class Factor:
    """One varied parameter of the tolerance box.

    ``name`` is the flat parameter name (or, for a factor with ``targets``,
    a name of its own such as ``Q1+Q2.beta_f``); ``kind`` is ``"part"``
    (varies from part to part: resistors, gain, reference), ``"mismatch"``
    (a member of a matched group against the group) or ``"condition"`` (the
    environment the design must work over: temperature, supply, load).
    """

    name: str
    nominal: float
    low: float
    high: float
    kind: str
    distribution: str = "uniform"
    label: str = ""
    # A factor standing for more than one parameter (a matched group's common gain, a
    # member's mismatch): (flat parameter, law, limits) per target; see kit.analysis.mismatch.
    targets: tuple = ()
    sigma: float | None = None  # the Gaussian sigma of a "normal" factor (Monte Carlo, RSS)
    group: tuple = ()  # the matched group it belongs to

    @property
    def half_range(self):
        return 0.5 * (self.high - self.low)


def factors(spec, design):
    """The factors of ``spec`` applied to ``design``, parts first, then conditions.

    Examples
    --------
    >>> import kit
    >>> d = kit.design("divider_source")
    >>> names = [f.name for f in factors(Spec(1e-3, 0.05, temp=(273.15, 323.15)), d)]
    >>> names[:3], names[-1]
    (['r1', 'r2', 'r_e'], 'temp')
    """
    from kit.analysis import mismatch

    top = design.topology
    words = design.vocabulary
    params = design.parameters()
    _check_names(spec, design)
    found = mismatch.groups(spec, design)
    mismatch.check_used(spec, found)
    in_group = {m: g for g in found for m in g.members}
    out = []
    for name in top.resistors:
        tol = spec.tolerances.get(name, spec.resistor_tolerance)
        if tol:
            out.append(Factor(name, params[name], params[name] * (1 - tol), params[name] * (1 + tol),
                              "part", label=f"{name} ±{100 * tol:.3g} %"))
    for name in top.resistors:
        tcr = spec.tcrs.get(name, spec.resistor_tcr)
        if tcr and spec.temp is not None:
            # The bound is a spread about the design's own TCR (zero unless it names one).
            own = params[f"tcr_{name}"]
            out.append(Factor(f"tcr_{name}", own, own - tcr, own + tcr, "part", label=f"TCR of {name}"))
    for transistor, model in design.devices.items():
        bounds = spec.beta.get(transistor) or spec.beta.get(model.polarity)
        if bounds is not None and "beta_f" in model.values and transistor not in in_group:
            out.append(Factor(f"{transistor}.beta_f", model.beta_f, bounds[0], bounds[1], "part",
                              spec.beta_distribution, label=f"β_F of {transistor}"))
    shared = mismatch.group_factors(spec, design, found)
    out += [f for f in shared if f.kind == "part"]
    varied = {f.name for f in out} | {t for f in out for t, _, _ in f.targets} | {
        n for n, b in (("v_supply", spec.v_supply), ("v_load", spec.v_load), ("temp", spec.temp)) if b is not None}
    for name, (low, high) in spec.bounds.items():
        field = f"bounds.{name}"
        if name not in params:
            raise ParameterError("names no parameter of this design", parameter=field,
                                 valid=", ".join(sorted(params)))
        if name in varied:
            raise ParameterError("already varied by the spec (its tolerance, gain or condition range)",
                                 parameter=field, valid="a value the spec does not vary otherwise")
        e = words[name]
        if not (e.low <= low <= high <= e.high):
            raise ParameterError("outside the value's valid range", parameter=field, value=(low, high),
                                 valid=e.valid)
        part, _, own = name.partition(".")
        group = in_group.get(part)
        if group is not None and params[name] != 0:
            # A part of a matched group: the bound is the group's common spread, every member together.
            targets = tuple((f"{m}.{own}", "scale", None) for m in group.members)
            if any(t in varied for t, _, _ in targets):
                raise ParameterError("a matched group's parameter is bounded once, for the whole group",
                                     parameter=field, valid=f"one entry for {group.text}")
            varied |= {t for t, _, _ in targets}
            out.append(Factor(f"{'+'.join(group.members)}.{own}", params[name], low, high, "part",
                              label=f"{own} of {group.text} (matched)", targets=targets,
                              group=group.members))
            continue
        out.append(Factor(name, params[name], low, high, "part", label=name))
    out += [f for f in shared if f.kind == "mismatch"]
    for name, bounds in (("v_supply", spec.v_supply), ("v_load", spec.v_load), ("temp", spec.temp)):
        if bounds is not None:
            out.append(Factor(name, params[name], bounds[0], bounds[1], "condition", label=CONDITION_WORDS[name]))
    return out


def _check_names(spec, design):
    """Refuse spec entries that name nothing in the design (they would silently do nothing)."""
    transistors = {name for name, model in design.devices.items() if "beta_f" in model.values}
    # A polarity word is accepted even where no part has it: one spec serves several circuits.
    words = transistors | {"npn", "pnp"}
    for key in spec.beta:
        if key not in words:
            raise ParameterError("names no bipolar transistor or polarity of this design",
                                 parameter=f"beta.{key}", valid=", ".join(sorted(words)) or "none here")
    resistors = set(design.topology.resistors)
    for table, entries in (("tolerances", spec.tolerances), ("tcrs", spec.tcrs)):
        for key in entries:
            if key not in resistors:
                raise ParameterError("names no resistor of this design", parameter=f"{table}.{key}",
                                     valid=", ".join(sorted(resistors)))
    # matched groups are checked by kit.analysis.mismatch.groups (bipolar and MOS parts)
