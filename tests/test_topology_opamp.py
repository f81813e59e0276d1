"""Op-amp + pass-transistor sources against hand-written loop equations and published forms.

Independent references, written here without kit code:

* the loop: op-amp output ``V_o = A (V_+ - V_- + V_OS)`` (offset referred to the
  + input), bias current into the - input, KCL at the sense node and the
  base; Ebers–Moll with a forward Early factor (Ebers & Moll, Proc. IRE 42,
  1954; Early, Proc. IRE 40, 1952) and the MOSFET square law with
  channel-length modulation (Sedra & Smith, MOSFET chapter; Razavi, Design of
  Analog CMOS ICs, ch. 2 -- from memory), solved with ``scipy.optimize.brentq``;
* the error budget of the hand formula ``I = V_SET/R_S``: gain
  ``-(V_SET + V_ctrl)/(A V_SET)``, offset ``V_OS/V_SET``, bias ``I_b R_S/V_SET``
  and base current ``-1/(beta+1)`` (common practice, no source);
* output resistance by small-signal nodal analysis of the hybrid-pi model
  (g_m = I_C/V_T, r_pi = V_T/I_B, r_o = (V_A + V_CE)/I_C: Sedra & Smith, Gray,
  Hurst, Lewis & Meyer ch. 1; MOSFET g_m = 2 I_D/V_ov, r_o = (1 + lambda V_DS)/
  (lambda I_D): Razavi ch. 2 -- from memory), solved with SymPy inside the test;
* ``k/q`` from CODATA 2018 via ``scipy.constants``.

The designs are scenarios invented for these tests.  Checks every topology
shares (sensitivities and R_out by finite differences, random designs,
drawings, example records) live in the contract tests.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants
import sympy as sp
from scipy.optimize import brentq

import kit
from wording import assert_no_bipolar_words
from kit.analysis.evaluation import model_of, sweep
from kit.devices import KINDS
from kit.errors import OperatingPointError, ParameterError
from kit.model.solve import solve_points

K_OVER_Q = scipy.constants.k / scipy.constants.e  # V/K, CODATA 2018 (exact)
OPAMP_PARAMETERS = {p.name for p in KINDS["opamp"].params}

# --- designs of our own ------------------------------------------------------------

BJT_SINK = dict(r_s=2.2e3, r_b=330.0, v_set=1.2, v_supply=12.0, v_load=7.5)
BJT_SOURCE = dict(BJT_SINK, v_load=3.0)
BJT_OPAMP_SINK = dict(a_ol=2e5, v_os=0.7e-3, i_bias=40e-9, v_oh=10.0, v_ol=0.1)
BJT_OPAMP_SOURCE = dict(BJT_OPAMP_SINK, v_oh=11.8)
MOS_SINK = dict(r_s=33.0, v_set=0.4, v_supply=24.0, v_load=11.0)
MOS_SOURCE = dict(MOS_SINK, v_load=6.0)
MOS_OPAMP_SINK = dict(a_ol=5e4, v_os=-0.3e-3, i_bias=15e-9, v_oh=20.0, v_ol=0.1)
MOS_OPAMP_SOURCE = dict(MOS_OPAMP_SINK, v_oh=23.8)
BJT_DEVICE = {"beta_f": 160.0, "v_a": 75.0}
MOS_DEVICE = {"k_prime": 0.35, "v_th": 1.7, "lambda_clm": 0.015}

SCENARIOS = {
    ("opamp_bjt_source", "npn"): (BJT_SINK, {"Q1": BJT_DEVICE, "U1": BJT_OPAMP_SINK}),
    ("opamp_bjt_source", "pnp"): (BJT_SOURCE, {"Q1": BJT_DEVICE, "U1": BJT_OPAMP_SOURCE}),
    ("opamp_mos_source", "nmos"): (MOS_SINK, {"M1": MOS_DEVICE, "U1": MOS_OPAMP_SINK}),
    ("opamp_mos_source", "pmos"): (MOS_SOURCE, {"M1": MOS_DEVICE, "U1": MOS_OPAMP_SOURCE}),
}
CASES = list(SCENARIOS)
IDS = [f"{k}-{p}" for k, p in CASES]


def pass_device(key):
    return "Q1" if key == "opamp_bjt_source" else "M1"


def is_sink(polarity):
    return polarity in ("npn", "nmos")


def scenario(key, polarity, device=None, **changes):
    """A scenario design; ``changes`` set values, conditions or op-amp (U1) parameters."""
    values, devices = SCENARIOS[key, polarity]
    devices = {name: dict(d) for name, d in devices.items()}
    devices[pass_device(key)] |= dict(device or {})
    for name in sorted(OPAMP_PARAMETERS & set(changes)):
        devices["U1"][name] = changes.pop(name)
    conditions = {k: changes.pop(k) for k in ("temp", "t_ref", "tcr", "hand") if k in changes}
    return kit.design(key, polarity, devices=devices, **conditions, **(values | changes))


def opamp(design):
    """The op-amp's parameters by name."""
    return design.devices["U1"]


