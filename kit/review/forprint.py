"""What of a design notebook reaches the printed review, and what stays on the screen.

A notebook serves two readers: the designer at a screen, who drags sliders
and runs the test suite, and the reviewer with the paper.  The review keeps
the second one's part:

* a cell tagged :data:`SCREEN_ONLY_TAG` runs as usual but is not printed
  (instructions for the panels, notes about the test suite);
* ``# NBVAL_...`` marker lines are taken out of code shown with ``--with-code``;
* the template's requirement prompt, left unedited, is not printed;
* the review summary a notebook displays last is not printed where the
  notebook shows it: page one is made from it (:mod:`kit.review.pageone`);
* an output the review already printed (the same table shown twice, say by
  a panel that shows its evaluation again) is printed once, where it came first;
* a section heading with nothing printed under it (its cells are all
  screen-only, or code without output while code is hidden) is not printed.

Before a review runs, :func:`with_print_setup` puts one cell in front that
gives every plot the print theme (no toolbar, no logo); it is taken out
again before printing.

Examples
--------
>>> import nbformat
>>> nb = nbformat.v4.new_notebook()
>>> nb.cells = [nbformat.v4.new_markdown_cell("## Try it"),
...             nbformat.v4.new_code_cell("# NBVAL_IGNORE_OUTPUT\\npanel")]
>>> nb.cells[0].metadata["tags"] = [SCREEN_ONLY_TAG]
>>> printed = for_print(nb, with_code=True)
>>> [c.source for c in printed.cells]
['panel']
"""

from __future__ import annotations

import copy
import re

from kit.review.notebook import REQUIREMENT_PROMPT
from kit.review.summary import MIME as SUMMARY_MIME

SCREEN_ONLY_TAG = "biasbook-screen-only"
PRINT_SETUP_TAG = "biasbook-print-setup"
PRINT_SETUP_SOURCE = "from kit.panels.theme import use_print_theme\nuse_print_theme()"
_MARKER_LINE = re.compile(r"^[ \t]*#[ \t]*NBVAL_[A-Z_]+\b.*(?:\n|$)", re.MULTILINE)
_HEADING_ONLY = re.compile(r"\A\s*(#{1,6})[ \t]+\S[^\n]*\s*\Z")
_HEADING = re.compile(r"^(#{1,6})[ \t]+\S", re.MULTILINE)


def _tags(cell):
    return cell.get("metadata", {}).get("tags", [])


def with_print_setup(notebook):
    """A copy of ``notebook`` whose first cell applies the print theme to plots."""
    import nbformat

    setup = nbformat.v4.new_code_cell(PRINT_SETUP_SOURCE)
    setup.metadata["tags"] = [PRINT_SETUP_TAG]
    prepared = copy.deepcopy(notebook)
    prepared.cells.insert(0, setup)
    return prepared


def _prints_something(cell, with_code):
    if cell.cell_type == "markdown":
        return bool(cell.source.strip())
    if cell.cell_type == "code":
        return (with_code and bool(cell.source.strip())) or bool(cell.get("outputs"))
    return cell.cell_type == "raw"


def _heading_level(cell):
    """Level of the first heading of a Markdown cell, or None."""
    if cell.cell_type != "markdown":
        return None
    found = _HEADING.search(cell.source)
    return len(found.group(1)) if found else None


def _drop_empty_sections(cells, with_code):
    kept = []
    for k, cell in enumerate(cells):
        heading = _HEADING_ONLY.match(cell.source) if cell.cell_type == "markdown" else None
        if heading:
            level = len(heading.group(1))
            section = []
            for later in cells[k + 1:]:
                later_level = _heading_level(later)
                if later_level is not None and later_level <= level:
                    break
                section.append(later)
            if not any(_prints_something(c, with_code) for c in section):
                continue
        kept.append(cell)
    return kept


def _output_key(output):
    """What an output shows, to tell a repeat (its HTML, image or text, whichever it prints)."""
    data = output.get("data", {})
    for mime in ("text/html", "image/svg+xml", "image/png", "text/latex", "text/markdown"):
        if mime in data:
            shown = data[mime]
            return mime, shown if isinstance(shown, str) else "".join(shown)
    if output.get("output_type") == "stream":
        return "stream", output.get("text", "")
    return None  # a plot script or the like: drawn afresh each time, never a repeat by its bytes


def _drop_repeated_outputs(cells):
    seen = set()
    for cell in cells:
        if cell.cell_type != "code":
            continue
        kept = []
        for output in cell.get("outputs", []):
            key = _output_key(output)
            if key is not None and key[1].strip():
                if key in seen:
                    continue
                seen.add(key)
            kept.append(output)
        cell.outputs = kept
    return cells


def for_print(notebook, *, with_code=False):
    """A copy of an executed ``notebook`` holding what the printed review shows.

    Parameters
    ----------
    notebook : nbformat.NotebookNode
        The executed notebook (with or without the print-setup cell).
    with_code : bool
        Whether code cells will be shown (then their marker lines are taken out).
    """
    printed = copy.deepcopy(notebook)
    cells = []
    for cell in printed.cells:
        tags = _tags(cell)
        if SCREEN_ONLY_TAG in tags or PRINT_SETUP_TAG in tags:
            continue
        if cell.cell_type == "code":
            cell.source = _MARKER_LINE.sub("", cell.source)
            # Page one is the summary; printing it again where the notebook ends wastes pages.
            cell.outputs = [o for o in cell.get("outputs", []) if SUMMARY_MIME not in o.get("data", {})]
        elif cell.cell_type == "markdown":
            cell.source = cell.source.replace(REQUIREMENT_PROMPT, "").rstrip()
            if not cell.source:
                continue
        cells.append(cell)
    printed.cells = _drop_empty_sections(_drop_repeated_outputs(cells), with_code)
    return printed
