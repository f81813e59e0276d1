"""What a topology is: its values, its circuit, its drawing — and nothing it could derive.

A topology module holds only what is particular to its circuit:

``VALUES``
    the values a designer sets (:class:`Value`: unit, valid range, default);
``build(c)``
    the exact circuit, written on a :class:`kit.circuit.Circuit` ``c`` of the
    requested polarity: parts between nodes, the named closed forms with the
    assumptions each makes, small-signal forms, and (only where the generic
    one is not enough) starting points for the solve;
``draw(values, polarity)``
    a schemdraw drawing from the values and the polarity.

Its parts, their kinds and polarities, the parameters only hand analysis
uses and the labels of every symbol are read off the circuit (see
:mod:`kit.model.structure`), never declared again.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from kit.errors import ParameterError

VALUE_KINDS = ("resistor", "supply", "load", "other")


@dataclass(frozen=True)
class Value:
    """A value the designer sets: resistor, supply, load voltage, reference current, ...

    Parameters
    ----------
    name : str
        Public parameter name (``r1``, ``v_supply``).
    unit : str
        SI unit (``Ω``, ``V``, ``A``; ``""`` for a plain number).
    description : str
        One line for tables, panels and ``biasbook topologies``.
    default : float or dict
        The value of new designs and demos; a dict gives one per polarity
        word (a PNP design often needs other values than its NPN image).
    low, high : float
        Valid range (inclusive).
    kind : {"resistor", "supply", "load", "other"}
    whole : bool
        Only whole numbers are valid (a count).
    """

    name: str
    unit: str
    description: str
    default: object
    low: float
    high: float
    kind: str = "other"
    whole: bool = False

    def __post_init__(self):
        if self.kind not in VALUE_KINDS:
            raise ValueError(f"value {self.name}: unknown kind {self.kind!r}")

    def default_for(self, polarity):
        """The default for designs of ``polarity``."""
        if isinstance(self.default, dict):
            return float(self.default[polarity])
        return float(self.default)

    @property
    def valid(self):
        return f"{self.low:g} … {self.high:g} {self.unit}".rstrip()


@dataclass(frozen=True)
class Topology:
    """One supported circuit (see the module docstring)."""

    key: str
    title: str
    description: str
    values: tuple
    build: object = field(repr=False)
    draw: object = field(default=None, repr=False)
    polarities: tuple = ("npn", "pnp")  # the first sinks (n sense), the second sources
    notes: tuple = ()  # design cautions shown with every result (start-up, stability, ...)
    order: int = 100  # position in listings

    def sense(self, polarity):
        """``"n"`` for the first polarity word, ``"p"`` for the second."""
        self.check_polarity(polarity)
        return "n" if polarity == self.polarities[0] else "p"

    def check_polarity(self, polarity):
        if polarity not in self.polarities:
            raise ParameterError(f"{self.title} has no such polarity", parameter="polarity",
                                 value=polarity, valid=" or ".join(self.polarities))

    def circuit(self, polarity):
        """The exact circuit (SymPy) of one polarity."""
        from kit.circuit import Circuit

        c = Circuit(polarity, self.sense(polarity))
        self.build(c)
        return c

    def equations(self, polarity):
        """The exact equations (SymPy) of one polarity."""
        return self.circuit(polarity).equations()

    def value(self, name):
        """The :class:`Value` called ``name``."""
        for value in self.values:
            if value.name == name:
                return value
        raise ParameterError(f"not a value of {self.key}", parameter=name,
                             valid=", ".join(v.name for v in self.values))

    @property
    def value_names(self):
        return tuple(v.name for v in self.values)

    @property
    def resistors(self):
        return tuple(v.name for v in self.values if v.kind == "resistor")
