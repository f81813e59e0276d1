"""Design notebooks made from a template: one per topology, prefilled from a record.

:func:`new_notebook` writes the standard design story in the order a review
prints it — the design point with its ledger, the worst case with stress
when the record has a spec, the plots (:mod:`kit.review.plots`), the exact
equations and closed forms as an appendix, and the review summary that page
one is made from — for any topology.  ``biasbook new`` and
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


PLOTS_CELL = """\
# NBVAL_IGNORE_OUTPUT
from kit.review.plots import show_review_figures
show_review_figures(design, evaluation, spec, worst)"""


PANEL_CELL = """\
# NBVAL_IGNORE_OUTPUT
from kit.panels import DesignPanel
panel = DesignPanel(design, spec, network=thermal)
panel"""

PANEL_TEXT = ("## The design panel\n\nType a value (`4k7`, `4k7 5%`), step a resistor, move a slider, switch "
              "the circuit or its polarity: every number, curve and tab follows the kit's exact solve. "
              "On screen only; the printed review keeps the sections above and below.")

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
                "spec = getattr(record, 'spec', None)\n"
                "thermal = getattr(record, 'thermal', None)  # how the parts share heat ([thermal])")
    else:
        values = ", ".join(f"{k}={v!r}" for k, v in design.values.items())
        load = (f"record = None\ndesign = kit.design({top.key!r}, {design.polarity!r}, {values},\n"
                f"                    title={heading!r})\nspec = None\nthermal = None")
    # The title and notes may come from a record someone mailed: shown as text, never as markup.
    # The review's cover carries the title: the heading is for the screen.
    cells = [
        _screen_only(_markdown(f"# {markdown_inline(heading)}")),
        _markdown(f"{top.title} ({design.polarity.upper()}). "
                  f"{top.description}\n\n" + (markdown_block(notes.strip()) if notes.strip() else REQUIREMENT_PROMPT)),
        _code("# NBVAL_IGNORE_OUTPUT\nimport numpy as np\nimport kit\n"
              "from bokeh.io import output_notebook\nfrom bokeh.resources import INLINE\n"
              "from kit.analysis.derivation import derivation\nfrom kit.analysis.evaluation import sweep\n"
              "from kit.record import load_record\nfrom kit.review import review_summary\n"
              "from kit.report.schematic import render\n"
              "output_notebook(resources=INLINE, hide_banner=True)\n" + load, hide=True),
        # Page one of the review carries the schematic and the device table.
        _screen_only(_markdown("## The circuit")),
        _screen_only(_code("render(design)")),
        _markdown("## The design point\n\nExact solve, compliance, output resistance, sensitivities, "
                  "tempco budget and the ledger of simplifications."),
        _code("# NBVAL_IGNORE_OUTPUT\nevaluation = kit.evaluate(design, edge=getattr(record, 'edge', 'vce_sat'), "
              "network=thermal)\nevaluation"),
    ]
    if has_spec or record_path is not None:
        cells += [_markdown("## Worst case against the specification"),
                  _code("# NBVAL_IGNORE_OUTPUT\nfrom kit.analysis.worstcase import worst_case\n"
                        "worst = worst_case(design, spec, network=thermal) if spec is not None else None\nworst")]
    else:
        cells.append(_code("worst = None", hide=True))
    cells += [
        _markdown("## Plots\n\nThe current across compliance (at the spec's gain and temperature extremes "
                  "where it gives them), each part's dissipation against its allowance, and the Monte Carlo "
                  "spread against the limits where a worst case ran."),
        _code(PLOTS_CELL),
        _screen_only(_markdown(PANEL_TEXT)),
        _screen_only(_code(PANEL_CELL)),
        _markdown("## Appendix: exact equations and closed forms"),
        _code("# NBVAL_IGNORE_OUTPUT\nderivation(design)"),
        _markdown("## Summary for the review"),
        _code("# NBVAL_IGNORE_OUTPUT\nreview_summary(evaluation, worst, record)"),
    ]
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
        _screen_only(_markdown(f"# {markdown_inline(title)}")),  # the cover carries the title
        _markdown("The designs compared:\n\n" + "\n".join(
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
