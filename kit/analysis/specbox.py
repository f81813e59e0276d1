"""Over what a verdict holds: the spec's box in plain entries, defaults marked as such.

:func:`box_entries` lists what a worst-case result varied and what it held:
load, supply and temperature ranges, the gain range, resistor tolerances and
TCRs, other bounds, matching, self-heating and the thermal network.  An
entry the user did not write is marked ``"default": True`` with the value
the spec applied; the caller says which spec fields were written
(``written``, e.g. the keys of a record's ``[spec]`` table); without it a
field is taken as written when it differs from the spec's default.

Examples
--------
>>> import kit
>>> from kit.analysis.spec import Spec
>>> d = kit.design("divider_source")
>>> spec = Spec(1e-3, 0.05, temp=(273.15, 323.15))
>>> rows = box_entries(spec, d, True, written={"current", "tolerance", "temp"})
>>> [r["item"] for r in rows if r["default"]][:3]
['load voltage', 'supply', 'transistor gain']
"""

from __future__ import annotations

from dataclasses import MISSING

from kit.analysis.spec import Spec
from kit.model.vocabulary import vocabulary
from kit.quantities import format_quantity

# How each mismatch field reads in the box: the symbol a reviewer knows and its value in units.
MISMATCH_WORDS = (
    ("mismatch_vbe", "ΔV_BE ≤", lambda v: format_quantity(v, "V")),
    ("mismatch_beta", "Δβ/β ≤", lambda v: f"{100 * v:.3g} %"),
    ("mismatch_vth", "ΔV_th ≤", lambda v: format_quantity(v, "V")),
    ("mismatch_k", "Δk/k ≤", lambda v: f"{100 * v:.3g} %"),
    ("a_vth", "Pelgrom A_VT", lambda v: f"{v * 1e9:.3g} mV·µm"),
    ("a_k", "Pelgrom A_k", lambda v: f"{v * 1e8:.3g} %·µm"),
)

# Record field names for the spec's own names.
RECORD_NAMES = {"i_target": "current"}


def _is_written(name, spec, written):
    if written is not None:
        return RECORD_NAMES.get(name, name) in written or name in written
    default = Spec.__dataclass_fields__[name]
    value = getattr(spec, name)
    if default.default is MISSING:  # a table (beta, bounds, ...): written when not empty
        return bool(value)
    return value != default.default


def _range(pair, unit, kelvin=False):
    if kelvin:
        return f"{pair[0] - 273.15:.4g} … {pair[1] - 273.15:.4g} °C"
    return f"{pair[0]:.4g} … {pair[1]:.4g} {unit}".rstrip()


def _quantity_range(pair, unit):
    """``-2 mV … 2 mV`` for a bound in its vocabulary unit (a bare number when it has none)."""
    if unit in ("", "1"):
        return f"{pair[0]:.4g} … {pair[1]:.4g}"
    return f"{format_quantity(pair[0], unit)} … {format_quantity(pair[1], unit)}"


def box_entries(spec, design, self_heating, *, written=None, network=None):
    """One entry per aspect of the box: ``{"item", "value", "default", "known"}``.

    ``known`` is False where ``written`` was not given and "default" only means the value
    equals the spec's default.
    """
    values = design.parameters()
    out = []

    def fixed(item, value, default):
        out.append({"item": item, "value": value, "default": default, "known": True})

    def add(item, value, name):
        out.append({"item": item, "value": value, "default": not _is_written(name, spec, written),
                    "known": written is not None})

    for item, name, unit, kelvin in (("load voltage", "v_load", "V", False), ("supply", "v_supply", "V", False),
                                     ("ambient temperature", "temp", "K", True)):
        pair = getattr(spec, name)
        if pair is not None:
            add(item, _range(pair, unit, kelvin), name)
        elif name in values:
            own = values[name]
            shown = f"{own - 273.15:.4g} °C" if kelvin else f"{own:.4g} {unit}"
            add(item, f"the design's own {shown} only", name)
    gains = [n for n, m in design.devices.items() if "beta_f" in m.values]
    if gains:
        if spec.beta:
            add("transistor gain", "; ".join(f"{k}: β_F {_range(v, '')}" for k, v in spec.beta.items()), "beta")
        else:
            add("transistor gain", "nominal β_F only (not varied)", "beta")
    resistors = design.topology.resistors
    if resistors:
        tol = ", ".join(f"{r} ±{100 * v:.3g} %" for r, v in spec.tolerances.items())
        add("resistor tolerance", f"±{100 * spec.resistor_tolerance:.3g} %" + (f" ({tol})" if tol else ""),
            "resistor_tolerance")
        tcr = ", ".join(f"{r} ±{v * 1e6:.3g} ppm/K" for r, v in spec.tcrs.items())
        add("resistor TCR", (f"±{spec.resistor_tcr * 1e6:.3g} ppm/K" + (f" ({tcr})" if tcr else ""))
            + ("" if spec.temp is not None else " (not varied: no temperature range)"), "resistor_tcr")
    if spec.bounds:
        words = vocabulary(design.topology, design.polarity)
        add("other bounds", "; ".join(f"{k} {_quantity_range(v, words[k].unit if k in words else '')}"
                                      for k, v in spec.bounds.items()), "bounds")
    matched = "; ".join(", ".join(g) for g in spec.matched)
    mismatch = [f"{label} {shown(getattr(spec, n))}" for n, label, shown in MISMATCH_WORDS if getattr(spec, n)]
    add("matching", (matched or "no matched group written") + (f"; {', '.join(mismatch)}" if mismatch else ""),
        "matched")
    heated = [n for n, m in design.devices.items() if "theta_ja" in m.values]
    if self_heating and heated:
        thetas = ", ".join(f"{n} θ_JA {values[f'{n}.theta_ja']:.4g} K/W" for n in heated)
        coupling = network.describe() if network is not None else "each part in its own package"
        # a placement the record wrote ([thermal]) is the user's, not a default
        fixed("self-heating", f"included: {thetas}; {coupling}", network is None)
    else:
        fixed("self-heating", "not included", False)
    fixed("RSS coverage", "± tolerance taken as ±3 σ", True)
    if spec.p_max is None:
        fixed("dissipation limit", "none besides each part's own ratings", True)
    else:
        add("dissipation limit", f"{spec.p_max:.4g} W per part", "p_max")
    return out
