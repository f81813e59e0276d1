"""What a topology offers, in words and as plain data (``biasbook topologies``)."""

from __future__ import annotations

from kit.model.structure import structure
from kit.quantities import format_quantity

# What every evaluation gives, whatever the circuit; the derivatives are listed per topology.
DERIVED = ("I_out", "R_out", "R_out small-signal forms", "compliance", "limiting part at each compliance end",
           "tempco budget", "dissipation across compliance", "ledger of simplifications")
DERIVATIVE = "dI/d"


def derivatives(topology, polarity=None):
    """The exact derivatives an evaluation of ``topology`` reports, as ``dI/d<flat name>``.

    Every value but the load voltage (swept for compliance instead), each
    part's reported parameters (its kind's ``sensitivity``) and temperature.

    Examples
    --------
    >>> from kit import topologies
    >>> derivatives(topologies.get("divider_source"))
    ['dI/dr1', 'dI/dr2', 'dI/dr_e', 'dI/dv_supply', 'dI/dQ1.beta_f', 'dI/dQ1.v_a', 'dI/dT']
    """
    s = structure(topology, polarity or topology.polarities[0])
    names = [v.name for v in topology.values if v.kind != "load"]
    names += [f"{part.name}.{key}" for part in s.devices for key in part.kind.sensitivity]
    return [DERIVATIVE + name for name in names] + [DERIVATIVE + "T"]


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
        "derived": list(DERIVED) + derivatives(topology),
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
        shown = {pol: format_quantity(v, unit) if unit else f"{v:g}" for pol, v in p["default"].items()}
        # One default, or one per polarity word when they differ (a source often needs other values).
        default = (next(iter(shown.values())) if len(set(shown.values())) == 1
                   else ", ".join(f"{v} ({pol})" for pol, v in shown.items()))
        lines.append(f"    {p['name']:<{width}}  [{unit or '-'}]  {p['description']}; "
                     f"default {default}, range {low} … {high}")
    plain = [q for q in d["derived"] if not q.startswith(DERIVATIVE)]
    lines.append(f"  derived      {', '.join(plain)}")
    lines.append(f"  exact dI/d   {', '.join(q[len(DERIVATIVE):] for q in d['derived'] if q not in plain)}")
    lines.append("  simplifications")
    for s in d["simplifications"]:
        lines.append(f"    {s['name']}: {s['label']} ({s['source']})")
    return "\n".join(lines)
