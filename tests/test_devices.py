"""The bipolar transistor model (kit.devices.bjt) against published physics.

Sources are named beside each check.  The reference values are computed here
from the published laws (CODATA constants, the Getreu/Gummel–Poon
temperature scaling, the Ebers–Moll transport equations), never copied from
the kit's output.
"""

from __future__ import annotations

import functools
import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest
import scipy.constants
import sympy as sp

import kit
from kit.devices import bjt
from kit.devices.bjt import KIND as BJT

K_OVER_Q = scipy.constants.k / scipy.constants.e


# --- thermal voltage -----------------------------------------------------------

def test_codata_2018_constants_are_the_exact_si_values():
    # CODATA 2018 / 2019 SI redefinition: k and e are exact by definition.
    assert scipy.constants.k == 1.380649e-23
    assert scipy.constants.e == 1.602176634e-19


@pytest.mark.parametrize("temp", [300.15, 298.15, 233.15, 398.15])
def test_thermal_voltage_is_kT_over_q(temp):
    # V_T = kT/q with k = 1.380649e-23 J/K and q = 1.602176634e-19 C exactly
    # (CODATA 2018 via scipy.constants), evaluated in exact rational arithmetic.
    exact = (Fraction(1380649, 10**29) * Fraction(temp)) / Fraction(1602176634, 10**28)
    # 1e-15 relative: a product and a quotient of doubles, a few ulp at most.
    assert bjt.thermal_voltage(temp) == pytest.approx(float(exact), rel=1e-15, abs=0)
    assert bjt.thermal_voltage(temp) == pytest.approx(
        scipy.constants.k * temp / scipy.constants.e, rel=1e-15, abs=0)


@pytest.mark.parametrize("temp", [300.15, 298.15])
def test_compiled_model_uses_the_same_thermal_voltage(models, temp):
    # The operating value V_T that the exact equations use, against CODATA 2018.
    design = kit.design("divider_source", temp=temp, t_ref=298.15)
    model = models["npn"]
    p = np.array([[design.parameters()[n]] for n in model.parameter_names])
    v_t = model.operating(p)[model.operating_index["V_T_Q1"], 0]
    assert v_t == pytest.approx(scipy.constants.k * temp / scipy.constants.e, rel=1e-15, abs=0)


# --- temperature laws of the compiled model --------------------------------------

@pytest.mark.parametrize("temp", [233.15, 298.15, 358.15, 423.15])
def test_operating_values_follow_the_getreu_temperature_laws(models, reference, temp):
    # I_S(T) = I_S0 (T/T0)^m_IS exp[(q E_g/k)(1/T0 - 1/T)],
    # beta(T) = beta0 (T/T0)^m_beta (1 + TC_beta (T - T0)) (Getreu, Modeling the
    # Bipolar Transistor, 1976; Gummel–Poon temperature scaling, from memory),
    # R(T) = R (1 + TCR (T - T_ref)) (IEC 60115-1 TCR convention, from memory),
    # written by hand in tests/conftest.py.  Closed forms: 1e-12 relative.
    design = kit.design(
        "divider_source", "npn", r1=27e3, r2=6.8e3, r_e=1.1e3, temp=temp, t_ref=300.15,
        tcr={"r1": 250e-6, "r2": -150e-6, "r_e": 50e-6},
        devices={"Q1": {"i_s": 3e-15, "i_s_temp_exponent": 3.5, "e_g": 1.16, "beta_temp_exponent": 1.7, "beta_tc": 2e-3,
                        "beta_f": 130.0}})
    model = models["npn"]
    params = design.parameters()
    p = np.array([[params[n]] for n in model.parameter_names])
    q = model.operating(p)[:, 0]
    ours = reference.operating_values(params)
    index = model.operating_index
    for kit_name, our_name in (("I_S_Q1", "i_s"), ("beta_Q1", "beta"), ("R1", "r1"), ("R2", "r2"),
                               ("R_E", "r_e"), ("V_T_Q1", "v_t")):
        assert q[index[kit_name]] == pytest.approx(ours[our_name], rel=1e-12), kit_name


