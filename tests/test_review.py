"""Design-review PDFs and the commands around them (check, synthesize, new, review).

The PDF is checked as a reader would meet it: its text (pdftotext, from
Debian's poppler-utils), its pictures (pdfimages / a rendered page) and that
the page it was printed from asks nothing of the network.  The first page is
also rendered to ``artifacts/review-page-1.png`` so a person can look at it.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import pytest

import kit
from kit.cli import main
from kit.quantities import format_quantity
from kit.record import load_record
from kit.report.evaluation import headline

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
PASSING = EXAMPLES / "spec-led-driver-passes.toml"
FAILING = EXAMPLES / "spec-bridge-excitation-fails.toml"
NO_SPEC = EXAMPLES / "bridge_excitation_npn.toml"
ARTIFACTS = ROOT / "artifacts"

needs_printing = pytest.mark.skipif(
    shutil.which("chromium") is None or shutil.which("pdftotext") is None,
    reason="needs Debian's chromium and poppler-utils (python3 dev.py test installs them)")


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


# --- check and synthesize -----------------------------------------------------------

def test_check_exit_codes_follow_the_verdict(capsys):
    assert run(capsys, "check", str(PASSING))[0] == 0
    code, out, _ = run(capsys, "check", str(FAILING))
    assert code == 1
    assert "spec NOT met" in out and "supply voltage alone" in out
    code, _, err = run(capsys, "check", str(NO_SPEC))
    assert code == 2 and "no [spec]" in err


def test_check_json_is_strict_and_names_the_methods(capsys):
    code, out, _ = run(capsys, "check", "--json", str(FAILING))
    assert code == 1
    data = json.loads(out, parse_constant=lambda name: pytest.fail(f"non-strict JSON: {name}"))
    assert set(data["check"]["methods"]) == {"extreme-value", "RSS", "Monte Carlo"}
    assert data["check"]["met"] is False
    assert data["content_hash"] == load_record(FAILING).content_hash()


def test_bad_spec_in_a_record_names_the_field(tmp_path, capsys):
    text = FAILING.read_text().replace('tolerance = "2 %"', 'tolerance = "-2 %"')
    path = tmp_path / "bad.toml"
    path.write_text(text)
    code, _, err = run(capsys, "check", str(path))
    assert code == 2 and "spec.tolerance" in err
    text = FAILING.read_text().replace('npn = [100, 300]', 'npn = [300, 100]')
    path.write_text(text)
    code, _, err = run(capsys, "check", str(path))
    assert code == 2 and "spec.beta.npn" in err


def test_synthesize_meets_its_spec_when_checked_again(capsys):
    code, out, _ = run(capsys, "synthesize", "--json", str(PASSING))
    assert code == 0
    best = json.loads(out)["synthesis"]["candidates"][0]
    record = load_record(PASSING)
    design = record.design.with_values(**best["values"])
    from kit.analysis.worstcase import worst_case

    assert worst_case(design, record.spec, methods=("extreme-value",)).met


# --- new ------------------------------------------------------------------------------

def test_new_writes_a_notebook_for_every_topology(tmp_path, capsys):
    import nbformat

    for top in kit.list_topologies():
        out = tmp_path / f"{top.key}.ipynb"
        code, _, err = run(capsys, "new", top.key, "-o", str(out))
        assert code == 0, err
        notebook = nbformat.read(out, as_version=4)
        sources = "\n".join(c.source for c in notebook.cells)
        assert f"kit.design({top.key!r}" in sources and "review_summary" in sources
    assert run(capsys, "new", "divider_source", "-o", str(tmp_path / "divider_source.ipynb"))[0] == 2
    assert run(capsys, "new", "no_such_circuit", "-o", str(tmp_path / "x.ipynb"))[0] == 2


# --- review ---------------------------------------------------------------------------

@pytest.fixture(scope="module")
def reviewed(tmp_path_factory):
    """One review of the passing record: the PDF, its HTML and the record's evaluation."""
    from kit.review.build import build_review

    folder = tmp_path_factory.mktemp("review")
    stages = []
    pdf = build_review(PASSING, folder / "review.pdf", progress=lambda stage, **count: stages.append((stage, count)),
                       keep_html=folder / "review.html", twin=folder / "twin.html")
    return {"pdf": pdf, "html": (folder / "review.html").read_text(encoding="utf-8"),
            "twin": (folder / "twin.html").read_text(encoding="utf-8"),
            "stages": stages, "evaluation": kit.evaluate(load_record(PASSING).design),
            "record": load_record(PASSING), "folder": folder}