# --- independent reference: the loop written by hand ---------------------------------

def _at_temperature(design):
    """Operating values of the hand-written model (the laws quoted in the module docstring)."""
    p = design.parameters()
    t, t0 = p["temp"], p["t_ref"]
    o = {"v_t": K_OVER_Q * t, "r_s": p["r_s"] * (1 + p["tcr_r_s"] * (t - t0)),
         "v_set": p["v_set"] * (1 + p["v_set_tc"] * (t - t0)),
         "v_os": p["U1.v_os"] + p["U1.v_os_tc"] * (t - t0), "a": p["U1.a_ol"], "i_b": p["U1.i_bias"],
         "v_cc": p["v_supply"], "v_l": p["v_load"]}
    if "r_b" in p:
        o["r_b"] = p["r_b"] * (1 + p["tcr_r_b"] * (t - t0))
        # Getreu / Gummel–Poon temperature laws (from memory)
        o["i_s"] = p["Q1.i_s"] * (t / t0) ** p["Q1.i_s_temp_exponent"] * math.exp(
            p["Q1.e_g"] / K_OVER_Q * (1 / t0 - 1 / t))
        o["beta"] = p["Q1.beta_f"] * (t / t0) ** p["Q1.beta_temp_exponent"] * (1 + p["Q1.beta_tc"] * (t - t0))
        o["beta_r"], o["v_a"] = p["Q1.beta_r"], p["Q1.v_a"]
    else:
        o["k"] = p["M1.k_prime"] * p["M1.w_over_l"] * (t / t0) ** -p["M1.mu_exp"]
        o["v_th"] = p["M1.v_th"] + p["M1.tc_vth"] * (t - t0)
        o["lam"] = p["M1.lambda_clm"]
    return o


def _ebers_moll(v_be, v_bc, o):
    v_ce = v_be - v_bc
    forward, reverse = math.exp(v_be / o["v_t"]), math.exp(v_bc / o["v_t"])
    i_c = (o["i_s"] * (forward - reverse) * (1 + v_ce / o["v_a"])
           - o["i_s"] / o["beta_r"] * (reverse - 1))
    i_b = o["i_s"] / o["beta"] * (forward - 1) + o["i_s"] / o["beta_r"] * (reverse - 1)
    return i_c, i_b


def reference_bjt(design):
    """I_out of the BJT loop: brentq on the op-amp output, inner brentq on the base node."""
    o = _at_temperature(design)
    npn = design.polarity == "npn"
    plus = (o["v_set"] if npn else o["v_cc"] - o["v_set"]) + o["v_os"]

    def mismatch(v_o):
        """Emitter current the device passes less the one KCL at S asks for."""
        v_s = plus - v_o / o["a"]  # the gain law V_o = A(V_+ + V_OS - V_S)

        def base_node(v_b):  # current from the op-amp through R_B less the base current
            v_be, v_bc = (v_b - v_s, v_b - o["v_l"]) if npn else (v_s - v_b, o["v_l"] - v_b)
            i_b = _ebers_moll(v_be, v_bc, o)[1]
            return (v_o - v_b) / o["r_b"] - i_b if npn else (v_b - v_o) / o["r_b"] - i_b

        v_b = brentq(base_node, *sorted((v_s, v_o)), xtol=1e-15, rtol=4 * np.finfo(float).eps)
        v_be, v_bc = (v_b - v_s, v_b - o["v_l"]) if npn else (v_s - v_b, o["v_l"] - v_b)
        i_c, i_b = _ebers_moll(v_be, v_bc, o)
        wanted = v_s / o["r_s"] + o["i_b"] if npn else (o["v_cc"] - v_s) / o["r_s"] - o["i_b"]
        return i_c + i_b - wanted, i_c

    span = (plus + 0.2, plus + 2.5) if npn else (plus - 2.5, plus - 0.2)
    v_o = brentq(lambda v: mismatch(v)[0], *span, xtol=1e-14, rtol=4 * np.finfo(float).eps)
    return mismatch(v_o)[1]


