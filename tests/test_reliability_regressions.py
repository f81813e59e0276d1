"""Regressions of the reliability findings: each test is named after what it guards.

Every design here is a scenario invented for these tests (several were found
by the seeded fuzz run of ``tests/test_fuzz.py``).  Outside references are
named beside the checks that use them.  Warnings are errors (pyproject), so
a test that evaluates a design also guards against NumPy warnings escaping.
"""

from __future__ import annotations

import math
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import scipy.stats

import kit
from kit.analysis.spec import Spec
from kit.analysis.streaming import wilson_interval
from kit.analysis.synthesis import synthesize
from kit.analysis.worstcase import worst_case
from kit.devices import KINDS
from kit.errors import ConvergenceError, DesignError, OperatingPointError, ParameterError
from kit.report import text as report_text

ROOT = Path(__file__).resolve().parents[1]
BJT = KINDS["bjt"]
NPN = BJT.typical("npn")


def _params(model):
    """A part's parameters as the 1-point arrays a kind's numeric methods read."""
    return type("P", (), {k: np.array([v]) for k, v in model.values.items()})()


def _arrays(**values):
    return {k: np.array([v], dtype=float) for k, v in values.items()}


# -- item 2: no physically impossible point accepted -------------------------

def test_current_gain_falling_through_zero_with_temperature_is_refused_naming_beta_tc():
    # beta_F(T) = beta_F (T/T0)^m (1 + TC (T - T0)) reaches zero at T0 + 1/|TC|
    # for a negative linear coefficient: 100 K above 25 degC at TC = -1 %/K.
    d = kit.design("divider_source", devices={"Q1": {"beta_tc": -0.01}}, temp=420.0)
    with pytest.raises(ParameterError) as caught:
        kit.evaluate(d)
    assert caught.value.parameter == "Q1.beta_tc"
    assert "420 K" in caught.value.message and "β_F(T) > 0" in caught.value.message


def test_current_gain_below_its_zero_is_fine_below_that_temperature():
    # Same part 50 K above T0: beta still positive, the design evaluates.
    ev = kit.evaluate(kit.design("divider_source", devices={"Q1": {"beta_tc": -0.01}}, temp=348.15))
    assert ev.i_out > 0


def test_zener_voltage_going_negative_with_temperature_is_refused_naming_tc_z():
    # V_Z(T) = 1.5 V - 20 mV/K x 122 K < 0: the previous kit accepted it (I_out 3.9 nA).
    d = kit.design("zener_source", devices={"D1": {"v_z0": 1.5, "tc_z": -0.02}}, temp=420.0)
    with pytest.raises(ParameterError) as caught:
        kit.evaluate(d)
    assert caught.value.parameter == "D1.tc_z"
    assert "V_Z(T) > 0" in caught.value.message


def test_hot_transistor_passing_only_leakage_at_negative_vbe_is_cut_off_not_active():
    # V_BE < 0 and I_B < 0: what flows is I_S/beta_R leakage of a large hot part.
    j = _arrays(v_be=-0.05, v_bc=-5.0, v_ce=4.95, i_c=2e-7, i_b=-1e-7)
    assert BJT.regions(j, _params(NPN), 400.0, "vce_sat")[0] == "cutoff"
    assert BJT.margins(j, _params(NPN), 400.0, "vce_sat")["cutoff"][0] < 0


def test_transistor_above_vce_sat_without_collector_current_is_cut_off():
    # Collector junction forward biased (0.25 V) but V_CE = 0.3 V > V_CE(sat)
    # = 0.2 V and I_C = 1 pA, below the kit's 0.1 nA cut-off.
    j = _arrays(v_be=0.55, v_bc=0.25, v_ce=0.3, i_c=1e-12, i_b=1e-14)
    assert BJT.regions(j, _params(NPN), 300.0, "vce_sat")[0] == "cutoff"
    assert BJT.margins(j, _params(NPN), 300.0, "vce_sat")["cutoff"][0] < 0


def test_negative_early_factor_is_outside_the_transistor_law():
    # 1 + V_CE/V_A < 0 for V_CE < -V_A (Early, Proc. IRE 40, 1952: the factor
    # is a linearisation about V_CE > 0).
    law = BJT.domain({"v_ce": np.array([5.0, -120.0])},
                     {"beta": np.array([200.0, 200.0]), "V_A": np.array([100.0, 100.0])})
    label, margin = law["v_a"]
    assert "Early" in label
    assert margin[0] > 0 and margin[1] < 0


