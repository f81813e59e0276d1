"""Two designs side by side (kit.panels.compare) and the panel's exports, stress view and search start.

Kernel-side checks compare what the views show with what the kit computes
for the same designs (kit.evaluate, worst_case, synthesize), and the β_F
sensitivities of the two mirrors with their published closed forms.  The
browser check opens a notebook of our own in JupyterLab with Debian's
Chromium (Playwright, nothing downloaded) at 1280x800 with the file browser
open.  Designs and specs are scenarios of our own (a differential pair's
100 µA tail).
"""

from __future__ import annotations

import csv
import io
import json
import os
import re
import shutil
import time
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

pytest.importorskip("ipywidgets")
pytest.importorskip("jupyter_bokeh")

import kit  # noqa: E402
from kit.analysis.spec import Spec  # noqa: E402
from kit.analysis.synthesis import synthesize  # noqa: E402
from kit.analysis.worstcase import worst_case  # noqa: E402
from kit.panels import ComparePanel, DesignPanel  # noqa: E402
from kit.panels.compare import beta_sensitivity, headroom  # noqa: E402
from kit.panels.export import TIPS  # noqa: E402
from kit.quantities import format_quantity, format_temperature  # noqa: E402
from kit.report.evaluation import headline, resistance  # noqa: E402
from kit.safety import NO_MATH_CLASS  # noqa: E402

from browsing import CHROMIUM_ARGS, lab_server, run_notebook  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = shutil.which("chromium")
TAIL = dict(i_ref="100u", v_supply="15 V", v_load="5 V")
TAIL_SPEC = Spec(100e-6, 0.05, v_load=(2.0, 10.0), temp=(273.15, 343.15), beta={"npn": (80, 300)})


def basic(**more):
    return kit.design("basic_mirror", "npn", **{"n_area": 1, "title": "tail as a basic mirror", **TAIL, **more})


def wilson(**more):
    return kit.design("wilson_mirror", "npn", **{"title": "tail as a Wilson mirror", **TAIL, **more})


@pytest.fixture(scope="module")
def both():
    return ComparePanel(basic(), wilson(), TAIL_SPEC)


def table(panel):
    return {row[0]: row[1:] for row in panel.rows()}


# -- the comparison -------------------------------------------------------------------------------

def test_table_holds_each_designs_own_numbers(both):
    rows = table(both)
    for k, side in enumerate("AB"):
        evaluation = kit.evaluate(both.design(side))
        said = headline(evaluation)
        assert rows["output current I_out"][k] == said["I_out"]
        assert rows["output resistance R_out"][k] == resistance(evaluation.r_out)
        assert rows["compliance (load voltage)"][k] == said["compliance"]
        assert rows["tempco of I_out"][k] == said["tempco"]
        volts, edge = headroom(evaluation)
        c = evaluation.compliance
        assert volts == pytest.approx(min(5.0 - c.low.voltage, c.high.voltage - 5.0))
        assert rows["headroom at V_load (to the nearer edge)"][k].startswith(format_quantity(volts, "V", 3))
    a, b = (kit.evaluate(both.design(s)).i_out for s in "AB")
    assert rows["output current I_out"][2] == f"{b / a - 1:+.2%}"


def _richardson(key, **more):
    """(β/I)dI/dβ extrapolated to no Early effect: S(V_A) = S∞ + c/V_A to first order, from 5 kV and 10 kV."""
    values = []
    for v_a in (5e3, 1e4):
        design = (basic if key == "basic" else wilson)(**more)
        for name in design.devices:
            design = design.with_parameter(f"{name}.v_a", v_a)
        values.append(beta_sensitivity(kit.evaluate(design)))
    return 2 * values[1] - values[0]


def test_beta_sensitivity_row_matches_the_published_mirror_laws():
    # Simple mirror I_out/I_ref = β/(β+2), so (β/I)dI/dβ = 2/(β+2); Wilson mirror
    # I_out/I_in = 1 - 2/(β² + 2β + 2), so (β/I)dI/dβ = 4(β+1)/((β+2)(β²+2β+2))
    # (Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4, simple and
    # Wilson current mirrors; the derivative taken here).  Both laws leave out the Early
    # effect: the kit's exact sensitivity is extrapolated to V_A -> infinity.
    beta = basic().devices["Q1"].beta_f
    assert _richardson("basic") == pytest.approx(2 / (beta + 2), rel=1e-6)
    assert _richardson("wilson") == pytest.approx(4 * (beta + 1) / ((beta + 2) * (beta ** 2 + 2 * beta + 2)),
                                                  rel=1e-3)
    # The table states the kit's exact figure for the design as it is (V_A included).
    panel = ComparePanel(basic(), wilson())
    row = table(panel)["β_F sensitivity (β/I) dI/dβ, all β_F together"]
    assert row[0].startswith(f"{beta_sensitivity(panel.evaluation('A')):+.3g}")