def reference_mos(design):
    """I_out of the MOSFET loop (square law in saturation), brentq on the sense node."""
    o = _at_temperature(design)
    a, k, v_th, lam = o["a"], o["k"], o["v_th"], o["lam"]
    if design.polarity == "nmos":
        plus = o["v_set"] + o["v_os"]

        def kcl(v_s):
            v_ov = a * (plus - v_s) - v_s - v_th
            return v_s / o["r_s"] + o["i_b"] - k / 2 * v_ov ** 2 * (1 + lam * (o["v_l"] - v_s))

        edge = (a * plus - v_th) / (1 + a)  # V_ov = 0
        v_s = brentq(kcl, edge - 1.0, edge, xtol=1e-16, rtol=4 * np.finfo(float).eps)
        return v_s / o["r_s"] + o["i_b"]
    plus = o["v_cc"] - o["v_set"] + o["v_os"]

    def kcl(v_s):
        v_ov = v_s - a * (plus - v_s) - v_th
        return (o["v_cc"] - v_s) / o["r_s"] - o["i_b"] - k / 2 * v_ov ** 2 * (1 + lam * (v_s - o["v_l"]))

    edge = (a * plus + v_th) / (1 + a)
    v_s = brentq(kcl, edge, edge + 1.0, xtol=1e-16, rtol=4 * np.finfo(float).eps)
    return (o["v_cc"] - v_s) / o["r_s"] - o["i_b"]


def reference(design):
    return reference_bjt(design) if design.topology.key == "opamp_bjt_source" else reference_mos(design)


def ledger(ev, key):
    return {e.key: e for e in ev.ledger}[key]


@pytest.fixture(scope="module")
def evaluations():
    return {case: kit.evaluate(scenario(*case)) for case in CASES}


# --- the exact solve ------------------------------------------------------------------

@pytest.mark.parametrize("case", CASES, ids=IDS)
@pytest.mark.parametrize("conditions", [{}, {"temp": 338.15, "tcr": {"r_s": 80e-6}}])
def test_exact_solve_matches_hand_written_loop(case, conditions):
    # Hand-written loop solved by scipy.optimize.brentq (see the module docstring).
    design = scenario(*case, v_set_tc=15e-6, v_os_tc=2e-6, **conditions)
    points = solve_points(model_of(design), design.parameters()).require()
    assert points.i_out[0] == pytest.approx(reference(design), rel=1e-11)
    assert points.in_good_region()[0]


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_stiff_loop_converges_in_a_few_steps_from_the_declared_start(case):
    # The start closes the loop around its control voltage, so Newton starts with the gain
    # law satisfied: a handful of iterations for any gain (common practice, no source).
    model = model_of(scenario(*case))
    assert model.started  # the generic continuation is not enough for these loops
    for gain in (1e2, 1e4, 1e5, 1e6, 1e7):
        design = scenario(*case, a_ol=gain)
        points = solve_points(model, design.parameters()).require()
        assert points.iterations[0] <= 4, (gain, points.iterations[0])


def test_very_large_gain_converges():
    design = scenario("opamp_mos_source", "nmos", a_ol=1e9)
    assert solve_points(model_of(design), design.parameters()).converged[0]


# --- closed forms where their assumptions hold ------------------------------------------