def test_every_law_domain_enters_the_margins_that_compliance_reads(monkeypatch):
    from kit.analysis.evaluation import model_of
    from kit.model.solve import solve_points

    d = kit.design("divider_source")
    points = solve_points(model_of(d), d.parameters() | {"v_load": np.array([4.0, 8.0])})
    margins = points.margins()
    assert np.all(margins["Q1", "v_a"] == math.inf) and np.all(margins["Q1", "beta_tc"] == math.inf)
    # A law that leaves its domain at one point makes that point outside every limit.
    original = type(BJT).domain

    def leaving(self, j, op):
        law = original(self, j, op)
        label, margin = law["v_a"]
        return law | {"v_a": (label, np.where(j["v_ce"] < 5.0, -1.0, margin))}

    monkeypatch.setattr(type(BJT), "domain", leaving)
    worst, keys = points.worst_margin()
    assert worst[0] == -math.inf and keys[0] == ("Q1", "v_a")
    assert points.cause_text("Q1", "v_a").startswith("has a negative Early factor")


# -- item 3: no NaN in accepted results ---------------------------------------

def test_ideal_early_voltage_in_the_cascoded_source_gives_forms_without_nan():
    # The previous kit: "invalid value encountered in divide" (inf/inf) in an R_out form.
    ev = kit.evaluate(kit.design("cascoded_source", devices={"Q1": {"v_a": math.inf}, "Q2": {"v_a": math.inf}}))
    assert all(not math.isnan(v) for v in ev.r_out_forms.values())
    assert math.isinf(ev.r_out_forms["r_out_cascode"])  # beta r_o with r_o -> inf
    assert all(not math.isnan(e.value) and not math.isnan(e.error) for e in ev.ledger)


def test_ideal_early_voltage_result_goes_to_json_and_text():
    import json

    ev = kit.evaluate(kit.design("vbe_reference_source", devices={"Q1": {"v_a": math.inf},
                                                                  "Q2": {"v_a": math.inf}}))
    assert "NaN" not in json.dumps(ev.to_dict())
    assert "nan" not in report_text(ev).lower()


def test_evaluate_json_of_an_ideal_part_exits_zero(tmp_path):
    record = tmp_path / "ideal.toml"
    record.write_text(
        'biasbook_record = 2\ntitle = "ideal output transistors"\n[circuit]\ntopology = "basic_mirror"\n'
        'polarity = "npn"\n[values]\ni_ref = "1 mA"\ni_ref_tc = 0\nn_area = 1\n'
        'v_supply = "12 V"\nv_load = "6 V"\n[devices.Q1]\nv_a = "inf"\n[devices.Q2]\nv_a = "inf"\n', encoding="utf-8")
    run = subprocess.run([sys.executable, "-m", "kit.cli", "evaluate", "--json", str(record)],
                         capture_output=True, text=True, cwd=ROOT)
    assert run.returncode == 0, run.stderr
    assert "NaN" not in run.stdout and "Traceback" not in run.stderr


# -- item 4: refusals name the right parameter ----------------------------------

def test_load_voltage_far_outside_compliance_is_the_v_load_error_with_its_range():
    # The previous kit: ConvergenceError "design point"; a nearby outside voltage
    # got the v_load error with the range.  Both must say the same range.
    far = kit.design("opamp_bjt_source", v_load=-50.0)
    near = kit.design("opamp_bjt_source", v_load=0.0)
    with pytest.raises(OperatingPointError) as far_error:
        kit.evaluate(far)
    with pytest.raises(OperatingPointError) as near_error:
        kit.evaluate(near)
    assert far_error.value.parameter == near_error.value.parameter == "v_load"
    assert far_error.value.valid == near_error.value.valid
    assert re.fullmatch(r"[-\d.e]+ … [-\d.e]+ V", far_error.value.valid)


def test_supply_too_low_is_named_as_the_supply():
    # 1 V under a 33k/10k divider leaves 0.23 V on the base: the supply is the cause,
    # not the load voltage (the previous kit: "v_load = 8.0: outside compliance").
    with pytest.raises(OperatingPointError) as caught:
        kit.evaluate(kit.design("divider_source", v_supply=1.0))
    assert caught.value.parameter == "v_supply"
    assert caught.value.valid.startswith("≥")


def test_opamp_output_swing_limit_names_the_swing_parameter():
    d = kit.design("opamp_bjt_source", devices={"U1": {"v_oh": 1.0, "v_ol": 0.5}})
    with pytest.raises(OperatingPointError) as caught:
        kit.evaluate(d)
    assert caught.value.parameter == "U1.v_oh"
    assert "output swing" in caught.value.message


@pytest.mark.parametrize("resistor, tcr, temp, t_ref", [("r_e", -4.5e-3, 480.0, 250.0),
                                                         ("r1", 4.5e-3, 160.0, 450.0)])
