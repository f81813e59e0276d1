"""Widlar current sources (ideal reference, resistor reference) against published results.

Sources named beside each check: Widlar's relation I R_E = V_T ln(N I_REF/I)
(Widlar, IEEE Trans. Circuit Theory CT-12, 1965, from memory), its explicit
Lambert-W solution, evaluated here with ``scipy.special.lambertw`` and a
``scipy.optimize.brentq`` root independent of the kit, the hybrid-π output
resistance of an emitter-degenerated stage (Sedra & Smith, *Microelectronic
Circuits*; UC Berkeley EE105 notes, from memory), k/q from
``scipy.constants``, and facts of the trade.  Designs are scenarios invented
for these tests.

Checks every topology shares (finite-difference sensitivities and R_out, the
NPN/PNP mirror image, random designs, the drawing, example records) live in
the contract module, not here.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants
from scipy.optimize import brentq
from scipy.special import lambertw

import kit
from kit.analysis.evaluation import sweep
from kit.errors import OperatingPointError, ParameterError

K_OVER_Q = scipy.constants.k / scipy.constants.e  # CODATA 2018 via scipy.constants
KEYS = ("widlar_source", "widlar_resistor_reference")


def solve(design):
    """Exact operating point at the design's load voltage, checked forward active."""
    points = sweep(design, "v_load", [design.values["v_load"]])
    assert points.converged.all() and points.in_good_region().all()
    return points


def ideal_parts(beta=1e5):
    """V_A = inf and a large beta: the conditions of Widlar's relation."""
    return {n: {"v_a": math.inf, "beta_f": beta} for n in ("Q1", "Q2")}


def widlar_root(i_ref, r_e, n, v_t):
    """Root of Widlar's relation I R_E = V_T ln(N I_REF / I) by bracketing (brentq)."""
    return brentq(lambda i: i * r_e - v_t * math.log(n * i_ref / i), 1e-30, n * i_ref,
                  xtol=1e-30, rtol=1e-15)


# Scenarios of our own: a 10 µA bias from 1 mA, a 2 µA trickle from 0.5 mA with
# a 4x output device, a 150 µA source from 400 µA with a 0.5x output device.
SCENARIOS = [(1e-3, 5.6e3, 1.0), (0.5e-3, 82e3, 4.0), (400e-6, 270.0, 0.5)]


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("i_ref, r_e, n", SCENARIOS)
def test_exact_solve_obeys_widlars_relation(polarity, i_ref, r_e, n):
    # Widlar 1965: I R_E = V_T ln(N I_REF/I) for beta, V_A -> inf.  At beta = 1e5 the
    # base currents move I by (I_REF + I)/(beta (1 + x)) at most: < 2e-5 (derived here).
    d = kit.design("widlar_source", polarity, devices=ideal_parts(), i_ref=i_ref, r_e=r_e,
                   n_area=n, v_supply=10.0, v_load=5.0)
    v_t = K_OVER_Q * d.temp
    root = widlar_root(i_ref, r_e, n, v_t)
    assert solve(d).i_out[0] == pytest.approx(root, rel=5e-5)


@pytest.mark.parametrize("i_ref, r_e, n", SCENARIOS)
def test_lambert_w_form_and_the_kits_wright_omega(i_ref, r_e, n):
    # Explicit solution I = (V_T/R_E) W(N I_REF R_E/V_T) (Lambert W, principal
    # branch; scipy.special.lambertw) equals the brentq root of Widlar's relation;
    # the kit's closed form, written with the Wright omega, equals both.
    d = kit.design("widlar_source", i_ref=i_ref, r_e=r_e, n_area=n, v_supply=10.0, v_load=5.0)
    v_t = K_OVER_Q * d.temp
    lambert = v_t / r_e * lambertw(n * i_ref * r_e / v_t).real
    assert lambert == pytest.approx(widlar_root(i_ref, r_e, n, v_t), rel=1e-12)
    point = solve(d)
    assert point.model.closed_forms(point.q)["widlar"][0] == pytest.approx(lambert, rel=1e-12)


