"""Print quality of design reviews, measured as a reviewer meets the paper.

Each review below is built once (``build_review`` with the kept HTML page) and
measured by :mod:`kit.review.printcheck`: the page in Chromium's print layout
at the printable width of A4 with the template's margins, and the PDF with
poppler.  What is checked, and why:

* no visible element reaches past the printable width, and no box scrolls or
  clips sideways — a printed page cannot scroll, so anything past its edge is
  lost to the reader (common practice, no source);
* no plot toolbar or plotting-library logo, no test-suite marker or sentence,
  no slider instructions, no unedited template prompt: paper has no use for
  them (common practice, no source);
* no section heading (h1-h3) and no result block printed twice, and no
  check cell's Python text ("met: False") -- a reviewer reads each once
  (common practice, no source);
* no page but the last is less than a quarter full, and no section heading is
  the last thing on its page (a heading kept with what follows it: the CSS
  Fragmentation Module's ``break-after: avoid``, W3C, and ordinary book
  typography);
* the PDF's title metadata is the design's title (PDF 32000-1:2008, 14.3.3,
  document information dictionary /Title).

The pages are also drawn to ``artifacts/print/<review>-<page>.png`` (60 dpi)
for a person to look at.

The checker's own tests come first: a made-up page with every defect, which
it must find, so these tests can fail.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

from kit.record import load_record
from kit.review.page import REVIEW_PAGE

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
ARTIFACTS = ROOT / "artifacts" / "print"


def _has_playwright():
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:
        return False
    return True


pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(shutil.which("chromium") is None or shutil.which("pdftoppm") is None,
                       reason="needs Debian's chromium and poppler-utils (python3 dev.py test installs them)"),
    pytest.mark.skipif(not _has_playwright(), reason="needs the playwright Python package (biasbook[dev])"),
]


# --- the checker finds what it is made to find --------------------------------------------

DEFECTS_PAGE = """<!DOCTYPE html>
<html><head><meta charset="utf-8"><title>Some other title</title>
<style>@page {{ {page_css} }} body {{ margin: 0; font: 12pt sans-serif; }}</style></head>
<body>
<p>A page that holds one line.</p>
<div style="break-before: page">
  <div style="width: 900px; background: #ddd">a table too wide for the page</div>
  <div style="overflow-x: auto"><div style="width: 800px">an equation in a scrolling box</div></div>
  <div class="bk-Toolbar" style="width: 24px; height: 80px; background: #888"></div>
  <p>Move the sliders to try it; NBVAL_CHECK_OUTPUT marks this for the test suite.</p>
  <h3>Results</h3><div class="bb-result">I_out 1 mA</div><pre>met: False</pre>
  <h3>Results</h3><div class="bb-result">I_out 1 mA</div>
  <div style="height: 700px; background: #eee"></div>
  <h2>A heading left at the foot of the page</h2>
