"""Zener-, diode-string- and zener-plus-diode-referenced sources against outside results.

Each check names its source: an independent solve of hand-written Kirchhoff
equations by ``scipy.optimize.root`` (MINPACK) with the published device
laws (Ebers & Moll, Proc. IRE 42, 1954, via the conftest reference model;
the PWL zener and linear zener TC of Tietze & Schenk, *Electronic Circuits*,
zener references; the diode law ``I = I_S (exp(V/(n V_T)) - 1)``; Getreu's
I_S temperature law — all from memory), the V_BE slope at constant current
``dV_BE/dT = (V_BE - E_g)/T - m_IS k/q`` (Gray, Hurst, Lewis & Meyer ch. 1;
Tsividis, IEEE JSSC SC-15, 1980; from memory), Thevenin's theorem,
``k`` and ``q`` from ``scipy.constants``, and facts of the trade.  Designs
are scenarios invented for these tests.

The zener (``D1``) and the diodes (``D1`` of the string, ``D2`` beside the
zener) are parts with parameters of their own: ``D1.v_z0``, ``D2.i_s``,
``D1.count``.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants
from scipy.optimize import root

import kit
from kit.analysis.evaluation import model_of
from kit.errors import OperatingPointError, ParameterError
from kit.model.solve import solve_points

KEYS = ("zener_source", "diode_string_source", "zener_diode_source")
K_OVER_Q = scipy.constants.k / scipy.constants.e  # V/K, CODATA 2018 (exact in the 2019 SI)
E_G, M_IS = 1.11, 3.0  # the typical transistor's I_S law (kit.devices.bjt typical values)
# base current and β(T) out of the way
IDEAL = {"beta_f": 1e5, "v_a": math.inf, "beta_temp_exponent": 0.0}

# Scenarios of our own, as (values, devices): a warm 6.2 V zener sink from 20 V;
# a cold PNP source with a 5.1 V zener and a leaky diode; a three-diode LED-driver sink.
WARM_ZENER = (dict(r_feed=4.7e3, r_e=1.2e3, v_supply=20.0, v_load=12.0),
              {"D1": dict(v_z0=6.2, r_z=8.0, tc_z=2.2e-3)})
COLD_ZENER_DIODE = (dict(r_feed=3.9e3, r_e=3.3e3, v_supply=18.0, v_load=3.0),
                    {"D1": dict(v_z0=5.1, r_z=25.0, tc_z=0.1e-3),
                     "D2": dict(i_s=5e-10, n=1.6, i_s_temp_exponent=3.5, e_g=1.12)})
THREE_DIODES = (dict(r_feed=6.8e3, r_e=680.0, v_supply=15.0, v_load=7.0),
                {"D1": dict(count=3.0, i_s=4e-12, n=1.3)})
DEVICE = {"beta_f": 140.0, "v_a": 75.0, "i_s": 6e-15}


def make(key, polarity, scenario=({}, {}), *, q1=None, parts=None, temp=298.15, tcr=None, t_rise=None,
         **values):
    """A design from a scenario with values, Q1's and other parts' parameters changed."""
    scenario_values, devices = scenario
    devices = {name: dict(p) for name, p in devices.items()}
    for name, changes in ({"Q1": q1 or {}} | (parts or {})).items():
        devices[name] = devices.get(name, {}) | changes
    return kit.design(key, polarity, devices=devices, temp=temp, tcr=tcr, t_rise=t_rise,
                      **(scenario_values | values))


def solve(design, **overrides):
    """Exact operating point (one point) with flat parameters overridden."""
    return solve_points(model_of(design), design.parameters() | overrides).require()


def node_voltages(points):
    return dict(zip(points.model.unknowns, points.x[:, 0]))


# ---------------------------------------------------------------------------
# an independent solve of hand-written KCL (shares no code with the kit)

def operating_values(p):
    """Device and part values at each part's junction temperature, from the published laws."""
    t, t0 = p["temp"], p["t_ref"]
    t_q = t + p["Q1.t_rise"]
    # Getreu / Gummel-Poon I_S law (from memory)
    i_s = (p["Q1.i_s"] * (t_q / t0) ** p["Q1.i_s_temp_exponent"]
           * np.exp(p["Q1.e_g"] / K_OVER_Q * (1 / t0 - 1 / t_q)))
    beta = p["Q1.beta_f"] * (t_q / t0) ** p["Q1.beta_temp_exponent"] * (1 + p["Q1.beta_tc"] * (t_q - t0))
    o = {"v_t": K_OVER_Q * t_q, "i_s": i_s, "beta": beta, "beta_r": p["Q1.beta_r"], "v_a": p["Q1.v_a"],
         "v_cc": p["v_supply"], "v_out": p["v_load"]}
    for name in ("r_feed", "r_e"):  # IEC 60115-1 linear TCR (from memory)
        o[name] = p[name] * (1 + p[f"tcr_{name}"] * (t - t0))
    # PWL zener with a linear TC at its own junction (Tietze & Schenk, from memory)
    t_z = t + p["D1.t_rise"]
    o["v_z0"], o["r_z"] = p["D1.v_z0"] + p["D1.tc_z"] * (t_z - t0), p["D1.r_z"]
    # the I_S law written for a junction of emission coefficient n, at the diode's junction
    t_d = t + p["D2.t_rise"]
    n = p["D2.n"]
    o["n_d"], o["v_t_d"] = p["D2.count"] * n, K_OVER_Q * t_d
    o["i_sd"] = (p["D2.i_s"] * (t_d / t0) ** (p["D2.i_s_temp_exponent"] / n)
                 * np.exp(p["D2.e_g"] / (n * K_OVER_Q) * (1 / t0 - 1 / t_d)))
    return o


