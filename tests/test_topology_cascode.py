"""Cascode mirror and cascoded single-transistor sources against published results.

Sources named beside each check: the cascode-mirror ratio ≈ 1 - 4/β and
R_out ≈ β r_o/2 (Gray, Hurst, Lewis & Meyer, *Analysis and Design of Analog
Integrated Circuits*, ch. 4, from memory), the divider-bias formula of Sedra &
Smith (*Microelectronic Circuits*, BJT biasing, from memory), the
emitter-degenerated output resistance (Sedra & Smith; UC Berkeley EE105
notes, from memory), ``scipy.special.lambertw``, independent KCL and
nodal-analysis derivations written out here and facts of the trade.  Designs
are scenarios invented for these tests.

Generic checks (finite-difference sensitivities and R_out, the NPN/PNP
mirror image, random designs, the drawing, example records) live in the
contract tests run over every topology.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants
import sympy as sp
from scipy.special import lambertw

import kit
from kit.analysis.evaluation import sweep
from kit.errors import OperatingPointError, ParameterError

K_OVER_Q = scipy.constants.k / scipy.constants.e  # CODATA 2018 via scipy.constants
MIRROR = ("Q1", "Q2", "Q3", "Q4")
SOURCES = ("cascoded_source", "cascoded_source_fixed_bias")


def solve(design):
    """Exact operating point at the design's load voltage, checked forward active."""
    points = sweep(design, "v_load", [design.values["v_load"]])
    assert points.converged.all() and points.in_good_region().all()
    return points


def node(points, name):
    return points.x[points.model.unknowns.index(name), 0]


def source_values(key, polarity="npn", **changes):
    """A 1 mA cascoded sink from 24 V (our scenario); the PNP mirror image swaps the legs."""
    values = dict(r1=100e3, r2=10e3, r_e=1.5e3, v_supply=24.0, v_load=12.0)
    values |= dict(r3=47e3, r4=9.1e3) if key == "cascoded_source" else dict(v_bias=3.9, r_b2=1e3)
    if polarity == "pnp":
        values |= dict(r1=10e3, r2=100e3)
        if key == "cascoded_source":
            values |= dict(r3=9.1e3, r4=47e3)
    return values | changes


def source_design(key, polarity="npn", devices=None, temp=298.15, **changes):
    return kit.design(key, polarity, devices=devices or {}, temp=temp,
                      **source_values(key, polarity, **changes))


# --- cascode mirror: current ratio -----------------------------------------------

def mirror_ratio_by_kcl():
    """I_out/I_REF with per-transistor gains, from KCL written out here (V_A -> inf).

    I_C1 = I_C2 = i (equal V_BE, equal I_S); node n1: I_E3 = i(1 + 1/b1) + i/b2;
    node n4: I_E4 = I_C2 = i, so I_out = i b4/(b4+1); node n3: I_REF = I_E3 + I_B4.
    """
    b1, b2, b4, i = sp.symbols("b1 b2 b4 i", positive=True)
    i_ref = i * (1 + 1 / b1) + i / b2 + i / (b4 + 1)
    return sp.lambdify((b1, b2, b4), sp.simplify(i * b4 / (b4 + 1) / i_ref))


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("beta", [30.0, 150.0, 600.0])
def test_matched_mirror_ratio(polarity, beta):
    # β²/(β² + 4β + 2), derived here (KCL above), ≈ 1 - 4/β (Gray et al., ch. 4,
    # from memory) to O(1/β²).  Exact solve with V_A = inf, EM leakage ~1e-10.
    devices = {n: {"beta_f": beta, "v_a": math.inf} for n in MIRROR}
    d = kit.design("cascode_mirror", polarity, devices=devices, i_ref=700e-6, v_supply=9.0, v_load=4.0)
    ratio = solve(d).i_out[0] / 700e-6
    assert ratio == pytest.approx(beta**2 / (beta**2 + 4 * beta + 2), rel=1e-9)
    assert ratio == pytest.approx(mirror_ratio_by_kcl()(beta, beta, beta), rel=1e-9)
    assert abs(ratio - (1 - 4 / beta)) < 15 / beta**2