def test_a_mosfet_side_says_it_has_no_beta():
    mos = kit.design("mos_mirror", "nmos", i_ref="100u", v_supply="15 V", v_load="5 V")
    panel = ComparePanel(basic(), mos)
    row = table(panel)["β_F sensitivity (β/I) dI/dβ, all β_F together"]
    assert row[1] == "no bipolar transistor" and row[2] == ""
    # The gain plot holds the bipolar design's curve only; with no bipolar design there is no gain tab.
    assert "β_F" in panel.tabs.titles and len(panel.sources["B_beta"].data["beta"]) == 0
    assert list(panel.sources["A_beta"].data["i_out"]) == list(panel.sides["A"].plot_data.columns["beta"]["i_out"])
    assert panel.switch("A", topology="mos_mirror")
    assert "β_F" not in panel.tabs.titles and len(panel.tabs.children) == 2


def test_each_design_is_edited_through_its_own_panel(both):
    assert both.update("B", i_ref="120u")
    design = wilson(i_ref="120u")
    assert both.design("B") == design and both.design("A") == basic()
    assert table(both)["output current I_out"][1] == headline(kit.evaluate(design))["I_out"]
    # The overlaid curve of B is B's panel's own sweep, scaled to the shared axis.
    shown = both.sources["B_load"].data
    assert list(shown["i_out"]) == list(both.sides["B"].plot_data.columns["load"]["i_out"])
    # A bad value: the side says why once and keeps its last good design.
    assert not both.update("B", i_ref="-3u")
    assert both.design("B") == design and "i_ref" in both.message("B")
    assert both.sides["B"].message_line.value  # shown beside B's values
    assert both.update("B", i_ref="100u")


def test_worst_case_rows_are_the_analysis_of_each_design(both):
    both.run_worst_case()
    rows = table(both)
    for k, side in enumerate("AB"):
        result = worst_case(both.design(side), TAIL_SPEC)
        method = result.methods[result.decided_by]
        assert rows["margin to the spec"][k] == f"{method.margin:+.2%}"
        assert rows["verdict"][k] == ("spec met" if result.met else "spec not met")
        key = next(r for r in rows if r.startswith("worst case ("))
        assert rows[key][k] == f"{format_quantity(method.low, 'A', 4)} … {format_quantity(method.high, 'A', 4)}"
    # A change makes that side's result stale: it is not shown for the new design.
    assert both.update("A", v_load="6 V")
    rows = table(both)
    key = next(r for r in rows if r.startswith("worst case ("))
    assert rows[key][0] == "not run" and rows[key][1] != "not run"
    assert "changed" in both.status.value
    assert both.update("A", v_load="5 V")


def test_switching_one_side_keeps_the_other(both):
    assert both.switch("A", polarity="pnp")
    assert both.design("A").polarity == "pnp" and both.design("B").polarity == "npn"
    assert both.switch("A", polarity="npn")


def test_a_design_panel_opens_a_comparison_from_where_it_is():
    panel = DesignPanel(basic(), TAIL_SPEC)
    assert panel.update(i_ref="90u")
    pair = panel.compare(wilson())
    assert pair.design("A") == panel.design and pair.design("B") == wilson() and pair.spec is TAIL_SPEC
    assert pair.update("A", i_ref="100u") and panel.design.values["i_ref"] == pytest.approx(90e-6)