def test_bjt_exponential_form_is_exact_without_early_effect():
    # Derived loop with the Wright omega solution (module docstring of kit.topologies.opamp);
    # exact for V_A -> inf up to the forward-active terms dropped (I_S/beta and e^{V_BC/V_T}).
    for polarity in ("npn", "pnp"):
        ev = kit.evaluate(scenario("opamp_bjt_source", polarity, {"v_a": math.inf}))
        assert abs(ledger(ev, "exponential").error) < 1e-11


def test_bjt_fixed_vbe_form_is_exact_with_the_solved_vbe():
    # With V_BE(on) set to the solved V_BE the fixed-V_BE form has nothing left to
    # approximate (V_A -> inf): the loop algebra itself, V_S = [A(V_SET+V_OS) - V_BE
    # - I_B R_B]/(1+A), I = alpha (V_S/R_S + I_b).
    for polarity in ("npn", "pnp"):
        design = scenario("opamp_bjt_source", polarity, {"v_a": math.inf})
        v_be = kit.evaluate(design).parts["Q1"].quantities["v_be"]
        ev = kit.evaluate(design.with_parameter("v_be_on", v_be))
        assert abs(ledger(ev, "fixed_vbe").error) < 1e-11


def test_mos_square_law_form_is_exact_without_clm():
    # I = (K/2) y^2, y = C - B I solved as a quadratic (derived; square law of Sedra & Smith).
    for polarity in ("nmos", "pmos"):
        ev = kit.evaluate(scenario("opamp_mos_source", polarity, {"lambda_clm": 0.0}))
        assert abs(ledger(ev, "square_law").error) < 1e-12


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_ideal_form_error_is_the_textbook_error_budget(case, evaluations):
    # The loop, exactly: V_S = [A(V_SET + V_OS) - V_ctrl]/(1 + A) and I = alpha (V_S/R_S + I_b)
    # (sink; the source mirrored about V_CC), with V_ctrl = V_BE + I_B R_B or V_GS.  To first
    # order the error of I = V_SET/R_S is the textbook budget: gain -(V_SET + V_ctrl)/(A V_SET),
    # offset V_OS/V_SET, bias I_b R_S/V_SET, base current -1/(beta+1) (common practice, no
    # source).  The source's op-amp output is measured from 0 V, so its gain term reads
    # +(V_CC - V_SET - V_ctrl)/(A V_SET) and offset and bias change sign.
    ev = evaluations[case]
    values, u1 = ev.design.values, opamp(ev.design)
    t = ev.parts[pass_device(case[0])].quantities
    if "i_c" in t:
        control, alpha = t["v_be"] + t["i_b"] * values["r_b"], t["i_c"] / (t["i_c"] + t["i_b"])
    else:
        control, alpha = t["v_gs"], 1.0
    v_set, gain, v_os, bias = values["v_set"], u1.a_ol, u1.v_os, u1.i_bias
    bias_term = bias * values["r_s"] / v_set
    if is_sink(case[1]):
        exact = alpha * (gain / (1 + gain) * (1 + v_os / v_set) - control / ((1 + gain) * v_set)
                         + bias_term)
        terms = [-(v_set + control) / (gain * v_set), v_os / v_set, bias_term, alpha - 1]
    else:
        lift = values["v_supply"] - control
        exact = alpha * (gain / (1 + gain) * (1 - v_os / v_set) + lift / ((1 + gain) * v_set)
                         - bias_term)
        terms = [(lift - v_set) / (gain * v_set), -v_os / v_set, -bias_term, alpha - 1]
    ideal = ledger(ev, "ideal")
    assert ideal.error == pytest.approx(1 / exact - 1, rel=1e-9, abs=1e-14)
    first_order = -sum(terms)
    assert ideal.error == pytest.approx(first_order, abs=2 * sum(abs(x) for x in terms) ** 2)


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_ideal_form_in_its_limit(case):
    # A -> large, V_OS = 0, I_b = 0, beta -> 1e5: I -> V_SET/R_S (common practice, no source).
    # What is left is the gain term (largest for the source, whose op-amp output sits near
    # the supply) and 1/(beta+1): both below 1e-5 here.
    device = {"beta_f": 1e5} if case[0] == "opamp_bjt_source" else {}
    ev = kit.evaluate(scenario(*case, device, a_ol=1e7, v_os=0.0, i_bias=0.0))
    values = ev.design.values
    left = values["v_supply"] / (opamp(ev.design).a_ol * values["v_set"]) + (1 / (1e5 + 1) if device else 0)
    assert abs(ledger(ev, "ideal").error) < 1.5 * left < 2e-5