def test_unequal_gains_and_the_gain_derivative():
    # Per-transistor KCL ratio (above) against the exact solve; Q3's gain drops out.
    gains = {"Q1": 70.0, "Q2": 210.0, "Q3": 33.0, "Q4": 120.0}
    devices = {n: {"beta_f": g, "v_a": math.inf} for n, g in gains.items()}
    d = kit.design("cascode_mirror", devices=devices, i_ref=1e-3, v_supply=9.0, v_load=4.0)
    point = solve(d)
    assert point.i_out[0] / 1e-3 == pytest.approx(mirror_ratio_by_kcl()(70.0, 210.0, 120.0), rel=1e-9)
    assert abs(point.di_dp[point.model.parameter_index["Q3.beta_f"], 0]) < 1e-12 * 1e-3
    # d/dβ of β²/(β²+4β+2) by SymPy; the exact dI/dβ_F summed over all four devices
    # (all gains moving together) must match it at matched gains.
    beta = sp.Symbol("beta", positive=True)
    slope = sp.lambdify(beta, sp.diff(beta**2 / (beta**2 + 4 * beta + 2), beta))
    matched = {n: {"beta_f": 120.0, "v_a": math.inf} for n in MIRROR}
    point = solve(kit.design("cascode_mirror", devices=matched, i_ref=1e-3, v_supply=9.0, v_load=4.0))
    total = sum(point.di_dp[point.model.parameter_index[f"{n}.beta_f"], 0] for n in MIRROR)
    assert total == pytest.approx(1e-3 * slope(120.0), rel=1e-6)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_early_closed_form_tracks_the_exact_solve(polarity):
    # With finite V_A the Early-corrected form estimates V_CE from V_BE(on); the rest
    # is ~0.05 V / V_A per factor (derived here).
    d = kit.design("cascode_mirror", polarity, devices={n: {"v_a": 40.0} for n in MIRROR},
                   i_ref=2e-3, v_supply=12.0, v_load=5.0)
    ledger = {e.key: e for e in kit.evaluate(d).ledger}
    assert abs(ledger["finite_beta_early"].error) < 3 * 0.05 / 40.0
    assert abs(ledger["finite_beta_early"].error) < abs(ledger["finite_beta"].error)


# --- cascode mirror: output resistance ---------------------------------------------

def nodal_r_out(gm, rpi, ro):
    """R_out of the cascode mirror by nodal analysis written out by hand (NumPy).

    Small-signal KCL (currents leaving) at n1, n3, n4 with the test voltage 1 V at
    the output; i_b = v_be/r_pi, i_c = g_m v_be + v_ce/r_o for each transistor:
      n1: Q1 diode (g_m1 + 1/r_pi1 + 1/r_o1) v1, Q2 base v1/r_pi2, Q3 emitter -(i_b3 + i_c3)
      n3: Q3 base i_b3 + Q3 collector i_c3 + Q4 base i_b4
      n4: Q2 collector g_m2 v1 + v4/r_o2, Q4 emitter -(i_b4 + i_c4)
    """
    g1, g2, g3, g4 = gm
    p1, p2, p3, p4 = rpi
    o1, o2, o3, o4 = ro
    # i_b3 = (v3 - v1)/p3, i_c3 = g3 (v3 - v1) + (v3 - v1)/o3  (diode: c = b)
    # i_b4 = (v3 - v4)/p4, i_c4 = g4 (v3 - v4) + (1 - v4)/o4
    y3 = 1 / p3 + g3 + 1 / o3
    a = np.array([
        [g1 + 1 / p1 + 1 / o1 + 1 / p2 + y3, -y3, 0.0],
        [-y3, y3 + 1 / p4, -1 / p4],
        [g2, -(1 / p4 + g4), 1 / o2 + 1 / p4 + g4 + 1 / o4],
    ])
    b = np.array([0.0, 0.0, 1 / o4])
    v1, v3, v4 = np.linalg.solve(a, b)
    current = g4 * (v3 - v4) + (1 - v4) / o4
    return 1 / current


