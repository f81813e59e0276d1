"""Kernel-side tests of the interactive panels (kit.panels), driven through their widgets.

Every check compares what the panel shows with what the kit itself computes
for the new input (kit.evaluate, kit.analysis.evaluation.sweep, the analyses), so a
panel that drew stale data, the wrong design or its own physics would fail.
E-series values are those of IEC 60063:2015 (E12 and E24 tables).  The
designs and specs are scenarios of our own.
"""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("ipywidgets")
pytest.importorskip("jupyter_bokeh")

import kit  # noqa: E402
from kit.analysis.spec import Spec  # noqa: E402
from kit.analysis.temperature import temperature_sweep  # noqa: E402
from kit.errors import DesignError, OperatingPointError  # noqa: E402
from kit.analysis.evaluation import sweep  # noqa: E402
from kit.panels import DesignPanel  # noqa: E402
from kit.panels.curves import HEATED_POINTS  # noqa: E402
from kit.quantities import celsius_to_kelvin, format_quantity  # noqa: E402
from kit.report.evaluation import headline  # noqa: E402

# A 1 mA sink for a resistive bridge, collector at 4-10 V (our own scenario).
BASE = dict(r1="33k", r2="10k", r_e="2k2", v_supply="12 V", v_load="8 V")


@pytest.fixture(scope="module")
def base():
    return kit.design("divider_source", "npn", **BASE)


@pytest.fixture(scope="module")
def shared(base):
    return DesignPanel(base)


@pytest.fixture
def panel(shared, base):
    """The shared divider panel, put back to the base design and default settings."""
    assert shared.load(base)
    assert shared.configure(series="E24", common_beta=True, self_heating=False)
    assert shared.design == base and shared.message == ""
    return shared


def exact(points):
    """The exact current as a panel draws it: a gap where the solve did not converge."""
    return np.where(points.converged, points.i_out, np.nan)


def snapshot(panel):
    return (panel.design, panel.headline_text(),
            {name: {k: np.array(v, dtype=object) for k, v in s.data.items()} for name, s in panel.sources.items()})


def assert_same_snapshot(before, after):
    assert after[0] == before[0]
    assert after[1] == before[1]
    for name, columns in before[2].items():
        assert after[2][name].keys() == columns.keys(), name
        for key, value in columns.items():
            assert len(after[2][name][key]) == len(value), (name, key)
            for a, b in zip(after[2][name][key], value):
                np.testing.assert_array_equal(np.asarray(a), np.asarray(b), err_msg=f"{name}.{key}")


def assert_plots_match_kit(panel, design):
    """Every curve source equals the kit's own sweep of ``design`` over the source's x values."""
    src = panel.sources
    scale = panel.plot_data.scale[0]
    ev = kit.evaluate(design)
    v = src["load"].data["v_load"]
    assert v[0] < ev.compliance.low.voltage and v[-1] > ev.compliance.high.voltage  # across and beyond
    points = sweep(design, "v_load", v)
    np.testing.assert_array_equal(src["load"].data["i_out"], exact(points))
    np.testing.assert_array_equal(src["load"].data["y"], exact(points) / scale)
    forms = points.model.closed_forms(points.q)
    assert list(src["load_forms"].data["key"]) == [s.key for s in design.structure.closed_forms]
    for key, ys in zip(src["load_forms"].data["key"], src["load_forms"].data["i_out"]):
        np.testing.assert_array_equal(ys, forms[key])
    np.testing.assert_array_equal(src["load_edges"].data["x"], [ev.compliance.low.voltage, ev.compliance.high.voltage])
    assert src["load_point"].data["i_out"][0] == ev.i_out
    gains = [n for n, m in design.devices.items() if "beta_f" in m.numbers()]
    if gains:
        shown = design.structure.output_part
        b = src["beta"].data["beta"]
        ratio = b / design.devices[shown].beta_f
        overrides = {f"{n}.beta_f": design.devices[n].beta_f * ratio for n in gains}
        np.testing.assert_array_equal(src["beta"].data["i_out"],
                                      exact(sweep(design, "v_load", np.full(b.size, design.values["v_load"]),
                                                  **overrides)))
    t = src["temp"].data["temp"]
    np.testing.assert_array_equal(src["temp"].data["i_out"], exact(sweep(design, "temp", t)))
    ranked = sorted((s for s in ev.sensitivities if s.parameter != "temp"), key=lambda s: abs(s.normalised))
    assert list(src["sensitivity"].data["name"]) == [s.parameter for s in ranked]
    np.testing.assert_array_equal(src["sensitivity"].data["value"], [s.normalised for s in ranked])
    assert panel.figures["sensitivity"].y_range.factors == [s.parameter for s in ranked]
    # One bar per mechanism, each the sum of its parts' raw terms (a mirror's opposite I_S terms cancel).
    sums = {}
    for label, value in ev.tempco_budget:
        mechanism = label.rpartition(" of ")[0] or label
        sums[mechanism] = sums.get(mechanism, 0.0) + value
    bars = sorted(sums.values(), key=abs)
    np.testing.assert_allclose(src["tempco"].data["value"], [ev.tempco * 1e6] + [v * 1e6 for v in bars],
                               rtol=1e-12, atol=1e-9)
    assert len(src["tempco"].data["name"]) == len(sums) + 1
    return ev