# --- output resistance ------------------------------------------------------------------

def _bjt_r_out_by_nodal_analysis():
    """R_out of the BJT loop, derived here: op-amp + input at AC ground, test voltage at the collector."""
    a, r_b, r_pi, g_m, r_o, r_s, v_x = sp.symbols("A R_B r_pi g_m r_o R_S v_x", positive=True)
    v_s, v_b = sp.symbols("v_s v_b")
    v_o = -a * v_s
    base = sp.Eq((v_o - v_b) / r_b, (v_b - v_s) / r_pi)
    emitter = sp.Eq((v_b - v_s) / r_pi + g_m * (v_b - v_s) + (v_x - v_s) / r_o, v_s / r_s)
    sol = sp.solve([base, emitter], [v_s, v_b], dict=True)[0]
    i_x = g_m * (sol[v_b] - sol[v_s]) + (v_x - sol[v_s]) / r_o
    return sp.lambdify((a, r_b, r_pi, g_m, r_o, r_s), sp.simplify(v_x / i_x))


def _mos_r_out_by_nodal_analysis():
    a, g_m, r_o, r_s, v_x = sp.symbols("A g_m r_o R_S v_x", positive=True)
    v_s = sp.Symbol("v_s")
    i_x = g_m * (-a * v_s - v_s) + (v_x - v_s) / r_o  # gate = op-amp output = -A v_s
    sol = sp.solve(sp.Eq(v_s / r_s, i_x), v_s)[0]
    return sp.lambdify((a, g_m, r_o, r_s), sp.simplify(v_x / (sol / r_s)))


def _small_signal_r_out(ev, key):
    """R_out from the test's own nodal analysis with textbook small-signal parameters."""
    values, t = ev.design.values, ev.parts[pass_device(key)].quantities
    v_t = K_OVER_Q * ev.design.temp
    gain = opamp(ev.design).a_ol
    if "i_c" in t:
        r_o = (ev.design.devices["Q1"].v_a + t["v_ce"]) / t["i_c"]
        return _bjt_r_out_by_nodal_analysis()(gain, values["r_b"], v_t / t["i_b"], t["i_c"] / v_t,
                                              r_o, values["r_s"])
    lam = ev.design.devices["M1"].lambda_clm
    g_m, r_o = 2 * t["i_d"] / t["v_ov"], (1 + lam * t["v_ds"]) / (lam * t["i_d"])
    return _mos_r_out_by_nodal_analysis()(gain, g_m, r_o, values["r_s"])


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_output_resistance_against_the_nodal_analysis(case, evaluations):
    ev = evaluations[case]
    # the exact R_out against the test's own small-signal nodal analysis (hybrid-pi / square law)
    assert ev.r_out == pytest.approx(_small_signal_r_out(ev, case[0]), rel=1e-6)
    # and the kit's own published small-signal form agrees too
    (form,) = ev.r_out_forms.values()
    assert form == pytest.approx(ev.r_out, rel=1e-6)


def test_bjt_r_out_levels_off_near_beta_r_o_while_mos_grows_with_gain():
    # BJT: R_out -> (beta+1) r_o as A -> inf (base current escapes the loop; Gray et al.
    # ch. 3 / the nodal analysis above).  MOSFET: R_out = r_o + R_S + (A+1) g_m r_o R_S,
    # proportional to A (no gate current).  One vectorised solve over the gain each.
    gains = np.array([10.0, 1e3, 1e5, 1e7])
    design = scenario("opamp_bjt_source", "npn")
    pts = sweep(design, "U1.a_ol", gains).require()
    j = pts.junctions["Q1"]
    r_o = (design.devices["Q1"].v_a + j["v_ce"]) / j["i_c"]
    ratios = pts.r_out / ((j["i_c"] / j["i_b"] + 1) * r_o)
    assert list(ratios) == sorted(ratios) and ratios[0] < 0.8
    assert ratios[-1] == pytest.approx(1.0, abs=1e-5)
    mos = sweep(scenario("opamp_mos_source", "nmos"), "U1.a_ol", [1e3, 1e5]).require()
    assert mos.r_out[1] / mos.r_out[0] == pytest.approx(100.0, rel=0.02)