def test_legend_names_each_design_once_and_follows_a_switch():
    # Two entries, one per design, each naming its circuit (the edges are said in the title):
    # four entries ("A", "B", "A: compliance edges", ...) crowded the plot at 1280 px.
    panel = ComparePanel(basic(), wilson())
    for name, fig in panel.figures.items():
        (legend,) = fig.legend
        assert legend in fig.below  # under the plot, never over the curves
        labels = [item.label.value for item in legend.items]
        assert labels == ["A: Basic current mirror, NPN", "B: Wilson current mirror (three transistors), NPN"], name
        assert "compliance edges" in fig.title.text if name == "load" else True
    assert panel.switch("B", topology="cascode_mirror")
    labels = [item.label.value for item in panel.figures["temp"].legend[0].items]
    assert labels[1] == f"B: {kit.topologies.get('cascode_mirror').title}, NPN"


def test_table_keeps_each_number_with_its_unit(both):
    # A narrow column wrapped "T_j up to 25.3 / °C" at 1280 px: the space before a unit no longer breaks.
    both.run_worst_case()
    shown = both.table.value
    assert "\u00a0°C" in shown and "\u00a0µA" in shown
    assert not re.search(r"\d (?:[pnµmkM]?[AVWΩ]|°C|ppm/K)(?![A-Za-z])", shown)
    assert "Q2 at" in shown or "Q1 at" in shown or "Q3 at" in shown  # words still break as words


def test_spread_figure_saves_as_svg_too():
    from kit.analysis.spread import spread
    from kit.panels.spread import spread_figure

    fig = spread_figure(spread(basic(), beta=(80, 300)))
    assert {t.description for t in fig.tools} >= {TIPS["SVG"], TIPS["PNG"]}


def test_overlaid_plots_export_csv(both):
    rows = list(csv.reader(io.StringIO(both.csv("load"))))
    assert rows[0] == ["V_load A (V)", "I_out A (A)", "V_load B (V)", "I_out B (A)"]
    assert [float(r[1]) for r in rows[1:]] == pytest.approx(list(both.sides["A"].plot_data.columns["load"]["i_out"]))
    with pytest.raises(kit.DesignError, match="name"):
        both.csv("histogram")


@pytest.mark.skipif(CHROMIUM is None, reason="needs Debian's chromium")
def test_overlaid_plot_saves_as_svg(both):
    text = both.svg("temp")
    assert ET.fromstring(text).tag == "{http://www.w3.org/2000/svg}svg"  # W3C SVG 1.1 root element
    assert "ambient temperature" in text and "I_out" in text


def test_record_text_is_escaped_in_the_comparison():
    # Kinds of hostile text a web page's attacker uses (common practice of web security, no source).
    hostile = '<img src=x onerror="alert(1)"><script>alert(2)</script> $x^2$'
    panel = ComparePanel(basic(title=hostile), wilson(title="<b>B</b>"))
    shown = panel.names["A"].value + panel.names["B"].value + panel.table.value
    assert "<img" not in shown and "<script" not in shown and "<b>" not in shown
    assert "&lt;img" in shown and "&lt;b&gt;B" in shown
    assert f'<span class="{NO_MATH_CLASS}">' in shown  # the equation is never typeset


# -- exports of the design panel: SVG of every plot, CSV of the worst-case plots ----------------

needs_chromium = pytest.mark.skipif(CHROMIUM is None, reason="needs Debian's chromium")


@pytest.fixture(scope="module")
def spec_panel():
    panel = DesignPanel(basic(), TAIL_SPEC)
    panel.worst.run()
    return panel


@needs_chromium
def test_every_plot_saves_as_svg_offline(spec_panel):
    for name in ("load", "sensitivity", "histogram"):
        text = spec_panel.svg(name)
        root = ET.fromstring(text)  # well-formed SVG (W3C SVG 1.1: root element svg in its namespace)
        assert root.tag == "{http://www.w3.org/2000/svg}svg"
        assert "I_out" in text or "Q1" in text  # the axis or factor words are drawn as text
    for fig in list(spec_panel.figures.values()) + list(spec_panel.worst.figures.values()):
        exports = [t for t in fig.tools if t.name in ("svg", "csv") or type(t).__name__ == "SaveTool"]
        assert {t.description for t in exports} == {TIPS["SVG"], TIPS["PNG"], TIPS["CSV"]}
        # Each export has an icon of its own: PNG and CSV no longer look alike.
        assert len({t.icon for t in exports}) == 3 and all(t.icon.startswith("data:image/svg+xml") for t in exports)


