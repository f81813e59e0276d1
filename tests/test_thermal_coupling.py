"""Electrothermal solve: two coupled junctions against the two-node network, runaway against
the loop-gain condition.

Both references are derived here from linear heat flow (T = T_a + Theta P, superposition of
thermal resistances; any heat-transfer text, e.g. Incropera & DeWitt ch. 3, the thermal
circuit) and the junction law I_C = I_S(T) exp(V_BE / V_T) with
I_S ∝ T^XTI exp(-E_g / V_T) (Gray, Hurst, Lewis & Meyer, ch. 1, temperature dependence of
the bipolar transistor).  The electrical solve at a fixed junction temperature is the one
tested elsewhere; here only the thermal loop is checked.
"""

import math

import numpy as np
import pytest

import kit
from kit.analysis.evaluation import model_of
from kit.analysis.thermal import ThermalNetwork, runaway_threshold, solve_self_heated
from kit.errors import ParameterError
from kit.model.solve import solve_points
from kit.record import load_record

K_OVER_Q = 8.617333262e-5  # V/K, CODATA via scipy.constants k/e (value written out)


def _mirror(**values):
    d = kit.design("basic_mirror", polarity="npn")
    return d, model_of(d), d.parameters() | values


def _powers(model, values, rises):
    """Isothermal solve with the junctions held at the given rises: (P_Q1, P_Q2)."""
    pts = solve_points(model, values | {"Q1.t_rise": rises[0], "Q2.t_rise": rises[1]})
    assert pts.converged.all()
    return np.array([float(pts.dissipation["Q1"][0]), float(pts.dissipation["Q2"][0])])


def test_two_coupled_junctions_against_the_two_node_network():
    d, model, values = _mirror(i_ref=5e-3, n_area=1.0, v_load=3.0, v_supply=12.0,
                               **{"Q1.theta_ja": 200.0, "Q2.theta_ja": 200.0})
    theta = np.array([[200.0, 80.0], [80.0, 200.0]])  # one package, 80 K/W between the dice
    net = ThermalNetwork(mutual={("Q1", "Q2"): 80.0})
    pts = solve_self_heated(model, values, net)
    assert pts.converged[0] and not pts.runaway[0]
    idx = model.parameter_index
    rise = np.array([pts.p[idx["Q1.t_rise"]][0], pts.p[idx["Q2.t_rise"]][0]])
    # 1. exact: the rises solve T - T_a = Theta P(T) with P from the isothermal solve at those rises
    assert rise == pytest.approx(theta @ _powers(model, values, rise), rel=1e-6, abs=1e-6)
    # 2. the two-node network linearised at ambient, solved by hand (Cramer's rule):
    #    (I - Theta S) dT = Theta P0, S_ik = dP_i/dT_k
    p0 = _powers(model, values, (0.0, 0.0))
    h = 0.01
    s = np.column_stack([(_powers(model, values, (h, 0.0)) - p0) / h,
                         (_powers(model, values, (0.0, h)) - p0) / h])
    a = np.eye(2) - theta @ s
    b = theta @ p0
    det = a[0, 0] * a[1, 1] - a[0, 1] * a[1, 0]
    analytic = np.array([(b[0] * a[1, 1] - a[0, 1] * b[1]) / det, (a[0, 0] * b[1] - a[1, 0] * b[0]) / det])
    # second-order terms of P(T) over a few kelvin: within 3 % of the rise
    assert rise == pytest.approx(analytic, rel=0.03)
    # the coupling warms the diode side, which lowers the output: cooler than separate packages
    alone = solve_self_heated(model, values)
    assert alone.p[idx["Q2.t_rise"]][0] > rise[1]