# -- typing values ---------------------------------------------------------------------

def test_typing_an_rkm_resistor_updates_numbers_plots_and_ledger(panel, base):
    before = panel.headline_text()
    panel.fields["r_e"].text.value = "2k0"  # as typed into the field (observer fires)
    new = base.with_values(r_e=2000.0)
    assert panel.message == ""
    assert panel.design == new
    ev = kit.evaluate(new)
    text = panel.headline_text()
    assert text["I_out"] == format_quantity(ev.i_out, "A", 4) == headline(ev)["I_out"]
    assert text == headline(ev) and text != before
    assert text["I_out"] in panel.headline.value and text["compliance"] in panel.headline.value
    assert panel.fields["r_e"].text.value == "2 kΩ"
    assert_plots_match_kit(panel, new)
    for entry in ev.ledger:
        assert format_quantity(entry.value, "A", 5) in panel.ledger_html
        assert f"{entry.error:+.3%}" in panel.ledger_html
    assert "R_{E}" in panel.ledger_html and "$$" in panel.ledger_html
    assert "2 kΩ" in panel.schematic_html


def test_update_takes_text_and_numbers_through_the_same_path(panel, base):
    assert panel.update(r1="39 kΩ", v_supply=15)
    new = base.with_values(r1=39e3, v_supply=15.0)
    assert panel.design == new
    assert panel.headline_text() == headline(kit.evaluate(new))
    assert panel.fields["r1"].text.value == "39 kΩ" and panel.sliders["v_supply"].widget.value == 15.0


# -- E-series steppers ---------------------------------------------------------------------

def test_steppers_move_to_neighbouring_iec_60063_values(panel):
    field = panel.fields["r_e"]
    field.up.click()  # E24 (IEC 60063): 2.2 -> 2.4
    assert panel.design.values["r_e"] == 2400.0
    assert panel.headline_text() == headline(kit.evaluate(panel.design))
    field.down.click()
    field.down.click()  # 2.4 -> 2.2 -> 2.0
    assert panel.design.values["r_e"] == 2000.0
    field.down.click()  # 2.0 -> 1.8
    assert panel.design.values["r_e"] == 1800.0
    assert panel.update(r_e="2k3")  # off the series: the next values either side
    field.up.click()
    assert panel.design.values["r_e"] == 2400.0
    assert panel.update(r_e="2k3")
    field.down.click()
    assert panel.design.values["r_e"] == 2200.0
    panel.series_choice.widget.value = "E12"  # E12 (IEC 60063): 2.2 -> 2.7
    field.up.click()
    assert panel.design.values["r_e"] == 2700.0
    assert "E12" in field.up.tooltip


# -- sliders ---------------------------------------------------------------------------------