def zener_diode_kcl(polarity, v_b, v_e, v_m, o, ebers_moll):
    """Currents leaving nodes b, e, m (A).  NPN: V_CC-R_Z-b, b-diode-m-zener-0.
    PNP: V_CC-zener-m-diode-b, b-R_Z-0, R_E from V_CC."""
    def diode(v):
        return o["i_sd"] * (np.exp(v / (o["n_d"] * o["v_t_d"])) - 1)

    if polarity == "npn":
        i_c, i_b = ebers_moll(v_b - v_e, v_b - o["v_out"], o)
        i_d, i_z = diode(v_b - v_m), (v_m - o["v_z0"]) / o["r_z"]
        return ((v_b - o["v_cc"]) / o["r_feed"] + i_d + i_b, v_e / o["r_e"] - i_c - i_b, i_z - i_d)
    i_c, i_b = ebers_moll(v_e - v_b, o["v_out"] - v_b, o)
    i_z, i_d = (o["v_cc"] - v_m - o["v_z0"]) / o["r_z"], diode(v_m - v_b)
    return (v_b / o["r_feed"] - i_d - i_b, (v_e - o["v_cc"]) / o["r_e"] + i_c + i_b, i_d - i_z)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_exact_solve_matches_independent_kcl(polarity, reference):
    # scipy.optimize.root (MINPACK hybrd) on hand-written KCL with the published laws;
    # each part warmer than the point by its own rise, so each law must use its own junction
    design = make("zener_diode_source", polarity, COLD_ZENER_DIODE, q1=DEVICE, temp=278.15,
                  tcr={"r_e": 50e-6, "r_feed": -200e-6}, t_rise={"Q1": 9.0, "D1": 4.0, "D2": 2.5})
    points = solve(design)
    x = node_voltages(points)
    o = operating_values(design.parameters())
    scale = o["v_cc"] / o["r_feed"]

    def residual(v):
        return [f / scale for f in zener_diode_kcl(polarity, *(v * 1e-3), o, reference.ebers_moll)]

    guess = np.array([x["V_b"], x["V_e"], x["V_m"]]) * 1e3 + 5.0  # 5 mV off the kit's answer
    found = root(residual, guess, method="hybr", options={"xtol": 1e-15})
    v_b, v_e, v_m = found.x * 1e-3
    assert max(abs(f) for f in zener_diode_kcl(polarity, v_b, v_e, v_m, o, reference.ebers_moll)) < 1e-15
    sign = 1 if polarity == "npn" else -1
    i_c, _ = reference.ebers_moll(sign * (v_b - v_e), sign * (v_b - o["v_out"]), o)
    assert points.i_out[0] == pytest.approx(i_c, rel=1e-9)
    assert (x["V_b"], x["V_e"], x["V_m"]) == pytest.approx((v_b, v_e, v_m), abs=1e-9)