# --- V_BE at constant collector current ------------------------------------------

@functools.lru_cache(maxsize=1)
def _collector_law():
    """I_C(V_BE, T) of the kit's junction law and temperature map (SymPy, then
    mpmath functions of ``(V_BE, T, T0, V_CE, *reference parameters)``)."""
    t, t0, v_be, vce = sp.symbols("T T0 V_be V_ce", positive=True)
    op = BJT.operating_symbols("Q1")
    ref = {key: sp.Symbol(f"Q1.{key}", real=True) for key in BJT.law_params}
    mapping = BJT.temperature_map("Q1", ref, t, t0, 1)
    _, law = BJT.stamp("n", {"b": v_be, "c": vce, "e": sp.Integer(0)}, op)
    collector = law["i_c"].xreplace(mapping)
    names = sorted(ref)
    args = (v_be, t, t0, vce, *(ref[k] for k in names))
    return (names,
            sp.lambdify(args, collector, "mpmath"),
            sp.lambdify(args, sp.diff(collector, v_be), "mpmath"),
            sp.lambdify(args, sp.diff(collector, t), "mpmath"))


def _vbe_slope_from_kit_laws(model_params, i_c, temp, t_ref, v_ce=5.0):
    """dV_BE/dT at fixed I_C and V_CE, by implicit differentiation of the kit's own
    junction law and temperature map, evaluated with mpmath at 30 digits.

    Returns ``(v_be, slope)``.
    """
    names, f, f_v, f_t = _collector_law()
    with mpmath.workdps(30):
        rest = [mpmath.mpf(temp), mpmath.mpf(t_ref), mpmath.mpf(v_ce)]
        rest += [mpmath.mpf(model_params[k]) for k in names]
        # Solve ln I_C(V_BE) = ln I_C (well scaled), starting from V_T ln(I_C/I_S).
        start = mpmath.mpf(K_OVER_Q * temp) * mpmath.log(i_c / model_params["i_s"])
        root = mpmath.findroot(lambda v: mpmath.log(f(v, *rest) / i_c), start,
                               tol=mpmath.mpf(10) ** -28)
        slope = -f_t(root, *rest) / f_v(root, *rest)
        return float(root), float(slope)


def _closed_form_slope(v_be, temp, e_g, m_is):
    # dV_BE/dT|_I_C = (V_BE - E_g)/T - m_IS k/q: differentiate
    # V_BE = V_T ln(I_C/I_S(T)) with the Getreu/Gummel–Poon I_S(T) law (derived
    # here; the same result as Tsividis, IEEE JSSC SC-15, 1980, with V_G = E_g, from memory).
    return (v_be - e_g) / temp - m_is * K_OVER_Q


def _saturation_current(device, temp, t_ref):
    # I_S(T) = I_S0 (T/T0)^m_IS exp[(q E_g/k)(1/T0 - 1/T)] (Getreu 1976, from memory)
    return (device["i_s"] * (temp / t_ref) ** device["i_s_temp_exponent"]
            * math.exp(device["e_g"] / K_OVER_Q * (1 / t_ref - 1 / temp)))