def test_temperature_slider_updates_every_plot_for_the_new_point(panel, base):
    load_before = panel.sources["load"].data["i_out"].copy()
    panel.sliders["temp"].widget.value = 85.0  # °C
    new = base.with_parameter("temp", celsius_to_kelvin(85.0))
    assert panel.design == new and panel.message == ""
    ev = assert_plots_match_kit(panel, new)
    assert panel.sources["temp_point"].data["x"][0] == pytest.approx(85.0)
    assert panel.sources["temp_point"].data["i_out"][0] == ev.i_out
    assert not np.array_equal(panel.sources["load"].data["i_out"], load_before, equal_nan=True)
    assert "85 °C" in panel.headline.value


def test_gain_slider_sets_every_transistor_and_moves_the_gain_plot(panel, base):
    panel.sliders["beta"].widget.value = 120.0
    new = base.with_parameter("Q1.beta_f", 120.0)
    assert panel.design == new
    assert_plots_match_kit(panel, new)
    beta = panel.sources["beta"].data["beta"]
    assert beta[0] == pytest.approx(60.0) and beta[-1] == pytest.approx(180.0)  # ±50 % without a spec
    assert panel.sources["beta_point"].data["x"][0] == 120.0


def test_load_slider_moves_the_point_along_an_unchanged_curve(panel, base):
    curve = panel.sources["load"].data["i_out"].copy()
    panel.sliders["v_load"].widget.value = 5.0
    new = base.with_values(v_load=5.0)
    assert panel.design == new
    ev = assert_plots_match_kit(panel, new)
    assert panel.sources["load_point"].data["x"][0] == 5.0
    assert panel.sources["load_point"].data["i_out"][0] == ev.i_out
    np.testing.assert_array_equal(panel.sources["load"].data["i_out"], curve)  # same compliance, same grid


# -- refused input ------------------------------------------------------------------------------

@pytest.mark.parametrize("text", ["abc", "-5k", "1e99"])
def test_bad_text_names_the_parameter_and_keeps_the_last_good_state(panel, base, text):
    with pytest.raises(DesignError) as refused:
        base.with_values(r_e=text)
    before = snapshot(panel)
    panel.fields["r_e"].text.value = text
    assert refused.value.parameter == "r_e"
    assert "r_e" in panel.message and refused.value.valid in panel.message
    assert str(refused.value) in panel.message  # the kit's own words, the value as it was read ...
    assert panel.message.count("r_e =") == 1  # ... said once
    assert refused.value.valid in panel.message_line.value.replace("&#x27;", "'")
    assert_same_snapshot(before, snapshot(panel))
    assert panel.fields["r_e"].text.value == "2.2 kΩ"  # the field shows the design again


def test_load_slider_stays_inside_compliance(panel, base):
    slider = panel.sliders["v_load"].widget
    c = kit.evaluate(base).compliance
    assert c.low.voltage <= slider.min < slider.max <= c.high.voltage
    assert slider.max > c.high.voltage - 0.2 and slider.min < c.low.voltage + 0.2  # rounded inward, not cut
    slider.value = slider.max  # the highest voltage it offers is accepted
    assert panel.message == "" and panel.design.values["v_load"] == slider.max


def test_load_voltage_outside_compliance_keeps_the_last_good_state(panel, base):
    outside = kit.evaluate(base).compliance.high.voltage + 1.0  # typed: beyond the high edge
    with pytest.raises(OperatingPointError) as refused:
        kit.evaluate(base.with_values(v_load=outside))
    before = snapshot(panel)
    assert not panel.update(v_load=outside)
    assert str(refused.value) in panel.message
    assert panel.message.count("v_load =") == 1  # the value is said once
    assert "v_load" in panel.message and refused.value.valid in panel.message
    assert_same_snapshot(before, snapshot(panel))
    assert panel.sliders["v_load"].widget.value == 8.0


def test_unknown_name_lists_the_valid_ones(panel):
    before = snapshot(panel)
    assert not panel.update(r_x=1.0)
    assert "r_x" in panel.message and "r_e" in panel.message and "v_load" in panel.message
    assert_same_snapshot(before, snapshot(panel))


def test_a_good_change_clears_the_message(panel):
    assert not panel.update(r_e="abc")
    assert panel.message
    assert panel.update(r_e="2k4")
    assert panel.message == "" and panel.message_line.value == ""


# -- settings, static figures, display ----------------------------------------------------------