def test_hand_nodal_analysis_tends_to_beta_ro_over_two():
    # Gray et al. (from memory): ≈ beta r_o4/2 once r_o1..3 -> inf and beta is large;
    # the corrections are O(1/beta) and O(r_pi/(beta r_o4)): 3e-4 here.
    beta, r_pi, r_o4 = 1e5, 1e6, 1e5
    got = nodal_r_out([beta / r_pi] * 4, [r_pi] * 4, [1e30, 1e30, 1e30, r_o4])
    assert got == pytest.approx(beta * r_o4 / 2, rel=3e-4)
    # and the r_o1..3 -> inf limit derived here by hand from the same network,
    # r_o4 (beta^3 + 5 beta^2 + 6 beta + 2)/(2 (beta+1)^2) + r_pi (beta^2 + 5 beta + 5)/(2 (beta+1)^2)
    for beta, r_pi, r_o4 in ((80.0, 2.6e3, 1.3e5), (300.0, 7.7e4, 4.0e6)):
        got = nodal_r_out([beta / r_pi] * 4, [r_pi] * 4, [1e30, 1e30, 1e30, r_o4])
        by_hand = (r_o4 * (beta**3 + 5 * beta**2 + 6 * beta + 2) + r_pi * (beta**2 + 5 * beta + 5)) / (
            2 * (beta + 1) ** 2)
        assert got == pytest.approx(by_hand, rel=1e-9)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_mirror_r_out_agrees_with_the_hand_nodal_analysis(polarity):
    # The kit's exact R_out (implicit derivative of the large-signal solve) and its
    # nodal form against the hand nodal analysis above, fed with the hybrid-π values
    # of the solved point: g_m = I_C/V_T, r_pi = V_T/I_B, r_o = (V_A + V_CE)/I_C
    # (the M-CE Early model; Sedra & Smith, Gray et al. ch. 1, from memory).  They
    # differ only by the Ebers–Moll "-1" and reverse terms (~1e-9).
    d = kit.design("cascode_mirror", polarity, i_ref=1e-3, v_supply=12.0, temp=318.0,
                   v_load=5.0 if polarity == "npn" else 7.0)
    ev = kit.evaluate(d)
    v_t = K_OVER_Q * 318.0
    j = [ev.parts[n].quantities for n in MIRROR]
    gm = [q["i_c"] / v_t for q in j]
    rpi = [v_t / q["i_b"] for q in j]
    ro = [(d.devices[n].v_a + q["v_ce"]) / q["i_c"] for n, q in zip(MIRROR, j)]
    by_hand = nodal_r_out(gm, rpi, ro)
    assert ev.r_out == pytest.approx(by_hand, rel=1e-7)
    assert ev.r_out_forms["r_out_hybrid_pi"] == pytest.approx(by_hand, rel=1e-9)
    assert ev.r_out_forms["r_out_beta_ro_half"] == pytest.approx(ev.r_out, rel=0.05)


# --- cascoded source ----------------------------------------------------------------

@pytest.mark.parametrize("key", SOURCES)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_cascoded_source_current_is_alpha_times_the_lower_stage(key, polarity):
    # V_A = inf: the lower stage is the divider-biased source, I_C1 =
    # (V_T/K) W[(I_S K/V_T) e^{V_TH/V_T}] with K = (R_TH + (beta1+1) R_E)/beta1 (derived
    # here from KCL; scipy.special.lambertw), and the cascode passes alpha2 = beta2/(beta2+1)
    # of it.  Sedra & Smith's fixed-V_BE form is exact with the solved V_BE1.
    devices = {"Q1": {"beta_f": 90.0, "v_a": math.inf}, "Q2": {"beta_f": 240.0, "v_a": math.inf}}
    d = source_design(key, polarity, devices)
    point = solve(d)
    v_t = K_OVER_Q * d.temp
    r1, r2, r_e, v_cc = (d.values[k] for k in ("r1", "r2", "r_e", "v_supply"))
    drive = v_cc * (r2 if polarity == "npn" else r1) / (r1 + r2)
    r_th = r1 * r2 / (r1 + r2)
    k = (r_th + 91.0 * r_e) / 90.0
    i_s = d.devices["Q1"].i_s
    i_c1 = v_t / k * lambertw(i_s * k / v_t * math.exp(drive / v_t)).real
    assert point.i_out[0] == pytest.approx(240.0 / 241.0 * i_c1, rel=1e-9)
    v_be1 = point.junctions["Q1"]["v_be"][0]
    sedra_smith = 90.0 * (drive - v_be1) / (r_th + 91.0 * r_e)
    assert point.i_out[0] == pytest.approx(240.0 / 241.0 * sedra_smith, rel=1e-9)
    forms = point.model.closed_forms(point.q)
    assert forms["exponential"][0] == pytest.approx(point.i_out[0], rel=1e-9)


@pytest.mark.parametrize("key", SOURCES)
def test_early_closed_form_tracks_the_exact_solve_source(key):
    d = source_design(key, devices={"Q1": {"v_a": 40.0}, "Q2": {"v_a": 40.0}})
    ledger = {e.key: e for e in kit.evaluate(d).ledger}
    assert abs(ledger["exponential_early"].error) < 3 * 0.05 / 40.0
    assert abs(ledger["exponential_early"].error) < abs(ledger["exponential"].error)


@pytest.mark.parametrize("key", SOURCES)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_cascoded_source_r_out(key, polarity):
    d = source_design(key, polarity)
    ev = kit.evaluate(d)
    # r_o2[1 + beta R_x/(R_x + r_pi2 + R_B2)] + R_x||(r_pi2 + R_B2): the degenerated-stage
    # result (EE105 notes; Sedra & Smith) with R_x, the lower stage, as Q2's emitter load.
    assert ev.r_out_forms["r_out_cascode"] == pytest.approx(ev.r_out, rel=1e-7)
    # below the ceiling (beta+1) r_o2 + r_pi2 + R_B2 and close to it once R_x >> r_pi2
    ceiling = ev.r_out_forms["r_out_ceiling"]
    assert 0.95 * ceiling < ev.r_out < ceiling
    # and the cascode multiplies the lower stage's R_out by about beta2 r_o2/R_x > 5 here
    assert ev.r_out > 5 * ev.r_out_forms["r_out_lower_stage"]