def test_runaway_threshold_against_the_loop_gain_condition():
    rec = load_record("examples/basic_mirror-discrete-runaway.toml")
    model = model_of(rec.design)
    # Q1 held at ambient (the smallest thermal resistance) so the hand model below is exact in form
    values = rec.design.parameters() | {"Q1.theta_ja": 0.1}
    theta = values["Q2.theta_ja"]
    found = runaway_threshold(model, values, (1.0, 8.0))
    assert found.v_load is not None and "thermal runaway: no stable operating point above V_load" in found.text()
    v_star = found.v_load
    # Just above it there is no stable point; just below there is.
    above = solve_self_heated(model, values | {"v_load": np.array([v_star * 1.01])})
    below = solve_self_heated(model, values | {"v_load": np.array([v_star * 0.99])})
    assert above.runaway[0] and not above.converged[0]
    assert below.converged[0] and not below.runaway[0]
    # Loop-gain condition at the edge: theta dP2/dT_j = 1, dP/dT by the test's own isothermal steps.
    idx = model.parameter_index
    # at the edge itself the stable and the unstable points merge: the gain there is 1
    # (at 0.99 V* it is still about 1 - sqrt(2 x 0.01), the square-root approach of a tangency)
    at_edge = solve_self_heated(model, values | {"v_load": np.array([v_star])})
    assert at_edge.converged[0]
    t2 = float(at_edge.p[idx["Q2.t_rise"]][0])
    edge = values | {"v_load": v_star}
    p_lo = _powers(model, edge, (0.0, t2 - 0.05))[1]
    p_hi = _powers(model, edge, (0.0, t2 + 0.05))[1]
    assert theta * (p_hi - p_lo) / 0.1 == pytest.approx(1.0, abs=0.03)
    assert v_star == pytest.approx(_hand_edge(model, values, v_star), rel=0.15)


def _hand_edge(model, values, v_load):
    """The runaway load voltage of the output transistor Q2 by hand, its current taken cold at ``v_load``.

    Hand model: P = V I0 exp(a dT), a = (XTI + (E_g - V_BE)/V_T)/T (the junction law's
    temperature dependence, Gray, Hurst, Lewis & Meyer ch. 1); the steady rise dT = theta P has
    a root only while theta a V I0 e <= 1: at the tangency of dT and theta V I0 exp(a dT) the
    loop gain theta dP/dT_j = theta a P is 1 and dT = 1/a.
    """
    t_a = values["temp"]
    theta = values["Q2.theta_ja"]
    v_be = 0.65  # at 5 mA, common practice, no source (checked against the solve below)
    cold = solve_points(model, values | {"v_load": v_load})
    j = cold.junctions["Q2"]
    assert abs(float(j["v_be"][0]) - v_be) < 0.1  # V_BE 0.6-0.7 V, a fact of the trade
    v_be = float(j["v_be"][0])
    t_edge = t_a + 1.0 / ((values["Q2.i_s_temp_exponent"] + (values["Q2.e_g"] - v_be) / (K_OVER_Q * t_a)) / t_a)
    a = (values["Q2.i_s_temp_exponent"] + (values["Q2.e_g"] - v_be) / (K_OVER_Q * t_edge)) / t_edge
    i0 = float(j["i_c"][0])
    return 1.0 / (theta * a * math.e * i0)


def test_runaway_is_named_not_a_failed_solve():
    rec = load_record("examples/basic_mirror-discrete-runaway.toml")
    model = model_of(rec.design)
    pts = solve_self_heated(model, rec.design.parameters() | {"v_load": np.array([2.0, 7.0])})
    assert list(pts.runaway) == [False, True]
    assert pts.loop_gain[0] < 1.0 <= pts.loop_gain[1]


def test_heatsink_network_matrix_and_bad_input():
    from kit.analysis.thermal import Heatsink

    net = ThermalNetwork(heatsinks=(Heatsink("sink", 5.0, {"Q1": 2.0, "Q2": 3.0}),))
    # a shared sink: each junction sees the sink's rise from both powers (superposition)
    assert net.matrix(["Q1", "Q2"], {"Q1": 250.0, "Q2": 250.0}).tolist() == [[7.0, 5.0], [5.0, 8.0]]
    with pytest.raises(ParameterError, match="mutual"):
        ThermalNetwork(mutual={("Q1", "Q2"): 300.0}).matrix(["Q1", "Q2"], {"Q1": 200.0, "Q2": 200.0})
    with pytest.raises(ParameterError, match="names no part"):
        ThermalNetwork(mutual={("Q1", "Q9"): 10.0}).matrix(["Q1", "Q2"], {"Q1": 200.0, "Q2": 200.0})
    with pytest.raises(ParameterError, match="theta_sa"):
        Heatsink("sink", -1.0, {"Q1": 1.0})


def test_temperature_sweep_names_runaway():
    from kit.analysis.temperature import temperature_sweep
    from kit.errors import ConvergenceError

    rec = load_record("examples/basic_mirror-discrete-runaway.toml")
    d = rec.design.with_values(v_load=4.7)
    # 4.7 V has a stable point at 25 degC (below the edge, about 4.8 V) but not when colder:
    # a = (XTI + (E_g - V_BE)/V_T)/T grows as T falls, and the loop gain with it
    temperature_sweep(d, (293.15, 298.15), points=2)
    with pytest.raises(ConvergenceError, match="thermal runaway: no stable operating point"):
        temperature_sweep(d, (233.15, 298.15), points=5)


