"""What every kind of part is: its parameters, its laws, its ratings and its words.

A kind of part (bipolar transistor, MOSFET, JFET, diode, zener, op-amp,
resistor, ideal current source) is one :class:`DeviceKind` in a module of
its own.  It owns

* its **parameters** (:class:`Param`: unit, valid range, textbook symbol) and
  its typical values, from which :class:`DeviceModel` objects are made;
* its **law** (``stamp``: the currents into its terminals as SymPy
  expressions of the terminal voltages) and its **temperature law**
  (``temperature_map``: operating values at the junction temperature from
  the parameters given at the reference temperature);
* its **small-signal** parameters at the exact point (``small_signal``);
* its **ratings as margins** (``margins``: distance to each limit, >= 0
  inside, by cause) and its **regions**, both judged from solved points;
* its **words**: polarity names, region names, what limits it, and the
  labels of its operating symbols in equations and in the tempco budget.

:class:`kit.circuit.Circuit` adds any kind the same way, so a new kind of
part is one module here and nothing else.

Polarity.  Every kind has an ``n`` and a ``p`` sense (NPN/PNP, NMOS/PMOS,
n-/p-channel JFET; a sinking or a sourcing part) with its own words for
them; a design says the words of its main kind of part.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from kit.errors import ParameterError

# k and e are exact in the 2019 SI (CODATA 2018); written out so that the
# device laws import no SciPy (tests compare them with scipy.constants).
BOLTZMANN = 1.380649e-23  # J/K
ELEMENTARY_CHARGE = 1.602176634e-19  # C
BOLTZMANN_OVER_CHARGE = BOLTZMANN / ELEMENTARY_CHARGE  # V/K

SENSES = ("n", "p")


def thermal_voltage(temp):
    """Thermal voltage ``k T / q`` in volts.

    Examples
    --------
    >>> round(thermal_voltage(300.15) * 1e3, 4)
    25.8649
    """
    return BOLTZMANN_OVER_CHARGE * temp


def is_real_number(value):
    """True for int, float and NumPy real scalars (not bool, not text)."""
    return (isinstance(value, (int, float, np.integer, np.floating))
            and not isinstance(value, (bool, np.bool_)))


def check_range(name, value, low, high, unit="", *, allow_inf=False):
    """Raise :class:`ParameterError` unless ``low <= value <= high``.

    Examples
    --------
    >>> check_range("beta_f", 150.0, 1.0, 1e5)
    >>> check_range("beta_f", -3.0, 1.0, 1e5)
    Traceback (most recent call last):
    ...
    kit.errors.ParameterError: beta_f = -3.0: out of range (valid: 1 … 100000)
    """
    if not is_real_number(value):
        raise ParameterError("must be a number", parameter=name, value=value,
                             valid=f"{low:g} … {high:g} {unit}".rstrip())
    if allow_inf and value == math.inf:
        return
    if not (low <= value <= high):  # also false for NaN
        # The value as the user wrote it (-5, not -5.0); a NumPy scalar becomes a Python number.
        shown = value.item() if isinstance(value, (np.integer, np.floating)) else value
        raise ParameterError("out of range", parameter=name, value=shown,
                             valid=f"{low:g} … {high:g} {unit}".rstrip())


@dataclass(frozen=True)
class Param:
    """One parameter of a kind of part.

    Parameters
    ----------
    name : str
        Its name in records and flat parameter names (``Q1.beta_f``).
    unit : str
        SI unit (``""`` for a plain number).
    low, high : float
        Valid range, wide enough for any real part, narrow enough to catch
        a unit slip.
    description : str
        One line for tables, panels and ``biasbook topologies``.
    symbol : str
        The textbook symbol in plain text (``β_F``), for labels.
    allow_inf : bool
        Infinity is a valid value (an Early voltage of a perfect part).
    rating : bool
        A limit of the part (breakdown, dissipation) rather than a term of
        its law; ratings enter the margins, not the equations.
    """

    name: str
    unit: str
    low: float
    high: float
    description: str
    symbol: str = ""
    allow_inf: bool = False
    rating: bool = False

    @property
    def valid(self):
        """The valid range in words."""
        return f"{self.low:g} … {self.high:g} {self.unit}".rstrip()

    def check(self, value, name=None):
        check_range(name or self.name, value, self.low, self.high, self.unit, allow_inf=self.allow_inf)
        return float(value)


class DeviceModel:
    """The parameters of one part of a kind, given at the design's reference temperature.

    Immutable and validated on creation; change it with :meth:`with_values`.
    Parameters read as attributes (``model.beta_f``).

    Examples
    --------
    >>> from kit.devices import KINDS
    >>> npn = KINDS["bjt"].typical("n")
    >>> npn.beta_f, npn.polarity
    (200.0, 'npn')
    >>> npn.with_values(beta_f=120).beta_f
    120.0
    """

    __slots__ = ("kind", "sense", "values", "label")

    def __init__(self, kind, sense, values, label=""):
        if sense not in SENSES:
            raise ParameterError(f"unknown {kind.title} polarity", parameter="polarity", value=sense,
                                 valid=" or ".join(kind.words[s] for s in SENSES))
        checked = {}
        for param in kind.params:
            if param.name not in values:
                raise ParameterError(f"missing {kind.title} parameter", parameter=param.name,
                                     valid=param.valid)
            checked[param.name] = param.check(values[param.name])
        stray = sorted(set(values) - set(checked))
        if stray:
            raise ParameterError(f"unknown {kind.title} parameter", parameter=stray[0],
                                 valid=", ".join(p.name for p in kind.params))
        if not isinstance(label, str):
            raise ParameterError("must be text", parameter="label", value=label)
        kind.check_model(checked)
        object.__setattr__(self, "kind", kind)
        object.__setattr__(self, "sense", sense)
        object.__setattr__(self, "values", MappingProxyType(checked))
        object.__setattr__(self, "label", label)

    def __setattr__(self, name, value):
        raise AttributeError("a device model is immutable: use with_values()")

    def __getattr__(self, name):
        try:
            return object.__getattribute__(self, "values")[name]
        except KeyError:
            raise AttributeError(name) from None

    @property
    def polarity(self):
        """The kind's word for this part's polarity (``"npn"``, ``"pmos"``, ...)."""
        return self.kind.words[self.sense]

    def with_values(self, **changes):
        """A copy with some parameters (or ``label``) changed, validated like the original."""
        label = changes.pop("label", self.label)
        unknown = sorted(set(changes) - set(self.values))
        if unknown:
            raise ParameterError(f"unknown {self.kind.title} parameter", parameter=unknown[0],
                                 valid=", ".join(self.values))
        return DeviceModel(self.kind, self.sense, dict(self.values) | changes, label)

    def numbers(self):
        """The parameters as a plain dict of floats."""
        return dict(self.values)

    def __eq__(self, other):
        return (isinstance(other, DeviceModel) and other.kind is self.kind and other.sense == self.sense
                and dict(other.values) == dict(self.values) and other.label == self.label)

    def __hash__(self):
        return hash((self.kind.key, self.sense, tuple(sorted(self.values.items())), self.label))

    def __repr__(self):
        return f"DeviceModel({self.kind.key}, {self.polarity}, {dict(self.values)})"


class DeviceKind:
    """Base of every kind of part (see the module docstring).

    Subclasses set the class attributes and implement the methods that
    apply to them.  Symbolic methods import SymPy lazily: the numeric path
    (a warm start) never needs it.
    """

    key = ""
    title = ""  # "bipolar transistor"
    law = ""  # the model in words, for reports ("Ebers–Moll transport model ...")
    terminals = ()  # ("b", "c", "e")
    words = {"n": "n", "p": "p"}  # sense -> the kind's polarity word
    params = ()  # Param, in the order reports list them
    typical_values = {}  # sense -> {param: value}
    typical_labels = {}  # sense -> where the typical numbers come from
    quantities = ()  # exported per-device quantities of solved points
    step_limited = ()  # quantities whose Newton step is limited (forward-biased junctions)
    good_region = "active"
    causes = {}  # cause -> how a report words it ("saturates")
    sensitivity = {}  # parameter -> unit, reported per part by evaluate
    symbol_roles = {}  # operating-symbol role -> (name prefix, LaTeX, tempco-budget words)
    drives_node = None  # terminal whose voltage the part sets (an op-amp output), else None
    breakdown = None  # the parameter holding the part's breakdown voltage, if it has one
    conducts = True  # carries a current worth judging (a rating-only part does not)

    # -- models ---------------------------------------------------------------
    def typical(self, sense):
        """The generic typical part of a sense (``"n"``/``"p"``) or polarity word."""
        sense = self.sense_of(sense)
        return DeviceModel(self, sense, self.typical_values[sense], self.typical_labels.get(sense, ""))

    def model(self, sense, label="", **values):
        """A part from typical values with some changed."""
        return self.typical(sense).with_values(label=label or self.typical(sense).label, **values)

    def sense_of(self, word):
        """``"n"``/``"p"`` from a sense or one of this kind's polarity words."""
        for sense, name in self.words.items():
            if word in (sense, name):
                return sense
        raise ParameterError(f"unknown {self.title} polarity", parameter="polarity", value=word,
                             valid=" or ".join(self.words.values()))

    def check_model(self, values):
        """Cross-parameter checks of one part (override where needed)."""

    def param(self, name):
        for param in self.params:
            if param.name == name:
                return param
        raise ParameterError(f"unknown {self.title} parameter", parameter=name,
                             valid=", ".join(p.name for p in self.params))

    @property
    def law_params(self):
        return tuple(p.name for p in self.params if not p.rating)

    # -- symbolic -------------------------------------------------------------
    def operating_symbols(self, name):
        """SymPy symbols of part ``name``'s operating values, by role."""
        import sympy as sp

        return {role: sp.Symbol(f"{prefix}{name}", **self.assumptions_of(role))
                for role, (prefix, _, _) in self.symbol_roles.items()}

    def assumptions_of(self, role):
        """SymPy assumptions of an operating symbol (override for signed ones)."""
        return {"positive": True}

    def temperature_map(self, name, params, junction, t_ref, scale):
        """Operating symbol -> expression in the parameter symbols ``params`` (key -> Symbol).

        ``junction`` is the part's own temperature (the point's plus its rise),
        ``scale`` multiplies its size (an area or W/L ratio).
        """
        raise NotImplementedError

    def stamp(self, sense, voltages, symbols):
        """``(currents into each terminal, exported quantities)`` as SymPy expressions."""
        raise NotImplementedError

    def small_signal(self, quantities, symbols):
        """Small-signal parameters at the exact point (SymPy), for R_out forms."""
        return {}

    def small_signal_stamp(self, quantities, symbols):
        """The part's linear model at the exact point, for nodal analysis.

        A list of elements on terminal names: ``("g", a, b, g)`` a conductance
        between a and b; ``("gm", a, b, c, d, g)`` a current ``g (v_c - v_d)``
        from a to b; ``("vcvs", o, p, n, A)`` terminal o held at ``A (v_p - v_n)``.
        An ideal current source contributes nothing (an open circuit).
        """
        return []

    def start(self, sense, current, symbols):
        """The control voltage that carries ``current`` (SymPy), for starting points."""
        return None

    # -- numeric --------------------------------------------------------------
    def regions(self, j, p, temp, edge):
        """Region names of solved points (array of str)."""
        return np.full(np.shape(next(iter(j.values()))), self.good_region, dtype=object)

    def margins(self, j, p, temp, edge):
        """Cause -> margin (>= 0 inside) of solved points."""
        return {}

    def domain(self, j, op):
        """Where the part's laws hold: ``parameter -> (law in words, margin)``, margin > 0 inside.

        ``op`` holds the part's operating values by role (``"beta"``,
        ``"V_A"``, ...) at its junction temperature, ``j`` its exported
        quantities; both are arrays over points.  ``parameter`` is the one
        of the part's own parameters a designer would change to come back
        inside.  A law outside its domain (a negative current gain, a
        negative Early factor) has no physical meaning, so such a point is
        never accepted, whatever its regions say.
        """
        return {}

    def dissipation(self, j):
        return np.zeros(np.shape(next(iter(j.values()))))

    def describe(self, j):
        """One line of a solved part for plain-text reports."""
        return ""

    def current(self, j):
        """The current that names the part's operating point (I_C, I_D, I_Z)."""
        return None

    def limit_parameter(self, cause, j, p):
        """The part's own parameter that sets the limit ``cause`` at these points, if one does.

        For a refusal that no supply or load can cure (an op-amp whose
        output must pass its swing): the error names that parameter.
        """
        return None

    def cause_text(self, cause):
        return self.causes.get(cause, cause.replace("_", " "))


class Params:
    """The parameters of one part in a solved parameter array, read by name.

    Examples
    --------
    >>> import numpy as np
    >>> p = Params({"Q1.beta_f": 0}, np.array([[150.0, 200.0]]), "Q1")
    >>> p.beta_f
    array([150., 200.])
    """

    def __init__(self, index, p, name):
        self._index, self._p, self._name = index, p, name

    def __getattr__(self, key):
        try:
            return self._p[self._index[f"{self._name}.{key}"]]
        except KeyError:
            raise AttributeError(f"{self._name}.{key}") from None