def test_lower_stage_r_out_is_the_divider_sources():
    # The lower stage alone is the divider-biased source (kit's divider_source, its own
    # exact R_out) with its collector held at the cascode's emitter voltage.
    d = source_design("cascoded_source_fixed_bias")
    ev = kit.evaluate(d)
    point = solve(d)
    v_m = node(point, "V_m")
    alone = kit.design("divider_source", r1=1e5, r2=1e4, r_e=1.5e3, v_supply=24.0, v_load=v_m)
    assert solve(alone).r_out[0] == pytest.approx(ev.r_out_forms["r_out_lower_stage"], rel=1e-7)


# --- compliance, convergence ------------------------------------------------------

def test_mirror_low_edge_is_vbe_plus_vce_sat():
    # V_out >= V_BE + V_CE(sat) (Gray et al., ch. 4, from memory): Q4's emitter sits at
    # V_BE1 + V_BE3 - V_BE4 ≈ V_BE; 0.8–0.9 V with the design V_CE(sat) 0.2 V.
    d = kit.design("cascode_mirror", i_ref=1e-3, v_supply=12.0, v_load=5.0)
    low = kit.evaluate(d).compliance.low
    assert (low.part, low.cause) == ("Q4", "saturation")
    edge = sweep(d, "v_load", [low.voltage])
    assert low.voltage == pytest.approx(node(edge, "V_n4") + 0.2, abs=1e-5)
    assert 0.8 <= low.voltage <= 0.9


@pytest.mark.parametrize("key", SOURCES)
def test_source_low_edge_is_cascode_emitter_plus_vce_sat(key):
    # V_out >= V_B2 - V_BE2 + V_CE(sat): Q2 saturates first (the cascode bias leaves Q1
    # its own V_CE(sat) margin).
    d = source_design(key)
    low = kit.evaluate(d).compliance.low
    assert (low.part, low.cause) == ("Q2", "saturation")
    edge = sweep(d, "v_load", [low.voltage])
    v_m, v_b2 = node(edge, "V_m"), node(edge, "V_b2")
    assert low.voltage == pytest.approx(v_m + 0.2, abs=1e-5)
    assert 0.6 < v_b2 - v_m < 0.75  # V_BE of a small-signal part near 1 mA: common practice


def test_cascode_bias_too_low_saturates_the_lower_transistor():
    # V_B2 = 1.6 V puts Q2's emitter below Q1's emitter (about 1.5 V) plus V_CE(sat).
    d = source_design("cascoded_source_fixed_bias", v_bias=1.6)
    with pytest.raises(OperatingPointError):
        kit.evaluate(d)
    assert solve_region(d)["Q1"] == "saturated"


def solve_region(design):
    points = sweep(design, "v_load", [design.values["v_load"]])
    assert points.converged.all()
    return {n: r[0] for n, r in points.regions().items()}


@pytest.mark.parametrize("key", ("cascode_mirror",) + SOURCES)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_load_sweep_across_compliance_converges(key, polarity):
    d = kit.design(key, polarity) if key == "cascode_mirror" else source_design(key, polarity)
    c = kit.evaluate(d).compliance
    v = np.concatenate([np.linspace(c.low.voltage - 0.3, c.low.voltage + 1.0, 60),
                        np.linspace(c.high.voltage - 1.0, c.high.voltage + 0.3, 60)])
    points = sweep(d, "v_load", v)
    assert points.converged.all()
    output = "Q4" if key == "cascode_mirror" else "Q2"
    inside = (v > c.low.voltage + 1e-4) & (v < c.high.voltage - 1e-4)
    assert (points.regions()[output][inside] == "active").all()


@pytest.mark.parametrize("key", ("cascode_mirror",) + SOURCES)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_whole_scan_window_converges(key, polarity):
    # The compliance search scans +-(supply + BV_CEO): deep saturation (the output
    # transistor dragging the stack with its collector) and the far side must solve.
    d = kit.design(key, polarity) if key == "cascode_mirror" else source_design(key, polarity)
    points = sweep(d, "v_load", np.linspace(-64.0, 64.0, 129))
    assert points.converged.all()
    assert points.iterations.max() < 60


# --- input checks ------------------------------------------------------------------

def test_bad_bias_voltage_names_the_parameter():
    with pytest.raises(ParameterError) as err:
        kit.design("cascoded_source_fixed_bias", v_bias=-2.0)
    assert err.value.parameter == "v_bias" and "1000" in err.value.valid