@pytest.mark.parametrize("i_c", [1e-4, 1e-3, 1e-2])
@pytest.mark.parametrize("temp", [248.15, 298.15, 373.15])
def test_vbe_slope_at_constant_current_matches_closed_form(i_c, temp):
    device = BJT.typical("n").numbers()
    v_be, slope = _vbe_slope_from_kit_laws(device, i_c, temp, t_ref=298.15)
    expected = _closed_form_slope(v_be, temp, device["e_g"], device["i_s_temp_exponent"])
    # In forward active the Ebers–Moll collector current is
    # I_C = I_S (e^{V_BE/V_T} q_E + 1/beta_R) (reverse exponential ~ e^-170 here),
    # so with u = I_S/(beta_R I_C) the slope is the closed form plus
    # -u (m_IS V_T + E_g)/T + O(u^2) (derived here).  u reaches 6e-7 at 373 K and
    # 100 uA, where I_S has grown ten-thousandfold.
    u = _saturation_current(device, temp, 298.15) / (device["beta_r"] * i_c)
    correction = -u * (device["i_s_temp_exponent"] * K_OVER_Q * temp + device["e_g"]) / temp
    # 1e-9 relative: the next term is O(u^2) < 1e-12; mpmath at 30 digits
    # removes rounding.
    assert slope == pytest.approx(expected + correction, rel=1e-9)
    # and the textbook form alone holds to 1e-9 at and below the reference
    # temperature, where u < 1e-10 for every current here (hot, it does not)
    if temp <= 298.15:
        assert u < 1e-10
        assert slope == pytest.approx(expected, rel=1e-9)
    else:
        assert slope != pytest.approx(expected, rel=1e-9)


def test_vbe_tempco_is_about_minus_two_millivolts_per_kelvin_near_1mA():
    # "V_BE falls about 2 mV/K at constant current": common practice, no source.
    device = BJT.typical("n").numbers()
    v_be, slope = _vbe_slope_from_kit_laws(device, 1e-3, 298.15, t_ref=298.15)
    assert 0.6 <= v_be <= 0.7  # V_BE(on) about 0.6–0.7 V at 1 mA: common practice, no source
    assert -2.2e-3 <= slope <= -1.7e-3


def test_vbe_slope_gets_less_negative_by_k_ln10_over_q_per_decade():
    # From dV_BE/dT = (V_BE - E_g)/T - m_IS k/q and V_BE(10 I) = V_BE(I) + V_T ln 10:
    # one decade more current makes the slope less negative by (k/q) ln 10
    # = 0.198 mV/K (derived here; the Tsividis-type V_BE(T) form, from memory).
    device = BJT.typical("n").numbers()
    slopes = [_vbe_slope_from_kit_laws(device, i, 310.0, t_ref=298.15)[1] for i in (1e-4, 1e-3, 1e-2)]
    for low, high in zip(slopes, slopes[1:]):
        # 1e-7 relative on a difference ten times smaller than either slope,
        # each good to ~1e-10 (see the closed-form test above).
        assert high - low == pytest.approx(K_OVER_Q * math.log(10), rel=1e-7)
        assert high > low


def test_early_factor_does_not_change_the_vbe_slope():
    # At fixed V_CE the Early factor (1 + V_CE/V_A) is temperature independent in
    # the M-CE form, so the slope is the same for V_A = 40 V and V_A = 10 kV (almost none)
    # (property of the model as documented, Early, Proc. IRE 1952).
    finite = BJT.typical("n").with_values(v_a=40.0).numbers()
    infinite = BJT.typical("n").with_values(v_a=1e4).numbers()
    v1, s1 = _vbe_slope_from_kit_laws(finite, 1e-3, 298.15, t_ref=298.15, v_ce=8.0)
    v2, s2 = _vbe_slope_from_kit_laws(infinite, 1e-3, 298.15, t_ref=298.15, v_ce=8.0)
    assert s1 == pytest.approx(_closed_form_slope(v1, 298.15, 1.11, 3.0), rel=1e-9)
    assert s2 == pytest.approx(_closed_form_slope(v2, 298.15, 1.11, 3.0), rel=1e-9)
    # ... while V_BE itself is lower with the stronger Early effect, by V_T ln(1 + V_CE/V_A)
    v_t = K_OVER_Q * 298.15
    expected = v_t * (math.log(1 + 8.0 / 40.0) - math.log(1 + 8.0 / 1e4))
    assert v2 - v1 == pytest.approx(expected, rel=1e-8)


