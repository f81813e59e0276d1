"""Stress inside the spec box, for the worst-case view: one row per part, then the fault cases.

The numbers are the worst case's own (:mod:`kit.analysis.stress`: each part's
largest power and hottest junction over the box, where they happen and the
margin to the derated rating; the output shorted and the load open).  Nothing
is computed here; every text is escaped and every unit comes from
:func:`kit.quantities.format_quantity` / :func:`format_temperature`.  Each
part is named in its own kind's words (a bipolar transistor's junction, a
MOSFET's, a resistor's body at the ambient).

Examples
--------
>>> import kit
>>> from kit.analysis.spec import Spec
>>> from kit.analysis.worstcase import worst_case
>>> result = worst_case(kit.design("divider_source", "npn", v_load="8 V"),
...                     Spec(0.97e-3, 0.05, v_load=(4.0, 10.0)))
>>> [row["part"] for row in stress_rows(result)][:1]
['Q1']
"""

from __future__ import annotations

import math

from kit.panels import theme
from kit.quantities import format_quantity, format_temperature
from kit.report import tables as display
from kit.report.cautions import HOT_SURFACE_KELVIN
from kit.report.worstcase import fault_text, heat_cautions

_CELL = "padding:2px 8px;border-bottom:1px solid #d8d8d8;vertical-align:top"
HEAD = ("part", "largest power, where", "hottest, where", "margin to rating")


def _what(design, name):
    """``"bipolar transistor, NPN"`` / ``"MOSFET, NMOS"`` / ``"resistor"``: the part in its kind's words."""
    for part in design.structure.parts:
        if part.name == name:
            kind = part.kind
            if kind.key == "resistor":
                return kind.title
            return f"{kind.title}, {kind.words[part.sense].upper()}"
    return ""


def where(conditions):
    """``"V_load 10 V, V_supply 12 V, T_a 70 °C"``: the conditions of a point of the box."""
    shown = []
    for name, label in (("v_load", "V_load"), ("v_supply", "V_supply")):
        if name in conditions:
            shown.append(f"{label} {format_quantity(conditions[name], 'V', 4)}")
    if "temp" in conditions:
        shown.append(f"T_a {format_temperature(conditions['temp'], 3)}")
    return ", ".join(shown)


def stress_rows(result):
    """One dict of texts per part (keys: part, what, power, hottest, margin, over, hot), least margin first."""
    rows = []
    for s in sorted(result.stress, key=lambda e: (e.rating_margin is None,
                                                  e.rating_margin if e.rating_margin is not None else 0.0)):
        if s.kind == "resistor":
            hottest = "body at the ambient (no thermal resistance known)"
        else:
            hottest = f"junction {format_temperature(s.junction_temperature, 3)} at {where(s.conditions)}"
        rating = "P_rated" if s.kind == "resistor" else "the derated allowance"
        if s.rating_margin is None:
            margin = "no rating known"
        elif s.rating_margin >= 0:
            margin = f"{s.rating_margin:.1%} of {rating} left"
        else:
            margin = f"over {rating} by {-s.rating_margin:.1%}"
        if s.breakdown_margin is not None and math.isfinite(s.breakdown_margin):
            margin += f"; {format_quantity(s.breakdown_margin, 'V', 3)} below breakdown"
        if s.runaway_points:
            margin += f"; thermal runaway at {s.runaway_points} points of the box"
        rows.append({"part": s.part, "what": _what(result.design, s.part),
                     "power": format_quantity(s.power, "W", 3) + f" at {where(s.power_conditions)}",
                     "hottest": hottest, "margin": margin,
                     "over": s.rating_margin is not None and s.rating_margin < 0,
                     "hot": s.kind != "resistor" and s.junction_temperature > HOT_SURFACE_KELVIN})
    return rows


def stress_html(result):
    """The stress table, the fault verdicts and the cautions of a worst-case result (escaped HTML)."""
    if not result.stress and not result.faults:
        return ""
    head = "".join(f'<th style="{_CELL};background:#eef2f5;text-align:left">{display.escape(h)}</th>' for h in HEAD)
    body = []
    for row in stress_rows(result):
        colour = theme.FAIL_COLOUR if row["over"] else ("#8a4b00" if row["hot"] else "inherit")
        body.append(f'<tr><td style="{_CELL}"><b>{display.escape(row["part"])}</b><br>'
                    f'<span style="color:#555;font-size:12px">{display.escape(row["what"])}</span></td>'
                    f'<td style="{_CELL}">{display.escape(row["power"])}</td>'
                    f'<td style="{_CELL};color:{colour}">{display.escape(row["hottest"])}</td>'
                    f'<td style="{_CELL};color:{colour}">{display.escape(row["margin"])}</td></tr>')
    faults = []
    for fault in result.faults:
        good = fault.survives
        colour = theme.PASS_COLOUR if good else (theme.FAIL_COLOUR if good is False else "#555")
        faults.append(f'<li style="color:{colour}">{display.escape(fault_text(fault))}</li>')
    if result.runaway is not None:
        faults.append(f'<li style="color:{theme.FAIL_COLOUR}">{display.escape(result.runaway.text())}</li>')
    cautions = "".join(f'<p style="background:#fbf1dc;border-left:4px solid #b07a12;padding:3px 8px">'
                       f'{display.escape(c)}</p>' for c in heat_cautions(result))
    return (f'<div style="font-family:{theme.FONT};font-size:13px;line-height:1.35;overflow-x:auto">'
            '<p style="font-weight:600;margin:8px 0 2px">Stress inside the spec box (largest over corners, '
            'interior and sweeps)</p>'
            f'<table style="border-collapse:collapse"><tr>{head}</tr>{"".join(body)}</table>'
            + (f'<p style="font-weight:600;margin:8px 0 2px">Fault cases</p><ul style="margin:0">{"".join(faults)}</ul>'
               if faults else "") + cautions + "</div>")