def test_self_heating_curve_comes_from_the_temperature_sweep(panel, base):
    assert len(panel.sources["temp_heated"].data["i_out"]) == 0
    panel.heating_choice.widget.value = True
    t = panel.sources["temp"].data["temp"]
    heated = temperature_sweep(base, (t[0], t[-1]), points=HEATED_POINTS)
    np.testing.assert_array_equal(panel.sources["temp_heated"].data["i_out"], heated.i_out_heated)
    assert panel.design == base


def test_final_figures_are_fresh_copies_of_the_present_state(panel):
    assert panel.update(r_e="2k7")
    figures = panel.final_figures()
    assert set(figures) == set(panel.figures)
    for name, fig in figures.items():
        assert fig is not panel.figures[name]
        assert fig.xaxis.axis_label == panel.figures[name].xaxis.axis_label
    renderer = next(r for r in figures["load"].renderers if getattr(r.glyph, "x", None) == "v_load")
    np.testing.assert_array_equal(renderer.data_source.data["i_out"], panel.sources["load"].data["i_out"])
    heated = next(r for r in figures["temp"].renderers if r.data_source.data is not None
                  and len(r.data_source.data.get("i_out", [])) == HEATED_POINTS)
    assert np.all(np.isfinite(heated.data_source.data["i_out"]))


def test_a_bare_panel_shows_its_widget(panel):
    bundle = panel._repr_mimebundle_()
    assert bundle["application/vnd.jupyter.widget-view+json"]["model_id"] == panel.widget.model_id


# -- a second topology, and switching to it -------------------------------------------------------

def test_panel_works_for_a_current_mirror():
    mirror = kit.design("basic_mirror_rref", "npn")
    panel = DesignPanel(mirror)
    assert list(panel.fields) == [v.name for v in mirror.topology.values]
    panel.fields["r_ref"].text.value = "47k"
    new = mirror.with_values(r_ref=47e3)
    assert panel.design == new
    assert panel.headline_text() == headline(kit.evaluate(new))
    assert_plots_match_kit(panel, new)
    panel.common_choice.widget.value = False  # one gain slider per transistor
    assert set(panel.sliders) >= {"Q1.beta_f", "Q2.beta_f"}
    panel.sliders["Q1.beta_f"].widget.value = 90.0
    assert panel.design.devices["Q1"].beta_f == 90.0 and panel.design.devices["Q2"].beta_f == 200.0
    assert panel.headline_text() == headline(kit.evaluate(new.with_parameter("Q1.beta_f", 90.0)))


# -- spec views: worst case and standard-value search ------------------------------------------

@pytest.fixture(scope="module")
def spec():
    # 2 mA ± 20 % into 2-8 V with 5 % resistors (our own scenario).
    return Spec(2e-3, 0.20, v_load=(2.0, 8.0), resistor_tolerance=0.05, samples=100)


@pytest.fixture(scope="module")
def spec_panel(base, spec):
    return DesignPanel(base, spec)


def test_spec_sets_the_series_and_the_plot_ranges(spec_panel, spec):
    assert spec_panel.series == "E24"  # the series customary for ±5 % parts (common practice, no source)
    assert spec_panel.tabs.titles[-2:] == ("worst case", "standard values")
    assert "900 µA" not in spec_panel.headline.value and "1.6 mA" in spec_panel.headline.value  # 2 mA - 20 %


def test_synthesis_load_button_loads_the_candidate(spec_panel, base):
    panel = spec_panel
    assert panel.load(base)
    result = panel.search.run()
    assert result.candidates
    candidate = result.candidates[0].design
    # Each current keeps its unit on its line (it wrapped as "10.03 / mA" at 1280 px); the
    # circuit is named by its title, not its registry key.
    line = panel.search.rows.children[0].children[1].value
    assert format_quantity(result.candidates[0].nominal, "A", 4).replace(" ", "\u00a0") in line
    assert candidate.topology.title in line
    from kit.panels.worst import SynthesisView

    offer = SynthesisView(panel, panel.spec).status.value  # what the tab says before a search
    assert f"Tries {candidate.topology.title} (NPN)" in offer and candidate.topology.key not in offer
    panel.search.load_buttons[0].click()
    assert panel.design == candidate and panel.message == ""
    assert panel.headline_text() == headline(kit.evaluate(candidate))
    assert panel.fields["r_e"].text.value == format_quantity(candidate.values["r_e"], "Ω", 6)
    assert_plots_match_kit(panel, candidate)


