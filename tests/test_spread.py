"""The four questions of a current source (kit.analysis.spread) against hand formulas.

Scenarios are our own: a 250 µA sink mirror with a 1:3 area ratio, a
divider-biased sink with a deliberately stiff divider, a small MOS mirror.
"""

import json
import math

import pytest

import kit
from kit import report
from kit.analysis.spread import spread
from kit.errors import ParameterError

GRAY = "Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4, basic mirror (from memory)"


def _with(design, name, value, parts=("Q1", "Q2")):
    for part in parts:
        design = design.with_parameter(f"{part}.{name}", value)
    return design


@pytest.fixture(scope="module")
def mirror():
    """A 1:3 NPN sink mirror fed 250 µA, load at 5 V of a 12 V supply."""
    return kit.design("basic_mirror", "npn", i_ref=250e-6, n_area=3, v_supply=12, v_load=5)


def test_base_current_part_of_a_mirror_is_the_beta_formula(mirror):
    # I_out = N I_REF / (1 + (1 + N)/β) with V_A -> ∞ (source: GRAY); the
    # base-current part is that formula at the high gain minus at the low gain.
    ideal = _with(mirror, "v_a", math.inf)
    s = spread(ideal, beta=(60, 300))
    n, i_ref = 3, 250e-6
    expected = n * i_ref * (1 / (1 + (1 + n) / 300) - 1 / (1 + (1 + n) / 60))
    assert s.base_current_part == pytest.approx(expected, rel=1e-6)
    assert s.bipolar == ("Q1", "Q2")


def test_output_conductance_part_of_a_mirror_is_the_early_factor(mirror):
    # With the input side fixed, I_out ∝ 1 + V_CE2/V_A (source: GRAY, Early effect
    # of the output transistor): from 1 V to 9 V at V_A = 50 V.
    s = spread(_with(mirror, "v_a", 50.0), v_load=(1.0, 9.0))
    low, high = s.curves["nominal"][0], s.curves["nominal"][-1]
    assert high / low == pytest.approx((1 + 9 / 50) / (1 + 1 / 50), rel=1e-8)
    assert s.output_conductance_part == pytest.approx(high - low, rel=1e-12)
    assert s.load_range == (1.0, 9.0) and s.load_range_source == "given"


def test_tempco_with_beta_rising_adds_the_alpha_term(mirror):
    # From I_out = N I_REF/(1 + (1+N)/β) (GRAY): with an ideal reference and V_A -> ∞
    # the current does not depend on temperature when β is constant, and a β rising
    # at r per kelvin adds r (1+N)/(β + 1 + N) (differentiate the formula; derived here).
    ideal = _with(mirror, "v_a", math.inf)
    beta = ideal.parameters()["Q1.beta_f"]
    s = spread(ideal, beta_rise=0.004)
    assert abs(s.tempco_beta_constant) < 1e-9
    assert s.tempco_beta_rising == pytest.approx(0.004 * 4 / (beta + 4), rel=1e-6)
    assert s.beta_rise_law == "β rising linearly at +0.4 %/K"


def test_alpha_effect_alone_for_a_stiff_divider():
    # A stiff divider holds the emitter current, so I_out = α I_E moves with β only
    # through α = β/(β+1) (common practice, no source).  The divider loading left
    # (R_TH/((β+1) R_E) ≈ 0.13 % at β = 60) bounds the difference.
    d = kit.design("divider_source", "npn", r1="3k3", r2="1k", r_e="10k", v_supply=15, v_load=10)
    d = _with(d, "v_a", math.inf, parts=("Q1",))
    s = spread(d, beta=(60, 300))
    at_low = s.i_out_range[0]
    ratio = (at_low + s.base_current_part) / at_low
    alpha_ratio = (300 / 301) / (60 / 61)
    assert alpha_ratio - 1 > 0.013  # the effect is well above the tolerance below
    assert ratio == pytest.approx(alpha_ratio, abs=2e-3)