def test_worst_case_plots_export_their_numbers(spec_panel):
    result = spec_panel.worst.result
    rows = list(csv.reader(io.StringIO(spec_panel.csv("histogram"))))
    assert rows[0] == ["I_out bin low (A)", "I_out bin high (A)", "samples"]
    counts, edges = result.methods["Monte Carlo"].arrays["histogram"].coarse(40)
    assert [int(r[2]) for r in rows[1:]] == [int(c) for c in counts]
    assert float(rows[1][0]) == pytest.approx(edges[0])
    budget = list(csv.reader(io.StringIO(spec_panel.csv("budget"))))
    assert budget[0][0] == "factor" and len(budget) == len(result.budget) + 1
    swings = {b.label: b.swing for b in result.budget}
    assert all(float(r[2]) == pytest.approx(swings[r[0]]) for r in budget[1:])


def test_worst_case_csv_before_a_run_says_why():
    panel = DesignPanel(basic(), TAIL_SPEC)
    with pytest.raises(kit.DesignError, match="run the worst case first"):
        panel.csv("budget")


# -- stress inside the spec box in the worst-case view ----------------------------------------------

def test_stress_view_shows_the_analysis_per_part_and_the_faults(spec_panel):
    result = spec_panel.worst.result
    shown = spec_panel.worst.stress.value
    assert result.stress and result.faults
    for s in result.stress:
        assert f"<b>{s.part}</b>" in shown
        assert format_quantity(s.power, "W", 3) in shown
        if s.kind != "resistor":
            assert f"junction {format_temperature(s.junction_temperature, 3)}" in shown
    assert "bipolar transistor, NPN" in shown
    for fault in result.faults:
        assert fault.fault in shown
        assert ("survives" in shown) or ("does NOT survive" in shown)
    # Every point quoted lies inside the spec's load range (never beyond it).
    for volts in re.findall(r"V_load ([\d.]+) V", shown):
        assert 2.0 <= float(volts) <= 10.0


def test_stress_view_says_when_a_part_is_over_its_rating_and_a_fault_kills_it():
    # A 20 mA LED-string sink from 24 V with the transistor taking the rest (our own scenario).
    design = kit.design("divider_source", "npn", r1="33k", r2="10k", r_e="150", v_supply="24 V", v_load="12 V")
    panel = DesignPanel(design, Spec(20e-3, 0.10, v_load=(6.0, 20.0), temp=(273.15, 333.15)))
    result = panel.worst.run()
    q1 = next(s for s in result.stress if s.part == "Q1")
    shown = panel.worst.stress.value
    if q1.rating_margin < 0:
        assert f"over the derated allowance by {-q1.rating_margin:.1%}" in shown
    else:
        assert f"{q1.rating_margin:.1%} of the derated allowance left" in shown
    shorted = next(f for f in result.faults if f.fault == "output shorted")
    assert ("does NOT survive" in shown) == (shorted.survives is False)
    # The usual cautions where a part gets hot enough to burn (kit.report.worstcase.heat_cautions).
    from kit.report.worstcase import heat_cautions
    from kit.report.tables import escape

    assert all(escape(c) in shown for c in heat_cautions(result))
    assert heat_cautions(result)  # this scenario is hot: the view must carry a caution


def test_stress_view_speaks_mosfet_words():
    design = kit.design("mos_mirror", "nmos", i_ref="100u", v_supply="15 V", v_load="5 V", title="<b>x</b>")
    panel = DesignPanel(design, Spec(100e-6, 0.10, v_load=(2.0, 10.0)))
    panel.worst.run()
    shown = panel.worst.stress.value
    assert "MOSFET, NMOS" in shown and "bipolar" not in shown and "<b>x</b>" not in shown


# -- the standard-value search starts from the present design -------------------------------------

def test_search_starts_from_the_design_as_it_is_now():
    spec = Spec(100e-6, 0.10, v_load=(2.0, 10.0), resistor_tolerance=0.01)
    start = kit.design("divider_source", "npn", r1="47k", r2="6k8", r_e="3k9", v_supply="15 V", v_load="6 V",
                       temp=310.0, title="my tail")
    panel = DesignPanel(start, spec)
    assert panel.update(**{"Q1.beta_f": 150})  # the designer's own part
    result = panel.search.run()
    assert result is not None and result.candidates
    expected = synthesize(spec, start=panel.design, topologies=["divider_source"], polarities=["npn"])
    assert [c.design for c in result.candidates] == [c.design for c in expected.candidates]
    best = result.candidates[0].design
    # What the search does not size is kept from the present design (not the defaults).
    assert best.devices["Q1"].beta_f == 150 and best.temp == 310.0 and best.title == "my tail"
    assert best.values["v_supply"] == 15.0 and best.values["v_load"] == 6.0
    fresh = synthesize(spec, topologies=["divider_source"], polarities=["npn"]).candidates[0].design
    assert fresh.devices["Q1"].beta_f != 150  # without the start the typical part is used


