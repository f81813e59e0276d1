"""MOSFET square-law mirror against the published mirror relations and a hand-written solve.

Independent references, written here without kit code:

* square law with channel-length modulation ``I_D = (K/2)(V_GS - V_th)^2
  (1 + lambda V_DS)`` in saturation (Sedra & Smith, MOSFET chapter; Razavi,
  Design of Analog CMOS ICs, ch. 2 -- from memory), the input transistor's
  equation solved with ``scipy.optimize.brentq``;
* the mirror ratio ``I_out/I_REF = [(W/L)2/(W/L)1](1 + lambda V_DS2)/(1 + lambda
  V_GS1)`` and ``r_o = (1 + lambda V_DS)/(lambda I_D)`` (Razavi ch. 5 and ch. 2,
  from memory); compliance ``V_DS2 >= V_ov`` (Razavi ch. 5, from memory);
* threshold mismatch moves the ratio by ``-2 dV_th/V_ov`` to first order (Razavi
  ch. 5 / Pelgrom et al., IEEE JSSC 24, 1989 -- from memory);
* mobility ``∝ T^-mu_exp``, ``dV_th/dT = tc_vth`` (from memory); ``k/q`` from
  CODATA 2018 via ``scipy.constants``.

The designs are scenarios invented for these tests.  Checks every topology
shares (sensitivities and R_out by finite differences, the NMOS/PMOS mirror
image, random designs, drawings, example records) live in the contract tests.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

import kit
from wording import assert_no_bipolar_words
from kit.analysis.evaluation import model_of, sweep
from kit.errors import OperatingPointError, ParameterError
from kit.model.solve import solve_points

# an integrated-style pair of our own
INTEGRATED = {"k_prime": 180e-6, "w_over_l": 12.0, "v_th": 0.55, "lambda_clm": 0.06, "tc_vth": -1.8e-3}
VALUES = dict(i_ref=25e-6, w_ratio=3.0, v_supply=5.0, v_load=2.2)
POLARITIES = ("nmos", "pmos")


def mirror(polarity="nmos", m1=None, m2=None, **changes):
    conditions = {k: changes.pop(k) for k in ("temp", "t_ref") if k in changes}
    devices = {"M1": INTEGRATED | (m1 or {}), "M2": INTEGRATED | (m2 or {})}
    return kit.design("mos_mirror", polarity, devices=devices, **conditions, **(VALUES | changes))


def device_at_temperature(design, name):
    """K = k'(W/L)(T/T0)^-mu_exp and V_th(T) of one device (laws from memory, see above)."""
    d, t, t0 = design.devices[name], design.temp, design.t_ref
    scale = design.values["w_ratio"] if name == "M2" else 1.0
    return (scale * d.k_prime * d.w_over_l * (t / t0) ** -d.mu_exp, d.v_th + d.tc_vth * (t - t0),
            d.lambda_clm)


def reference(design):
    """(I_out, V_GS1) from the square law solved by brentq (M1 and M2 saturated)."""
    k1, vth1, lam1 = device_at_temperature(design, "M1")
    k2, vth2, lam2 = device_at_temperature(design, "M2")
    v = design.values
    i_ref = v["i_ref"] * (1 + v["i_ref_tc"] * (design.temp - design.t_ref))
    v_gs1 = brentq(lambda x: k1 / 2 * (x - vth1) ** 2 * (1 + lam1 * x) - i_ref, vth1, vth1 + 10.0,
                   xtol=1e-15, rtol=4 * np.finfo(float).eps)
    v_ds2 = v["v_load"] if design.polarity == "nmos" else v["v_supply"] - v["v_load"]
    return k2 / 2 * (v_gs1 - vth2) ** 2 * (1 + lam2 * v_ds2), v_gs1


def ledger(ev, key):
    return {e.key: e for e in ev.ledger}[key]


@pytest.fixture(scope="module")
def evaluations():
    return {p: kit.evaluate(mirror(p)) for p in POLARITIES}


# --- exact solve and the published ratio --------------------------------------------------