def test_resistance_reaching_zero_through_its_tcr_names_the_tcr(resistor, tcr, temp, t_ref):
    # R (1 + TCR (T - T_ref)) (IEC 60115-1 TCR convention, from memory) <= 0 here;
    # the previous kit: a NumPy warning or "the exact solve did not converge".
    d = kit.design("divider_source", tcr={resistor: tcr}, temp=temp, t_ref=t_ref)
    with pytest.raises(ParameterError) as caught:
        kit.evaluate(d)
    assert caught.value.parameter == f"tcr_{resistor}"
    assert "negative resistance" in caught.value.message


# -- item 5: no NumPy warnings escape evaluate ----------------------------------

# Found by the fuzz run; each warned from a declared start or a closed form
# ("divide by zero", "invalid value in log") under the previous kit.
WILD = [
    ("zener_diode_source", "npn", {
        "r_feed": 437026.64524100017, "r_e": 117246598.26515418, "v_supply": 1.9364468828202652,
        "v_load": 509.45372186952864, "temp": 326.36186375386274, "tcr": {"r_e": 0.003511161565545969},
        "devices": {"Q1": {"beta_f": 21.74441278216788, "v_a": 180.8431094209784,
                           "i_s": 2.2596089156168057e-10, "beta_tc": -0.02674505676036927,
                           "beta_temp_exponent": -4.341245396610864, "beta_r": 0.06102210430881146},
                    "D2": {"i_s": 3.414119256197944e-20, "n": 2.02476377909385},
                    "D1": {"v_z0": 36.80110970093383, "r_z": 3.8873955822483417, "tc_z": 0.4428285003629199}}}),
    ("wilson_mirror", "npn", {
        "i_ref": 0.002429742168378773, "i_ref_tc": 0.019529246577831946, "v_supply": 12.799226122757403,
        "v_load": -137.57270880430372, "temp": 234.23567518229044,
        "devices": {"Q2": {"beta_f": 1.4859627685558865, "v_a": 19.02183502982569,
                           "i_s": 1.5567942390668762e-11, "beta_tc": -0.041825513210237045,
                           "beta_temp_exponent": -4.692087464672607, "beta_r": 115.69936659412313}}}),
    ("widlar_source", "pnp", {
        "i_ref": 0.00025057987864918636, "i_ref_tc": -0.010082340924044546, "r_e": 0.2648423046920204,
        "n_area": 0.2237606023811997, "v_supply": 4.718292392274638, "v_load": -710.5343852112185,
        "temp": 412.6905114669124}),
    ("beta_helper_mirror", "npn", {
        "i_ref": 0.008017116337189208, "i_ref_tc": 0.01269410695221879, "n_area": 1.1994843834997617,
        "v_supply": 683.1952192351814, "v_load": -385.611327377984, "temp": 327.69347864508575,
        "devices": {"Q3": {"beta_f": 3.0517609124545193, "v_a": 4706.038658639641,
                           "i_s": 1.215325995167076e-10, "beta_tc": -0.03582573799894369,
                           "beta_temp_exponent": 4.096328777330383, "beta_r": 507.7798525459234}}}),
]


@pytest.mark.parametrize("key, polarity, values", WILD, ids=[w[0] for w in WILD])
def test_wild_design_is_refused_by_name_without_numpy_warnings(key, polarity, values):
    from kit.model.vocabulary import vocabulary

    with pytest.raises(DesignError) as caught:  # warnings are errors here (pyproject)
        kit.evaluate(kit.design(key, polarity, **values))
    assert not isinstance(caught.value, ConvergenceError)
    assert caught.value.parameter in vocabulary(kit.topology(key), polarity)


# -- item 6: tracebacks and wrong exit codes ---------------------------------------

def _wide_load_record(tmp_path):
    text = (ROOT / "examples" / "cascoded_source-rtd-excitation.toml").read_text(encoding="utf-8")
    text = re.sub(r"(?m)^\[spec\].*", "", text) if "[spec]" in text else text
    text += ('\n[spec]\ncurrent = "1 mA"\ntolerance = "50 %"\nv_load = ["-300 V", "300 V"]\n'
             'samples = 100\n')
    path = tmp_path / "wide.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_check_of_a_legal_record_with_a_wide_load_range_ends_in_a_verdict(tmp_path):
    # The previous kit: LinAlgError from least squares on a diverged point, exit 1.
    run = subprocess.run([sys.executable, "-m", "kit.cli", "check", str(_wide_load_record(tmp_path))],
                         capture_output=True, text=True, cwd=ROOT)
    assert "Traceback" not in run.stderr and "LinAlgError" not in run.stderr
    assert run.returncode == 1  # a verdict: the spec is not met across ±300 V
    assert "spec NOT met" in run.stdout


