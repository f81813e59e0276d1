"""What a topology offers, in words and as plain data (``biasbook topologies``)."""

from __future__ import annotations

from kit.model.structure import structure
from kit.quantities import format_quantity

DERIVED = ("I_out", "dI/dp for every parameter", "tempco and its budget", "R_out (exact and small-signal forms)",
           "compliance with the limiting part at each end", "dissipation across compliance",
           "ledger of simplifications")


def describe(topology):
    """Plain description for ``biasbook topologies --json``."""
    s = structure(topology, topology.polarities[0])
    return {
        "name": topology.key,
        "title": topology.title,
        "description": topology.description,
        "polarities": list(topology.polarities),
        "parts": [{"name": p.name, "kind": p.kind.title,
                   "polarity": {pol: structure(topology, pol).part(p.name).polarity for pol in topology.polarities}}
                  for p in s.devices],
        "parameters": [
            {"name": v.name, "unit": v.unit, "description": v.description,
             "default": {pol: v.default_for(pol) for pol in topology.polarities}, "range": [v.low, v.high]}
            for v in topology.values],
        "derived": list(DERIVED),
        "notes": list(topology.notes),
        "simplifications": [{"name": f.key, "label": f.label, "assumptions": list(f.assumption_texts),
                             "source": f.source} for f in s.closed_forms],
    }


def text(topology):
    """The block ``biasbook topologies`` prints for one topology."""
    d = describe(topology)
    lines = [f"{d['name']}: {d['title']}", f"  {d['description']}",
             f"  polarities   {', '.join(d['polarities'])}",
             f"  parts        {', '.join(p['name'] + ' (' + p['kind'] + ')' for p in d['parts'])}", "  values"]
    width = max(len(p["name"]) for p in d["parameters"])
    for p in d["parameters"]:
        unit = p["unit"]
        low, high = (format_quantity(v, unit) if unit else f"{v:g}" for v in p["range"])
        defaults = sorted(set(p["default"].values()))
        default = " / ".join(format_quantity(v, unit) if unit else f"{v:g}" for v in defaults)
        lines.append(f"    {p['name']:<{width}}  [{unit or '-'}]  {p['description']}; "
                     f"default {default}, range {low} … {high}")
    lines.append(f"  derived      {', '.join(d['derived'])}")
    lines.append("  simplifications")
    for s in d["simplifications"]:
        lines.append(f"    {s['name']}: {s['label']} ({s['source']})")
    return "\n".join(lines)
