"""What a topology is: one definition from which everything else is derived.

A :class:`Topology` holds metadata (name, polarities, the values a designer
sets, with units and valid ranges) and three functions:

``build(polarity)``
    the exact equations, as :class:`kit.circuit.Equations`, including the
    closed forms of its named simplifications and small-signal forms;
``guess(model, q)``
    starting node voltages for the exact solve, from a closed form;
``compliance_sense``
    which way the load voltage runs out of compliance first.

Simplifications are named with the kit-wide vocabulary :data:`ASSUMPTIONS`,
so the ledger reads the same for every topology.
"""

from __future__ import annotations

from dataclasses import dataclass, field

# The named simplifications of hand analysis, worded once for all topologies.
ASSUMPTIONS = {
    "base_current_neglected": "base currents neglected (β → ∞)",
    "alpha_one": "α = 1 (I_C = I_E)",
    "vbe_fixed": "V_BE fixed at the hand-analysis value V_BE(on)",
    "no_early": "no Early effect (V_A → ∞)",
    "forward_active": "forward active; reverse and leakage terms dropped",
    "output_base_load_neglected": "output base current not drawn from the reference node",
    "stiff_reference": "reference voltage independent of its current (no r_z, no loading)",
    "reference_linearised": "reference linearised at its current without base-current loading",
    "isothermal": "all junctions at one temperature (no self-heating or gradient between them)",
    "ideal_opamp": "ideal op-amp (infinite gain, no offset, no input bias current)",
    "no_clm": "no channel-length modulation (λ → 0)",
    "square_law": "MOSFET square law in saturation (strong inversion, no subthreshold continuation)",
    "matched_mos": "matched MOSFETs (equal k′, V_th and λ, one temperature)",
}


@dataclass(frozen=True)
class ValueSpec:
    """A value the designer sets: resistor, supply, load voltage, ...

    Parameters
    ----------
    name : str
        Public parameter name (``r1``, ``v_supply``).
    unit : str
        SI unit (``Ω``, ``V``, ``A``).
    description : str
        One line for tables and panels.
    default : float
        The value used in demos and new records.
    low, high : float
        Valid range (inclusive).
    kind : str
        ``resistor``, ``supply``, ``load`` or ``other``.
    """

    name: str
    unit: str
    description: str
    default: float
    low: float
    high: float
    kind: str = "other"


@dataclass(frozen=True)
class Simplification:
    """A named simplification: the closed form a designer writes by hand.

    ``key`` names the closed form in :class:`kit.circuit.Equations`;
    ``assumptions`` are keys of :data:`ASSUMPTIONS`; ``source`` says where
    the formula is published (or that it is derived here).
    """

    key: str
    label: str
    assumptions: tuple
    source: str

    def __post_init__(self):
        unknown = set(self.assumptions) - set(ASSUMPTIONS)
        if unknown:
            raise ValueError(f"unknown assumption names {sorted(unknown)}")


@dataclass(frozen=True)
class Topology:
    """One supported circuit (see the module docstring)."""

    key: str
    title: str
    description: str
    polarities: tuple
    transistors: tuple
    output_transistor: str
    values: tuple
    simplifications: tuple
    build: object = field(repr=False)
    guess: object = field(repr=False)
    extras: dict = field(default_factory=dict)
    derived: tuple = ("I_out", "dI/dbeta", "dI/dT", "dI/dR", "dI/dV_supply", "R_out", "compliance",
                      "dissipation", "ledger")
    hand_parameters: tuple = ("v_be_on", "v_be_tc")
    kinds: dict = field(default_factory=dict)  # device name -> kind, default "bjt"
    complementary: tuple = ()  # devices of the opposite polarity to the design's
    notes: tuple = ()  # design cautions shown with every result (start-up, stability, ...)
    order: int = 100  # position in listings
    draw: object = field(default=None, repr=False)  # design -> schemdraw.Drawing
    limits: object = field(default=None, repr=False)  # points -> {(part, cause): margin}
    valid_branch: object = field(default=None, repr=False)  # points -> bool array
    budget_labels: dict = field(default_factory=dict)  # operating symbol -> tempco budget label

    def polarity_label(self, polarity):
        """``"NPN"``/``"PNP"``, or ``"NMOS"``/``"PMOS"`` for a circuit of MOSFETs only."""
        from kit.devices import KINDS

        kinds = {self.kind_of(n) for n in self.transistors}
        if len(kinds) == 1:
            words = getattr(KINDS[next(iter(kinds))], "POLARITY_WORDS", {})
            return words.get(polarity, polarity).upper()
        return polarity.upper()

    def kind_of(self, name):
        """Kind of device ``name`` (a key of :data:`kit.devices.KINDS`)."""
        return self.kinds.get(name, "bjt")

    def equations(self, polarity):
        """The exact equations (SymPy) of one polarity."""
        self.check_polarity(polarity)
        return self.build(polarity)

    def initial_guess(self, model, q):
        return self.guess(model, q)

    def check_polarity(self, polarity):
        from kit.errors import ParameterError

        if polarity not in self.polarities:
            raise ParameterError(f"{self.title} has no such polarity", parameter="polarity",
                                 value=polarity, valid=" or ".join(self.polarities))

    def value_spec(self, name):
        for spec in self.values:
            if spec.name == name:
                return spec
        raise KeyError(name)

    @property
    def resistors(self):
        return tuple(v.name for v in self.values if v.kind == "resistor")

    def simplification(self, key):
        for s in self.simplifications:
            if s.key == key:
                return s
        raise KeyError(key)

    def describe(self):
        """Plain description for ``biasbook topologies --json``."""
        return {
            "name": self.key,
            "title": self.title,
            "description": self.description,
            "polarities": list(self.polarities),
            "transistors": list(self.transistors),
            "parameters": [
                {"name": v.name, "unit": v.unit, "description": v.description, "default": v.default,
                 "range": [v.low, v.high]} for v in self.values
            ],
            "derived": list(self.derived),
            "notes": list(self.notes),
            "simplifications": [
                {"name": s.key, "label": s.label,
                 "assumptions": [ASSUMPTIONS[a] for a in s.assumptions], "source": s.source}
                for s in self.simplifications
            ],
        }