def test_closed_forms_do_not_overflow_at_a_high_supply():
    # V_CC/V_T = 1000 V / 25.7 mV: e^{V_CC/V_T} overflows a float (e^709 is the largest),
    # the Wright omega form must not (Corless & Jeffrey, LNCS 2385, 2002, from memory).
    d = kit.design("widlar_resistor_reference", devices=ideal_parts(200.0), r_ref=10e6,
                   r_e=2.2e3, n_area=1.0, v_supply=1000.0, v_load=10.0)
    point = solve(d)
    forms = point.model.closed_forms(point.q)
    assert all(np.isfinite(v[0]) and v[0] > 0 for v in forms.values())
    # the diode current then is (V_CC - V_BE)/R_REF to within a V_BE/V_CC share
    assert forms["first_order_beta"][0] == pytest.approx(point.i_out[0], rel=1e-3)


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("beta1, beta2", [(40.0, 40.0), (120.0, 300.0), (300.0, 60.0)])
def test_finite_beta_relation_rederived(key, beta1, beta2):
    # KCL at the base node and the emitter (written out here by hand, V_A -> inf):
    #   I_REF = I_C1 (1 + 1/b1) + I_C2/b2,  V_E2 = (1 + 1/b2) I_C2 R_E,
    #   V_BE1 = V_BE2 + V_E2  =>  V_T ln(N I_C1/I_C2) = (1 + 1/b2) I_C2 R_E.
    # Solved by brentq, this must equal the exact solve to the EM leakage terms (1e-9).
    # The reference current of the resistor variant is taken from the exact solve.
    devices = {"Q1": {"v_a": math.inf, "beta_f": beta1}, "Q2": {"v_a": math.inf, "beta_f": beta2}}
    values = dict(r_e=3.3e3, n_area=2.0, v_supply=12.0, v_load=6.0)
    values |= {"i_ref": 800e-6} if key == "widlar_source" else {"r_ref": 15e3}
    d = kit.design(key, devices=devices, **values)
    point = solve(d)
    v_t = K_OVER_Q * d.temp
    j1 = point.junctions["Q1"]
    i_ref = (800e-6 if key == "widlar_source"
             else j1["i_c"][0] + j1["i_b"][0] + point.junctions["Q2"]["i_b"][0])

    def residual(i_c2):
        i_c1 = beta1 * (i_ref - i_c2 / beta2) / (beta1 + 1)
        return v_t * math.log(2.0 * i_c1 / i_c2) - (1 + 1 / beta2) * i_c2 * 3.3e3

    root = brentq(residual, 1e-15, 0.99 * beta2 * i_ref, xtol=1e-30, rtol=1e-15)
    assert point.i_out[0] == pytest.approx(root, rel=1e-9)


@pytest.mark.parametrize("beta", [40.0, 150.0, 400.0])
def test_first_order_beta_form(beta):
    # The first-order form keeps I_C1 = beta I_REF/(beta+1) and so overestimates I_C1
    # by I/(beta I_REF); with S_IREF = 1/(1+x) (below) the current is high by about
    # I/(beta I_REF (1+x)) (derived here).  It beats the beta -> inf form.
    d = kit.design("widlar_source", devices={n: {"v_a": math.inf, "beta_f": beta} for n in ("Q1", "Q2")},
                   i_ref=600e-6, r_e=1.2e3, n_area=1.0, v_supply=10.0, v_load=5.0)
    ev = kit.evaluate(d)
    ledger = {e.key: e for e in ev.ledger}
    x = ev.i_out * 1.2e3 / (K_OVER_Q * d.temp)
    predicted = ev.i_out / (beta * 600e-6 * (1 + x))
    assert 0.5 * predicted < ledger["first_order_beta"].error < 1.5 * predicted
    assert abs(ledger["first_order_beta"].error) < abs(ledger["widlar"].error)


@pytest.mark.parametrize("key", KEYS)
def test_early_closed_form_tracks_the_exact_solve(key):
    # With V_A = 60 V the Early factors move I by ~1 %; the corrected form must catch
    # all but the V_BE(on) guess of V_CE1, about 0.05 V/V_A (derived here).
    d = kit.design(key, devices={n: {"v_a": 60.0} for n in ("Q1", "Q2")}, v_load=8.0)
    ledger = {e.key: e for e in kit.evaluate(d).ledger}
    assert abs(ledger["first_order_beta_early"].error) < 3 * 0.05 / 60.0
    assert abs(ledger["first_order_beta_early"].error) < 0.1 * abs(ledger["first_order_beta"].error)


def test_sensitivities_of_widlars_relation():
    # Implicit differentiation of I R_E = V_T ln(N I_REF/I) (done here by hand):
    # S_IREF = S_N = 1/(1+x), S_RE = -x/(1+x), x = I R_E/V_T; the temperature enters
    # through V_T = kT/q only (N is a ratio of equal I_S laws), so (1/I) dI/dT =
    # x/((1+x) T) + TC(I_REF)/(1+x).  Conditions: beta = 1e5, V_A = inf.
    d = kit.design("widlar_source", devices=ideal_parts(), i_ref=1e-3, i_ref_tc=800e-6,
                   r_e=4.7e3, n_area=2.0, v_supply=10.0, v_load=5.0)
    ev = kit.evaluate(d)
    s = {x.parameter: x.normalised for x in ev.sensitivities}
    x = ev.i_out * 4.7e3 / (K_OVER_Q * d.temp)
    assert s["i_ref"] == pytest.approx(1 / (1 + x), abs=1e-4)
    assert s["n_area"] == pytest.approx(1 / (1 + x), abs=1e-4)
    assert s["r_e"] == pytest.approx(-x / (1 + x), abs=1e-4)
    assert ev.tempco == pytest.approx(x / ((1 + x) * d.temp) + 800e-6 / (1 + x), rel=1e-3)