@pytest.mark.parametrize("polarity", POLARITIES)
@pytest.mark.parametrize("conditions", [{}, {"temp": 358.15}, {"temp": 248.15, "i_ref_tc": 3e-3}])
def test_exact_solve_matches_the_square_law(polarity, conditions):
    design = mirror(polarity, m2={"v_th": 0.56, "lambda_clm": 0.05}, **conditions)
    model = model_of(design)
    points = solve_points(model, design.parameters()).require()
    i_out, v_gs1 = reference(design)
    assert points.i_out[0] == pytest.approx(i_out, rel=1e-12)
    v_g = points.x[model.unknowns.index("V_g"), 0]
    assert (v_g if polarity == "nmos" else design.values["v_supply"] - v_g) == pytest.approx(v_gs1, rel=1e-13)
    assert points.in_good_region()[0]


@pytest.mark.parametrize("polarity", POLARITIES)
def test_ratio_with_channel_length_modulation(polarity, evaluations):
    # I_out/I_REF = [(W/L)2/(W/L)1](1 + lambda V_DS2)/(1 + lambda V_GS1) (Razavi ch. 5).
    ev = evaluations[polarity]
    t1, t2 = ev.parts["M1"].quantities, ev.parts["M2"].quantities
    lam = INTEGRATED["lambda_clm"]
    expected = VALUES["w_ratio"] * (1 + lam * t2["v_ds"]) / (1 + lam * t1["v_gs"])
    assert ev.i_out / VALUES["i_ref"] == pytest.approx(expected, rel=1e-13)


def test_ideal_ratio_is_exact_without_clm():
    # I_out = [(W/L)2/(W/L)1] I_REF for lambda -> 0 (Razavi ch. 5).
    for polarity in POLARITIES:
        ev = kit.evaluate(mirror(polarity, m1={"lambda_clm": 0.0}, m2={"lambda_clm": 0.0}))
        assert abs(ledger(ev, "ratio").error) < 1e-13


@pytest.mark.parametrize("polarity", POLARITIES)
def test_clm_ratio_form_error_is_that_of_one_refinement(polarity, evaluations):
    # The form takes V_ov1 from one fixed-point step u1 = g(u0) of u = g(u) =
    # sqrt(2 I_REF/(K1 (1 + lambda (V_th + u)))), started at u0 = sqrt(2 I_REF/K1).  With
    # g' = -(lambda/2) u/(1 + lambda V_GS) and u0 - u = u (sqrt(1 + lambda V_GS) - 1) the
    # ratio comes out high by (lambda^2 V_ov^2/2)(sqrt(1 + lambda V_GS) - 1)/(1 + lambda V_GS)^2
    # (derived here; ~ lambda^3 V_ov^2 V_GS/4 for small lambda V_GS).
    ev = evaluations[polarity]
    t1 = ev.parts["M1"].quantities
    lam, u, v_gs = INTEGRATED["lambda_clm"], t1["v_ov"], t1["v_gs"]
    estimate = lam ** 2 * u ** 2 / 2 * (math.sqrt(1 + lam * v_gs) - 1) / (1 + lam * v_gs) ** 2
    assert ledger(ev, "clm_ratio").error == pytest.approx(estimate, rel=0.02)


def test_threshold_mismatch_moves_the_ratio_by_twice_dvth_over_vov():
    # dI/I = -2 dV_th/V_ov to first order (Razavi ch. 5 / Pelgrom 1989, from memory).
    base = kit.evaluate(mirror())
    shift = 2e-3
    moved = kit.evaluate(mirror(m2={"v_th": INTEGRATED["v_th"] + shift}))
    v_ov = base.parts["M1"].quantities["v_ov"]
    ratio = moved.i_out / base.i_out - 1
    assert ratio == pytest.approx(-2 * shift / v_ov, abs=1.5 * (shift / v_ov) ** 2)


# --- output resistance, compliance --------------------------------------------------------

@pytest.mark.parametrize("polarity", POLARITIES)
def test_output_resistance_is_r_o2(polarity, evaluations):
    # r_o = (1 + lambda V_DS)/(lambda I_D) (Razavi ch. 2, from memory)
    ev = evaluations[polarity]
    t2 = ev.parts["M2"].quantities
    lam = INTEGRATED["lambda_clm"]
    assert ev.r_out == pytest.approx((1 + lam * t2["v_ds"]) / (lam * t2["i_d"]), rel=1e-10)
    assert ev.r_out_forms["r_out_ro2"] == pytest.approx(ev.r_out, rel=1e-10)