# -- in a real browser, on a laptop screen ---------------------------------------------------------

LAPTOP = {"width": 1280, "height": 800}
SHOTS = ROOT / "artifacts" / "panel"
NOTEBOOK_CELL = """import kit
from kit.analysis.spec import Spec
from kit.panels import ComparePanel
tail = dict(i_ref="100u", v_supply="15 V", v_load="5 V")
both = ComparePanel(kit.design("basic_mirror", "npn", n_area=1, title="tail as a basic mirror", **tail),
                    kit.design("wilson_mirror", "npn", title="tail as a Wilson mirror", **tail),
                    Spec(100e-6, 0.05, v_load=(2.0, 10.0), temp=(273.15, 343.15), beta={"npn": (80, 300)}))
both"""
# A hot LED-string sink of our own: 20 mA from 24 V, a spec over load and ambient.
STRESS_CELL = """import kit
from kit.analysis.spec import Spec
from kit.panels import DesignPanel
panel = DesignPanel(kit.design("divider_source", "npn", r1="33k", r2="10k", r_e="150", v_supply="24 V",
                               v_load="12 V", title="LED string sink"),
                    Spec(20e-3, 0.10, v_load=(6.0, 20.0), temp=(273.15, 333.15)))
panel"""

_OUTSIDE = """(viewport) => {
    const panel = document.querySelector('.biasbook-compare') || document.querySelector('.biasbook-panel');
    const out = [];
    for (const e of [panel, ...panel.querySelectorAll('*')]) {
        const r = e.getBoundingClientRect();
        if (r.width === 0 || r.height === 0 || getComputedStyle(e).visibility === 'hidden') continue;
        if (e.closest('.lm-mod-hidden')) continue;
        if (r.left < -0.5 || r.right > viewport.width + 0.5) {
            out.push(`${e.tagName}.${e.className} ${Math.round(r.left)}..${Math.round(r.right)}: ` +
                     `${(e.innerText || '').slice(0, 40)}`);
        }
    }
    return out;}"""

_TOOLTIPS = """() => { const out = [];
    const walk = (root) => { for (const e of root.querySelectorAll('*')) {
        if (e.classList && e.classList.contains('bk-Tooltip') && e.getBoundingClientRect().width > 0) {
            const c = (e.shadowRoot && e.shadowRoot.querySelector('.bk-tooltip-content'))
                      || e.querySelector('.bk-tooltip-content');
            if (c) out.push(c.innerText); }
        if (e.shadowRoot) walk(e.shadowRoot); } };
    walk(document); return out.join('\\n');}"""


# A Bokeh toolbar button by its tooltip (the buttons live in shadow roots): its centre, or every title seen.
_BUTTON = """(title) => { const seen = [];
    const walk = (root) => { for (const e of root.querySelectorAll('*')) {
        if (e.title) { const r = e.getBoundingClientRect(); seen.push(e.title + '@' + Math.round(r.top) + ',' + Math.round(r.width));
            if (e.title === title && r.width > 0 && r.top >= 0 && r.bottom <= window.innerHeight)
                return {x: r.left + r.width / 2, y: r.top + r.height / 2}; }
        if (e.shadowRoot) { const found = walk(e.shadowRoot); if (found) return found; } }
        return null; };
    return walk(document.querySelector('.biasbook-compare') || document.querySelector('.biasbook-panel')) || {seen: seen.join('|')}; }"""


@pytest.fixture(scope="module")
def lab(tmp_path_factory):
    """A JupyterLab server on a folder holding one comparison notebook (stopped by its process id)."""
    import nbformat

    folder = tmp_path_factory.mktemp("compare-notebooks")
    notebook = nbformat.v4.new_notebook(cells=[nbformat.v4.new_code_cell(NOTEBOOK_CELL)])
    notebook.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    nbformat.write(notebook, folder / "compare.ipynb")
    notebook.cells = [nbformat.v4.new_code_cell(STRESS_CELL)]
    nbformat.write(notebook, folder / "stress.ipynb")
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")]))
    with lab_server(folder, env, tmp_path_factory.mktemp("lab") / "server.log") as url:
        yield url