# --- compliance, the op-amp's swing, symmetry ---------------------------------------------

@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_compliance_edge_at_the_sense_node_plus_saturation_voltage(case, evaluations):
    # Compliance: V_out >= V_S + V_CE(sat) (BJT) or V_S + V_ov (MOSFET) for a sink, the
    # mirror image for a source (common practice; Sedra & Smith, from memory).
    ev = evaluations[case]
    sink = is_sink(case[1])
    edge = ev.compliance.low if sink else ev.compliance.high
    pts = sweep(ev.design, "v_load", [edge.voltage])
    v_s = pts.x[pts.model.unknowns.index("V_s"), 0]
    name = pass_device(case[0])
    j = {k: v[0] for k, v in pts.junctions[name].items()}
    headroom = ev.design.devices[name].v_ce_sat if "v_ce" in j else j["v_dsat"]
    assert edge.voltage == pytest.approx(v_s + (headroom if sink else -headroom), abs=1e-5)
    assert edge.part == name and edge.cause == ("saturation" if "v_ce" in j else "triode")


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_op_amp_swing_is_named_at_the_edge_when_it_runs_out(case, evaluations):
    # Put the swing limit just beyond today's output: as the load voltage nears the sense
    # node the loop drives harder, and the op-amp (part U1) meets its limit first.
    ev = evaluations[case]
    v_o = ev.parts["U1"].quantities["v_o"]
    assert ev.parts["U1"].region == "linear"
    sink = is_sink(case[1])
    # a BJT's drive barely rises before it saturates (~1 mV), a MOSFET's by tens of mV
    room = 0.3e-3 if case[0] == "opamp_bjt_source" else 0.01
    design = ev.design.with_parameter("U1.v_oh", v_o + room) if sink else \
        ev.design.with_parameter("U1.v_ol", v_o - room)
    tight = kit.evaluate(design)
    edge = tight.compliance.low if sink else tight.compliance.high
    assert (edge.part, edge.cause) == ("U1", "output_swing")
    assert "output swing" in edge.text
    pts = sweep(design, "v_load", [edge.voltage])
    assert pts.junctions["U1"]["v_o"][0] == pytest.approx(v_o + (room if sink else -room), abs=1e-6)
    # and a design point beyond it is refused, naming the load voltage
    with pytest.raises(OperatingPointError) as info:
        kit.evaluate(design.with_values(v_load=edge.voltage - (0.2 if sink else -0.2)))
    assert info.value.parameter == "v_load"


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_load_sweep_across_compliance_converges_everywhere(case, evaluations):
    # From just past the sense node (device saturated / in triode) to beyond the far edge.
    ev = evaluations[case]
    sink = is_sink(case[1])
    v_s = ev.node_voltages["V_s"]
    near = v_s + (0.005 if sink else -0.005)
    far = ev.compliance.high.voltage + 5 if sink else ev.compliance.low.voltage - 5
    pts = sweep(ev.design, "v_load", np.linspace(near, far, 300))
    assert pts.converged.all()
    assert pts.iterations.max() <= 30


@pytest.mark.parametrize("key", ["opamp_bjt_source", "opamp_mos_source"])
def test_source_is_the_mirror_image_of_the_sink_with_the_op_amp_shifted(key):
    # Mirror every voltage about the supply (x -> V_CC - x): the source is the sink with
    # V_OS -> -V_OS + V_CC/A (its op-amp output is measured from 0 V) and I_b -> -I_b
    # (derived here from the two loop equations; complementary devices, common practice).
    # The plain mirror image of the contract tests does not hold for this loop.
    sink_word, source_word = kit.topology(key).polarities
    values, devices = SCENARIOS[key, sink_word]
    source = kit.design(key, source_word, devices=devices, **(values | {"v_load": 4.0}))
    u1 = dict(devices["U1"])
    v_cc, gain = values["v_supply"], u1["a_ol"]
    shifted = u1 | {"v_os": -u1["v_os"] + v_cc / gain, "i_bias": -u1["i_bias"]}
    sink = kit.design(key, sink_word, devices=devices | {"U1": shifted}, **(values | {"v_load": v_cc - 4.0}))
    a = solve_points(model_of(source), source.parameters()).require()
    b = solve_points(model_of(sink), sink.parameters()).require()
    assert a.i_out[0] == pytest.approx(b.i_out[0], rel=1e-11)