@pytest.mark.parametrize("polarity", POLARITIES)
def test_compliance_edges(polarity, evaluations):
    # Saturation edge V_DS2 = V_ov (Razavi ch. 5); the far edge is BV_DSS here (the tail
    # dissipates microwatts), named as M2's breakdown.
    ev = evaluations[polarity]
    v_ov = ev.parts["M1"].quantities["v_ov"]  # = M2's: matched thresholds, one gate node
    v_dd, bv = VALUES["v_supply"], ev.design.devices["M2"].bv_dss
    triode, breakdown = ((ev.compliance.low, ev.compliance.high) if polarity == "nmos"
                         else (ev.compliance.high, ev.compliance.low))
    assert (triode.part, triode.cause) == ("M2", "triode")
    assert (breakdown.part, breakdown.cause) == ("M2", "breakdown")
    assert "triode" in triode.text and "BV_DSS" in breakdown.text
    if polarity == "nmos":
        assert triode.voltage == pytest.approx(v_ov, abs=1e-5)
        assert breakdown.voltage == pytest.approx(bv, abs=1e-5)
    else:
        assert triode.voltage == pytest.approx(v_dd - v_ov, abs=1e-5)
        assert breakdown.voltage == pytest.approx(v_dd - bv, abs=1e-5)


@pytest.mark.parametrize("polarity", POLARITIES)
def test_load_sweep_across_compliance_converges_from_the_declared_start(polarity):
    # M1's law inverted at I_REF puts Newton next to the input node: a few steps at any
    # load voltage, triode and breakdown included (common practice, no source).
    ev = kit.evaluate(mirror(polarity))
    assert ev.points.model.started
    pts = sweep(ev.design, "v_load", np.linspace(ev.compliance.low.voltage - 5, ev.compliance.high.voltage + 5, 200))
    assert pts.converged.all() and pts.iterations.max() <= 6


@pytest.mark.parametrize("polarity", POLARITIES)
def test_tiny_reference_currents_converge_from_the_declared_start(polarity):
    # Down to 10 nA the input sits below threshold, on the continuation of the law: the
    # declared start still lands within a few Newton steps.
    design = mirror(polarity)
    currents = np.geomspace(1e-8, 1e-2, 61)
    pts = sweep(design, "i_ref", currents)
    assert pts.converged.all() and pts.iterations.max() <= 12


def test_a_reference_current_below_threshold_is_refused():
    # 20 nA into a discrete-size device: the input sits below V_th, where the kit calls the
    # device cut off instead of trusting its subthreshold continuation.
    design = kit.design("mos_mirror", i_ref=20e-9)
    with pytest.raises(OperatingPointError) as info:
        kit.evaluate(design)
    assert info.value.parameter in {"v_supply", "v_load"}
    regions = solve_points(model_of(design), design.parameters()).regions()
    assert regions["M1"][0] == "cutoff"


# --- words, bad input ---------------------------------------------------------------------------

@pytest.mark.parametrize("polarity", POLARITIES)
def test_mirror_speaks_mosfet_words(polarity, evaluations):
    # Nothing about a MOSFET mirror may be worded for a bipolar part (common practice, no source).
    ev = evaluations[polarity]
    s = ev.design.structure
    top = kit.topology("mos_mirror")
    assert top.polarities == POLARITIES and s.part("M2").polarity == polarity
    assert ev.regions == {"M1": "saturation", "M2": "saturation"}
    assert s.hand_parameters == ()
    assert_no_bipolar_words(ev, top)


@pytest.mark.parametrize("name, bad", [("w_ratio", 0.0), ("i_ref", -1e-6), ("v_supply", 0.0)])
def test_bad_values_name_the_parameter_and_range(name, bad):
    with pytest.raises(ParameterError) as info:
        kit.design("mos_mirror", **{name: bad})
    assert info.value.parameter == name and info.value.valid


def test_bjt_polarity_words_are_refused():
    with pytest.raises(ParameterError) as info:
        kit.design("mos_mirror", "npn")
    assert info.value.parameter == "polarity" and "nmos" in info.value.valid