# ---------------------------------------------------------------------------
# closed forms in the limits where their assumptions hold

def mid_load(polarity):
    return 12.0 if polarity == "npn" else 6.0


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_zener_closed_forms_are_exact_in_their_limits(polarity):
    design = make("zener_source", polarity, WARM_ZENER, q1={"v_a": math.inf}, v_load=mid_load(polarity))
    points = solve(design)
    v_be = points.junctions["Q1"]["v_be"][0]
    # Thevenin's theorem turns R_Z and the PWL zener into V_TH behind R_Z || r_z; the
    # exponential junction then has the Wright-omega solution (Banwell & Jayakumar,
    # Electron. Lett. 36, 2000): exact for V_A -> inf up to the dropped "-1" terms.
    forms = points.model.closed_forms(points.q)
    assert forms["exponential"][0] == pytest.approx(points.i_out[0], rel=1e-9)
    # With V_BE(on) set to the solved V_BE, the fixed-V_BE divider form (Sedra & Smith,
    # BJT biasing, from memory) on the same Thevenin source is exact.
    at_vbe = solve(design, v_be_on=v_be)
    assert at_vbe.model.closed_forms(at_vbe.q)["fixed_vbe"][0] == pytest.approx(points.i_out[0], rel=1e-9)
    # A stiff zener (r_z -> 0, tiny base current): alpha (V_Z0 - V_BE)/R_E
    # (Tietze & Schenk, from memory); what is left is r_z I_Z and beta = 1e5.
    stiff = make("zener_source", polarity, WARM_ZENER, q1=IDEAL, parts={"D1": {"r_z": 0.01}},
                 v_load=mid_load(polarity))
    stiff_points = solve(stiff)
    v_be = stiff_points.junctions["Q1"]["v_be"][0]
    stiff_points = solve(stiff, v_be_on=v_be)
    assert stiff_points.model.closed_forms(stiff_points.q)["stiff_reference"][0] == pytest.approx(
        stiff_points.i_out[0], rel=1e-4)


@pytest.mark.parametrize("key", ["diode_string_source", "zener_diode_source"])
def test_linearised_reference_error_is_second_order_in_base_current(key):
    # Linearising the reference at its unloaded current leaves an error of second
    # order in the base-current loading (Taylor's theorem), so ten times the gain
    # cuts it about a hundredfold; what remains at huge gain is the dropped I_S
    # ("-1") term, below 1e-6.
    scenario = THREE_DIODES if key == "diode_string_source" else ({}, {})
    errors = {}
    for beta in (30.0, 300.0, 1e5):
        points = solve(make(key, "npn", scenario, q1={"beta_f": beta, "v_a": math.inf}))
        exponential = points.model.closed_forms(points.q)["exponential"][0]
        errors[beta] = exponential / points.i_out[0] - 1
    assert abs(errors[1e5]) < 1e-6
    ratio = (errors[30.0] - errors[1e5]) / (errors[300.0] - errors[1e5])
    assert 60 < ratio < 160
    assert abs(errors[30.0]) < 1e-3  # and it is small at a low gain too


@pytest.mark.parametrize("key, count", [("zener_diode_source", 1), ("zener_diode_source", 2),
                                        ("diode_string_source", 2), ("diode_string_source", 3)])
def test_stiff_form_when_each_diode_matches_q1(key, count):
    # With every diode a copy of Q1's junction carrying Q1's current, each drop is V_BE:
    # V_E = V_Z0 + (count - 1) V_BE beside a zener, (count - 1) V_BE for a string, and the
    # hand rule I = alpha V_E / R_E (Tietze & Schenk, from memory) holds with V_BE(on) = V_BE.
    current, temp = 1e-3, 298.15
    v_be = K_OVER_Q * temp * math.log(current / 1e-14)
    zener = 5.6 if key == "zener_diode_source" else 0.0
    v_e = zener + (count - 1) * v_be
    diode = "D2" if key == "zener_diode_source" else "D1"
    r_feed = (24.0 - zener - count * v_be) / current  # feeds the diodes Q1's current
    design = make(key, "npn", q1=IDEAL, parts={diode: {"i_s": 1e-14, "n": 1.0, "count": float(count)}}
                  | ({"D1": {"v_z0": zener, "r_z": 0.01}} if zener else {}),
                  r_e=v_e / current, r_feed=r_feed, v_supply=24.0, v_load=12.0, temp=temp)
    points = solve(design)
    solved_vbe = points.junctions["Q1"]["v_be"][0]
    at_vbe = solve(design, v_be_on=solved_vbe)
    stiff = at_vbe.model.closed_forms(at_vbe.q)["stiff_reference"][0]
    assert stiff == pytest.approx(points.i_out[0], rel=1e-4)
    assert points.i_out[0] == pytest.approx(current, rel=2e-3)  # the scenario is what it says