def test_worst_case_view_draws_the_analysis_samples(spec_panel, base, spec):
    panel = spec_panel
    assert panel.load(base.with_values(r_e="1k"))
    panel.worst.button.click()
    result = panel.worst.result
    assert result.design == panel.design
    mc = result.methods["Monte Carlo"]
    counts = panel.worst.sources["histogram"].data["top"]
    # every valid point of every sample is in a bar (the kept samples are all of them here)
    assert sum(counts) == mc.detail["valid_points"] == int(mc.arrays["ok"].sum())
    valid = mc.arrays["current"][mc.arrays["ok"]] / 1e-3  # the spec's 2 mA is shown in mA
    lefts, rights = panel.worst.sources["histogram"].data["left"], panel.worst.sources["histogram"].data["right"]
    assert lefts[0] <= valid.min() and valid.max() < rights[-1] and len(counts) <= 40
    assert list(counts) == list(np.histogram(valid, bins=np.append(lefts, rights[-1]))[0])  # numpy as reference
    scale = 1e-3  # the spec's 2 mA is shown in mA
    np.testing.assert_allclose(panel.worst.sources["limits"].data["x"], np.array(spec.limits) / scale)
    assert f"{mc.detail['yield']:.2%}" in panel.worst.figures["histogram"].title.text
    assert [b.label for b in sorted(result.budget, key=lambda b: b.share)] == \
        list(panel.worst.sources["budget"].data["name"])
    for m in result.methods.values():
        assert format_quantity(m.low, "A", 4) in panel.worst.table.value
    assert panel.update(r_e="1k1")
    assert "changed" in panel.worst.status.value


def test_showing_the_panel_resends_drawings_changed_before_any_view(panel):
    # A BokehModel's first drawing is what a view opened later starts from.
    from IPython.core.interactiveshell import InteractiveShell

    first = panel.bokeh["load"].render_bundle
    assert panel.update(r_e="3k3")
    assert panel.bokeh["load"].render_bundle is first  # an update patches, it does not resend
    InteractiveShell.instance().display_formatter.format(panel)  # what a bare `panel` in a cell does
    resent = panel.bokeh["load"].render_bundle
    assert resent is not first
    fresh = type(panel.bokeh["load"])._model_to_traits(panel.figures["load"])
    roots = [next(iter(b["docs_json"].values()))["roots"] for b in (first, resent, fresh)]
    assert roots[1] == roots[2] != roots[0]  # the present drawing, not the first one
    InteractiveShell.instance().display_formatter.format(panel)
    assert panel.bokeh["load"].render_bundle is resent  # nothing changed: nothing resent


def test_a_load_step_reuses_the_edges_and_matches_a_fresh_evaluation(panel, base):
    assert panel.update(v_load=5.0)
    fresh = kit.evaluate(base.with_values(v_load=5.0))
    shown = panel.evaluation
    assert shown.compliance == fresh.compliance and shown.hottest == fresh.hottest
    assert shown.i_out == fresh.i_out and shown.r_out == fresh.r_out and shown.tempco == fresh.tempco
    assert [s.derivative for s in shown.sensitivities] == [s.derivative for s in fresh.sensitivities]
    # A change of anything but the load voltage searches the edges again.
    other = base.with_values(r_e="2k7")
    assert kit.evaluate(other, reuse=fresh).compliance == kit.evaluate(other).compliance


def test_typed_tolerance_reaches_the_field_and_the_worst_case_spec(spec_panel, base):
    assert spec_panel.load(base)
    assert spec_panel.update(r_e="4k7 2%")
    assert spec_panel.design.values["r_e"] == 4700.0
    assert spec_panel.fields["r_e"].text.value == "4.7 kΩ 2 %"
    assert spec_panel.worst.spec.tolerances["r_e"] == pytest.approx(0.02)
    assert not spec_panel.update(r_e="4k7 60%") and "tolerance of r_e" in spec_panel.message


