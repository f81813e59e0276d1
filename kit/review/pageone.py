"""Page one of a design review: what a reviewer needs before turning the page.

The facts come from the review summary's data (:mod:`kit.review.summary`):
the specification with every condition and default it was judged over, the
verdict of each method with its margin, the worst stress, the schematic,
the devices and where their values came from, the headline numbers and the
cautions.  Every text goes through :mod:`kit.report.tables` (escaped, never
typeset); the schematic is shown as an image from a ``data:`` URI, so
nothing in it can run or load anything.

Examples
--------
>>> html = spec_box_html({"spec_box": [["load voltage", "<4 V> … 10 V"]], "verdict": ""})
>>> "&lt;4 V&gt;" in html
True
"""

from __future__ import annotations

import base64

from kit.report import tables


def schematic_img(svg):
    """An ``<img>`` of the schematic SVG (an image never runs script or loads other files)."""
    if not svg:
        return ""
    data = base64.b64encode(svg.encode("utf-8")).decode("ascii")
    return f'<img class="bb-schematic" alt="schematic" src="data:image/svg+xml;base64,{data}">'


def spec_box_html(data):
    """The specification and what "met" is judged over, as a two-column table."""
    rows = data.get("spec_box") or []
    if not rows:
        return tables.section("Specification", "<p>No specification given: the numbers below hold at the "
                                               "design point only; nothing is guaranteed over a range.</p>")
    pairs = "".join(f'<tr><td class="bb-key">{tables.escape(key)}</td><td>{tables.escape(value)}</td></tr>'
                    for key, value in rows)
    return tables.section("Specification and what it is judged over", f"<table>{pairs}</table>")


def verdict_html(data):
    """Each method's range, margin and verdict, with the verdict's words and reasons."""
    rows = data.get("spec") or []
    if not rows:
        return ""
    cells = []
    for r in rows[1:]:
        word = tables.Raw(f'<span class="{"bb-ok" if r["verdict"] == "pass" else "bb-bad"}">'
                          f'{tables.escape(r["verdict"])}</span>')
        cells.append([r["method"], r["low"], r["high"], r["margin"], word])
    table = tables.table(["method", "lowest", "highest", "margin", "verdict"], cells, numeric=(1, 2, 3))
    reasons = "".join(f"<p>{tables.escape(reason)}</p>" for reason in data.get("reasons", []))
    return tables.section(f"Verdict: {data.get('verdict', '')}", table + reasons)


def devices_html(data):
    """One row per device: its kind, the values used and where they came from."""
    rows = data.get("devices") or []
    if not rows:
        return ""
    return tables.section("Devices (every parameter the solve uses)",
                          tables.table(["part", "kind", "values used", "source of the values"], rows))


def comparison_html(data):
    """Page one of a comparison: every design's schematic, then the side-by-side table."""
    found = data["comparison"]
    figures = "".join(f'<figure class="bb-compared">{schematic_img(svg)}<figcaption>{tables.escape(name)}'
                      f"</figcaption></figure>" for name, svg in zip(found["names"], found["schematics"]))
    table = tables.table(["", *found["names"]], found["rows"])
    return tables.wrap(f'<div class="bb-columns">{figures}</div>'
                       + tables.section("Designs side by side", table))


def page_one_html(data):
    """The body of page one (below the title block and above the cautions)."""
    if data.get("comparison"):
        return comparison_html(data)
    head = tables.table(["quantity", "value"], list(data["headline"].items()), numeric=(1,))
    stress = (f"<p class=\"bb-stress\"><strong>Worst stress:</strong> {tables.escape(data['stress'])}</p>"
              if data.get("stress") else "")
    left = schematic_img(data.get("schematic_svg", ""))
    right = spec_box_html(data)
    top = (f'<div class="bb-columns"><div class="bb-col-schematic">{left}</div>'
           f'<div class="bb-col-spec">{right}</div></div>' if left else right)
    results = tables.section("Results at the design point (exact solve)", head)
    verdict = verdict_html(data)
    middle = (f'<div class="bb-columns"><div class="bb-col-half">{verdict}</div>'
              f'<div class="bb-col-half">{results}</div></div>' if verdict else results)
    body = top + middle + stress + devices_html(data)
    return tables.wrap(body)
