"""Design notebooks made from a template: one per topology, prefilled from a record.

:func:`new_notebook` writes the standard design story — circuit, derivation,
operating point, ledger, sweep across compliance, worst case when the record
has a spec, and the review summary — for any topology.  ``biasbook new`` and
``biasbook review RECORD.toml`` both use it.
"""

from __future__ import annotations

import json
from pathlib import Path

from kit.safety import markdown_block, markdown_inline


def _code(source, *, hide=False):
    import nbformat

    cell = nbformat.v4.new_code_cell(source)
    if hide:
        cell.metadata["tags"] = ["biasbook-setup"]
    return cell


def _screen_only(cell):
    from kit.review.forprint import SCREEN_ONLY_TAG

    cell.metadata.setdefault("tags", []).append(SCREEN_ONLY_TAG)
    return cell


def _markdown(text):
    import nbformat

    return nbformat.v4.new_markdown_cell(text)


SWEEP_CELL = '''\
# NBVAL_IGNORE_OUTPUT
from bokeh.models import BoxAnnotation, Label, Range1d, Span
from bokeh.plotting import figure, show
from kit.panels.theme import current_scale
low, high = evaluation.compliance.low.voltage, evaluation.compliance.high.voltage
span = max(high - low, 1.0)
# The working region and a little of each side: enough to see both edges, not the collapse beyond them.
v_load = np.linspace(low - 0.06 * span, high + 0.04 * span, 300)
points = sweep(design, "v_load", v_load)
forms = points.model.closed_forms(points.q)
scale, unit = current_scale(evaluation.i_out)
exact = np.where(points.converged, points.i_out, np.nan) / scale  # an unconverged point is a gap
inside = (v_load >= low) & (v_load <= high)
top = np.nanmax(exact[inside])
plot = figure(width=640, frame_height=240, x_axis_label="load voltage V_load (V)", y_axis_label=f"I_out ({unit})",
              title="I_out across compliance: exact and hand formulas", toolbar_location=None,
              x_range=Range1d(v_load[0], v_load[-1]), y_range=Range1d(0, 1.08 * top))
plot.add_layout(BoxAnnotation(left=low, right=high, fill_alpha=0.08, fill_color="#2a9d8f"))
if spec is not None and spec.v_load is not None:
    # The load range the spec asks for, inside the working region if the design is sound.
    plot.add_layout(BoxAnnotation(left=spec.v_load[0], right=spec.v_load[1], fill_alpha=0.12,
                                  fill_color="#e9c46a"))
    plot.add_layout(Label(x=spec.v_load[0], y=1.0 * top, x_offset=3, y_offset=-14, text="spec load range",
                          text_font_size="10px"))
for voltage, edge, align in ((low, evaluation.compliance.low, "left"), (high, evaluation.compliance.high, "right")):
    plot.add_layout(Span(location=voltage, dimension="height", line_dash="dotted", line_color="#555"))
    plot.add_layout(Label(x=voltage, y=0.04 * top, x_offset=4 if align == "left" else -4, text_align=align,
                          text=f"{voltage:.3g} V: {edge.describe()}", text_font_size="10px"))
plot.line(v_load, exact, line_width=2.5, color="#264653", legend_label="exact")
for key, colour in zip(forms, ("#e76f51", "#e9c46a", "#8ab17d", "#6d597a", "#b56576")):
    plot.line(v_load, np.where(points.converged, forms[key], np.nan) / scale, line_dash="dashed", color=colour,
              legend_label=design.structure.form(key).label)
# Below the frame: long labels never cover the curves or the axis.
plot.add_layout(plot.legend[0], "below")
show(plot)'''


PANEL_CELL = """\
# NBVAL_IGNORE_OUTPUT
from kit.panels import DesignPanel
panel = DesignPanel(design, spec)
panel"""

PANEL_TEXT = ("## The design panel\n\nType a value (`4k7`, `4k7 5%`), step a resistor, move a slider, switch "
              "the circuit or its polarity: every number, curve and tab follows the kit's exact solve. "
              "On screen only; the printed review keeps the sections above and below.")

HISTOGRAM_CELL = '''\
# NBVAL_IGNORE_OUTPUT
from bokeh.models import Label, Span
from bokeh.plotting import figure, show
from kit.panels.theme import current_scale
from kit.panels.worst import histogram_columns
carlo = worst.methods["Monte Carlo"]
scale, unit = current_scale(worst.spec.i_target)
bars = histogram_columns(worst, scale)
hist = figure(width=640, frame_height=220, x_axis_label=f"I_out ({unit})", y_axis_label="samples",
              title=f"Monte Carlo: {carlo.detail['samples']} samples, yield {carlo.detail['yield']:.1%}",
              toolbar_location=None)
hist.quad(left=bars["left"], right=bars["right"], bottom=0, top=bars["top"], fill_color=bars["colour"],
          line_color="white")
for limit, name in zip(worst.spec.limits, ("low limit", "high limit")):
    hist.add_layout(Span(location=limit / scale, dimension="height", line_dash="dashed", line_color="#b23a48"))
    hist.add_layout(Label(x=limit / scale, y=max(bars["top"], default=1), y_offset=-14, x_offset=3,
                          text=name, text_font_size="10px", text_color="#b23a48"))
# The axis holds both spec limits whatever the spread.
lo, hi = worst.spec.limits
edges = list(bars["left"]) + list(bars["right"]) + [lo / scale, hi / scale]
pad = 0.05 * (max(edges) - min(edges))
hist.x_range.start, hist.x_range.end = min(edges) - pad, max(edges) + pad
show(hist)'''