def test_switching_topology_carries_the_shared_values(panel, base):
    assert panel.switch(topology="widlar_source")
    assert panel.design.topology.key == "widlar_source"
    assert panel.design.values["v_supply"] == base.values["v_supply"]
    assert "r_e" in panel.fields and panel.design.values["r_e"] == base.values["r_e"]
    assert panel.switch(topology="mos_mirror")
    assert panel.design.polarity == "nmos"  # npn has no MOSFET counterpart by that name: the sink's word
    assert not any("beta" in key for key in panel.sliders)
    assert "β_F" not in panel.tabs.titles
    assert all("β" not in w.description for w in panel.settings_box.children)


def test_every_plot_exports_its_numbers_as_csv(panel, base):
    import csv
    import io

    for name in ("load", "beta", "temp", "sensitivity", "tempco"):
        rows = list(csv.reader(io.StringIO(panel.csv(name))))
        assert len(rows) > 2, name
    rows = list(csv.reader(io.StringIO(panel.csv("load"))))
    v = np.array([float(r[0]) for r in rows[1:]])
    i = np.array([float(r[1]) if r[1] else np.nan for r in rows[1:]])
    np.testing.assert_allclose(i, exact(sweep(base, "v_load", v)), rtol=1e-12)
    header = list(csv.reader(io.StringIO(panel.csv("sensitivity"))))[0]
    assert header == ["parameter", "S (normalised)", "dI_out/dp"]
    assert any(r[2].endswith("A/Ω") for r in list(csv.reader(io.StringIO(panel.csv("sensitivity"))))[1:])


def test_every_new_notebook_opens_a_panel_with_the_records_spec():
    from kit.review.forprint import SCREEN_ONLY_TAG
    from kit.review.notebook import new_notebook

    for top in kit.list_topologies():
        design = kit.design(top.key)
        notebook = new_notebook(design, record_path="design.toml")
        cells = [c for c in notebook.cells if "DesignPanel(design, spec, network=thermal)" in c.source]
        assert len(cells) == 1, top.key
        assert SCREEN_ONLY_TAG in cells[0].metadata["tags"]  # on screen, not in the printed review
        # ``spec`` is the record's (or None): defined before the panel cell.
        before = "\n".join(c.source for c in notebook.cells[:notebook.cells.index(cells[0])])
        assert "spec = getattr(record, 'spec', None)" in before
        assert "thermal = getattr(record, 'thermal', None)" in before  # the record's [thermal], or None


def test_panel_shares_heat_as_the_records_thermal_section_says():
    """A mirror that runs away at its own load voltage as two packages opens as the record's coupled dual.

    Physics (from memory, common practice): two transistors on one die share heat, so
    the diode-connected one's V_BE falls with the output one's and the loop
    gain theta * dP/dT_j drops; the kit's runaway edge moves up (tested in
    test_thermal_coupling.py against the hand loop-gain condition).
    """
    from pathlib import Path

    from kit.record import load_record

    record = load_record(Path(__file__).resolve().parents[1] / "examples" / "basic_mirror_rref-led-string-sink.toml")
    assert record.thermal is not None
    with pytest.raises(DesignError, match="thermal"):
        DesignPanel(record.design)  # each part in its own package: the design point runs away
    panel = DesignPanel(record.design, network=record.thermal)
    expected = kit.evaluate(record.design, network=record.thermal)
    assert panel.headline_text() == headline(expected)
    assert panel.update(v_load=panel.design.values["v_load"] * 0.9)
    assert panel.evaluation.thermal_network is record.thermal
    # Another circuit's Q1 and Q2 are other transistors: the network stays with its own circuit.
    assert panel.switch("wilson_mirror") and panel.evaluation.thermal_network is None