# --- output resistance ----------------------------------------------------------

@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_r_out_hybrid_pi_forms(key, polarity):
    d = kit.design(key, polarity, v_load=6.0)
    ev = kit.evaluate(d)
    # r_o2[1 + beta R_E/(R_E + r_pi2 + R_B)] + R_E||(r_pi2 + R_B) with R_B = Q1's diode
    # impedance (|| R_REF) is exact for the hybrid-π network (EE105 notes; Sedra & Smith).
    assert ev.r_out_forms["r_out_hybrid_pi"] == pytest.approx(ev.r_out, rel=1e-7)
    # Sedra & Smith's R_B = 0 form differs by R_B/r_pi2 ~ I_out/(beta I_REF): < 1e-3 here.
    assert ev.r_out_forms["r_out_sedra_smith"] == pytest.approx(ev.r_out, rel=1e-3)
    # and the degeneration multiplies r_o2 = (V_A + V_CE)/I_C (Early 1952) by
    # 1 + g_m2 (R_E || r_pi2) > 1 + x/2
    q2 = ev.parts["Q2"].quantities
    r_o2 = (d.devices["Q2"].v_a + q2["v_ce"]) / q2["i_c"]
    assert ev.r_out > 2 * r_o2


# --- compliance and convergence --------------------------------------------------

@pytest.mark.parametrize("key", KEYS)
def test_compliance_low_edge_is_emitter_plus_vce_sat(key):
    # V_out >= I_E2 R_E + V_CE(sat) (Gray et al. ch. 4, from memory); Q2 limits it.
    d = kit.design(key)
    low = kit.evaluate(d).compliance.low
    assert (low.part, low.cause) == ("Q2", "saturation")
    edge = sweep(d, "v_load", [low.voltage])
    v_e2 = edge.x[edge.model.unknowns.index("V_e"), 0]
    assert low.voltage == pytest.approx(v_e2 + 0.2, abs=1e-5)
    assert 0.2 < low.voltage < 0.6  # a few V_T of emitter drop over V_CE(sat): common practice


def test_reference_current_needs_headroom():
    # An ideal reference fed from V_CC needs its node below the rail (common practice,
    # no source): on a 0.5 V supply Q1's diode drop (about 0.7 V at 1.2 mA) has no room,
    # and the kit says so instead of reporting a current.
    with pytest.raises(OperatingPointError) as err:
        kit.evaluate(kit.design("widlar_source", v_supply=0.5, v_load=0.4))
    assert err.value.parameter in ("v_load", "v_supply")
    point = sweep(kit.design("widlar_source", v_supply=0.5, v_load=0.4), "v_load", [0.4])
    margin, keys = point.worst_margin()
    assert margin[0] < 0 and keys[0] == ("I_REF", "headroom")


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_load_sweep_across_compliance_converges(key, polarity):
    d = kit.design(key, polarity)
    c = kit.evaluate(d).compliance
    v = np.linspace(c.low.voltage - 2.0, c.high.voltage + 2.0, 200)
    points = sweep(d, "v_load", v)
    assert points.converged.all()
    inside = (v > c.low.voltage + 1e-4) & (v < c.high.voltage - 1e-4)
    assert (points.regions()["Q2"][inside] == "active").all()
    saturated_end = v < c.low.voltage - 1e-4 if polarity == "npn" else v > c.high.voltage + 1e-4
    assert (points.regions()["Q2"][saturated_end] == "saturated").all()


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_whole_scan_window_converges(key, polarity):
    # The compliance search scans +-(supply + BV_CEO); deep saturation (Q2's emitter
    # following its collector) and the far side must solve too.
    d = kit.design(key, polarity)
    points = sweep(d, "v_load", np.linspace(-52.0, 52.0, 105))
    assert points.converged.all()
    assert points.iterations.max() < 60


def test_load_at_the_emitter_rail():
    # Collector at the emitter rail: Q2's emitter node carries almost nothing while
    # its terms cancel mA-sized exponentials; the solve must still accept it.
    parts = {n: {"beta_f": 30.0, "v_a": 20.0} for n in ("Q1", "Q2")}
    d = kit.design("widlar_source", devices=parts, i_ref=8e-3, r_e=63.7e3, n_area=2.0,
                   v_supply=1.0, v_load=0.0, temp=234.0)
    points = sweep(d, "v_load", np.linspace(-2e-3, 2e-3, 41))
    assert points.converged.all()
    assert (points.regions()["Q2"] == "saturated").all()


def test_bad_area_ratio_names_the_parameter():
    with pytest.raises(ParameterError) as err:
        kit.design("widlar_source", n_area=0.0)
    assert err.value.parameter == "n_area" and "100" in err.value.valid
