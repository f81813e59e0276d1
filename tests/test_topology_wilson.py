"""Wilson mirrors (three- and four-transistor) against published results.

Each check names its source: the Wilson current ratio (Wilson, IEEE J.
Solid-State Circuits SC-3, 1968; Gray, Hurst, Lewis & Meyer, *Analysis and
Design of Analog Integrated Circuits*, ch. 4; Sedra & Smith, *Microelectronic
Circuits*, Wilson mirror — all from memory), R_out ≈ β r_o/2 (Gray et al.,
ch. 4, from memory), the Early law I_C ∝ 1 + V_CE/V_A (Early, Proc. IRE 40,
1952), a small-signal nodal analysis written out by hand here, and facts of
the trade.  Designs are scenarios invented for these tests.

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

import kit
from kit.analysis.evaluation import sweep
from kit.errors import OperatingPointError, ParameterError

K_OVER_Q = scipy.constants.k / scipy.constants.e  # CODATA 2018 via scipy.constants
KEYS = ("wilson_mirror", "improved_wilson_mirror")
NAMES = {"wilson_mirror": ("Q1", "Q2", "Q3"), "improved_wilson_mirror": ("Q1", "Q2", "Q3", "Q4")}


def no_early(key, **gains):
    """Device overrides: V_A = inf for every transistor, optional per-transistor beta_f."""
    return {n: {"v_a": math.inf} | ({"beta_f": gains[n]} if n in gains else {}) for n in NAMES[key]}


def solve(design, **changes):
    """The exact operating point of a design (no compliance search), checked forward active."""
    points = sweep(design, "v_load", [changes.pop("v_load", design.values["v_load"])], **changes)
    assert points.converged.all() and points.in_good_region().all()
    return points


def node(points, name):
    return points.x[points.model.unknowns.index(name), 0]


# A 300 µA tail mirror on a 5 V rail, a 4 mA LED-string sink from 24 V, a
# 25 µA sensor bias running warm: scenarios of our own.
SCENARIOS = {
    "tail_5v": dict(i_ref=300e-6, v_supply=5.0, v_load=2.5),
    "led_24v": dict(i_ref=4e-3, v_supply=24.0, v_load=14.0),
    "sensor_warm": dict(i_ref=25e-6, v_supply=9.0, v_load=6.0, temp=338.15),
}


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("beta", [25.0, 120.0, 400.0])
def test_matched_ratio_is_the_published_wilson_ratio(key, polarity, beta):
    # Wilson 1968 / Gray et al. ch. 4: I_out/I_REF = 1 - 2/(beta^2 + 2 beta + 2);
    # Sedra & Smith write the same as 1/(1 + 2/(beta (beta + 2))) (from memory).
    # Holds for V_A -> inf and equal beta; the exact solve keeps the EM "-1" and
    # reverse terms, of relative size ~I_S/I_B ~ 1e-10 here.
    d = kit.design(key, polarity, devices=no_early(key, **{n: beta for n in NAMES[key]}),
                   i_ref=500e-6, v_supply=12.0, v_load=6.0)
    # beta_f is given at t_ref; the design point is at t_ref, so beta_F(T) = beta.
    ratio = solve(d).i_out[0] / 500e-6
    gray = 1 - 2 / (beta**2 + 2 * beta + 2)
    sedra_smith = 1 / (1 + 2 / (beta * (beta + 2)))
    assert ratio == pytest.approx(gray, rel=1e-9)
    assert ratio == pytest.approx(sedra_smith, rel=1e-9)


@pytest.mark.parametrize("key", KEYS)
def test_unequal_gains_follow_the_nodal_derivation(key):
    # Derived here with SymPy from KCL at the two nodes (x: I_REF = I_C1 + I_B3;
    # y: I_E3 = I_C2 + I_B2 + I_B1) with I_C1 = I_C2 (equal V_BE, equal I_S);
    # the 4-T form adds I_E4 = I_C1, which changes nothing.
    b1, b2, b3, i2, i_out = sp.symbols("b1 b2 b3 i2 i_out", positive=True)
    solution = sp.solve([sp.Eq(i_out, (i2 * (1 + 1 / b2) + i2 / b1) * b3 / (b3 + 1))], i2, dict=True)
    i_ref = (i2 + i_out / b3).subs(solution[0])
    ratio = sp.lambdify((b1, b2, b3), sp.simplify(i_out / i_ref))
    gains = {"Q1": 60.0, "Q2": 230.0, "Q3": 90.0, "Q4": 35.0}
    d = kit.design(key, devices=no_early(key, **gains), i_ref=1e-3, v_supply=12.0, v_load=5.0)
    point = solve(d)
    assert point.i_out[0] / 1e-3 == pytest.approx(ratio(60.0, 230.0, 90.0), rel=1e-9)
    # and the kit's closed form is that ratio too (to the solve's precision)
    forms = point.model.closed_forms(point.q)
    assert forms["finite_beta"][0] == pytest.approx(point.i_out[0], rel=1e-9)


@pytest.mark.parametrize("key", KEYS)
def test_ideal_form_in_the_large_beta_limit(key):
    # Common practice, no source: with base currents negligible a mirror copies
    # I_REF; the Wilson error 2/beta^2 is 2e-10 at beta = 1e5.
    d = kit.design(key, devices=no_early(key, **{n: 1e5 for n in NAMES[key]}),
                   i_ref=2e-3, v_supply=12.0, v_load=5.0)
    assert solve(d).i_out[0] == pytest.approx(2e-3, rel=1e-9)


def test_three_transistor_early_mismatch_and_its_removal():
    # Early law (Early, Proc. IRE 1952): I_C = I_S e^{V_BE/V_T}(1 + V_CE/V_A).  With
    # base currents negligible, Q1 carries I_REF at V_CE1 = V_BE2 + V_BE3 and Q2 copies
    # it at V_CE2 = V_BE2, so I_out/I_REF = (1 + V_BE2/V_A)/(1 + V_CE1/V_A) (derived
    # here from that law).  The 4-T form sets V_CE1 = V_BE2 + V_BE3 - V_BE4 ≈ V_BE2
    # and removes the mismatch (Gray et al., ch. 4, from memory).
    devices = {n: {"beta_f": 1e5, "v_a": 40.0} for n in ("Q1", "Q2")}
    devices["Q3"] = {"beta_f": 1e5, "v_a": math.inf}
    three = solve(kit.design("wilson_mirror", devices=devices, i_ref=1e-3, v_supply=12.0, v_load=6.0))
    t = {name: {k: v[0] for k, v in j.items()} for name, j in three.junctions.items()}
    expected = (1 + t["Q2"]["v_ce"] / 40.0) / (1 + t["Q1"]["v_ce"] / 40.0)
    assert t["Q1"]["v_ce"] == pytest.approx(t["Q2"]["v_be"] + t["Q3"]["v_be"], rel=1e-12)
    ratio_3 = three.i_out[0] / 1e-3
    assert ratio_3 == pytest.approx(expected, rel=1e-6)  # beta = 1e5: ~1e-7 left
    assert ratio_3 - 1 == pytest.approx(-0.65 / 40.0, rel=0.15)  # ≈ -V_BE/V_A
    devices["Q4"] = devices["Q1"]
    four = solve(kit.design("improved_wilson_mirror", devices=devices, i_ref=1e-3, v_supply=12.0,
                            v_load=6.0))
    assert abs(four.i_out[0] / 1e-3 - 1) < 0.02 * abs(ratio_3 - 1)


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("scenario", sorted(SCENARIOS))
def test_early_closed_form_tracks_the_exact_solve(key, scenario):
    # The Early-corrected closed form estimates each V_CE from V_BE(on) = 0.65 V;
    # a V_BE error of ~0.05 V moves 1 + V_CE/V_A by ~0.05/V_A: bound 3 x 0.1/V_A
    # per factor (derived here); the uncorrected form is off by ~V_BE/V_A or more.
    values = dict(SCENARIOS[scenario])
    temp = values.pop("temp", 298.15)
    d = kit.design(key, temp=temp, **values)
    ledger = {e.key: e for e in kit.evaluate(d).ledger}
    v_a = 100.0  # typical NPN of the kit
    assert abs(ledger["finite_beta_early"].error) < 3 * 0.1 / v_a
    assert abs(ledger["finite_beta_early"].error) < abs(ledger["finite_beta"].error)


# --- output resistance --------------------------------------------------------

def hand_nodal_r_out(four, gm, rpi, ro):
    """R_out of the (improved) Wilson mirror by nodal analysis written out by hand (NumPy).

    Small-signal KCL (currents leaving each node) with 1 V on the output, the
    emitter rail grounded and the ideal reference open; i_b = v_be/r_pi and
    i_c = g_m v_be + v_ce/r_o for every transistor (the same for NPN and PNP):
      x: Q1 collector (3-T) or the diode Q4 (4-T), Q3 base
      y: Q1 base, the diode Q2, Q3 emitter (-(i_b3 + i_c3))
      w (4-T): Q1 collector, Q4 emitter
    Returns the resistance seen into Q3's collector.
    """
    g1, g2, g3 = gm[:3]
    p1, p2, p3 = rpi[:3]
    o1, o2, o3 = ro[:3]
    y2 = 1 / p2 + g2 + 1 / o2  # diode Q2
    x3 = 1 / p3 + g3  # Q3's base and collector currents per volt of v_x - v_y
    if not four:
        # x: g1 v_y + v_x/o1 + (v_x - v_y)/p3 = 0
        # y: v_y/p1 + y2 v_y - x3 (v_x - v_y) - (1 - v_y)/o3 = 0
        a = np.array([[1 / o1 + 1 / p3, g1 - 1 / p3],
                      [-x3, 1 / p1 + y2 + x3 + 1 / o3]])
        v_x, v_y = np.linalg.solve(a, np.array([0.0, 1 / o3]))
    else:
        y4 = 1 / rpi[3] + gm[3] + 1 / ro[3]  # diode Q4, x -> w
        # x: (v_x - v_y)/p3 + y4 (v_x - v_w) = 0
        # y: as for 3-T;  w: g1 v_y + v_w/o1 - y4 (v_x - v_w) = 0
        a = np.array([[1 / p3 + y4, -1 / p3, -y4],
                      [-x3, 1 / p1 + y2 + x3 + 1 / o3, 0.0],
                      [-y4, g1, 1 / o1 + y4]])
        v_x, v_y, _ = np.linalg.solve(a, np.array([0.0, 1 / o3, 0.0]))
    return 1 / (g3 * (v_x - v_y) + (1 - v_y) / o3)


@pytest.mark.parametrize("four", [False, True])
def test_hand_nodal_analysis_reduces_to_beta_ro_over_two(four):
    # Gray et al., ch. 4 (from memory): R_out ≈ beta r_o3 / 2.  With common g_m and
    # r_pi and r_o of every transistor but Q3 -> inf, the nodal analysis gives
    # r_o3 (beta^2 + 2 beta + 2)/(2 (beta + 1)) + r_pi/(2 (beta + 1)) (derived here by
    # hand from the same network: Q2's diode carries Q3's emitter current, Q1 returns
    # it to Q3's base), and that tends to beta r_o3 / 2 for large beta.
    for beta, r_pi, r_o3 in ((80.0, 2.6e3, 1.3e5), (300.0, 7.7e4, 4.0e6), (1e6, 1e6, 1e5)):
        count = 4 if four else 3
        ro = [1e30, 1e30, r_o3, 1e30][:count]
        got = hand_nodal_r_out(four, [beta / r_pi] * count, [r_pi] * count, ro)
        by_hand = r_o3 * (beta**2 + 2 * beta + 2) / (2 * (beta + 1)) + r_pi / (2 * (beta + 1))
        assert got == pytest.approx(by_hand, rel=1e-9)
    assert by_hand == pytest.approx(1e6 * 1e5 / 2, rel=2e-6)  # beta r_o3/2 at beta = 1e6


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_r_out_agrees_with_the_hand_nodal_analysis(key, polarity):
    # The kit's exact R_out (implicit derivative of the large-signal solve) and its
    # nodal form against the hand nodal analysis above, fed with the hybrid-π values
    # of the solved point: g_m = I_C/V_T, r_pi = V_T/I_B, r_o = (V_A + V_CE)/I_C
    # (the M-CE Early model; Sedra & Smith, Gray et al. ch. 1, from memory).  They
    # differ only by the Ebers–Moll "-1" and reverse terms (~1e-9).
    d = kit.design(key, polarity, i_ref=1e-3, v_supply=15.0, v_load=6.0 if polarity == "npn" else 9.0,
                   temp=310.0, devices={"Q3": {"v_a": 70.0}})
    ev = kit.evaluate(d)
    v_t = K_OVER_Q * 310.0
    names = NAMES[key]
    j = [ev.parts[n].quantities for n in names]
    gm = [q["i_c"] / v_t for q in j]
    rpi = [v_t / q["i_b"] for q in j]
    ro = [(d.devices[n].v_a + q["v_ce"]) / q["i_c"] for n, q in zip(names, j)]
    by_hand = hand_nodal_r_out(len(names) == 4, gm, rpi, ro)
    assert ev.r_out == pytest.approx(by_hand, rel=1e-7)
    assert ev.r_out_forms["r_out_hybrid_pi"] == pytest.approx(by_hand, rel=1e-9)
    # beta r_o3/2 (Gray et al.) holds to O(1/beta) and r_pi/r_o: within 5 %.
    assert ev.r_out_forms["r_out_beta_ro_half"] == pytest.approx(ev.r_out, rel=0.05)
    # R_out of a few MΩ to tens of MΩ: far above r_o3 alone (about 100 kΩ here)
    assert ev.r_out > 20 * ro[2]


# --- compliance, regions, convergence -----------------------------------------------

@pytest.mark.parametrize("key", KEYS)
def test_compliance_low_edge_is_vbe_plus_vce_sat(key):
    # Gray et al., ch. 4 (from memory): V_out >= V_BE + V_CE(sat); with V_BE 0.6–0.7 V
    # and the kit's design V_CE(sat) 0.2 V that is 0.8–0.9 V (common practice, no source).
    d = kit.design(key, i_ref=1e-3, v_supply=12.0, v_load=5.0)
    low = kit.evaluate(d).compliance.low
    assert low.part == "Q3" and low.cause == "saturation"
    edge = sweep(d, "v_load", [low.voltage])
    v_y = edge.junctions["Q2"]["v_be"][0]
    assert low.voltage == pytest.approx(v_y + 0.2, abs=1e-5)
    assert 0.8 <= low.voltage <= 0.9


@pytest.mark.parametrize("key", KEYS)
def test_pnp_high_edge_names_q3(key):
    d = kit.design(key, "pnp", i_ref=1e-3, v_supply=12.0, v_load=5.0)
    high = kit.evaluate(d).compliance.high
    assert high.part == "Q3" and high.cause == "saturation"
    assert 12.0 - 0.95 <= high.voltage <= 12.0 - 0.85  # V_EB + V_EC(sat), PNP V_CE(sat) 0.25 V


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_load_sweep_across_both_edges_converges(key, polarity):
    d = kit.design(key, polarity, i_ref=1e-3, v_supply=12.0, v_load=6.0)
    c = kit.evaluate(d).compliance
    v = np.concatenate([np.linspace(c.low.voltage - 0.3, c.low.voltage + 1.0, 60),
                        np.linspace(c.high.voltage - 1.0, c.high.voltage + 0.3, 60)])
    points = sweep(d, "v_load", v)
    assert points.converged.all()
    regions = points.regions()["Q3"]
    inside = (v > c.low.voltage + 1e-4) & (v < c.high.voltage - 1e-4)
    outside = (v < c.low.voltage - 1e-4) | (v > c.high.voltage + 1e-4)
    assert (regions[inside] == "active").all()
    # outside: Q3 saturates (one end) or passes BV_CEO (the other, still active)
    saturating = outside & (points.junctions["Q3"]["v_ce"] < 1.0)
    assert saturating.sum() >= 10 and (regions[saturating] == "saturated").all()


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_vcb_zero_edge_is_q3_one_thermal_voltage_past_the_input_node(key, polarity):
    # Conservative edge: Q3 saturates once its collector junction is forward biased,
    # i.e. once the output passes the input node x at 2 V_BE (Gray et al., ch. 4,
    # from memory) — by more than one thermal voltage, the kit's zero-bias band
    # (kit.devices.bjt; V_T = kT/q from CODATA 2018).  Inside it no other transistor
    # limits: the improved Wilson's Q1, held at V_CB = V_BE4 - V_BE3 ≈ 0 by design,
    # stays inside over the whole range (it was called saturated at +1.6 mV before).
    npn = polarity == "npn"
    d = kit.design(key, polarity, i_ref=2e-3, v_supply=10.0, v_load=5.0)
    c = kit.evaluate(d, edge="vcb_zero").compliance
    edge = c.low if npn else c.high
    assert (edge.part, edge.cause) == ("Q3", "saturation")
    at_edge = sweep(d, "v_load", [edge.voltage])
    v_t = K_OVER_Q * d.temp
    assert at_edge.junctions["Q3"]["v_bc"][0] == pytest.approx(v_t, abs=1e-6)
    assert edge.voltage == pytest.approx(node(at_edge, "V_x") + (-v_t if npn else v_t), abs=1e-6)
    v_x = node(at_edge, "V_x") if npn else 10.0 - node(at_edge, "V_x")
    assert 1.2 < v_x < 1.45  # 2 V_BE at 2 mA (V_BE 0.6–0.7 V: common practice)
    # the far end is Q3's breakdown, as with the V_CE(sat) edge (no internal transistor limits)
    far = c.high if npn else c.low
    assert far.part == "Q3" and far.cause == "breakdown"
    assert far.voltage == pytest.approx(kit.evaluate(d).compliance.high.voltage if npn
                                        else kit.evaluate(d).compliance.low.voltage, abs=1e-5)


def test_improved_wilson_q1_sits_at_zero_bias_across_the_range():
    # The defect behind the previous limit 1.19–3.21 V: Q1's collector-base voltage
    # is the difference of two V_BEs (Q4 and Q3), a few mV either way over the whole
    # load range (Early effect of Q3: V_T ln((1 + V_CE3/V_A)/(1 + V_BE/V_A)) ≤ 9 mV
    # here, derived from the Early law), far inside one thermal voltage.
    d = kit.design("improved_wilson_mirror", i_ref=2e-3, v_supply=10.0, v_load=5.0)
    c = kit.evaluate(d, edge="vcb_zero").compliance
    v = np.linspace(c.low.voltage + 0.01, c.high.voltage - 0.01, 80)
    points = sweep(d, "v_load", v)
    v_bc1 = points.junctions["Q1"]["v_bc"]
    assert np.abs(v_bc1).max() < 0.01
    assert v_bc1.min() < 0 < v_bc1.max()  # it crosses zero: the old rule tripped here
    assert (points.regions("vcb_zero")["Q1"] == "active").all()
    bound = K_OVER_Q * d.temp * np.log((1 + v / 100.0) / (1 + 0.65 / 100.0))
    assert np.all(v_bc1 < bound + 1e-3)


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_whole_scan_window_converges(key, polarity):
    # The compliance search scans +-(supply + BV_CEO); deep saturation (Q3 dragging node
    # y with its collector) and the far side must solve too, each point quickly.
    d = kit.design(key, polarity, i_ref=2e-3, v_supply=12.0, v_load=5.0)
    points = sweep(d, "v_load", np.linspace(-52.0, 52.0, 105))
    assert points.converged.all()
    assert points.iterations.max() < 60


# --- input checks -------------------------------------------------------------------

def test_bad_reference_current_names_the_parameter():
    with pytest.raises(ParameterError) as err:
        kit.design("wilson_mirror", i_ref=-1e-3)
    assert err.value.parameter == "i_ref" and "1e-09" in err.value.valid


@pytest.mark.parametrize("key", KEYS)
def test_supply_below_the_input_node_is_refused(key):
    # The input node sits at 2 V_BE ≈ 1.3 V: a 1.2 V supply cannot feed the reference
    # (the reference current part has no headroom at any load voltage).
    d = kit.design(key, i_ref=1e-3, v_supply=1.2, v_load=1.1)
    with pytest.raises(OperatingPointError) as err:
        kit.evaluate(d)
    assert err.value.parameter == "v_supply"
    # the limiting part is the reference current itself, by the drop it lacks
    point = sweep(d, "v_load", [1.1])
    worst, keys = point.worst_margin()
    assert keys[0] == ("I_REF", "headroom")
    assert worst[0] == pytest.approx(1.2 - node(point, "V_x"), abs=1e-12) and -0.2 < worst[0] < 0