def test_ledger_rows_hold_the_numbers_and_the_closed_form_sits_under_them():
    # At 1280 px a six-column ledger pushed value, error and tempco off the screen behind a
    # wide closed form: each row now holds the numbers, the formula and assumptions go under it.
    import re
    from html import escape as html_escape
    from pathlib import Path

    from kit.panels.ledger import error_text, ledger_html
    from kit.record import load_record

    record = load_record(Path(__file__).resolve().parents[1] / "examples" / "spec-led-driver-passes.toml")
    ev = kit.evaluate(record.design)
    html = ledger_html(ev)
    rows = re.findall(r"<tr>(.*?)</tr>", html, re.S)
    for entry in ev.ledger:
        (row,) = [r for r in rows if f">{html_escape(entry.label)}</td>" in r]
        assert format_quantity(entry.value, "A", 5) in row
        assert error_text(entry.error) in row and format_quantity(entry.tempco, "ppm/K") in row
        assert "-0.000%" not in row and "+0.000%" not in row  # a tiny error keeps its digits
        assert "$$" not in row  # the formula is not in the row of numbers ...
        below = rows[rows.index(row) + 1]
        assert "colspan" in below and entry.latex in below  # ... but on the line under it
        assert "; ".join(entry.assumptions).split(" ")[0] in below
    assert html.count("min-width:100%;overflow-x:auto") == len(ev.ledger)  # each formula scrolls in its box


def test_load_legend_wraps_a_long_hand_formula_and_the_csv_keeps_it_whole():
    # A ledger label of 90 characters made the two-column legend wider than the plot at 1280 px.
    from pathlib import Path

    from kit.panels.curves import LEGEND_LINE
    from kit.record import load_record

    record = load_record(Path(__file__).resolve().parents[1] / "examples" / "zener_diode_source-rtd-excitation.toml")
    panel = DesignPanel(record.design)
    forms = panel.sources["load_forms"].data
    assert max(len(label) for label in forms["label"]) > LEGEND_LINE  # the case this is about
    for label, shown in zip(forms["label"], forms["legend"]):
        assert all(len(line) <= LEGEND_LINE for line in shown.split("\n")) or " " not in label
        assert shown.replace("\n", " ") == label
    header = panel.csv("load").splitlines()[0]
    assert all(f"{label} (A)" in header for label in forms["label"])  # whole, one line


def test_curve_legends_sit_under_the_plots_never_over_a_curve():
    # In the top-left corner the temperature legend hid the start of a falling curve
    # (the LED driver's -26 ppm/K); every curve plot keeps its legend below its frame.
    panel = DesignPanel(kit.design("divider_source"))
    for name in ("load", "beta", "temp"):
        fig = panel.figures[name]
        (legend,) = fig.legend
        assert legend in fig.below and legend not in fig.center, name


def test_tempco_bars_list_matched_parts_in_schematic_order():
    # The cascode mirror listed "current gain β_F (Q4, Q1, Q2, Q3)".
    panel = DesignPanel(kit.design("cascode_mirror", i_ref="200u", v_supply="12 V", v_load="1.6 V"))
    grouped = [n for n in panel.sources["tempco"].data["name"] if "," in n]
    assert grouped and all("(Q1, Q2, Q3, Q4)" in n for n in grouped), grouped


@pytest.mark.parametrize("key", ["divider_source", "mos_mirror", "wilson_mirror"])
def test_one_plot_alone_equals_its_part_of_all_plots(key):
    # The panel makes only the open tab's plot on a change (the others when opened): each
    # point of the batched sweep solves on its own, so a view made alone must be exactly
    # its part of the whole (internal consistency, no outside source).
    from kit.panels.curves import VIEW_SOURCES, VIEWS, Settings, plot_data

    design = kit.design(key)
    evaluation = kit.evaluate(design)
    whole = plot_data(design, evaluation, settings=Settings(points=40))
    for view in VIEWS:
        alone = plot_data(design, evaluation, settings=Settings(points=40), views=[view])
        assert set(alone.columns) == set(VIEW_SOURCES[view])
        assert alone.labels.get(view) == whole.labels.get(view)
        for name, columns in alone.columns.items():
            assert columns.keys() == whole.columns[name].keys()
            for column, value in columns.items():
                expected = whole.columns[name][column]
                if isinstance(value, list) and value and isinstance(value[0], np.ndarray):
                    assert all(np.array_equal(a, b, equal_nan=True) for a, b in zip(value, expected))
                elif isinstance(value, np.ndarray):
                    assert np.array_equal(value, expected, equal_nan=True), (view, name, column)
                else:
                    assert value == expected, (view, name, column)
