"""The derivation and ledger view: exact equations, each named simplification,
its closed form and what it costs at the present design point.

HTML with ``$$ … $$`` LaTeX, shown in an ipywidgets ``HTMLMath`` so
JupyterLab typesets it with MathJax.  The equations come from
:func:`kit.derivation.derivation`, the numbers from the design's
:class:`kit.evaluation.Evaluation`.
"""

from __future__ import annotations

from functools import lru_cache

from kit.analysis.derivation import derivation
from kit.report import tables as display
from kit.quantities import format_quantity, format_temperature

CELL = "padding:3px 10px;border-bottom:1px solid #d8d8d8;text-align:left;vertical-align:middle"
HEAD = CELL + ";background:#eef2f5;font-weight:600"
NUMBER = CELL + ";text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap"
NOTE = CELL + ";color:#444;font-size:12px;padding-top:0"
# Takes the width it is given and adds none of its own (width 0, at least all there is): a
# long formula scrolls inside its own box instead of pushing the numbers off a laptop screen.
FITS = "width:0;min-width:100%;overflow-x:auto"
# The math widget sizes its content box to the content; this one fills the view instead,
# so the equations and the formula cells above have a width to fit into.
_FILL = "<style>.widget-htmlmath-content:has(> .biasbook-ledger){flex:1 1 0;min-width:0}</style>"


def _table(headers, rows, numeric=(), notes=None):
    """An HTML table; ``notes[k]`` (HTML or None) goes on a full-width line under row ``k``.

    A closed form and what it assumes are wide: under the row of numbers they
    read whole, instead of squeezing a column to a word per line or pushing
    the numbers past the right edge of a laptop screen.
    """
    head = "".join(f'<th style="{HEAD}">{display.escape(h)}</th>' for h in headers)
    body = []
    for k, row in enumerate(rows):
        note = notes[k] if notes else None
        under = ";border-bottom:none" if note else ""
        body.append("<tr>" + "".join(f'<td style="{(NUMBER if j in numeric else CELL) + under}">{cell}</td>'
                                     for j, cell in enumerate(row)) + "</tr>")
        if note:
            body.append(f'<tr><td colspan="{len(row)}" style="{NOTE}">{note}</td></tr>')
    return (f'<table style="border-collapse:collapse;margin:4px 0 10px">{head and "<tr>" + head + "</tr>"}'
            f'{"".join(body)}</table>')


def error_text(error):
    """A relative error in percent: three decimals, or two digits and an exponent below 0.0005 %.

    Examples
    --------
    >>> error_text(0.02027), error_text(-2.1e-7), error_text(0.0)
    ('+2.027%', '-2.1e-05 %', '0%')
    """
    if error == 0:
        return "0%"
    return f"{error:+.3%}" if abs(error) >= 5e-6 else f"{100 * error:+.1e} %"


@lru_cache(maxsize=64)
def _equations_html(topology, polarity):
    """The exact equations of one topology and polarity (they do not depend on values)."""
    from kit import topologies

    der = derivation(topologies.get(topology), polarity)
    unknowns = ", ".join(der.unknowns_latex)
    lines = "".join(f'<div style="overflow-x:auto">$${r}$$</div>' for r in [*der.residuals_latex, *der.laws_latex])
    return (f"<p>Unknown node voltages ${unknowns}$. One current balance per unknown node, "
            "with the full large-signal device laws:</p>" + lines
            + "<p>The exact sensitivities are those of the solved point, by implicit differentiation "
              "of the balances above:</p>"
              r"<div>$$\frac{\partial x}{\partial p} = -J_x^{-1}\,\frac{\partial F}{\partial p},\qquad "
              r"\frac{dI_{out}}{dp} = \frac{\partial I_{out}}{\partial p} + "
              r"\frac{\partial I_{out}}{\partial x}\,\frac{\partial x}{\partial p}$$</div>")


def ledger_html(evaluation):
    """The whole view for one evaluation, as HTML with LaTeX.

    Examples
    --------
    >>> import kit
    >>> html = ledger_html(kit.evaluate(kit.design("divider_source")))
    >>> "stiff divider" in html and "$$" in html
    True
    """
    design = evaluation.design
    top = design.topology
    exact = evaluation.i_out
    rows = [["<b>exact solve</b> (the equations above, solved numerically)", format_quantity(exact, "A", 5), "—",
             format_quantity(evaluation.tempco, "ppm/K")]]
    notes = [None]
    for entry in evaluation.ledger:
        rows.append([display.escape(entry.label), format_quantity(entry.value, "A", 5), error_text(entry.error),
                     format_quantity(entry.tempco, "ppm/K")])
        notes.append(f'<div style="{FITS}">$${entry.latex}$$</div>'
                     "assumes " + display.escape("; ".join(entry.assumptions))
                     + f'<br><span style="color:#666;font-size:11px">{display.escape(entry.source)}</span>')
    ledger = _table(["simplification and its closed form for I_out", "value here", "error vs exact", "tempco"],
                    rows, numeric=(1, 2, 3), notes=notes)
    r_rows = [["exact, from dI_out/dV_load", format_quantity(evaluation.r_out, "Ω", 4), "—"]]
    for key, value in evaluation.r_out_forms.items():
        error = (value - evaluation.r_out) / evaluation.r_out if evaluation.r_out else float("nan")
        r_rows.append([display.escape(design.structure.extra_label(key)), format_quantity(value, "Ω", 4), f"{error:+.2%}"])
    r_table = _table(["output resistance", "value here", "error vs exact"], r_rows, numeric=(1, 2))
    point = (f"{format_temperature(design.temp)}, "
             + ", ".join(f"{v.name} = {format_quantity(design.values[v.name], v.unit, 4) if v.unit else design.values[v.name]}"
                         for v in top.values))
    return (_FILL + '<div class="biasbook-ledger" style="font-family:Helvetica,Arial,sans-serif;font-size:13px">'
            f'<h4 style="margin:6px 0">{display.escape(top.title)} ({design.polarity.upper()}): exact equations</h4>'
            + _equations_html(top.key, design.polarity)
            + f'<h4 style="margin:10px 0 4px">Ledger at the present point</h4>'
              f'<p style="color:#444">{display.escape(point)}</p>' + ledger + r_table + "</div>")