@needs_printing
def test_review_reports_its_progress(reviewed):
    from kit.review.notebook import notebook_for_record

    stages = reviewed["stages"]
    assert [stage for stage, count in stages if not count] == ["executing", "converting", "printing", "twin", "done"]
    # While executing: the cell count, from none done to all, one step at a time.
    counts = [(c["cell"], c["cells"]) for stage, c in stages if c]
    code = [c for c in notebook_for_record(reviewed["record"], PASSING.resolve()).cells
            if c.cell_type == "code" and c.source.strip()]
    assert counts == [(n, len(code)) for n in range(len(code) + 1)]
    assert all(stage == "executing" for stage, c in stages if c)


@needs_printing
def test_review_text_holds_title_block_numbers_and_cautions(reviewed):
    text = subprocess.run(["pdftotext", "-layout", str(reviewed["pdf"]), "-"], capture_output=True,
                          text=True, check=True).stdout
    flat = re.sub(r"\s+", " ", text)
    record, evaluation = reviewed["record"], reviewed["evaluation"]
    assert record.title in flat
    assert record.content_hash() in flat  # the hash names exactly what was reviewed
    assert f"biasbook {kit.__version__}" in flat and "SymPy" in flat and "NumPy" in flat
    # the headline numbers as the kit computes and formats them
    assert headline(evaluation)["I_out"] in flat
    assert format_quantity(evaluation.compliance.low.voltage, "V") in flat
    assert "licensed practitioner" in flat and "dissipation" in flat
    assert "extreme-value" in flat and "Monte Carlo" in flat  # the spec, method by method
    assert "page 1 of" in flat  # the footer's page numbers


@needs_printing
def test_review_has_pictures_schematic_and_plot(reviewed):
    page_count = int(re.search(r"Pages:\s+(\d+)", subprocess.run(
        ["pdfinfo", str(reviewed["pdf"])], capture_output=True, text=True, check=True).stdout).group(1))
    assert page_count >= 3
    # The schematic is SVG (vector) and the Bokeh plot a canvas: both print as
    # drawn content, so look for them in the page they were printed from.
    html = reviewed["html"]
    assert html.count("<svg") >= 1  # schemdraw's schematic
    assert "Bokeh" in html and "application/json" in html  # the embedded Bokeh document
    # and the equations were typeset (MathJax output, not raw TeX, reaches the PDF)
    text = subprocess.run(["pdftotext", str(reviewed["pdf"]), "-"], capture_output=True, text=True).stdout
    assert "\\frac" not in text and "$$" not in text


class _Addresses(HTMLParser):
    """Every address an element of the page would load (script bodies are not elements)."""

    def __init__(self):
        super().__init__()
        self.found = []

    def handle_starttag(self, tag, attrs):
        for name, value in attrs:
            if name in ("src", "href", "data") and value:
                self.found.append(value)


@needs_printing
def test_review_page_asks_nothing_of_the_network(reviewed):
    parser = _Addresses()
    parser.feed(reviewed["html"])
    assert parser.found, "the page loads its MathJax from somewhere"
    remote = [a for a in parser.found if re.match(r"(?i)(https?:)?//", a)]
    assert remote == []
    # only local files, in-page anchors and inline data
    assert all(a.startswith(("file:", "#", "data:")) for a in parser.found), parser.found


@needs_printing
def test_page_one_is_a_review_cover(reviewed):
    """Title block, spec box, verdict, stress, devices and schematic before the first page break."""
    text = subprocess.run(["pdftotext", "-f", "1", "-l", "1", "-layout", str(reviewed["pdf"]), "-"],
                          capture_output=True, text=True, check=True).stdout
    flat = re.sub(r"\s+", " ", text)
    record = reviewed["record"]
    for words in ("checked by", "approved by", "Specification and what it is judged over", "load voltage",
                  "11 V … 18 V", "ambient temperature", "0 °C … 60 °C", "Verdict: spec met", "Worst stress:",
                  "Devices", "source of the values", "Cautions"):
        assert words in flat, words
    assert record.title in flat
    # the schematic is drawn on page one, ahead of the notebook's first cell
    html = reviewed["html"]
    assert 0 < html.find('class="bb-schematic"') < html.find('class="jp-Cell')


@needs_printing
def test_html_twin_needs_no_network_and_no_other_file(reviewed):
    twin = reviewed["twin"]
    parser = _Addresses()
    parser.feed(twin)
    assert all(a.startswith(("data:", "#")) for a in parser.found), parser.found
    assert not re.search(r"<script\b[^>]*\bsrc=", twin)
    assert "file:" not in re.search(r'Content-Security-Policy" content="([^"]*)"', twin).group(1)
    # the equation fonts travel inside the file; no font or style is read from a file: address
    assert "data:font/woff;base64," in twin and not re.search(r"url\(['\"]?file:", twin)
    # the same content as the PDF: its title, its numbers, typeset equations, the embedded plot
    assert reviewed["record"].title in twin and headline(reviewed["evaluation"])["I_out"] in twin
    assert "MathJax" in twin and "$$" not in re.sub(r"<script.*?</script>", "", twin, flags=re.S)
    assert "data-root-id" in twin