REQUIREMENT_PROMPT = ("State the requirement here: the current and its tolerance, the load-voltage range, "
                      "the supply and temperature ranges.")


def new_notebook(design, *, record_path=None, title=None, has_spec=False, notes=""):
    """A design notebook for ``design`` (a :class:`kit.designs.Design`).

    With ``record_path`` the notebook loads its design from that record (a
    path relative to where the notebook will live, or absolute); otherwise
    the design is written out as a ``kit.design(...)`` call.
    """
    import nbformat

    top = design.topology
    heading = title or design.title or top.title
    if record_path is not None:
        load = (f"record = load_record({json.dumps(str(record_path))})\n"
                "design = record.design\n"
                "spec = getattr(record, 'spec', None)")
    else:
        values = ", ".join(f"{k}={v!r}" for k, v in design.values.items())
        load = (f"record = None\ndesign = kit.design({top.key!r}, {design.polarity!r}, {values},\n"
                f"                    title={heading!r})\nspec = None")
    # The title and notes may come from a record someone mailed: shown as text, never as markup.
    cells = [
        _markdown(f"# {markdown_inline(heading)}\n\n{top.title} ({design.polarity.upper()}). "
                  f"{top.description}\n\n" + (markdown_block(notes.strip()) if notes.strip() else REQUIREMENT_PROMPT)),
        _code("# NBVAL_IGNORE_OUTPUT\nimport numpy as np\nimport kit\n"
              "from bokeh.io import output_notebook\nfrom bokeh.resources import INLINE\n"
              "from kit.analysis.derivation import derivation\nfrom kit.analysis.evaluation import sweep\n"
              "from kit.record import load_record\nfrom kit.review import review_summary\n"
              "from kit.report.schematic import render\n"
              "output_notebook(resources=INLINE, hide_banner=True)\n" + load, hide=True),
        _markdown("## The circuit"),
        _code("render(design)"),
        _markdown("## The exact equations and the hand formulas"),
        _code("# NBVAL_IGNORE_OUTPUT\nderivation(design)"),
        _markdown("## The design point\n\nExact solve, compliance, output resistance, sensitivities, "
                  "tempco budget and the ledger of simplifications."),
        _code("# NBVAL_IGNORE_OUTPUT\nevaluation = kit.evaluate(design, edge=getattr(record, 'edge', 'vce_sat'))\n"
              "evaluation"),
        _markdown("## Across compliance"),
        _code(SWEEP_CELL),
        _screen_only(_markdown(PANEL_TEXT)),
        _screen_only(_code(PANEL_CELL)),
    ]
    if has_spec or record_path is not None:
        cells += [_markdown("## Worst case against the specification"),
                  _code("# NBVAL_IGNORE_OUTPUT\nfrom kit.analysis.worstcase import worst_case\n"
                        "worst = worst_case(design, spec) if spec is not None else None\nworst")]
        if has_spec and record_path is not None:
            # Where a worst case ran, the spread of its Monte Carlo samples against the limits.
            cells.append(_code(HISTOGRAM_CELL))
    else:
        cells.append(_code("worst = None", hide=True))
    cells += [_markdown("## Summary for the review"),
              _code("# NBVAL_IGNORE_OUTPUT\nreview_summary(evaluation, worst, record)")]
    notebook = nbformat.v4.new_notebook()
    notebook.cells = cells
    notebook.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    notebook.metadata["biasbook"] = {"topology": top.key, "polarity": design.polarity}
    return notebook


def notebook_for_record(record, path):
    """The template notebook of a loaded record stored at ``path``."""
    return new_notebook(record.design, record_path=Path(path).resolve(), title=record.title,
                        has_spec=getattr(record, "spec", None) is not None, notes=record.notes)


def comparison_notebook(record_paths, title):
    """A review notebook comparing the designs of two or more records (see :mod:`kit.review.compare`).

    Page one of its review holds every schematic and the side-by-side table;
    the body holds the overlaid plot and each design's own evaluation.
    Record titles are shown as text (escaped), and reach code only as string
    literals.
    """
    import nbformat

    from kit.record import load_record

    paths = [Path(p).resolve() for p in record_paths]
    records = [load_record(p) for p in paths]
    names = [r.title or r.design.topology.title for r in records]
    cells = [
        _markdown(f"# {markdown_inline(title)}\n\n" + "\n".join(
            f"- {markdown_inline(name)} ({r.design.topology.title}, {r.design.polarity.upper()})"
            for name, r in zip(names, records))),
        _code("# NBVAL_IGNORE_OUTPUT\nimport kit\nfrom bokeh.io import output_notebook\n"
              "from bokeh.plotting import show\nfrom bokeh.resources import INLINE\n"
              "from kit.record import load_record\nfrom kit.review.compare import compare\n"
              "output_notebook(resources=INLINE, hide_banner=True)\n"
              f"records = [load_record(p) for p in {json.dumps([str(p) for p in paths])}]\n"
              f"pair = compare([r.design for r in records], names={json.dumps(names)})", hide=True),
        _markdown("## Across compliance, design by design"),
        _code("# NBVAL_IGNORE_OUTPUT\nshow(pair.plot())"),
    ]
    for k, name in enumerate(names):
        cells += [_markdown(f"## {markdown_inline(name)}"),
                  _code(f"# NBVAL_IGNORE_OUTPUT\npair.evaluations[{k}]")]
    cells += [_markdown("## Summary for the review"),
              _code(f"# NBVAL_IGNORE_OUTPUT\npair.summary({json.dumps(title)})")]
    notebook = nbformat.v4.new_notebook()
    notebook.cells = cells
    notebook.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    return notebook
