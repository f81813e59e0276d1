"""The part classes in words and as plain data (``biasbook parts``).

Examples
--------
>>> from kit.devices.part_classes import get
>>> print(text(get("zener-6v2")).splitlines()[0])
zener-6v2: 6.2 V zener, 5 %, half a watt (zener diode, zener)
"""

from __future__ import annotations

from kit.devices import KINDS
from kit.devices.datasheet import ENTRIES
from kit.quantities import format_quantity, format_temperature

# An op-amp's swing is stated against the rails; the listing resolves it at
# 0 V and the supply of its own supply-rejection test.


def _listing_rails(part_class):
    psrr = part_class.sheet.get("psrr")
    return (0.0, psrr["v_supply"]) if part_class.kind == "opamp" and psrr else None


def describe(part_class):
    """Plain data for ``biasbook parts --json``: the class, its datasheet entry and the model it gives."""
    rails = _listing_rails(part_class)
    part = part_class.convert(rails=rails)
    kind = KINDS[part_class.kind]
    units = {p.name: p.unit for p in kind.params}
    out = part_class.describe()
    out["datasheet_units"] = {name: {k: ENTRIES[part_class.kind][name].keys[k][0] for k in entry}
                              for name, entry in part_class.sheet.items()}
    out["model"] = part.model.numbers()
    out["model_units"] = units
    out["ranges"] = {k: list(v) for k, v in part.ranges.items()}
    out["conversion"] = list(part.notes)
    out["label"] = part.model.label
    if rails:
        out["rails"] = list(rails)
    return out


def _shown(number, unit):
    if unit == "K":
        return format_temperature(number)
    if unit == "":
        return f"{number:.4g}"
    return format_quantity(number, unit, 4)


def text(part_class):
    """The block ``biasbook parts`` prints for one class."""
    d = describe(part_class)
    lines = [f"{d['class']}: {d['title']} ({KINDS[d['kind']].title}, {d['polarity']})"]
    for name, entry in d["datasheet"].items():
        units = d["datasheet_units"][name]
        shown = ", ".join(f"{k} {_shown(v, units[k])}" for k, v in entry.items())
        lines.append(f"  {name:<19}{shown}")
    model = ", ".join(f"{k} {_shown(v, d['model_units'][k])}" for k, v in d["model"].items())
    lines.append(f"  {'model at 25 °C':<19}{model}")
    for k, (low, high) in d["ranges"].items():
        unit = d["model_units"][k]
        lines.append(f"  {'spread of ' + k:<19}{_shown(low, unit)} … {_shown(high, unit)}")
    for note in d["conversion"]:
        lines.append(f"  {'':<19}{note}")
    if d["matching"]:
        lines.append(f"  {'matching':<19}" + ", ".join(f"{k} {v:g}" for k, v in d["matching"].items()))
    if "rails" in d:
        lines.append(f"  {'':<19}swing shown at rails {d['rails'][0]:g} V and {d['rails'][1]:g} V")
    lines.append(f"  {'source':<19}{d['source']}")
    return "\n".join(lines)