# --- words, bad input, cautions -----------------------------------------------------------

@pytest.mark.parametrize("polarity", ["nmos", "pmos"])
def test_mosfet_loop_speaks_mosfet_words(polarity, evaluations):
    # A MOSFET pass device saturates (V_DS >= V_ov), it does not "saturate" as a BJT does,
    # and nothing about it may be worded for a bipolar part (common practice, no source).
    ev = evaluations["opamp_mos_source", polarity]
    s = ev.design.structure
    assert ev.design.polarity == polarity and s.part("M1").polarity == polarity
    assert ev.regions == {"U1": "linear", "M1": "saturation"}
    assert s.hand_parameters == ()
    assert_no_bipolar_words(ev, kit.topology("opamp_mos_source"))


@pytest.mark.parametrize("name, bad", [("v_set", -1.0), ("r_s", 0.0), ("v_supply", 0.0)])
def test_bad_values_name_the_parameter_and_range(name, bad):
    with pytest.raises(ParameterError) as info:
        kit.design("opamp_mos_source", **{name: bad})
    assert info.value.parameter == name and info.value.valid


@pytest.mark.parametrize("name, bad", [("a_ol", 0.0), ("v_os", 0.5), ("i_bias", 2e-3)])
def test_bad_op_amp_parameters_name_the_part_and_range(name, bad):
    with pytest.raises(ParameterError) as info:
        kit.design("opamp_bjt_source", devices={"U1": {name: bad}})
    assert info.value.parameter == f"U1.{name}" and info.value.valid


def test_output_swing_must_be_a_range():
    with pytest.raises(ParameterError) as info:
        kit.design("opamp_mos_source", devices={"U1": {"v_ol": 5.0, "v_oh": 4.0}})
    assert info.value.parameter == "U1.v_ol"


def test_op_amp_defaults_are_the_scenarios():
    # The topologies give U1 the defaults their scenarios always had (a 1 mA sink on
    # 12 V, a 10 mA LED driver on 24 V with a rail-to-rail output).
    assert dict(kit.design("opamp_bjt_source").devices["U1"].values) == dict(
        a_ol=1e5, v_os=0.5e-3, v_os_tc=0.0, i_bias=20e-9, v_oh=11.0, v_ol=0.2)
    assert kit.design("opamp_mos_source", "pmos").devices["U1"].v_oh == 22.5


def test_cautions_are_in_the_notes():
    for key in ("opamp_bjt_source", "opamp_mos_source"):
        notes = " ".join(kit.topology(key).notes).lower()
        assert "stability" in notes and "stopper" in notes and "dissipates" in notes
        assert "local codes" in notes


def test_the_op_amp_output_cannot_pass_its_own_supply():
    # An op-amp's output stays between its supply pins whatever its stated swing
    # (common practice, no source).  V_SET = 4.5 V needs V_o = V_SET + V_BE + I_B R_B
    # ≈ 5.2 V: a 5 V supply cannot give it although V_OH = 11 V, and the refusal
    # names the supply with the least that would do (a little above V_o).
    import kit

    d = kit.design("opamp_bjt_source", "npn", v_set=4.5, v_supply=5, v_load=4.9, r_s="4k7")
    with pytest.raises(kit.DesignError) as err:
        kit.evaluate(d)
    assert err.value.parameter == "v_supply"
    assert "≥ 5." in err.value.valid
    ok = kit.evaluate(d.with_values(v_supply=12, v_load=8))
    assert ok.parts["U1"].region == "linear"
    assert 5.1 < ok.parts["U1"].quantities["v_o"] < 5.4