def _scroll_to(page, selector_js):
    page.evaluate(f"() => {selector_js}.scrollIntoView({{block: 'start'}})")
    time.sleep(1)


def _compare_text(page):
    """The comparison's text as read; a number's no-break space before its unit read as a space."""
    return page.evaluate("() => document.querySelector('.biasbook-compare').innerText").replace("\u00a0", " ")


@pytest.mark.browser
@needs_chromium
def test_comparison_fits_a_laptop_and_answers_in_the_browser(lab):
    from playwright.sync_api import sync_playwright

    SHOTS.mkdir(parents=True, exist_ok=True)
    errors = []
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport=LAPTOP, accept_downloads=True)
            page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
            page.on("pageerror", lambda e: errors.append(str(e)))
            run_notebook(page, lab, "compare.ipynb", file_browser=True)
            page.locator(".biasbook-compare").first.wait_for(timeout=180_000)
            time.sleep(2)
            assert page.locator(".jp-FileBrowser").first.is_visible()
            panel = page.locator(".biasbook-compare").first
            _scroll_to(page, "document.querySelector('.biasbook-compare')")
            page.screenshot(path=str(SHOTS / "compare-table.png"))
            assert not page.evaluate(_OUTSIDE, LAPTOP)

            # The table holds both designs' numbers as the kit gives them.
            a = kit.evaluate(basic())
            text = _compare_text(page)
            assert headline(a)["I_out"] in text and headline(kit.evaluate(wilson()))["I_out"] in text

            # Type a value into B's current: the table follows with the kit's number for B.
            fields = page.locator(".biasbook-compare input[type=text]")
            shown = [k for k in range(fields.count()) if fields.nth(k).input_value() == "100 µA"]
            assert len(shown) == 2, "one i_ref field per design"
            field = fields.nth(shown[1])
            field.fill("120u")
            field.press("Enter")
            expected = headline(kit.evaluate(wilson(i_ref="120u")))["I_out"]
            page.wait_for_function(f"() => document.querySelector('.biasbook-compare').innerText"
                                   f".replace(/\\u00a0/g, ' ').includes({json.dumps(expected)})", timeout=60_000)

            # The worst case of both against the spec, on request.
            panel.locator("button", has_text="check both against the spec").click()
            page.wait_for_function("() => document.querySelector('.biasbook-compare').innerText"
                                   ".includes('margin to the spec') && !document.querySelector("
                                   "'.biasbook-compare').innerText.includes('Running')", timeout=120_000)
            time.sleep(1)
            text = _compare_text(page)
            assert text.count("spec met") + text.count("spec not met") >= 2
            _scroll_to(page, "document.querySelector('.biasbook-compare')")
            page.screenshot(path=str(SHOTS / "compare-worst.png"))

            # The overlaid curves: both designs hover with units; SVG and CSV saved in the page.
            _scroll_to(page, "document.querySelector('.biasbook-compare .lm-TabBar')")
            page.screenshot(path=str(SHOTS / "compare-plots.png"))
            assert not page.evaluate(_OUTSIDE, LAPTOP)
            box = page.evaluate("""() => { const e = document.querySelector(
                '.biasbook-compare .widget-tab-contents > :not(.lm-mod-hidden)');
                const r = e.getBoundingClientRect(); return {x: r.left, y: r.top, w: r.width, h: r.height}; }""")
            tip = ""
            for fx in (0.5, 0.4, 0.6, 0.3, 0.7):
                page.mouse.move(box["x"] + fx * min(box["w"], 560), box["y"] + 0.4 * min(box["h"], 300))
                time.sleep(0.4)
                tip = page.evaluate(_TOOLTIPS)
                if tip:
                    break
            assert re.search(r"design:\s*[AB]", tip) and re.search(r"I_out:\s*[\d.]+ µA", tip) \
                and re.search(r"V_load:\s*[-\d.]+ V", tip), tip
            button = page.evaluate(_BUTTON, TIPS["SVG"])
            assert "x" in button, button
            with page.expect_download() as download:
                page.mouse.click(button["x"], button["y"])
            svg = Path(download.value.path()).read_text()
            root = ET.fromstring(svg)
            assert root.tag == "{http://www.w3.org/2000/svg}svg" and "I_out" in svg
            with page.expect_download() as download:
                panel.locator(f'[title="{TIPS["CSV"]}"]:visible').first.click()
            head = Path(download.value.path()).read_text().splitlines()[0]
            assert head == "V_load A (V),I_out A (A),V_load B (V),I_out B (A)"

            # The gain plot: both mirrors' currents against β_F, inside the screen.
            panel.locator(".lm-TabBar-tab", has_text="β_F").first.click()
            time.sleep(1.5)
            _scroll_to(page, "document.querySelector('.biasbook-compare .lm-TabBar')")
            page.screenshot(path=str(SHOTS / "compare-beta.png"))
            assert not page.evaluate(_OUTSIDE, LAPTOP)

            # The inputs of both designs, side by side, inside the screen.
            _scroll_to(page, "Array.from(document.querySelectorAll('.biasbook-compare .widget-html'))"
                             ".find(e => e.innerText.startsWith('Values of each design'))")
            page.screenshot(path=str(SHOTS / "compare-inputs.png"))
            assert not page.evaluate(_OUTSIDE, LAPTOP)
            assert not [e for e in errors if "Failed to load resource" not in e], errors
        finally:
            browser.close()