def test_compliance_ends_at_the_runaway_edge_against_the_loop_gain_condition():
    from kit.report import text
    from kit.report.cautions import cautions

    rec = load_record("examples/basic_mirror-discrete-runaway.toml")
    # Q1 held at ambient (the smallest thermal resistance) so the hand model is exact in form
    design = rec.design.with_parameter("Q1.theta_ja", 0.1)
    ev = kit.evaluate(design)
    model, values = model_of(design), design.parameters()
    high = ev.compliance.high
    electrical = ev.electrical_compliance.high
    # the electrical range reaches the breakdown voltage; self-heating ends it far below
    assert electrical.cause == "breakdown" and high.voltage < 0.5 * electrical.voltage
    assert (high.part, high.cause) == ("Q2", "thermal_runaway")
    assert ev.compliance.low == ev.electrical_compliance.low  # the saturation end is not touched
    # 1. the loop-gain condition theta dP/dT_j = 1 at the edge, dP/dT_j from the test's own isothermal steps
    at_edge = solve_self_heated(model, values | {"v_load": np.array([high.voltage])})
    assert at_edge.converged[0]
    t2 = float(at_edge.p[model.parameter_index["Q2.t_rise"]][0])
    edge = values | {"v_load": high.voltage}
    slope = (_powers(model, edge, (0.0, t2 + 0.05))[1] - _powers(model, edge, (0.0, t2 - 0.05))[1]) / 0.1
    assert values["Q2.theta_ja"] * slope == pytest.approx(1.0, abs=0.03)
    # 2. the hand model's edge (tangency of dT and theta V I0 exp(a dT)), within its 15 %
    assert high.voltage == pytest.approx(_hand_edge(model, values, high.voltage), rel=0.15)
    # words: text, JSON, cautions name the cause; the headline's stress stays inside the cut range
    said = text(ev)
    assert "compliance   200 mV … 4." in said and "runs away thermally above this load voltage" in said
    assert ev.to_dict()["compliance"]["high"]["cause"] == "thermal_runaway"
    assert ev.to_dict()["electrical_compliance"]["high"]["cause"] == "breakdown"
    assert ev.max_dissipation[2] <= high.voltage + 1e-9
    assert any("the compliance stated ends there" in c for c in cautions(ev))
    # without self-heating the electrical range comes back
    assert kit.evaluate(design, self_heating=False).compliance.high == electrical


def test_evaluate_refuses_a_load_voltage_past_the_runaway_edge():
    from kit.errors import OperatingPointError

    rec = load_record("examples/basic_mirror-discrete-runaway.toml")
    ev = kit.evaluate(rec.design)  # 2 V: a stable point exists
    assert ev.thermal_runaway is not None and ev.thermal_runaway.side == "above"
    assert 4.0 < ev.thermal_runaway.v_load < 5.5 and ev.compliance.high.voltage == ev.thermal_runaway.v_load
    assert ev.to_dict()["thermal_runaway"]["v_load"] == ev.thermal_runaway.v_load
    with pytest.raises(OperatingPointError, match="runs away thermally above") as caught:
        kit.evaluate(rec.design.with_values(v_load=5.5))  # above the edge (about 4.8 V)
    assert caught.value.parameter == "v_load" and "self-heating" in caught.value.valid
    # the isothermal evaluation still answers there when asked for
    assert kit.evaluate(rec.design.with_values(v_load=5.5), self_heating=False).thermal_runaway is None


def test_runaway_at_every_load_voltage_is_refused_naming_the_package():
    from kit.errors import OperatingPointError

    rec = load_record("examples/basic_mirror-discrete-runaway.toml")
    # 50 mA at 2000 K/W: at the saturation edge (0.2 V) P = 10 mW and theta a P is about
    # 2000 x 0.065/K x 10 mW = 1.3 > 1 (the hand loop gain above): no load voltage is stable
    hot = rec.design.with_parameter("Q2.theta_ja", 2000.0).with_values(i_ref=0.05, v_load=0.22)
    with pytest.raises(OperatingPointError, match="no load voltage inside the electrical compliance") as caught:
        kit.evaluate(hot)
    assert caught.value.parameter == "Q2.theta_ja"