def test_spread_agrees_with_the_exact_evaluation_at_the_corners():
    # Each figure against kit.evaluate at the same point (the exact solve).
    d = kit.design("divider_source", "npn", r1="36k", r2="12k", r_e="1k6", v_supply=15, v_load=9)
    s = spread(d, beta=(80, 400), v_load=(4.0, 14.0), supply=(13.0, 17.0))

    def current(beta=None, **values):
        changed = d.with_values(**values) if values else d
        if beta is not None:
            changed = changed.with_parameter("Q1.beta_f", beta)
        return kit.evaluate(changed).i_out

    assert s.i_out == pytest.approx(current(), rel=1e-12)
    assert s.base_current_part == pytest.approx(current(400) - current(80), rel=1e-9)
    assert s.output_conductance_part == pytest.approx(current(v_load=14.0) - current(v_load=4.0), rel=1e-9)
    corners = [current(b, v_load=v) for b in (80, 400) for v in (4.0, 14.0)]
    assert s.i_out_range[0] == pytest.approx(min(corners), rel=1e-9)
    assert s.i_out_range[1] == pytest.approx(max(corners), rel=1e-9)
    assert s.supply_part == pytest.approx(current(v_supply=17.0) - current(v_supply=13.0), rel=1e-9)


def test_default_load_range_runs_from_the_low_edge_to_the_supply_for_a_sink(mirror):
    s = spread(mirror)
    assert s.load_range[0] == pytest.approx(s.compliance.low.voltage, rel=1e-9)
    assert s.load_range[1] == 12.0
    assert s.beta_source.startswith("not given")


def test_default_load_range_of_a_source_starts_at_zero_volts():
    s = spread(kit.design("basic_mirror", "pnp"))
    assert s.load_range[0] == 0.0
    assert s.load_range[1] == pytest.approx(s.compliance.high.voltage, rel=1e-9)
    assert "source" in s.load_range_source


def test_a_mos_only_design_has_no_gain_spread():
    s = spread(kit.design("mos_mirror", "nmos"))
    assert s.beta_range is None and s.bipolar == ()
    assert s.base_current_part == 0.0
    assert s.tempco_beta_rising == s.tempco_beta_constant
    assert "tempco" in report.text(s) and "β rising" not in report.text(s)


@pytest.mark.parametrize("kwargs, parameter", [
    ({"beta": (300, 60)}, "beta"),
    ({"beta": (0.5, 60)}, "beta"),
    ({"beta": "wide"}, "beta"),
    ({"beta_rise": 0.5}, "beta_rise"),
    ({"v_load": (0.0, 11.0)}, "v_load"),
    ({"supply": (20.0, 10.0)}, "supply"),
])
def test_bad_ranges_are_refused_with_the_parameter_named(mirror, kwargs, parameter):
    with pytest.raises(ParameterError) as err:
        spread(mirror, **kwargs)
    assert err.value.parameter == parameter


def test_json_carries_the_field_names_of_the_command(mirror):
    data = json.loads(json.dumps(spread(mirror, beta=(100, 300), supply=(10, 14)).to_dict()))
    assert set(data["compliance"]) >= {"low", "high"}
    assert set(data["beta"]) >= {"base_current_part", "output_conductance_part", "i_out_range"}
    assert set(data["tempco_ppm_per_k"]) >= {"beta_constant", "beta_rising"}
    assert data["supply"]["range"] == [10.0, 14.0]
    assert data["i_out"] > 0


def test_reports_escape_the_title_and_name_every_row():
    s = spread(kit.design("basic_mirror", "npn", i_ref=250e-6, title="<img src=x onerror=alert(1)>"))
    html = report.html(s)
    assert "<img" not in html and "&lt;img" in html
    text = report.text(s)
    for row in ("base-current part", "output-conductance part", "I_out range", "tempco, β rising"):
        assert row in text


def test_the_figure_draws_the_result_own_curves(mirror):
    from kit.panels.spread import spread_figure

    s = spread(mirror, beta=(100, 300))
    fig = spread_figure(s)
    lines = {r.name: r for r in fig.renderers if r.name}
    assert set(lines) == {"β low (100)", "β nominal", "β high (300)", "design point"}
    drawn = lines["β high (300)"].data_source.data["y"]
    assert list(drawn) == pytest.approx(list(s.curves["high"] * 1e6))  # µA at 250 µA × 3
    assert fig.legend[0] in fig.right  # beside the curves, never over them
