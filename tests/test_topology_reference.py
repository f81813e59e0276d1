"""Zener-, diode-string- and zener-plus-diode-referenced sources against outside results.

Each check names its source: an independent solve of hand-written Kirchhoff
equations by ``scipy.optimize.root`` (MINPACK) with the published device
laws (Ebers & Moll, Proc. IRE 42, 1954, via the conftest reference model;
the PWL zener and linear zener TC of Tietze & Schenk, *Electronic Circuits*,
zener references; the diode law ``I = I_S (exp(V/(n V_T)) - 1)``; Getreu's
I_S temperature law — all from memory), the V_BE slope at constant current
``dV_BE/dT = (V_BE - E_g)/T - XTI k/q`` (Gray, Hurst, Lewis & Meyer ch. 1;
Tsividis, IEEE JSSC SC-15, 1980; from memory), Thevenin's theorem,
``k`` and ``q`` from ``scipy.constants``, finite differences of the exact
solve, and facts of the trade.  Designs are scenarios invented for these tests.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.constants
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.optimize import root

import kit
from kit.compliance import margins
from kit.errors import OperatingPointError, ParameterError
from kit.evaluation import model_of
from kit.solve import solve_points

KEYS = ("zener_source", "diode_string_source", "zener_diode_source")
K_OVER_Q = scipy.constants.k / scipy.constants.e  # V/K, CODATA 2018 (exact in the 2019 SI)
E_G, XTI = 1.11, 3.0  # the typical model's I_S law (kit.devices.bjt.BJTModel defaults)
IDEAL = {"Q1": {"beta_f": 1e5, "v_a": math.inf, "xtb": 0.0}}  # base current and β(T) out of the way

# scenarios of our own: a warm 6.2 V zener sink from 20 V; a cold PNP source
# with a 5.1 V zener and a leaky diode; a three-diode LED-driver sink
WARM_ZENER = dict(r_feed=4.7e3, r_e=1.2e3, v_z0=6.2, r_z=8.0, tc_z=2.2e-3, v_supply=20.0,
                  v_load=12.0)
COLD_ZENER_DIODE = dict(r_feed=3.9e3, r_e=3.3e3, v_z0=5.1, r_z=25.0, tc_z=0.1e-3, i_sd=5e-10,
                        n_id=1.6, xti_d=3.5, e_g_d=1.12, v_supply=18.0, v_load=3.0)
THREE_DIODES = dict(r_feed=6.8e3, r_e=680.0, n_diodes=3.0, i_sd=4e-12, n_id=1.3, v_supply=15.0,
                    v_load=7.0)
DEVICE = {"Q1": {"beta_f": 140.0, "v_a": 75.0, "i_s": 6e-15}}


def solve(design, **overrides):
    """Exact operating point (one point) with flat parameters overridden."""
    points = solve_points(model_of(design), design.parameters() | overrides).require()
    return points


def node_voltages(points):
    return dict(zip(points.model.unknowns, points.x[:, 0]))


# ---------------------------------------------------------------------------
# an independent solve of hand-written KCL (shares no code with the kit)

def operating_values(p):
    """Device and part values at the temperature of the point, from the published laws."""
    t, t0 = p["temp"], p["t_ref"]
    v_t = K_OVER_Q * t
    # Getreu / Gummel-Poon I_S law (from memory)
    i_s = p["Q1.i_s"] * (t / t0) ** p["Q1.xti"] * np.exp(p["Q1.e_g"] / K_OVER_Q * (1 / t0 - 1 / t))
    beta = p["Q1.beta_f"] * (t / t0) ** p["Q1.xtb"] * (1 + p["Q1.beta_tc"] * (t - t0))
    o = {"v_t": v_t, "i_s": i_s, "beta": beta, "beta_r": p["Q1.beta_r"], "v_a": p["Q1.v_a"],
         "v_cc": p["v_supply"], "v_out": p["v_load"]}
    for name in ("r_feed", "r_e"):  # IEC 60115-1 linear TCR (from memory)
        o[name] = p[name] * (1 + p[f"tcr_{name}"] * (t - t0))
    if "v_z0" in p:  # PWL zener with a linear TC (Tietze & Schenk, from memory)
        o["v_z0"], o["r_z"] = p["v_z0"] + p["tc_z"] * (t - t0), p["r_z"]
    if "i_sd" in p:  # the I_S law written for a junction of emission coefficient n
        n = p["n_id"]
        o["n_id"] = n
        o["i_sd"] = (p["i_sd"] * (t / t0) ** (p["xti_d"] / n)
                     * np.exp(p["e_g_d"] / (n * K_OVER_Q) * (1 / t0 - 1 / t)))
    return o


def zener_diode_kcl(polarity, v_b, v_e, v_m, o, ebers_moll):
    """Currents leaving nodes b, e, m (A).  NPN: V_CC-R_Z-b, b-diode-m-zener-0.
    PNP: V_CC-zener-m-diode-b, b-R_Z-0, R_E from V_CC."""
    def diode(v):
        return o["i_sd"] * (np.exp(v / (o["n_id"] * o["v_t"])) - 1)

    if polarity == "npn":
        i_c, i_b = ebers_moll(v_b - v_e, v_b - o["v_out"], o)
        i_d, i_z = diode(v_b - v_m), (v_m - o["v_z0"]) / o["r_z"]
        return ((v_b - o["v_cc"]) / o["r_feed"] + i_d + i_b, v_e / o["r_e"] - i_c - i_b, i_z - i_d)
    i_c, i_b = ebers_moll(v_e - v_b, o["v_out"] - v_b, o)
    i_z, i_d = (o["v_cc"] - v_m - o["v_z0"]) / o["r_z"], diode(v_m - v_b)
    return (v_b / o["r_feed"] - i_d - i_b, (v_e - o["v_cc"]) / o["r_e"] + i_c + i_b, i_d - i_z)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_exact_solve_matches_independent_kcl(polarity, reference):
    # scipy.optimize.root (MINPACK hybrd) on hand-written KCL with the published laws
    design = kit.design("zener_diode_source", polarity, devices=DEVICE, temp=278.15,
                        tcr={"r_e": 50e-6, "r_feed": -200e-6}, **COLD_ZENER_DIODE)
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

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_zener_closed_forms_are_exact_in_their_limits(polarity):
    design = kit.design("zener_source", polarity, devices={"Q1": {"v_a": math.inf}},
                        **(WARM_ZENER | {"v_load": 12.0 if polarity == "npn" else 6.0}))
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
    assert at_vbe.model.closed_forms(at_vbe.q)["fixed_vbe"][0] == pytest.approx(points.i_out[0],
                                                                                rel=1e-9)
    # A stiff zener (r_z -> 0, tiny base current): alpha (V_Z0 - V_BE)/R_E
    # (Tietze & Schenk, from memory); what is left is r_z I_Z and beta = 1e5.
    stiff = kit.design("zener_source", polarity, devices=IDEAL,
                       **(WARM_ZENER | {"r_z": 0.01, "v_load": 12.0 if polarity == "npn" else 6.0}))
    stiff_points = solve(stiff)
    v_be = stiff_points.junctions["Q1"]["v_be"][0]
    stiff_points = solve(stiff, v_be_on=v_be)
    assert stiff_points.model.closed_forms(stiff_points.q)["stiff_reference"][0] == pytest.approx(
        stiff_points.i_out[0], rel=1e-4)


@pytest.mark.parametrize("key", ["diode_string_source", "zener_diode_source"])
def test_linearised_reference_error_is_second_order_in_base_current(key):
    # Linearising the reference at its unloaded current leaves an error of second
    # order in the base-current loading (Taylor's theorem), so ten times the gain
    # cuts it about a hundredfold; what remains at huge gain is the dropped I_SD
    # ("-1") term, below 1e-6.
    values = THREE_DIODES if key == "diode_string_source" else {}
    errors = {}
    for beta in (30.0, 300.0, 1e5):
        design = kit.design(key, "npn", devices={"Q1": {"beta_f": beta, "v_a": math.inf}}, **values)
        points = solve(design)
        exponential = points.model.closed_forms(points.q)["exponential"][0]
        errors[beta] = exponential / points.i_out[0] - 1
    assert abs(errors[1e5]) < 1e-6
    ratio = (errors[30.0] - errors[1e5]) / (errors[300.0] - errors[1e5])
    assert 60 < ratio < 160
    assert abs(errors[30.0]) < 1e-3  # and it is small at a low gain too


def test_zener_diode_stiff_form_when_the_diode_matches_q1():
    # With the diode a copy of Q1's junction carrying Q1's current, V_D = V_BE and the
    # reference gives I = alpha V_Z0 / R_E (Tietze & Schenk, from memory).
    current, v_z0 = 1e-3, 5.6
    r_e = v_z0 / current
    v_d = K_OVER_Q * 298.15 * math.log(current / 1e-14)
    r_feed = (24.0 - v_z0 - v_d) / current  # feeds the diode Q1's current
    design = kit.design("zener_diode_source", "npn", devices=IDEAL, r_e=r_e, r_feed=r_feed,
                        v_z0=v_z0, r_z=0.01, i_sd=1e-14, n_id=1.0, v_supply=24.0, v_load=12.0)
    points = solve(design)
    stiff = points.model.closed_forms(points.q)["stiff_reference"][0]
    assert stiff == pytest.approx(points.i_out[0], rel=1e-4)


# ---------------------------------------------------------------------------
# temperature

def vbe_slope(v_be, temp):
    """dV_BE/dT at constant current for the I_S law (Gray et al. ch. 1; Tsividis 1980; from memory)."""
    return (v_be - E_G) / temp - XTI * K_OVER_Q


@pytest.mark.parametrize("tc_z", [0.0, 2.2e-3])
def test_zener_tempco_follows_the_first_order_form(tc_z):
    design = kit.design("zener_source", "npn", devices=IDEAL, temp=310.0,
                        **(WARM_ZENER | {"r_z": 0.01, "tc_z": tc_z}))
    ev = kit.evaluate(design)
    v_be = ev.transistors["Q1"]["v_be"]
    v_e = node_voltages(ev.points)["V_e"]
    v_t = K_OVER_Q * design.temp
    # I R_E = V_Z(T) - V_BE(I, T): d/dT with dV_BE/dT = slope + V_T (1/I) dI/dT gives
    # (1/I) dI/dT = (dV_Z/dT - slope)/(V_E + V_T), where the PWL zener fed through R_Z
    # moves by TC_Z R_Z/(R_Z + r_z) (derived here from the laws above)
    r_feed, r_z = design.values["r_feed"], design.values["r_z"]
    zener_drift = tc_z * r_feed / (r_feed + r_z)
    assert ev.tempco == pytest.approx((zener_drift - vbe_slope(v_be, design.temp)) / (v_e + v_t),
                                      rel=1e-7)
    # the hand form (TC_Z - dV_BE/dT)/(V_Z - V_BE) (Tietze & Schenk, from memory) to within 1 %
    hand = (tc_z - vbe_slope(v_be, design.temp)) / (design.values["v_z0"] - v_be)
    assert ev.tempco == pytest.approx(hand, rel=1e-2)
    # V_BE's slope is about -2 mV/K (common practice, no source)
    assert -2.4e-3 < vbe_slope(v_be, design.temp) < -1.6e-3


def test_zener_diode_cancels_the_vbe_drift():
    # Same 2 mA, zero-TC zener: the forward diode's drift cancels Q1's to first order.
    devices = {"Q1": {"xtb": 0.0}}
    common = dict(v_z0=5.6, r_z=0.01, tc_z=0.0, r_feed=3.3e3, v_supply=24.0, v_load=12.0)
    alone = kit.evaluate(kit.design("zener_source", "npn", devices=devices, r_e=2.46e3, **common))
    paired = kit.evaluate(kit.design("zener_diode_source", "npn", devices=devices, r_e=2.8e3,
                                     i_sd=1e-14, n_id=1.0, **common))
    assert alone.i_out == pytest.approx(paired.i_out, rel=0.03)
    assert abs(paired.tempco) < 0.05 * abs(alone.tempco)
    assert alone.tempco > 300e-6  # -dV_BE/dT over V_E: about +2 mV/K / 5 V (common practice)


@pytest.mark.parametrize("extra", [dict(tc_z=0.0), dict(tc_z=1.5e-3, n_id=1.0, i_sd=1e-14)])
def test_zener_diode_tempco_follows_the_first_order_form(extra):
    design = kit.design("zener_diode_source", "npn", devices=IDEAL, temp=310.0,
                        **(dict(r_z=0.01) | extra))
    ev = kit.evaluate(design)
    x, values, temp = node_voltages(ev.points), design.values, design.temp
    v_t, n = K_OVER_Q * temp, values["n_id"]
    v_d = x["V_b"] - x["V_m"]
    i_d = (values["v_supply"] - x["V_b"]) / values["r_feed"]
    # V_E = V_Z0 + V_D - V_BE (derived here): the diode's current moves with V_B
    # through R_Z (g = n V_T/(I_D R_Z)), its slope at constant current has the
    # same form as V_BE's (the I_SD law is the I_S law for emission coefficient n).
    g = n * v_t / (i_d * values["r_feed"])
    diode_drift = (vbe_slope(v_d, temp) - g * values["tc_z"]) / (1 + g)
    expected = ((values["tc_z"] + diode_drift - vbe_slope(ev.transistors["Q1"]["v_be"], temp))
                / (x["V_e"] + v_t))
    assert ev.tempco == pytest.approx(expected, abs=0.05e-6)


@pytest.mark.parametrize("values", [{}, THREE_DIODES])
def test_diode_string_tempco(values):
    design = kit.design("diode_string_source", "npn", devices=IDEAL, temp=310.0, **values)
    ev = kit.evaluate(design)
    x, v, temp = node_voltages(ev.points), design.values, design.temp
    count, v_t = v["n_diodes"], K_OVER_Q * temp
    v_d = x["V_b"] / count
    i_d = (v["v_supply"] - x["V_b"]) / v["r_feed"]
    # V_E = n V_D - V_BE (derived here), with each diode's current moving with V_B through R_Z
    diode_drift = vbe_slope(v_d, temp) / (1 + count * v["n_id"] * v_t / (i_d * v["r_feed"]))
    expected = (count * diode_drift - vbe_slope(ev.transistors["Q1"]["v_be"], temp)) / (x["V_e"] + v_t)
    assert ev.tempco == pytest.approx(expected, rel=1e-4)
    # a diode-referenced sink loses about 0.3 %/K (common practice, no source)
    assert -4.5e-3 < ev.tempco < -2.0e-3


# ---------------------------------------------------------------------------
# exact sensitivities and output resistance

# name -> design of our own with every parameter away from zero, warm
SENSITIVITY_DESIGNS = {
    "zener_source": WARM_ZENER,
    "diode_string_source": THREE_DIODES,
    "zener_diode_source": COLD_ZENER_DIODE,
}


# load voltages in the middle of each compliance range
MID_LOAD = {("zener_source", "npn"): 12.0, ("zener_source", "pnp"): 6.0,
            ("diode_string_source", "npn"): 7.0, ("diode_string_source", "pnp"): 5.0,
            ("zener_diode_source", "npn"): 12.0, ("zener_diode_source", "pnp"): 3.0}


def design_for(key, polarity):
    values = SENSITIVITY_DESIGNS[key] | {"v_load": MID_LOAD[key, polarity]}
    design = kit.design(key, polarity, devices=DEVICE, temp=323.15,
                        tcr={"r_e": 120e-6, "r_feed": -300e-6}, **values)
    assert solve(design).in_good_region().all()
    return design


# steps for parameters that sit at zero: small against what they multiply
ZERO_STEPS = {"beta_tc": 4e-5, "t_rise": 0.3}  # 1/K, K


def central_differences(design, names, start, relative_step=1e-3):
    """dI_out/dp by central differences of the exact solve with one Richardson step.

    ``(4 D(h/2) - D(h))/3`` has an O(h^4) error, so a step of 1e-3 keeps both
    truncation and the solver's rounding (about 1e-14 of I) near 1e-10.  All
    points go into one solve, started from ``start`` (the unperturbed node
    voltages), which also lets a whole-number count such as ``n_diodes`` move.
    """
    base = design.parameters()
    size = 4 * len(names)
    values = {n: np.full(size, v, dtype=float) for n, v in base.items()}
    steps = []
    for k, name in enumerate(names):
        step = (relative_step * abs(base[name]) if base[name]
                else ZERO_STEPS.get(name.rpartition(".")[2], 1e-6))
        values[name][4 * k:4 * k + 4] += np.array([step, -step, step / 2, -step / 2])
        steps.append(step)
    current = solve_points(model_of(design), values, x0=start).require().i_out
    out = {}
    for k, name in enumerate(names):
        i = current[4 * k:4 * k + 4]
        coarse, fine = (i[0] - i[1]) / (2 * steps[k]), (i[2] - i[3]) / steps[k]
        out[name] = ((4 * fine - coarse) / 3, steps[k])
    return out


ROUNDING = 1e-12  # of I_out: what the finite differences may lose to rounding (generous)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("key", KEYS)
def test_exact_sensitivities_match_central_differences(key, polarity):
    design = design_for(key, polarity)
    points = solve(design)
    skip = {"t_ref", "v_be_on", "v_be_tc", "i_z_min", "p_z_max"}
    names = [n for n in points.model.parameter_names if n not in skip]
    numeric = central_differences(design, names, points.x)
    i_out = points.i_out[0]
    params = design.parameters()
    for k, name in enumerate(points.model.parameter_names):
        if name in skip:
            continue
        scale = abs(params[name]) or 1.0
        derivative, step = numeric[name]
        exact = points.di_dp[k, 0] * scale / i_out  # normalised, so one tolerance fits all
        assert exact == pytest.approx(derivative * scale / i_out, rel=1e-6,
                                      abs=ROUNDING * scale / step), name


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("key", KEYS)
def test_output_resistance(key, polarity):
    design = design_for(key, polarity)
    points = solve(design)
    v = design.values["v_load"]
    step = 0.05
    ends = solve_points(model_of(design), design.parameters() | {"v_load": np.array([v - step, v + step])})
    sign = 1 if polarity == "npn" else -1
    numeric = sign * 2 * step / (ends.i_out[1] - ends.i_out[0])
    assert points.r_out[0] == pytest.approx(numeric, rel=1e-4)
    # hybrid-π R_out of the degenerated stage with the base returned through R_B
    # (Sedra & Smith; Gray et al. ch. 3; from memory): a linearisation, to 0.1 %
    hybrid = points.model.extras(points.x, points.q)["r_out_hybrid_pi"][0]
    assert hybrid == pytest.approx(points.r_out[0], rel=1e-3)


# ---------------------------------------------------------------------------
# compliance, limits and bad input

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_compliance_edges_name_the_limiting_transistor(polarity):
    design = kit.design("zener_source", polarity, devices=DEVICE,
                        **(WARM_ZENER | {"v_load": 12.0 if polarity == "npn" else 6.0}))
    ev = kit.evaluate(design)
    low, high = ev.compliance.low, ev.compliance.high
    v_e = node_voltages(ev.points)["V_e"]
    v_ce_sat, bv_ceo = design.devices["Q1"].v_ce_sat, design.devices["Q1"].bv_ceo
    # a sink holds down to V_E + V_CE(sat) and a source up to V_E - V_EC(sat); breakdown
    # at V_CE = BV_CEO (Sedra & Smith, BJT current sources; from memory).  V_E moves a
    # little with the load through the Early effect and the base current.
    saturation, breakdown = (low, high) if polarity == "npn" else (high, low)
    sign = 1 if polarity == "npn" else -1
    assert (saturation.transistor, saturation.cause) == ("Q1", "saturation")
    assert (breakdown.transistor, breakdown.cause) == ("Q1", "breakdown")
    assert saturation.voltage == pytest.approx(v_e + sign * v_ce_sat, abs=5e-3)
    assert breakdown.voltage == pytest.approx(v_e + sign * bv_ceo, abs=5e-2)


def test_starved_zener_is_refused():
    # 1 mA of feed current cannot hold a zener whose knee is at 2 mA
    design = kit.design("zener_source", "npn", r_feed=13e3, i_z_min=2e-3)
    points = solve(design)
    table = margins(points, design.devices)
    assert table["D1", "zener_current"][0] < 0
    with pytest.raises(OperatingPointError) as caught:
        kit.evaluate(design)
    assert caught.value.parameter == "v_supply"  # more supply would feed the zener


def test_zener_dissipation_limit():
    # 5.6 V at about 3.5 mA is about 20 mW: a 10 mW part is overloaded
    design = kit.design("zener_source", "npn", p_z_max=0.01)
    table = margins(solve(design), design.devices)
    assert table["D1", "power"][0] < 0
    with pytest.raises(OperatingPointError):
        kit.evaluate(design)


def test_n_diodes_must_be_whole():
    design = kit.design("diode_string_source", "npn", n_diodes=2.5)
    with pytest.raises(ParameterError) as caught:
        kit.evaluate(design)
    assert caught.value.parameter == "n_diodes"
    with pytest.raises(ParameterError):
        kit.design("diode_string_source", "npn", n_diodes=9.0)  # beyond the range


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
    worst = np.min(np.stack(list(margins(points, design.devices).values())), axis=0)
    outside = (grid < low - 1e-3) | (grid > high + 1e-3)
    assert (worst[outside] < 0).all() and (worst[~outside] > -1e-6).all()


RANDOM_CASES = [(k, p) for k in KEYS for p in ("npn", "pnp")]


# The load voltage is drawn from where the collector is at or beyond the emitter's
# rough level (V_ref - 0.7 V from its rail) up to 40 V past it: that spans the
# saturation edge and breakdown.  A collector driven below its own emitter (hard
# saturation, V_CE < 0) is left out: there the kit's convergence check can fail
# on rounding inside the transistor law (reported to the lead), which is not a
# property of these topologies.
@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=st.sampled_from(RANDOM_CASES),
       r_feed=st.floats(300.0, 100e3), r_e=st.floats(100.0, 50e3), v_z0=st.floats(2.7, 12.0),
       r_z=st.floats(1.0, 60.0), n_diodes=st.integers(2, 5), v_supply=st.floats(5.0, 60.0),
       load_past_emitter=st.floats(0.0, 40.0), beta=st.floats(30.0, 600.0),
       v_a=st.floats(20.0, 300.0))
def test_random_designs_converge_or_fail_clearly(case, r_feed, r_e, v_z0, r_z, n_diodes, v_supply,
                                                 load_past_emitter, beta, v_a):
    key, polarity = case
    reference_volts = {"zener_source": v_z0, "diode_string_source": 0.65 * n_diodes,
                       "zener_diode_source": v_z0 + 0.65}[key]
    emitter = max(reference_volts - 0.7, 0.0)  # volts from Q1's emitter rail, roughly
    v_load = (emitter + load_past_emitter if polarity == "npn"
              else v_supply - emitter - load_past_emitter)
    values = dict(r_feed=r_feed, r_e=r_e, v_supply=v_supply, v_load=v_load)
    if key != "diode_string_source":
        values |= dict(v_z0=v_z0, r_z=r_z, i_z_min=1e-5)
    else:
        values |= dict(n_diodes=float(n_diodes))
    design = kit.design(key, polarity, devices={"Q1": {"beta_f": beta, "v_a": v_a}}, **values)
    try:
        ev = kit.evaluate(design)
    except OperatingPointError:
        return  # a clear refusal (outside compliance, supply too low, starved zener)
    assert set(ev.regions.values()) == {"active"}
    assert np.isfinite(ev.i_out) and ev.i_out > 0
    assert all(np.isfinite(s.derivative) for s in ev.sensitivities)


# ---------------------------------------------------------------------------
# records and drawings

EXAMPLES = sorted(p for key in KEYS
                  for p in (Path(__file__).parent.parent / "examples").glob(f"{key}-*.toml"))


def test_every_topology_has_an_example():
    assert {p.name.split("-")[0] for p in EXAMPLES} == set(KEYS)


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_example_records_evaluate(path, capsys):
    from kit.cli import main

    assert main(["evaluate", str(path)]) == 0
    assert "I_out" in capsys.readouterr().out


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("key", KEYS)
def test_schematic_names_the_parts(key, polarity):
    from kit.schematic import render

    svg = render(kit.design(key, polarity)).svg
    for text in ("R_Z", "R_E", "Q1", "D1"):
        assert text in svg