</div>
<div style="break-before: page"><p>The last page.</p></div>
</body></html>
"""


@pytest.fixture(scope="module")
def defects(tmp_path_factory):
    from kit.review.build import print_pdf
    from kit.review.printcheck import check_review

    folder = tmp_path_factory.mktemp("defects")
    page = folder / "page.html"
    page.write_text(DEFECTS_PAGE.format(page_css=REVIEW_PAGE.css()), encoding="utf-8")
    print_pdf(page, folder / "page.pdf")
    return check_review(page, folder / "page.pdf", expected_title="The design")


def test_checker_finds_wide_and_scrolled_boxes(defects):
    assert defects.wide_elements >= 2  # the wide block and the content of the scrolling box
    assert any("a table too wide" in w for w in defects.wide)
    assert len(defects.scrolled) == 1 and "scrolls" in defects.scrolled[0]


def test_checker_finds_toolbars_and_text_for_the_screen(defects):
    assert defects.plot_tools == ["bk-Toolbar"]
    kinds = {kind for kind, _, _ in defects.unwanted_text}
    assert kinds == {"test-suite marker", "test suite", "slider instructions", "'Try it'", "check-cell text"}


def test_checker_finds_what_is_printed_twice(defects):
    assert defects.repeated == ["section 'Results'", "result block 'I_out 1 mA'"]
    assert defects.counts()["sections printed twice"] == 2


def test_checker_finds_a_sparse_page_a_stranded_heading_and_the_title(defects):
    assert defects.pages == 3
    assert [page for page, _ in defects.sparse_pages] == [1]  # the last page is allowed to be short
    assert defects.stranded_headings == [(2, "A heading left at the foot of the page")]
    assert defects.title == "Some other title" and defects.counts()["title differs"] == 1
    assert any("The design" in line for line in defects.problems())


# --- the kit's reviews ----------------------------------------------------------------------

# name -> (source, the design's title that the PDF must carry)
REVIEWS = {
    # the tour names its design in kit.design(..., title="strain-bridge excitation")
    "tour": (ROOT / "notebooks" / "tour.ipynb", "strain-bridge excitation"),
    "mos-opamp-source": (EXAMPLES / "opamp_mos_source-led-string-24v.toml",
                         load_record(EXAMPLES / "opamp_mos_source-led-string-24v.toml").title),
    "wilson-mirror": (EXAMPLES / "wilson_mirror-strain-bridge-excitation.toml",
                      load_record(EXAMPLES / "wilson_mirror-strain-bridge-excitation.toml").title),
    # the notebook reviews the design of this record
    "led-notebook": (ROOT / "notebooks" / "led-string-driver.ipynb",
                     load_record(EXAMPLES / "spec-led-driver-passes.toml").title),
    # a comparison of three mirrors, written as a notebook by the kit (see _comparison)
    "comparison": ("comparison", "Three mirrors <side by side>"),
}
COMPARED = ("wilson_mirror-strain-bridge-excitation.toml", "degenerated_mirror-diff-pair-tail.toml",
            "widlar_source-gas-sensor-micropower-bias.toml")


def _comparison(folder, title):
    import nbformat

    from kit.review.notebook import comparison_notebook

    path = folder / "comparison.ipynb"
    nbformat.write(comparison_notebook([EXAMPLES / name for name in COMPARED], title), path)
    return path


@pytest.fixture(scope="module", params=sorted(REVIEWS))
def printed(request, tmp_path_factory):
    """One review built and measured (once per review for this module)."""
    from kit.review.build import build_review
    from kit.review.printcheck import check_review

    source, title = REVIEWS[request.param]
    folder = tmp_path_factory.mktemp(request.param)
    if source == "comparison":
        source = _comparison(folder, title)
    pdf = build_review(source, folder / "review.pdf", keep_html=folder / "review.html")
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    for old in ARTIFACTS.glob(f"{request.param}-*.png"):
        old.unlink()
    subprocess.run(["pdftoppm", "-png", "-r", "60", str(pdf), str(ARTIFACTS / request.param)], check=True)
    return check_review(folder / "review.html", pdf, expected_title=title)


def test_nothing_reaches_past_the_printed_page(printed):
    assert printed.wide_elements == 0, printed.problems()


def test_no_box_scrolls_or_clips_sideways(printed):
    assert printed.scrolled == [], printed.problems()


def test_no_plot_toolbar_or_logo(printed):
    assert printed.plot_tools == [], printed.problems()


def test_no_text_meant_for_the_screen(printed):
    assert printed.unwanted_text == [], printed.problems()


def test_each_section_and_result_printed_once(printed):
    assert printed.repeated == [], printed.problems()


def test_no_page_but_the_last_below_a_quarter_full(printed):
    assert printed.pages >= 3  # a whole review: title page, equations, results
    assert printed.sparse_pages == [], f"fill by page {[f'{f:.0%}' for f in printed.fill]}"


def test_no_section_heading_ends_a_page(printed):
    assert printed.stranded_headings == [], printed.problems()


def test_pdf_title_is_the_designs(printed):
    assert printed.title == printed.expected_title