def test_thermal_runaway_in_a_worst_case_names_the_thermal_resistance():
    from kit.record import load_record

    rec = load_record(ROOT / "examples" / "basic_mirror_rref-led-string-sink.toml")
    spec = Spec(1e-3, 0.5, v_load=(5.0, 9.0))
    with pytest.raises(OperatingPointError) as caught:
        worst_case(rec.design, spec, methods=("extreme-value",))
    assert caught.value.parameter.endswith(".theta_ja")
    assert "thermal runaway" in caught.value.message


@pytest.mark.parametrize("method", ["Monte Carlo", "RSS"])
def test_worst_case_with_one_statistical_method_gives_verdict_text_and_dict(method):
    d = kit.design("divider_source")
    wc = worst_case(d, Spec(0.95e-3, 0.30, v_load=(4.0, 10.0), samples=200), methods=(method,))
    assert wc.decided_by == method
    assert isinstance(wc.met, bool)
    assert method in wc.verdict()
    assert method in report_text(wc)
    assert set(wc.to_dict()["methods"]) == {method}


def test_unknown_worst_case_method_is_refused_naming_methods():
    with pytest.raises(ParameterError) as caught:
        worst_case(kit.design("divider_source"), Spec(1e-3, 0.3), methods=("corner sweep",))
    assert caught.value.parameter == "methods"
    assert "Monte Carlo" in caught.value.valid


def test_synthesis_for_a_polarity_no_chosen_topology_has_says_why():
    with pytest.raises(ParameterError) as caught:
        synthesize(Spec(1e-3, 0.2, v_load=(2.0, 8.0)), topologies=["divider_source"], polarities=["nmos"])
    assert caught.value.parameter == "polarities"
    assert "npn" in caught.value.valid


def test_synthesis_over_mixed_topologies_lists_those_without_the_polarity():
    result = synthesize(Spec(2e-3, 0.2, v_load=(2.0, 8.0), resistor_tolerance=0.05),
                        topologies=["divider_source", "mos_mirror"], polarities=["nmos"])
    assert "divider_source/nmos" in result.infeasible
    assert "no nmos form" in result.infeasible["divider_source/nmos"][0]


@pytest.mark.parametrize("samples", [1e5, np.int64(500), np.int32(500), np.float64(2000.0)])
def test_spec_takes_sample_counts_as_whole_floats_and_numpy_integers(samples):
    assert Spec(1e-3, 0.3, samples=samples).samples == int(samples)


def test_spec_refuses_a_fractional_sample_count():
    with pytest.raises(ParameterError) as caught:
        Spec(1e-3, 0.3, samples=2.5)
    assert caught.value.parameter == "samples"


def test_numpy_scalars_are_accepted_as_design_values():
    d = kit.design("divider_source", r_e=np.float32(2200.0), v_supply=np.int64(12),
                   devices={"Q1": {"beta_f": np.float32(150.0)}}, temp=np.float64(300.0))
    assert d.values["r_e"] == 2200.0 and d.values["v_supply"] == 12.0
    assert d.devices["Q1"].beta_f == 150.0 and d.temp == 300.0
    assert all(type(v) is float for v in d.values.values())


# -- item 10: small ones ----------------------------------------------------------

def test_error_text_written_to_a_file_has_no_colour_codes(tmp_path):
    err = tmp_path / "err.txt"
    with open(err, "w", encoding="utf-8") as stream:
        run = subprocess.run([sys.executable, "-m", "kit.cli", "evaluate", str(tmp_path / "missing.toml")],
                             stdout=subprocess.DEVNULL, stderr=stream, cwd=ROOT)
    written = err.read_text(encoding="utf-8")
    assert run.returncode != 0 and written.startswith("biasbook:")
    assert "\x1b[" not in written


@pytest.mark.parametrize("successes, trials", [(0, 10), (10, 10), (0, 2000), (2000, 2000), (37, 120)])
def test_monte_carlo_yield_interval_is_wilson_score(successes, trials):
    # Wilson (1927), J. Amer. Statist. Assoc. 22, 209: (p + z²/2n ± z sqrt(p(1-p)/n + z²/4n²)) / (1 + z²/n),
    # z from scipy.stats; it keeps a width at 0 and at n successes.
    z = scipy.stats.norm.ppf(0.975)
    p = successes / trials
    centre = (p + z * z / (2 * trials)) / (1 + z * z / trials)
    half = z * math.sqrt(p * (1 - p) / trials + z * z / (4 * trials * trials)) / (1 + z * z / trials)
    low, high = wilson_interval(successes, trials, 0.95)
    assert low == pytest.approx(max(0.0, centre - half), abs=1e-12)
    assert high == pytest.approx(min(1.0, centre + half), abs=1e-12)
    assert high - low > 1e-4  # never the 1e-152 of a normal approximation at 0 % or 100 %