# ---------------------------------------------------------------------------
# temperature

def vbe_slope(v_be, temp):
    """dV_BE/dT at constant current for the I_S law (Gray et al. ch. 1; Tsividis 1980; from memory)."""
    return (v_be - E_G) / temp - M_IS * K_OVER_Q


@pytest.mark.parametrize("tc_z", [0.0, 2.2e-3])
def test_zener_tempco_follows_the_first_order_form(tc_z):
    design = make("zener_source", "npn", WARM_ZENER, q1=IDEAL, parts={"D1": {"r_z": 0.01, "tc_z": tc_z}},
                  temp=310.0)
    ev = kit.evaluate(design)
    v_be = ev.parts["Q1"].quantities["v_be"]
    v_e = ev.node_voltages["V_e"]
    v_t = K_OVER_Q * design.temp
    # I R_E = V_Z(T) - V_BE(I, T): d/dT with dV_BE/dT = slope + V_T (1/I) dI/dT gives
    # (1/I) dI/dT = (dV_Z/dT - slope)/(V_E + V_T), where the PWL zener fed through R_Z
    # moves by TC_Z R_Z/(R_Z + r_z) (derived here from the laws above)
    r_feed, r_z = design.values["r_feed"], design.devices["D1"].r_z
    zener_drift = tc_z * r_feed / (r_feed + r_z)
    assert ev.tempco == pytest.approx((zener_drift - vbe_slope(v_be, design.temp)) / (v_e + v_t), rel=1e-7)
    # the hand form (TC_Z - dV_BE/dT)/(V_Z - V_BE) (Tietze & Schenk, from memory) to within 1 %
    hand = (tc_z - vbe_slope(v_be, design.temp)) / (design.devices["D1"].v_z0 - v_be)
    assert ev.tempco == pytest.approx(hand, rel=1e-2)
    # V_BE's slope is about -2 mV/K (common practice, no source)
    assert -2.4e-3 < vbe_slope(v_be, design.temp) < -1.6e-3


def test_zener_diode_cancels_the_vbe_drift():
    # Same 2 mA, zero-TC zener: the forward diode's drift cancels Q1's to first order.
    q1 = {"beta_temp_exponent": 0.0}
    zener = {"D1": dict(v_z0=5.6, r_z=0.01, tc_z=0.0)}
    values = dict(r_feed=3.3e3, v_supply=24.0, v_load=12.0)
    alone = kit.evaluate(make("zener_source", "npn", (values, zener), q1=q1, r_e=2.46e3))
    paired = kit.evaluate(make("zener_diode_source", "npn", (values, zener), q1=q1, r_e=2.8e3,
                               parts={"D2": dict(i_s=1e-14, n=1.0)}))
    assert alone.i_out == pytest.approx(paired.i_out, rel=0.03)
    assert abs(paired.tempco) < 0.05 * abs(alone.tempco)
    assert alone.tempco > 300e-6  # -dV_BE/dT over V_E: about +2 mV/K / 5 V (common practice)


@pytest.mark.parametrize("parts", [{"D1": dict(tc_z=0.0)},
                                   {"D1": dict(tc_z=1.5e-3), "D2": dict(n=1.0, i_s=1e-14)}])
