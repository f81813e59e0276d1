"""Self-heating and the temperature sweep against outside references.

* The junction fixed point T_J = T_A + theta_JA P_D is checked with the
  hand-written reference solver of tests/conftest.py (Ebers-Moll, Getreu
  temperature laws; no kit code), which gives P_D = V_CE I_C + V_BE I_B at
  the kit's junction temperature.
* Signs from the trade: V_BE falls about 2 mV/K (common practice, no source),
  so a divider-biased source's current rises as it warms, and self-heating
  raises it; the electro-thermal output resistance is lower than the
  isothermal one (derived below) and equals an independent fixed-point
  finite difference done here with the reference solver.
* The tempco and its budget: the sum of the mechanisms is the tempco; the
  tempco is a finite difference of the exact current; the TCR and beta_F
  shares equal finite differences of the exact solve in R_E and beta_F
  scaled by the temperature laws (derived below).

Designs are scenarios invented for these tests.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

import kit
from kit import report
from kit.analysis.temperature import temperature_sweep
from kit.analysis.thermal import junction_temperatures, solve_self_heated
from kit.errors import OperatingPointError
from kit.analysis.evaluation import model_of, sweep
from kit.model.solve import solve_points

# Scenarios (our own): an 11 mA sink from 24 V that dissipates about 0.1 W in a small
# package (about 27 K of self-heating at 250 K/W), and its PNP twin sourcing into a
# grounded load.
HOT = {
    "npn": dict(r1=10e3, r2=3.3e3, r_e=470.0, v_supply=24.0, v_load=15.0),
    "pnp": dict(r1=3.3e3, r2=10e3, r_e=470.0, v_supply=24.0, v_load=9.0),
}


def _hot(polarity, **changes):
    values = HOT[polarity] | {k: v for k, v in changes.items() if k in HOT[polarity]}
    rest = {k: v for k, v in changes.items() if k not in HOT[polarity]}
    return kit.design("divider_source", polarity, **values, **rest)


def _reference_power(reference, polarity, params):
    """Reference operating point and its P_D = V_CE I_C + V_BE I_B (normalised voltages)."""
    r = reference.solve(polarity, params)
    return r, r["v_ce"] * r["i_c"] + r["v_be"] * r["i_b"]


def _reference_heated(reference, polarity, params, theta):
    """Own electro-thermal fixed point: iterate t_rise = theta P_D on the reference solver."""
    rise = 0.0
    for _ in range(100):
        r, power = _reference_power(reference, polarity, params | {"Q1.t_rise": rise})
        new = theta * power
        if abs(new - rise) < 1e-10:
            return r | {"t_rise": new}
        rise = new
    raise AssertionError("reference fixed point did not settle")


# --------------------------------------------------------------------------------------
# 5. self-heating

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_junction_fixed_point(reference, polarity):
    d = _hot(polarity)
    model = model_of(d)
    params = d.parameters()
    heated = solve_self_heated(model, params)
    assert heated.converged.all()
    rise = float(heated.p[model.parameter_index["Q1.t_rise"], 0])
    t_j = float(junction_temperatures(heated)["Q1"][0])
    assert t_j == pytest.approx(d.temp + rise, abs=1e-12)
    # the independent solver at the kit's junction temperature gives the dissipation that
    # heats the junction by exactly that much: T_J = T_A + theta_JA P_D to 1e-6 K
    r, power = _reference_power(reference, polarity, params | {"Q1.t_rise": rise})
    theta = d.devices["Q1"].theta_ja
    assert abs(d.temp + theta * power - t_j) < 1e-6
    assert float(heated.i_out[0]) == pytest.approx(r["i_out"], rel=1e-9)
    assert 15.0 < rise < 40.0  # about 0.1 W x 250 K/W: the scenario is what it says


def test_more_dissipation_warms_more(reference):
    d = _hot("npn")
    model = model_of(d)
    loads = np.array([8.0, 12.0, 16.0, 20.0])
    heated = solve_self_heated(model, d.parameters() | {"v_load": loads})
    assert heated.converged.all()
    rise = junction_temperatures(heated)["Q1"] - d.temp
    theta = d.devices["Q1"].theta_ja
    powers, loop = [], []
    for v, r_k in zip(loads, rise):
        r, power = _reference_power(reference, "npn", d.parameters() | {"v_load": v, "Q1.t_rise": r_k})
        powers.append(power)
        loop.append(r["v_ce"] - r["i_out"] * d.values["r_e"])  # dP/dI ~ V_CE - I R_E
        assert abs(theta * power - r_k) < 1e-6
    # a higher load voltage puts more V_CE across the same current: more power, warmer
    assert np.all(np.diff(powers) > 0) and np.all(np.diff(rise) > 0)
    # Twice the thermal resistance.  Derivation: the current rises as the junction warms,
    # and P = (V - I R_E) I changes with I as dP/dI ~ V_CE - I R_E.  Where V_CE > I R_E the
    # extra current adds power (positive thermal feedback: more than twice the rise), where
    # V_CE < I R_E it removes power (less than twice).  The loads straddle V_CE = I R_E.
    hot2 = _hot("npn", devices={"Q1": {"theta_ja": 2 * theta}})
    heated2 = solve_self_heated(model, hot2.parameters() | {"v_load": loads})
    rise2 = junction_temperatures(heated2)["Q1"] - d.temp
    loop = np.array(loop)
    assert np.any(loop < 0) and np.any(loop > 0)
    assert np.array_equal(np.sign(rise2 - 2 * rise), np.sign(loop))
    assert np.all(np.abs(rise2 / (2 * rise) - 1) < 0.05)  # the feedback is weak (a few %)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_self_heating_raises_the_current(polarity):
    d = _hot(polarity)
    model = model_of(d)
    cold = solve_points(model, d.parameters())
    hot = solve_self_heated(model, d.parameters())
    rise = float(hot.p[model.parameter_index["Q1.t_rise"], 0])
    shift = float(hot.i_out[0] / cold.i_out[0] - 1)
    assert shift > 0  # V_BE falls as the junction warms: more across R_E (common practice)
    # size: about 2 mV/K of V_BE over the emitter-resistor voltage I R_E; within a factor 2
    v_e = float(cold.i_out[0]) * d.values["r_e"]
    estimate = 2e-3 * rise / v_e
    assert 0.5 * estimate < shift < 2 * estimate


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_electro_thermal_output_resistance(reference, polarity):
    """Derivation: I = f(V, T_J) with T_J = T_A + theta P(V, I).  Then
    dI/dV = (f_V + f_T theta P_V) / (1 - f_T theta P_I), with f_T = dI/dT_J > 0 (V_BE falls),
    P_V = s I_C (s = +1 for the NPN sink, -1 for the PNP source: V_CE grows with V for the
    sink, shrinks for the source) and P_I ~ V_CE - I R_E.  For both, f_T theta P_V has the
    sign of f_V, so self-heating makes |dI/dV| larger: R_out with thermal feedback is
    LOWER than the isothermal R_out."""
    d = _hot(polarity)
    sw = temperature_sweep(d, (d.temp - 20.0, d.temp + 20.0), points=5)
    assert sw.r_out > 0 and sw.r_out_heated > 0
    assert sw.r_out_heated < sw.r_out

    # independent: own fixed point on the reference solver at V +- 10 mV (central difference;
    # I is linear in V to ~1e-9 over that step, the fixed points settle to 1e-10 K)
    theta = d.devices["Q1"].theta_ja
    params, v0, h = d.parameters(), d.values["v_load"], 0.01
    ends = [_reference_heated(reference, polarity, params | {"v_load": v0 + s * h}, theta)["i_out"]
            for s in (-1.0, 1.0)]
    sign = 1.0 if polarity == "npn" else -1.0  # current flows into the sink, out of the source
    slope = (ends[1] - ends[0]) / (2 * h)
    assert sw.r_out_heated == pytest.approx(sign / slope, rel=1e-4)

    # and the derived formula, evaluated with the reference solver (f_T by a central
    # difference in the junction rise); P_I drops the V_BE I_B and alpha terms (~1 %)
    op = _reference_heated(reference, polarity, params, theta)
    step = 0.01
    f_t = (reference.solve(polarity, params | {"Q1.t_rise": op["t_rise"] + step})["i_out"]
           - reference.solve(polarity, params | {"Q1.t_rise": op["t_rise"] - step})["i_out"]) / (2 * step)
    assert f_t > 0
    f_v = (reference.solve(polarity, params | {"Q1.t_rise": op["t_rise"], "v_load": v0 + h})["i_out"]
           - reference.solve(polarity, params | {"Q1.t_rise": op["t_rise"], "v_load": v0 - h})["i_out"]) / (2 * h)
    p_v = sign * op["i_c"]
    p_i = op["v_ce"] - op["i_out"] * d.values["r_e"]
    derived = (f_v + f_t * theta * p_v) / (1 - f_t * theta * p_i)
    assert sign / derived == pytest.approx(sw.r_out_heated, rel=0.02)


def test_junction_over_its_rating_fails_the_worst_case():
    """In a 1000 K/W package the junction of the 11 mA sink passes its 150 degC rating as
    the load voltage (hence V_CE and P_D) rises: those points must fail the worst case."""
    from kit.analysis.spec import Spec
    from kit.analysis.worstcase import worst_case

    d = _hot("npn", devices={"Q1": {"theta_ja": 1000.0}})
    q1 = d.devices["Q1"]
    loads = np.array([10.0, 15.0, 20.0])
    heated = solve_self_heated(model_of(d), d.parameters() | {"v_load": loads})
    t_j = junction_temperatures(heated)["Q1"]
    over = t_j > q1.t_j_max
    assert heated.converged.all() and list(over) == [False, False, True]  # own check of the scenario
    loose = dict(resistor_tolerance=0.0, resistor_tcr=0.0)
    within = worst_case(d, Spec(11e-3, 0.2, v_load=(10.0, 15.0), **loose), methods=("extreme-value",))
    assert within.met and within.methods["extreme-value"].detail["failures"] == []
    beyond = worst_case(d, Spec(11e-3, 0.2, v_load=(10.0, 20.0), **loose), methods=("extreme-value",))
    eva = beyond.methods["extreme-value"]
    assert not beyond.met
    assert eva.detail["failures"] == ["Q1 reaches its dissipation limit"]
    # the overheated end is left out of the current range
    assert eva.high < heated.i_out[2]


def test_budget_ignores_points_that_ran_away():
    """In a 2000 K/W package the sink's junction at 20 V would sit above 500 K, beyond every
    temperature the device laws are used at (the kit says so: not converged, not thermal
    runaway, its loop gain is small); the budget's 'v_load alone' swing must come from solved
    points only."""
    from kit.analysis.spec import Spec
    from kit.analysis.worstcase import worst_case

    d = _hot("npn", v_load=12.0, devices={"Q1": {"theta_ja": 2000.0}})
    loads = np.array([10.0, 12.0, 20.0])
    heated = solve_self_heated(model_of(d), d.parameters() | {"v_load": loads})
    assert list(heated.converged) == [True, True, False]  # own check of the scenario
    assert list(heated.too_hot) == [False, False, True] and not heated.runaway.any()
    wc = worst_case(d, Spec(11e-3, 0.2, v_load=(10.0, 20.0), resistor_tolerance=0.0, resistor_tcr=0.0),
                    methods=("extreme-value",))
    assert "a junction above 500 K (beyond the device laws)" in wc.methods["extreme-value"].detail["failures"]
    swing = {b.name: b.swing for b in wc.budget}["v_load"]
    assert swing <= abs(heated.i_out[0] - heated.i_out[1]) * (1 + 1e-9)


# --------------------------------------------------------------------------------------
# 6. the temperature sweep

def _tempco_scenario():
    """An 11 mA sink with a metal-film emitter resistor (+150 ppm/K) and a divider of
    opposite small TCRs, swept -40 ... +85 degC."""
    return _hot("npn", tcr={"r_e": 150e-6, "r1": 50e-6, "r2": -50e-6})


def test_tempco_budget_sums_and_matches_finite_differences():
    d = _tempco_scenario()
    temps = np.linspace(233.15, 358.15, 11)
    sw = temperature_sweep(d, temps)
    assert np.array_equal(sw.temps, temps)
    total = sum(sw.budget.values())
    assert np.all(np.abs(total - sw.tempco) < 1e-10)  # the mechanisms add up to the tempco
    # the tempco is (1/I) dI/dT of the exact current: central difference, h = 0.01 K
    # (truncation ~h^2 I'''/6 I ~ 1e-10/K, rounding ~1e-12/h ~ 1e-10/K)
    h = 0.01
    up = sweep(d, "temp", temps + h).i_out
    down = sweep(d, "temp", temps - h).i_out
    fd = (up - down) / (2 * h) / sw.i_out
    assert np.allclose(sw.tempco, fd, rtol=1e-5, atol=1e-9)
    # the isothermal curve is the exact solve with the junction at ambient
    assert np.allclose(sw.i_out, sweep(d, "temp", temps).i_out, rtol=1e-12)
    # V_BE falls about 2 mV/K: a divider-biased source speeds up as it warms (common practice)
    assert np.all(sw.tempco > 0) and np.all(np.diff(sw.i_out) > 0)
    # self-heating adds to the same effect at every ambient
    assert np.all(sw.i_out_heated > sw.i_out)
    assert np.all(sw.heating_shift > 0)


def test_tempco_mechanisms_against_the_temperature_laws():
    """Derivation (x = T - T_ref): R(T) = R (1 + TCR x) so the TCR share is
    (1/I)(dI/dR) R TCR / (1 + TCR x); beta(T) = beta_0 (T/T_0)^m_beta (beta_tc = 0) so the gain
    share is (1/I)(dI/dbeta_0) beta_0 m_beta / T.  dI/dR and dI/dbeta_0 by central differences
    of the exact solve (relative step 1e-5).  V_T = kT/q raises V_BE at fixed I_S (share < 0);
    I_S grows steeply with T and lowers V_BE (share > 0)."""
    d = _tempco_scenario()
    temps = np.linspace(233.15, 358.15, 6)
    sw = temperature_sweep(d, temps)
    x = temps - d.t_ref
    q1 = d.devices["Q1"]
    assert q1.beta_tc == 0.0

    def share_by_difference(name, value):
        step = 1e-5 * value
        up = sweep(d, "temp", temps, **{name: value + step}).i_out
        down = sweep(d, "temp", temps, **{name: value - step}).i_out
        return (up - down) / (2 * step) / sw.i_out

    for label, name in (("TCR of R_E", "r_e"), ("TCR of R1", "r1"), ("TCR of R2", "r2")):
        tcr = d.tcr[name]
        expected = share_by_difference(name, d.values[name]) * d.values[name] * tcr / (1 + tcr * x)
        assert np.allclose(sw.budget[label], expected, rtol=1e-5, atol=1e-12), label
    beta = q1.beta_f
    expected = share_by_difference("Q1.beta_f", beta) * beta * q1.beta_temp_exponent / temps
    assert np.allclose(sw.budget["current gain β_F of Q1"], expected, rtol=1e-5, atol=1e-12)
    assert np.all(sw.budget["thermal voltage V_T of Q1"] < 0)
    assert np.all(sw.budget["saturation current I_S of Q1"] > 0)


def test_sweep_junction_temperatures(reference):
    d = _hot("npn")
    temps = np.array([243.15, 298.15, 353.15])
    sw = temperature_sweep(d, temps)
    theta = d.devices["Q1"].theta_ja
    for t, t_j, i_h in zip(temps, sw.junction["Q1"], sw.i_out_heated):
        r, power = _reference_power(reference, "npn", d.parameters() | {"temp": t, "Q1.t_rise": t_j - t})
        assert abs(t + theta * power - t_j) < 1e-6
        assert i_h == pytest.approx(r["i_out"], rel=1e-9)


def test_sweep_refuses_a_saturated_design():
    # the topology's default divider as a PNP source with the load at 8 V: its emitter sits
    # near 3.4 V (base at 12 V x 10k/43k = 2.8 V, one V_BE above), below the 8 V load, so
    # Q1 is saturated (kit.evaluate says so: an OperatingPointError)
    d = kit.design("divider_source", "pnp", v_load=8.0)
    with pytest.raises(OperatingPointError):
        kit.evaluate(d)
    with pytest.raises(OperatingPointError):
        temperature_sweep(d, (253.15, 343.15), points=5)


def test_sweep_to_dict_is_strict_json():
    sw = temperature_sweep(_tempco_scenario(), (253.15, 343.15), points=7)
    data = json.loads(json.dumps(sw.to_dict(), allow_nan=False))
    assert len(data["temps"]) == 7 and set(data["budget"]) == set(sw.budget)
    assert math.isfinite(data["r_out_heated"])
    # the result is data; words come from the report layer
    assert not any(hasattr(sw, name) for name in ("text", "html", "_repr_html_"))
    text = report.text(sw)
    assert "R_out isothermal" in text and "with self-heating" in text