@needs_printing
def test_html_twin_draws_its_plots_from_a_folder_holding_nothing_else(reviewed, tmp_path):
    pytest.importorskip("playwright.sync_api", reason="needs the playwright Python package (biasbook[dev])")
    from playwright.sync_api import sync_playwright

    from kit.review.build import chromium_path

    alone = tmp_path / "alone"
    alone.mkdir()
    page_file = alone / "twin.html"
    page_file.write_text(reviewed["twin"], encoding="utf-8")
    asked = []
    with sync_playwright() as driver:
        browser = driver.chromium.launch(executable_path=chromium_path(), args=["--no-sandbox"])
        try:
            page = browser.new_page()
            page.on("request", lambda r: asked.append(r.url))
            page.goto(page_file.as_uri(), wait_until="load")
            page.wait_for_function("() => [...document.querySelectorAll('[data-root-id]')]"
                                   ".every((el) => el.firstElementChild && el.firstElementChild.shadowRoot)",
                                   timeout=30000)
            typeset = page.evaluate("() => document.querySelectorAll('.MathJax').length")
        finally:
            browser.close()
    assert typeset > 0
    assert [u for u in asked if not u.startswith(("data:", "about:", page_file.as_uri()))] == []


@needs_printing
def test_first_page_rendered_for_a_person_to_look_at(reviewed):
    ARTIFACTS.mkdir(exist_ok=True)
    stem = ARTIFACTS / "review-page"
    subprocess.run(["pdftoppm", "-png", "-r", "80", "-f", "1", "-l", "1", str(reviewed["pdf"]), str(stem)],
                   check=True)
    page = next(ARTIFACTS.glob("review-page*1.png"))
    assert page.stat().st_size > 20_000  # a page with a title block and tables, not a blank sheet


def test_review_refuses_what_it_cannot_read(tmp_path, capsys):
    bogus = tmp_path / "notes.txt"
    bogus.write_text("not a design")
    code, _, err = run(capsys, "review", str(bogus), "-o", str(tmp_path / "x.pdf"))
    assert code == 2 and "source" in err
    code, _, err = run(capsys, "review", str(tmp_path / "missing.ipynb"), "-o", str(tmp_path / "x.pdf"))
    assert code == 2


@pytest.mark.parametrize("polarity", ["nmos", "pmos"])
def test_mosfet_balances_name_the_drain_current_and_lose_nothing(polarity):
    # A review prints the exact equations: the MOSFET's four-case drain current is
    # named in the node balances and written out once (common practice, no source).
    # Putting the written-out law back must give the very balances the solve uses.
    import sympy as sp

    from kit import report
    from kit.analysis.derivation import derivation

    der = derivation(kit.design("opamp_mos_source", polarity))
    assert any("I_{D,M1}" in r for r in der.residuals_latex)
    assert not any(r"\begin{cases}" in r for r in der.residuals_latex)
    assert len(der.laws_latex) == 1 and der.laws_latex[0].startswith("I_{D,M1} = ")
    named = der.named_currents()
    back = {symbol: expression for symbol, _, expression in named}
    swap = {expression: symbol for symbol, _, expression in named}
    for residual in der.equations.residuals:
        assert sp.simplify(residual.subs(swap).subs(back) - residual) == 0
    html = report.html(der)
    # the channel law is stated once, in the channel's own voltages, and M1 uses it by name
    # with its own gate-source and drain-source voltages (normalised: conduction positive)
    from kit.report.derivation import channel_law_latex

    part = der.equations.parts["M1"]
    assert html.count("i_D(v_{GS}, v_{DS}) = ") == 2 and all(line in html for line in channel_law_latex())
    assert rf"I_{{D,M1}} = i_D\left({der.latex(part.q['v_gs'])},\; {der.latex(part.q['v_ds'])}\right)" in html
    assert r"\begin{cases}" not in html.split("each channel of this circuit")[1].split("Exact sensitivities")[0]
    # the law as stated is the law the solve uses: forward_current of v_ov = v_gs - V_th at v_ds >= 0
    from kit.devices.mosfet import forward_current

    k, v_th, lam, n, v_t = (part.symbols[key] for key in ("K", "V_th", "lambda", "n", "V_T"))
    stated = forward_current(k, part.q["v_gs"] - v_th, part.q["v_ds"], lam, 2 * n * v_t)
    assert part.q["i_d"].args[0].expr == stated
