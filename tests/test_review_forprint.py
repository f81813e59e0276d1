"""What of a design notebook reaches the printed review (kit.review.forprint).

The rules are the kit's own (documented in DEVELOPERS.md, "Notebooks and the
printed review"); these tests hold each one on small notebooks made here.
"""

from __future__ import annotations

import nbformat
import pytest

from kit.review.forprint import PRINT_SETUP_TAG, SCREEN_ONLY_TAG, for_print, with_print_setup
from kit.review.notebook import REQUIREMENT_PROMPT


def _markdown(text, *tags):
    cell = nbformat.v4.new_markdown_cell(text)
    if tags:
        cell.metadata["tags"] = list(tags)
    return cell


def _code(source, outputs=(), *tags):
    cell = nbformat.v4.new_code_cell(source)
    cell.outputs = [nbformat.v4.new_output("stream", name="stdout", text=text) for text in outputs]
    if tags:
        cell.metadata["tags"] = list(tags)
    return cell


def _notebook(*cells):
    notebook = nbformat.v4.new_notebook()
    notebook.cells = list(cells)
    return notebook


def _sources(notebook):
    return [cell.source for cell in notebook.cells]


def test_screen_only_cells_run_but_are_not_printed():
    notebook = _notebook(_markdown("## The panel"),
                         _markdown("Move the sliders.", SCREEN_ONLY_TAG),
                         _code("panel", ["table\n"]),
                         _code("refresh()", ["done\n"], SCREEN_ONLY_TAG))
    assert _sources(for_print(notebook)) == ["## The panel", "panel"]
    assert len(notebook.cells) == 4  # the notebook itself is left as it was


@pytest.mark.parametrize("marker", ["# NBVAL_CHECK_OUTPUT", "# NBVAL_IGNORE_OUTPUT", "  #NBVAL_SKIP"])
def test_test_suite_markers_leave_the_printed_code(marker):
    notebook = _notebook(_code(f"{marker}\nx = 1\nprint(x)  # NBVAL is named here, not a marker", ["1\n"]))
    printed = for_print(notebook, with_code=True)
    assert _sources(printed) == ["x = 1\nprint(x)  # NBVAL is named here, not a marker"]


def test_the_unedited_prompt_is_not_printed_an_edited_one_is():
    heading = "# A design\n\nWilson mirror (NPN sink). Its description.\n\n"
    unedited = _notebook(_markdown(heading + REQUIREMENT_PROMPT), _code("render(design)", ["drawing\n"]))
    assert REQUIREMENT_PROMPT not in for_print(unedited).cells[0].source
    assert for_print(unedited).cells[0].source == heading.rstrip()
    edited = REQUIREMENT_PROMPT.replace("State the requirement here", "Requirement")
    assert for_print(_notebook(_markdown(heading + edited))).cells[0].source == heading + edited


def test_a_heading_with_nothing_printed_under_it_is_dropped():
    notebook = _notebook(_markdown("## Worst case against the specification"),
                         _code("worst = None"),  # no output
                         _markdown("### Notes", SCREEN_ONLY_TAG),
                         _markdown("## Summary for the review"),
                         _code("summary", ["the summary\n"]))
    printed = for_print(notebook)
    assert [c.source for c in printed.cells if c.cell_type == "markdown"] == ["## Summary for the review"]
    # with the code shown, the section is not empty
    assert _sources(for_print(notebook, with_code=True))[:2] == ["## Worst case against the specification",
                                                                 "worst = None"]


def test_a_heading_keeps_its_subsections():
    notebook = _notebook(_markdown("## Results"), _markdown("### At 25 °C"), _code("table", ["t\n"]))
    assert _sources(for_print(notebook)) == ["## Results", "### At 25 °C", "table"]


def test_print_setup_comes_first_and_leaves_with_the_screen_cells():
    notebook = _notebook(_markdown("# A design"), _code("x = 1", ["\n"]))
    prepared = with_print_setup(notebook)
    assert PRINT_SETUP_TAG in prepared.cells[0].metadata["tags"]
    assert "use_print_theme()" in prepared.cells[0].source
    assert len(notebook.cells) == 2
    assert _sources(for_print(prepared, with_code=True)) == ["# A design", "x = 1"]


def _html(source, html):
    cell = nbformat.v4.new_code_cell(source)
    cell.outputs = [nbformat.v4.new_output("display_data", data={"text/html": html, "text/plain": "x"})]
    return cell


def test_an_output_already_printed_is_printed_once_where_it_came_first():
    # a panel that shows the design's evaluation again, beside a table of its own
    notebook = _notebook(_markdown("## The numbers"), _html("evaluation", "<table>I_out 1 mA</table>"),
                         _markdown("## The panel"), _html("panel", "<table>I_out 1 mA</table>"),
                         _html("panel.figures", "<table>R_out 3 MΩ</table>"))
    printed = for_print(notebook)
    shown = [o["data"]["text/html"] for c in printed.cells if c.cell_type == "code" for o in c.outputs]
    assert shown == ["<table>I_out 1 mA</table>", "<table>R_out 3 MΩ</table>"]
    # a section left with nothing but the repeat goes with it
    only_repeat = _notebook(_markdown("## The numbers"), _html("evaluation", "<p>a</p>"),
                            _markdown("## Again"), _html("evaluation", "<p>a</p>"))
    assert [c.source for c in for_print(only_repeat).cells if c.cell_type == "markdown"] == ["## The numbers"]