def test_zener_diode_tempco_follows_the_first_order_form(parts):
    parts = {"D1": parts["D1"] | {"r_z": 0.01}} | {k: v for k, v in parts.items() if k != "D1"}
    design = make("zener_diode_source", "npn", q1=IDEAL, parts=parts, temp=310.0)
    ev = kit.evaluate(design)
    x, values, temp = ev.node_voltages, design.values, design.temp
    v_t, n, tc_z = K_OVER_Q * temp, design.devices["D2"].n, design.devices["D1"].tc_z
    v_d = x["V_b"] - x["V_m"]
    i_d = (values["v_supply"] - x["V_b"]) / values["r_feed"]
    # V_E = V_Z0 + V_D - V_BE (derived here): the diode's current moves with V_B
    # through R_Z (g = n V_T/(I_D R_Z)), its slope at constant current has the
    # same form as V_BE's (the diode's I_S law is the transistor's for emission coefficient n).
    g = n * v_t / (i_d * values["r_feed"])
    diode_drift = (vbe_slope(v_d, temp) - g * tc_z) / (1 + g)
    expected = (tc_z + diode_drift - vbe_slope(ev.parts["Q1"].quantities["v_be"], temp)) / (x["V_e"] + v_t)
    assert ev.tempco == pytest.approx(expected, abs=0.05e-6)


@pytest.mark.parametrize("scenario", [({}, {}), THREE_DIODES], ids=["two", "three"])
def test_diode_string_tempco(scenario):
    design = make("diode_string_source", "npn", scenario, q1=IDEAL, temp=310.0)
    ev = kit.evaluate(design)
    x, v, temp = ev.node_voltages, design.values, design.temp
    string = design.devices["D1"]
    count, v_t = string.count, K_OVER_Q * temp
    v_d = x["V_b"] / count
    i_d = (v["v_supply"] - x["V_b"]) / v["r_feed"]
    # V_E = count V_D - V_BE (derived here), with each diode's current moving with V_B through R_Z
    diode_drift = vbe_slope(v_d, temp) / (1 + count * string.n * v_t / (i_d * v["r_feed"]))
    expected = (count * diode_drift - vbe_slope(ev.parts["Q1"].quantities["v_be"], temp)) / (x["V_e"] + v_t)
    assert ev.tempco == pytest.approx(expected, rel=1e-4)
    # a diode-referenced sink loses about 0.3 %/K (common practice, no source)
    assert -4.5e-3 < ev.tempco < -2.0e-3


# ---------------------------------------------------------------------------
# output resistance

SCENARIOS = {"zener_source": WARM_ZENER, "diode_string_source": THREE_DIODES,
             "zener_diode_source": COLD_ZENER_DIODE}
# load voltages in the middle of each compliance range
MID_LOAD = {("zener_source", "npn"): 12.0, ("zener_source", "pnp"): 6.0,
            ("diode_string_source", "npn"): 7.0, ("diode_string_source", "pnp"): 5.0,
            ("zener_diode_source", "npn"): 12.0, ("zener_diode_source", "pnp"): 3.0}


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("key", KEYS)
def test_hybrid_pi_output_resistance(key, polarity):
    # Hybrid-π R_out of the degenerated stage with the base returned through
    # R_B = R_Z ‖ r_reference (Sedra & Smith; Gray et al. ch. 3; from memory; the exact
    # form with R_B of UC Berkeley EE105 notes).  It linearises the same model and
    # drops only the Ebers–Moll "-1" leakage terms (I_S/β_R ≈ 1e-14 A against a base
    # current of µA), so it meets the exact R_out far inside 1e-6.
    design = make(key, polarity, SCENARIOS[key], q1=DEVICE, temp=323.15,
                  tcr={"r_e": 120e-6, "r_feed": -300e-6}, v_load=MID_LOAD[key, polarity])
    points = solve(design)
    assert points.in_good_region().all()
    hybrid = points.model.extras(points.x, points.q)["r_out_hybrid_pi"][0]
    assert hybrid == pytest.approx(points.r_out[0], rel=1e-6)
    # R_out of a degenerated source is far above r_o = (V_A + V_CE)/I_C
    # (the β r_o ceiling; Gray et al. ch. 3, from memory)
    j = points.junctions["Q1"]
    r_o = (DEVICE["v_a"] + j["v_ce"][0]) / j["i_c"][0]
    assert 5 * r_o < points.r_out[0] < (j["i_c"][0] / j["i_b"][0] + 1) * r_o