def test_wilson_interval_of_none_in_ten_matches_the_published_value():
    # 0/10 at 95 %: 0 … 0.2775 (Newcombe, Stat. Med. 17, 1998, 857, table of
    # worked intervals; from memory) = z²/(n + z²).
    assert wilson_interval(0, 10)[1] == pytest.approx(0.2775, abs=1e-4)


def test_monte_carlo_at_full_yield_reports_a_meaningful_interval():
    wc = worst_case(kit.design("divider_source"), Spec(1e-3, 0.5, v_load=(4.0, 10.0), samples=500),
                    methods=("Monte Carlo",))
    mc = wc.to_dict()["methods"]["Monte Carlo"]
    low, high = mc["detail"]["yield_interval"]
    assert high == 1.0 and 0.99 < low < 0.999


def test_design_takes_t_rise_among_a_parts_parameters_like_a_record():
    d = kit.design("divider_source", devices={"Q1": {"t_rise": "5 K", "i_s": "2e-14 A", "v_a": "80 V"}})
    assert d.t_rise == {"Q1": 5.0}
    assert d.devices["Q1"].i_s == 2e-14 and d.devices["Q1"].v_a == 80.0


def test_design_refuses_two_different_t_rise_for_one_part():
    with pytest.raises(ParameterError) as caught:
        kit.design("divider_source", devices={"Q1": {"t_rise": 5.0}}, t_rise={"Q1": 7.0})
    assert caught.value.parameter == "Q1.t_rise"


def test_device_parameter_text_with_a_wrong_unit_names_the_part_parameter():
    with pytest.raises(ParameterError) as caught:
        kit.design("divider_source", devices={"Q1": {"i_s": "1e-14 V"}})
    assert caught.value.parameter == "Q1.i_s"


def test_a_hand_formula_outside_its_own_domain_is_named_not_weighed_as_nan():
    """Found by the fuzz run (1000 designs per topology): a Widlar with a resistor reference on a
    0.63 V supply.  Widlar's relation I_REF = (V_CC - V_BE(on))/R_REF with V_BE(on) = 0.65 V
    (common practice, no source) asks for the logarithm of a negative current there; the exact
    solve still has a point (a few nA).  The ledger leaves the form out and says why, with no NaN
    and no NumPy warning (warnings are errors here)."""
    design = kit.design("widlar_resistor_reference", "npn", r_ref=3.62, r_e=166e6, n_area=1.77,
                        v_supply=0.63, v_load=1.65, temp=280.3,
                        devices={"Q2": {"v_a": math.inf, "beta_f": 3.17}})
    ev = kit.evaluate(design)
    assert 0 < ev.i_out < 1e-6
    assert all(math.isfinite(e.value) and math.isfinite(e.error) for e in ev.ledger)
    undefined = dict(ev.ledger_undefined)
    assert any("Widlar" in label for label in undefined)
    assert all("no real value" in why for why in undefined.values())
    assert "no real value at this design point" in report_text(ev)
    assert ev.to_dict()["ledger_undefined"]


def test_a_nearly_singular_newton_step_warns_nothing():
    # Found by the fuzz run (150 per topology): a hot (88 °C) basic mirror with an ideal
    # Q1 (V_A = inf) and a steep β_F tempco; on the way to the self-heated steady state a
    # wild iterate met a nearly singular Jacobian and the step overflowed with a NumPy
    # warning.  Such a point stays put that step and is judged by its residual.
    design = kit.design("basic_mirror", "npn", i_ref=452e-6, n_area=2.63, v_supply=7.88, v_load=4.1, temp=361.08,
                        devices={"Q1": {"beta_f": 255.9, "v_a": math.inf, "i_s": 1.054e-14, "beta_tc": 0.01161,
                                        "beta_temp_exponent": 1.5, "beta_r": 1.465},
                                 "Q2": {"beta_f": 173.6, "v_a": 99.15, "i_s": 7.146e-15, "beta_tc": -0.006616,
                                        "beta_temp_exponent": 1.497, "beta_r": 2.247}})
    try:
        ev = kit.evaluate(design)
    except DesignError as err:  # a refusal is a sound answer too, if it names a parameter
        assert err.parameter
    else:
        assert math.isfinite(ev.i_out) and ev.compliance.contains(4.1)
