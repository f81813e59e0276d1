"""The reviewer's plots (kit/review/plots.py): what each draws is the kit's exact numbers, drawn for paper.

Reference checks:
* the tempco of an emitter-degenerated source is about -(dV_BE/dT)/V_E with
  dV_BE/dT about -2 mV/K (common practice; Sedra & Smith, Microelectronic
  Circuits, BJT biasing, from memory) -- so the bars must add up to a total of
  that size and sign;
* a tempco budget is the chain rule: the mechanisms' contributions add up to
  the exact total (derived here: d ln I/dT = sum over p of d ln I/dp · dp/dT).
"""

from __future__ import annotations

import numpy as np
import pytest

import kit
from kit.analysis.spec import Spec
from kit.analysis.worstcase import worst_case
from kit.review.plots import budget_figure, dissipation_figure, load_figure, review_figures, tempco_figure


@pytest.fixture(scope="module")
def tail():
    design = kit.design("divider_source", "npn", r1="36k", r2="12k", r_e="1k6", v_supply="12 V", v_load="7 V")
    spec = Spec(i_target=kit.evaluate(design).i_out, tolerance=0.05, v_load=(4.0, 10.0),
                temp=(273.15, 323.15), beta={"npn": (120.0, 300.0)}, samples=400, seed=3)
    return design, kit.evaluate(design), spec, worst_case(design, spec)


def _source(fig):
    return next(r.data_source for r in fig.renderers if hasattr(r, "data_source"))


def test_tempco_bars_add_up_to_the_exact_total_of_the_right_size(tail):
    design, ev, _, _ = tail
    fig = tempco_figure(ev)
    data = _source(fig).data
    assert data["name"][-1] == "total (exact)" and data["value"][-1] == pytest.approx(ev.tempco * 1e6)
    # chain rule (derived here): the mechanisms add up to the total
    assert sum(data["value"][:-1]) == pytest.approx(ev.tempco * 1e6, rel=1e-6, abs=1e-3)
    # one bar per mechanism, never one per part
    assert not any(" of Q" in name for name in data["name"])
    # common practice: -(dV_BE/dT)/V_E with -2 mV/K; V_E = I_E R_E
    v_e = ev.i_out * (1 + 1 / design.devices["Q1"].beta_f) * design.values["r_e"]
    hand = 2e-3 / v_e * 1e6
    assert 0.5 * hand < data["value"][-1] < 1.5 * hand
    assert fig.toolbar_location is None


def test_budget_bars_are_the_worst_cases_swings_in_the_designs_unit(tail):
    _, _, spec, worst = tail
    fig = budget_figure(worst)
    data = _source(fig).data
    entries = sorted(worst.budget, key=lambda b: b.swing)
    assert list(data["name"]) == [b.label for b in entries]
    assert 1e-3 <= spec.i_target < 1  # a 1.42 mA source: its plots are in mA
    np.testing.assert_allclose(data["value"], [b.swing / 1e-3 for b in entries])
    assert "(mA)" in fig.xaxis[0].axis_label
    assert sum(b.share for b in worst.budget) == pytest.approx(1.0)
    assert "load voltage" in data["name"] and "ambient temperature" in data["name"]


def test_load_curve_passes_through_the_design_point_and_marks_both_edges(tail):
    design, ev, spec, _ = tail
    fig = load_figure(design, ev, spec, points=81)
    line = fig.renderers[0].data_source.data
    x, y = np.asarray(line["x"]), np.asarray(line["y"])
    inside = (x > ev.compliance.low.voltage) & (x < ev.compliance.high.voltage)
    assert np.all(np.isfinite(y[inside]))
    assert np.interp(design.values["v_load"], x, y) == pytest.approx(ev.i_out / 1e-3, rel=1e-3)
    labels = [m.text for m in fig.center if type(m).__name__ == "Label"]
    assert any(ev.compliance.low.describe() in t for t in labels)
    assert any(ev.compliance.high.describe() in t for t in labels)


def test_dissipation_curve_is_v_ce_times_current_at_the_design_point(tail):
    design, ev, spec, _ = tail
    fig = dissipation_figure(design, ev, spec, points=81)
    line = fig.renderers[0].data_source.data
    p = ev.parts["Q1"].dissipation
    assert np.interp(design.values["v_load"], line["x"], line["y"]) == pytest.approx(p / 1e-3, rel=2e-3)


def test_review_figures_in_print_order(tail):
    design, ev, spec, worst = tail
    titles = [f.title.text for f in review_figures(design, ev, spec, worst)]
    assert titles[0].startswith("I_out across compliance") and titles[1].startswith("Dissipation")
    assert titles[2].startswith("Tempco") and titles[3].startswith("Error budget")
    assert titles[4].startswith("Monte Carlo")