@pytest.mark.browser
@needs_chromium
def test_worst_case_tab_shows_stress_and_saves_svg_in_the_browser(lab):
    from playwright.sync_api import sync_playwright

    SHOTS.mkdir(parents=True, exist_ok=True)
    errors = []
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport=LAPTOP, accept_downloads=True)
            page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
            page.on("pageerror", lambda e: errors.append(str(e)))
            run_notebook(page, lab, "stress.ipynb", file_browser=True)
            panel = page.locator(".biasbook-panel").first
            panel.wait_for(timeout=180_000)
            panel.locator(".lm-TabBar-tab", has_text="worst case").first.click()
            time.sleep(1)
            panel.locator("button", has_text="check against the spec").click()
            page.wait_for_function("() => document.querySelector('.biasbook-panel').innerText"
                                   ".includes('Fault cases')", timeout=120_000)
            time.sleep(2)
            _scroll_to(page, "Array.from(document.querySelectorAll('.biasbook-panel p'))"
                             ".find(e => e.innerText.startsWith('Stress inside the spec box'))")
            page.screenshot(path=str(SHOTS / "worst-stress.png"))
            assert not page.evaluate(_OUTSIDE, LAPTOP)
            text = page.evaluate("() => document.querySelector('.biasbook-panel').innerText")
            assert "bipolar transistor, NPN" in text and "junction" in text and "output shorted" in text
            # The histogram's SVG button, in reach on the toolbar (not folded into a menu).
            _scroll_to(page, "document.querySelector('.biasbook-panel .widget-tab-contents "
                             "> :not(.lm-mod-hidden) .bk-Figure, .biasbook-panel .widget-tab-contents "
                             "> :not(.lm-mod-hidden) .jupyter-widgets.bk-root')")
            page.evaluate("() => window.scrollBy(0, -120)")
            button = page.evaluate(_BUTTON, TIPS["SVG"])
            if "x" not in button:  # below the fold: bring the plots up
                page.mouse.wheel(0, 300)
                time.sleep(1)
                button = page.evaluate(_BUTTON, TIPS["SVG"])
            assert "x" in button, button
            with page.expect_download() as download:
                page.mouse.click(button["x"], button["y"])
            svg = Path(download.value.path()).read_text()
            assert ET.fromstring(svg).tag == "{http://www.w3.org/2000/svg}svg"
            assert "Monte Carlo" in svg or "Error budget" in svg  # the plot's own title, drawn as text
            # ... and its numbers as CSV, from the same toolbar.
            button = page.evaluate(_BUTTON, TIPS["CSV"])
            assert "x" in button, button
            with page.expect_download() as download:
                page.mouse.click(button["x"], button["y"])
            head = Path(download.value.path()).read_text().splitlines()[0]
            assert head in ("I_out bin low (A),I_out bin high (A),samples",
                            "factor,share of the summed swings (%),swing of I_out alone (A)"), head
            assert not [e for e in errors if "Failed to load resource" not in e], errors
        finally:
            browser.close()