# --- gains at the solved point ------------------------------------------------------

def _leakage(ev, design):
    """Relative size of the terms the textbook forward-active identities drop.

    With e^{V_BC/V_T} ~ 0, I_C = I_S e^{V_BE/V_T} q_E + I_S/beta_R and
    I_B = (I_S/beta_F)(e^{V_BE/V_T} - 1) - I_S/beta_R, so I_C/I_B differs from
    beta_F q_E by about (2 + beta_F/beta_R) I_S q_E / I_C (derived here from
    the Ebers–Moll equations).
    """
    q1 = design.devices["Q1"]
    t = design.temp / design.t_ref
    i_s = q1.i_s * t ** q1.i_s_temp_exponent * math.exp(q1.e_g / (K_OVER_Q * design.temp) * (t - 1))
    beta = q1.beta_f * t ** q1.beta_temp_exponent * (1 + q1.beta_tc * (design.temp - design.t_ref))
    j = ev.parts["Q1"].to_dict()
    q_e = 1 + j["v_ce"] / q1.v_a
    return (2 + beta / q1.beta_r) * i_s * q_e / j["i_c"], beta


SCENARIO_NAMES = ["sink_15v", "sink_5v", "sink_weak", "source_12v", "source_9v"]


@pytest.mark.parametrize("name", SCENARIO_NAMES)
def test_alpha_is_beta_over_beta_plus_one(evaluated, name):
    # alpha = I_C/I_E = beta/(beta + 1) in forward active with V_A = inf
    # (textbook identity; Sedra & Smith, Microelectronic Circuits, BJT chapter, from memory).
    ev = evaluated(name, v_a=math.inf)
    design = ev.design
    leak, beta = _leakage(ev, design)
    j = ev.parts["Q1"].to_dict()
    # 1e-9: the dropped leakage terms change alpha by leak/(beta+1) < 1e-11.
    assert j["i_c"] / (j["i_c"] + j["i_b"]) == pytest.approx(beta / (beta + 1), rel=1e-9)
    # The same from the emitter node: I_E is the current in R_E (Ohm's law).
    v = ev.to_dict()["node_voltages"]
    r_e = design.values["r_e"]
    i_e = v["V_e"] / r_e if design.polarity == "npn" else (design.values["v_supply"] - v["V_e"]) / r_e
    assert ev.i_out / i_e == pytest.approx(beta / (beta + 1), rel=1e-9)


@pytest.mark.parametrize("name", SCENARIO_NAMES)
def test_measured_gain_is_beta_times_early_factor(evaluated, name):
    # beta_ac = I_C/I_B = beta_F (1 + V_CE/V_A) in forward active: the Early
    # factor multiplies the transport current but not the base current (M-CE form;
    # Sedra & Smith; Gray, Hurst, Lewis & Meyer, ch. 1 — from memory).
    ev = evaluated(name)
    design = ev.design
    leak, beta = _leakage(ev, design)
    j = ev.parts["Q1"].to_dict()
    expected = beta * (1 + j["v_ce"] / design.devices["Q1"].v_a)
    # 1e-10 plus twice the dropped leakage terms (2 + beta/beta_R) I_S q_E/I_C,
    # which reach ~2e-9 for the 250 uA design with beta_F = 320.
    assert leak < 5e-9
    assert j["beta_measured"] == pytest.approx(expected, rel=1e-10 + 2 * leak)
    assert ev.regions["Q1"] == "active"


@pytest.mark.parametrize("name", SCENARIO_NAMES)
def test_vbe_at_the_solved_point_is_a_forward_biased_silicon_junction(evaluated, name):
    # V_BE(on) 0.6–0.7 V at 0.1–10 mA for small-signal silicon: common practice, no source.
    ev = evaluated(name)
    assert 0.6 <= ev.parts["Q1"].quantities["v_be"] <= 0.7
