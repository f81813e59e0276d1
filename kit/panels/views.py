"""Small HTML views of the design panel: title, headline numbers, schematic.

The numbers are the kit's own formatted texts
(:meth:`kit.evaluation.Evaluation.headline`); the schematic is
:func:`kit.schematic.render`, cached per set of values because drawing it is
the slowest of these (temperature, gain and load changes redraw nothing).
"""

from __future__ import annotations

from kit.report import tables as display
from kit.errors import DesignError
from kit.panels import theme
from kit.quantities import format_quantity, format_temperature

HEADLINE_LABELS = {"I_out": "output current I_out", "compliance": "compliance (load voltage)",
                   "R_out": "output resistance R_out", "tempco": "tempco of I_out",
                   "dissipation": "dissipation"}


def title_html(design):
    name = f"{display.escape(design.topology.title)} ({design.polarity.upper()})"
    if design.title:
        name = f"{display.escape(design.title)} — {name}"
    return (f'<div style="font-family:{theme.FONT};font-size:17px;font-weight:600;color:{theme.INK};'
            f'border-bottom:2px solid {theme.FORMS[0]};padding-bottom:3px">{name}</div>')


def headline_html(evaluation, headline, spec=None):
    """The headline numbers (``headline`` as the kit formats them) as cards that wrap, then regions, edges, spec."""
    cards = []
    for key, text in headline.items():
        size = "22px" if key == "I_out" else "15px"
        cards.append(f'<div style="flex:0 1 auto;min-width:120px;padding:3px 12px 3px 8px;border-left:3px solid '
                     f'{theme.INK if key == "I_out" else "#c9d3dc"}"><div style="color:#555;font-size:12px">'
                     f'{display.escape(HEADLINE_LABELS.get(key, key))}</div><div style="font-size:{size};'
                     f'font-weight:600;color:{theme.INK};font-variant-numeric:tabular-nums;white-space:nowrap">'
                     f'{display.escape(text)}</div></div>')
    c = evaluation.compliance
    regions = ", ".join(f"{n} {r}" for n, r in evaluation.regions.items())
    notes = [display.escape(f"at {format_temperature(evaluation.design.temp)}; {regions}"),
             display.escape(f"low edge {format_quantity(c.low.voltage, 'V', 4)}: {c.low.describe()}; "
                            f"high edge {format_quantity(c.high.voltage, 'V', 4)}: {c.high.describe()}")]
    if spec is not None:
        low, high = spec.limits
        inside = low <= evaluation.i_out <= high
        colour = theme.PASS_COLOUR if inside else theme.FAIL_COLOUR
        notes.append(f'<span style="color:{colour};font-weight:600">spec {format_quantity(low, "A", 4)} … '
                     f'{format_quantity(high, "A", 4)}: nominal {"inside" if inside else "outside"}</span>')
    return (f'<div style="font-family:{theme.FONT};font-size:13px;line-height:1.35;white-space:normal">'
            f'<div style="display:flex;flex-wrap:wrap;gap:6px 10px">{"".join(cards)}</div>'
            + "".join(f'<div style="color:#444;margin-top:3px">{n}</div>' for n in notes) + "</div>")


_SCHEMATICS = {}  # (topology, polarity, values) -> HTML
_SCHEMATICS_KEPT = 64


def schematic_html(design):
    """The design's schematic as inline SVG that scales to its box (cached per set of values)."""
    key = (design.topology.key, design.polarity, tuple(sorted(design.parameters().items())))
    if key not in _SCHEMATICS:
        from kit.report.schematic import render

        try:
            svg = render(design).svg
        except DesignError as err:  # a topology without a drawing yet
            svg = f"<p>{display.escape(err.message)}</p>"
        if svg.startswith("<?xml"):
            svg = svg[svg.index("?>") + 2:]
        svg = svg.replace("<svg ", '<svg style="max-width:100%;height:auto" ', 1)
        if len(_SCHEMATICS) >= _SCHEMATICS_KEPT:
            _SCHEMATICS.pop(next(iter(_SCHEMATICS)))  # the oldest
        _SCHEMATICS[key] = f'<div style="padding:4px">{svg}</div>'
    return _SCHEMATICS[key]
