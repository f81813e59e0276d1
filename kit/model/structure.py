"""What a topology's circuit says about itself, read off its equations (never declared twice).

:func:`structure` returns a :class:`Structure`: the parts with their kinds,
polarities and terminals, the part the headline quotes, the parameters only
hand analysis uses, the named closed forms with their assumptions and
sources, the small-signal forms and how every symbol is written.  It comes
from the code generator's manifest (or, before any code is generated, from
the equations alone), so reading it needs no SymPy on a warm start.

Examples
--------
>>> from kit import topologies
>>> s = structure(topologies.get("divider_source"), "npn")
>>> [p.name for p in s.devices], s.output_part, s.hand_parameters
(['Q1'], 'Q1', ('v_be_on', 'v_be_tc'))
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from kit.devices import KINDS
from kit.words import ASSUMPTIONS


@dataclass(frozen=True)
class PartInfo:
    """One part of a topology: name, kind, sense, terminals and flat parameter names."""

    name: str
    kind: object
    sense: str
    nodes: dict
    params: dict
    quantities: tuple
    typical: dict
    value: str | None = None

    @property
    def polarity(self):
        """The kind's polarity word (``"npn"``, ``"pmos"``)."""
        return self.kind.words[self.sense]

    @property
    def is_device(self):
        """A part with a model of its own (not a resistor or a reference current)."""
        return not getattr(self.kind, "valued", False)


@dataclass(frozen=True)
class FormInfo:
    """A named closed form: key, label, assumptions (their words) and source."""

    key: str
    label: str
    assumptions: tuple
    source: str

    @property
    def assumption_texts(self):
        return tuple(ASSUMPTIONS[a].text if a in ASSUMPTIONS else a for a in self.assumptions)


@dataclass(frozen=True)
class Structure:
    """See the module docstring."""

    topology: object
    polarity: str
    parts: tuple
    output_part: str | None
    hand_parameters: tuple
    closed_forms: tuple
    extras: tuple  # (key, label)
    labels: dict  # symbol name -> (LaTeX, tempco-budget words)

    @property
    def devices(self):
        """Parts with a model of their own (transistors, diodes, zeners, op-amps), in order."""
        return tuple(p for p in self.parts if p.is_device)

    @property
    def device_names(self):
        return tuple(p.name for p in self.devices)

    def part(self, name):
        for part in self.parts:
            if part.name == name:
                return part
        raise KeyError(name)

    def form(self, key):
        for form in self.closed_forms:
            if form.key == key:
                return form
        raise KeyError(key)

    def extra_label(self, key):
        return dict(self.extras).get(key, key)

    @property
    def kinds(self):
        """The kinds of the devices, in order of first appearance."""
        return tuple(dict.fromkeys(p.kind for p in self.devices))

    def latex(self, name):
        return self.labels.get(name, (name, ""))[0]

    def budget_label(self, name):
        return self.labels.get(name, ("", ""))[1]


def structure(topology, polarity):
    """The :class:`Structure` of one topology and polarity (kept in memory once read)."""
    topology.check_polarity(polarity)
    return _structure(topology.key, polarity)


@lru_cache(maxsize=None)
def _structure(topology_key, polarity):
    from kit import topologies
    from kit.model.cache import structure_data

    topology = topologies.get(topology_key)
    data = structure_data(topology, polarity)
    parts = tuple(PartInfo(p["name"], KINDS[p["kind"]], p["sense"], dict(p["nodes"]), dict(p["params"]),
                           tuple(p["quantities"]), dict(p["typical"]), p["value"]) for p in data["parts"])
    forms = tuple(FormInfo(f["key"], f["label"], tuple(f["assumptions"]), f["source"])
                  for f in data["closed_forms"])
    return Structure(topology, polarity, parts, data["output_part"], tuple(data["hand_parameters"]),
                     forms, tuple((e["key"], e["label"]) for e in data["extras"]),
                     {k: tuple(v) for k, v in data["labels"].items()})