# ---------------------------------------------------------------------------
# compliance, limits and bad input

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_compliance_edges_name_the_limiting_transistor(polarity):
    design = make("zener_source", polarity, WARM_ZENER, q1=DEVICE, v_load=mid_load(polarity))
    ev = kit.evaluate(design)
    low, high = ev.compliance.low, ev.compliance.high
    v_e = ev.node_voltages["V_e"]
    v_ce_sat, bv_ceo = design.devices["Q1"].v_ce_sat, design.devices["Q1"].bv_ceo
    # a sink holds down to V_E + V_CE(sat) and a source up to V_E - V_EC(sat); breakdown
    # at V_CE = BV_CEO (Sedra & Smith, BJT current sources; from memory).  V_E moves a
    # little with the load through the Early effect and the base current.
    saturation, breakdown = (low, high) if polarity == "npn" else (high, low)
    sign = 1 if polarity == "npn" else -1
    assert (saturation.part, saturation.cause) == ("Q1", "saturation")
    assert (breakdown.part, breakdown.cause) == ("Q1", "breakdown")
    assert saturation.voltage == pytest.approx(v_e + sign * v_ce_sat, abs=5e-3)
    assert breakdown.voltage == pytest.approx(v_e + sign * bv_ceo, abs=5e-2)


@pytest.mark.parametrize("key", ["zener_source", "zener_diode_source"])
def test_starved_zener_is_refused(key):
    # About 0.7 mA of feed current cannot hold a zener whose knee is at 2 mA
    design = make(key, "npn", parts={"D1": {"i_z_min": 2e-3}}, r_feed=13e3)
    points = solve(design)
    margins = points.margins()
    assert margins["D1", "zener_current"][0] < 0
    assert points.regions()["D1"][0] == "below knee"
    with pytest.raises(OperatingPointError) as caught:
        kit.evaluate(design)
    assert caught.value.parameter == "v_supply"  # more supply would feed the zener


def test_zener_dissipation_limit():
    # 5.6 V at about 3.5 mA is about 20 mW: a 10 mW part is overloaded
    design = make("zener_source", "npn", parts={"D1": {"p_z_max": 0.01}})
    points = solve(design)
    zener = points.junctions["D1"]
    assert 0.015 < zener["v_z"][0] * zener["i_z"][0] < 0.025
    assert points.margins()["D1", "power"][0] < 0
    with pytest.raises(OperatingPointError):
        kit.evaluate(design)


@pytest.mark.parametrize("key, part", [("diode_string_source", "D1"), ("zener_diode_source", "D2")])
def test_diode_count_must_be_whole_and_in_range(key, part):
    with pytest.raises(ParameterError) as caught:
        kit.design(key, "npn", devices={part: {"count": 2.5}})
    assert caught.value.parameter == f"{part}.count"
    with pytest.raises(ParameterError) as caught:
        kit.design(key, "npn", devices={part: {"count": 9.0}})  # beyond the range
    assert caught.value.parameter == f"{part}.count"


def test_old_value_names_are_refused_with_the_new_place():
    # the zener's voltage is a parameter of the part D1 now, not a value of the topology
    with pytest.raises(ParameterError) as caught:
        kit.design("zener_source", v_z0=5.1)
    assert caught.value.parameter == "v_z0"
    assert "r_feed" in caught.value.valid


def test_topology_defaults_of_the_parts():
    # each topology gives its parts its own typical values (scenarios of our own)
    assert kit.design("diode_string_source").devices["D1"].count == 2.0
    assert kit.design("zener_diode_source").devices["D2"].count == 1.0
    paired = kit.design("zener_diode_source", "pnp").devices["D1"]
    assert (paired.v_z0, paired.r_z, paired.tc_z) == (5.6, 20.0, 0.2e-3)
    alone = kit.design("zener_source", "pnp").devices["D1"]
    assert (alone.v_z0, alone.r_z, alone.tc_z) == (5.6, 15.0, 0.5e-3)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("key", KEYS)
def test_load_sweep_across_compliance_converges(key, polarity):
    design = kit.design(key, polarity)
    ev = kit.evaluate(design)
    low, high = ev.compliance.low.voltage, ev.compliance.high.voltage
    grid = np.linspace(low - 8.0, high + 8.0, 161)
    points = solve_points(model_of(design), design.parameters() | {"v_load": grid})
    assert points.converged.all()
    # outside compliance the source is flagged, never reported as a working source
    worst, _ = points.worst_margin()
    outside = (grid < low - 1e-3) | (grid > high + 1e-3)
    assert (worst[outside] < 0).all() and (worst[~outside] > -1e-6).all()
