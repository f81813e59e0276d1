"""ΔV_BE (PTAT) self-biased cell against outside results.

Each check names its source: ``I = V_T ln(N)/R`` (Gray, Hurst, Lewis &
Meyer, *Analysis and Design of Analog ICs*, ch. 4; background Widlar 1971,
Brokaw 1974; from memory) with ``V_T = kT/q`` from ``scipy.constants``;
an independent solve of hand-written Kirchhoff equations by
``scipy.optimize.root`` (MINPACK) with the Ebers–Moll law of the conftest
reference model (Ebers & Moll, Proc. IRE 42, 1954) and Getreu's temperature
laws (from memory); the Early law ``I_C ∝ 1 + V_CE/V_A`` (Early, Proc. IRE
40, 1952); facts of the trade (a
self-biased cell also rests at zero current and needs a start-up path —
Gray et al. ch. 4, from memory).  Designs are scenarios invented for these tests.

Checks every topology shares (finite-difference sensitivities and R_out, the
NPN/PNP mirror image, random designs converging or failing clearly, the
drawing, example records) live in the contract module, not here.
"""

from __future__ import annotations

import math
import numpy as np
import pytest
import scipy.constants
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.optimize import root

import kit
from kit.analysis.evaluation import model_of
from kit.model.solve import solve_points

KEY = "ptat_cell"
NAMES = ("Q1", "Q2", "Q3", "Q4", "Q5")
K_OVER_Q = scipy.constants.k / scipy.constants.e  # V/K, CODATA 2018 (exact in the 2019 SI)


def uniform(**model):
    return {name: dict(model) for name in NAMES}


IDEAL = uniform(beta_f=1e5, v_a=math.inf, beta_temp_exponent=0.0)

# scenarios of our own: a 25 µA bias cell on a 3.3 V rail with N = 4, and its
# complement with unlike transistors, running warm
CELL = dict(r_ptat=1.5e3, n_area=4.0, v_supply=3.3, v_load=1.2)
UNLIKE = {"Q1": {"beta_f": 180.0, "v_a": 80.0, "i_s": 2e-15},
          "Q2": {"beta_f": 150.0, "v_a": 70.0, "i_s": 2.2e-15},
          "Q3": {"beta_f": 60.0, "v_a": 40.0, "i_s": 5e-15},
          "Q4": {"beta_f": 70.0, "v_a": 35.0, "i_s": 5.5e-15},
          "Q5": {"beta_f": 65.0, "v_a": 45.0, "i_s": 4.5e-15}}


def solve(design, **overrides):
    return solve_points(model_of(design), design.parameters() | overrides).require()


def node_voltages(points):
    return dict(zip(points.model.unknowns, points.x[:, 0]))


def design_for(polarity, **kwargs):
    values = CELL | ({} if polarity == "npn" else {"v_load": 2.0})
    return kit.design(KEY, polarity, **(values | kwargs.pop("values", {})), **kwargs)


# ---------------------------------------------------------------------------
# an independent solve of hand-written KCL

def device_values(p, name, area=1.0):
    """One transistor at the temperature of the point (Getreu's laws, from memory)."""
    t, t0 = p["temp"], p["t_ref"]
    i_s = (area * p[f"{name}.i_s"] * (t / t0) ** p[f"{name}.i_s_temp_exponent"]
           * np.exp(p[f"{name}.e_g"] / K_OVER_Q * (1 / t0 - 1 / t)))
    beta = p[f"{name}.beta_f"] * (t / t0) ** p[f"{name}.beta_temp_exponent"] * (1 + p[f"{name}.beta_tc"] * (t - t0))
    return {"v_t": K_OVER_Q * t, "i_s": i_s, "beta": beta, "beta_r": p[f"{name}.beta_r"],
            "v_a": p[f"{name}.v_a"]}


def kcl(polarity, v_b, v_e, v_p, p, ebers_moll):
    """Currents leaving b, e (Q2's emitter) and p, and the output current.

    NPN core: Q1 (B = C = b, E 0), Q2 (B b, C p, E e, area N), R e-0; PNP mirror
    at V_CC: Q3 (B = C = p), Q4 (B p, C b), Q5 (B p, C out).  The pnp polarity is
    the complement with every voltage measured from the other rail."""
    t, t0 = p["temp"], p["t_ref"]
    r = p["r_ptat"] * (1 + p["tcr_r_ptat"] * (t - t0))  # IEC 60115-1 TCR (from memory)
    v_cc, v_out = p["v_supply"], p["v_load"]
    if polarity == "pnp":  # the complement: distances from the supply rail
        v_b, v_e, v_p, v_out = v_cc - v_b, v_cc - v_e, v_cc - v_p, v_cc - v_out
    q = {name: device_values(p, name, p["n_area"] if name == "Q2" else 1.0) for name in NAMES}
    c1, b1 = ebers_moll(v_b, 0.0, q["Q1"])
    c2, b2 = ebers_moll(v_b - v_e, v_b - v_p, q["Q2"])
    # the mirror's junctions measured from V_CC
    c3, b3 = ebers_moll(v_cc - v_p, 0.0, q["Q3"])
    c4, b4 = ebers_moll(v_cc - v_p, v_b - v_p, q["Q4"])
    c5, b5 = ebers_moll(v_cc - v_p, v_out - v_p, q["Q5"])
    # In the complement every current runs the other way, so these residuals only
    # change sign there: their zeros are the same.
    leaving_b = c1 + b1 + b2 - c4
    leaving_e = v_e / r - c2 - b2
    leaving_p = c2 - c3 - b3 - b4 - b5
    return [leaving_b, leaving_e, leaving_p], c5


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_exact_solve_matches_independent_kcl(polarity, reference):
    design = design_for(polarity, devices=UNLIKE, temp=318.15, tcr={"r_ptat": 150e-6})
    points = solve(design)
    x = node_voltages(points)
    p = design.parameters()
    scale = points.i_out[0]

    def residual(v):
        return [f / scale for f in kcl(polarity, *(v * 1e-3), p, reference.ebers_moll)[0]]

    found = root(residual, np.array([x["V_b"], x["V_e"], x["V_p"]]) * 1e3 + 3.0, method="hybr",
                 options={"xtol": 1e-15})
    v_b, v_e, v_p = found.x * 1e-3
    currents, i_out = kcl(polarity, v_b, v_e, v_p, p, reference.ebers_moll)
    assert max(abs(f) for f in currents) < 1e-18
    assert points.i_out[0] == pytest.approx(i_out, rel=1e-9)
    assert (x["V_b"], x["V_e"], x["V_p"]) == pytest.approx((v_b, v_e, v_p), abs=1e-9)


# ---------------------------------------------------------------------------
# the PTAT law

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_ideal_cell_gives_vt_ln_n_over_r(polarity):
    design = design_for(polarity, devices=IDEAL)
    points = solve(design)
    v_t = K_OVER_Q * design.temp
    # I = V_T ln(N)/R (Gray et al. ch. 4, from memory); base currents of 1e-5 remain
    expected = v_t * math.log(design.values["n_area"]) / design.values["r_ptat"]
    assert points.i_out[0] == pytest.approx(expected, rel=1e-4)
    ideal = points.model.closed_forms(points.q)["ideal_ptat"][0]
    assert ideal == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("tcr", [0.0, 1e-3])
def test_current_is_proportional_to_absolute_temperature(tcr):
    design = design_for("npn", devices=IDEAL, temp=300.15, tcr={"r_ptat": tcr})
    ev = kit.evaluate(design)
    # I ∝ T/R(T): (1/I) dI/dT = 1/T - TCR/(1 + TCR (T - T_ref)), +3331.7 ppm/K at
    # 300.15 K for TCR = 0 (from V_T = kT/q)
    expected = 1 / design.temp - tcr / (1 + tcr * (design.temp - design.t_ref))
    assert ev.tempco == pytest.approx(expected, abs=0.1e-6)
    if tcr == 0:
        assert ev.tempco * 1e6 == pytest.approx(3331.7, abs=0.1)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_finite_beta_form_is_exact_without_early_effect(polarity):
    # base currents of core and mirror with unmatched gains and I_S (derived here from
    # KCL at b and p): exact for V_A -> inf, forward active
    devices = {n: m | {"v_a": math.inf} for n, m in UNLIKE.items()}
    design = design_for(polarity, devices={n: m | {"beta_f": m["beta_f"] / 4} for n, m in devices.items()})
    points = solve(design)
    forms = points.model.closed_forms(points.q)
    assert forms["finite_beta"][0] == pytest.approx(points.i_out[0], rel=1e-9)
    assert abs(forms["ideal_ptat"][0] / points.i_out[0] - 1) > 0.01  # low gains matter


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_early_factors_explain_the_rest(polarity):
    # With the Early law I_C ∝ 1 + V_CE/V_A (Early 1952) the mirror's output devices
    # run above the diode, which the finite-beta form misses; the first-order Early
    # form (derived here, junction drops at V_BE(on)) recovers it.
    design = design_for(polarity, devices=UNLIKE)
    points = solve(design)
    v_be = points.junctions["Q1"]["v_be"][0]
    points = solve(design, v_be_on=v_be)
    forms = points.model.closed_forms(points.q)
    i_out = points.i_out[0]
    early_error = abs(forms["early_first_order"][0] / i_out - 1)
    assert early_error < 2e-3  # the mirror's drops differ a little from Q1's
    assert early_error < 0.02 * abs(forms["finite_beta"][0] / i_out - 1)


# ---------------------------------------------------------------------------
# the zero-current branch

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_zero_current_solution_is_refused(polarity):
    # A self-biased cell also rests at zero current (Gray et al. ch. 4, from memory).
    design = design_for(polarity)
    model = model_of(design)
    v_cc = design.values["v_supply"]
    # every junction off: b and e at the core rail, p at the mirror rail
    zero = np.array([0.0, 0.0, v_cc]) if polarity == "npn" else np.array([v_cc, v_cc, 0.0])
    from_zero = solve_points(model, design.parameters(), x0=zero[:, None])
    # Newton from there finds leakage-level currents, never a valid operating point
    assert abs(from_zero.i_out[0]) < 1e-9 and not from_zero.converged[0]
    # The zero-current state is a true solution of the KCL equations: MINPACK finds one
    # from the all-off state (residuals scaled to order one; the junctions' leakage
    # leaves the node voltages far from the rails)
    q = from_zero.q
    found = root(lambda x: model.residuals(x[:, None], q)[:, 0] * 1e14, zero, method="hybr",
                 options={"xtol": 1e-15}).x[:, None]
    assert np.max(np.abs(model.residuals(found, q))) < 1e-18
    assert abs(model.output(found, q)[0]) < 1e-12
    # ... which the circuit declares off its running branch, so the solve refuses it
    assert not model.valid(found, q)[0]
    assert not solve_points(model, design.parameters(), x0=found).converged[0]
    # while the declared start lands on the running branch
    running = solve(design)
    assert running.i_out[0] == pytest.approx(running.model.closed_forms(running.q)["ideal_ptat"][0],
                                             rel=0.15)


def test_the_cell_says_it_needs_a_start_up_path():
    notes = " ".join(kit.topology(KEY).notes).lower()
    assert "start-up" in notes and "zero current" in notes


def test_pnp_variant_is_the_complement():
    design = design_for("pnp")
    assert [design.devices[n].polarity for n in NAMES] == ["pnp", "pnp", "npn", "npn", "npn"]


# ---------------------------------------------------------------------------
# output resistance

def warm(polarity):
    return design_for(polarity, devices=UNLIKE, temp=323.15, tcr={"r_ptat": -60e-6})


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_output_resistance_is_r_o_of_the_output_transistor(polarity):
    design = warm(polarity)
    points = solve(design)
    # the load voltage reaches only Q5's collector: R_out = r_o5 = (V_A + V_CE)/I_C
    # (Early 1952; Gray et al. ch. 4, from memory)
    q5 = points.junctions["Q5"]
    r_o = (design.devices["Q5"].v_a + q5["v_ce"][0]) / q5["i_c"][0]
    assert points.r_out[0] == pytest.approx(r_o, rel=1e-6)
    assert points.model.extras(points.x, points.q)["r_out_ro"][0] == pytest.approx(r_o, rel=1e-12)


# ---------------------------------------------------------------------------
# compliance and robustness

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_compliance_edges_name_the_output_transistor(polarity):
    design = design_for(polarity)
    ev = kit.evaluate(design)
    q5 = design.devices["Q5"]
    v_cc = design.values["v_supply"]
    # Q5's emitter sits on a rail: it saturates V_CE(sat) from that rail and breaks
    # down BV_CEO from it (Gray et al. ch. 4; Sedra & Smith; from memory)
    if polarity == "npn":
        saturation, breakdown = ev.compliance.high, ev.compliance.low
        assert saturation.voltage == pytest.approx(v_cc - q5.v_ce_sat, abs=1e-5)
        assert breakdown.voltage == pytest.approx(v_cc - q5.bv_ceo, abs=1e-4)
    else:
        saturation, breakdown = ev.compliance.low, ev.compliance.high
        assert saturation.voltage == pytest.approx(q5.v_ce_sat, abs=1e-5)
        assert breakdown.voltage == pytest.approx(q5.bv_ceo, abs=1e-4)
    assert (saturation.part, saturation.cause) == ("Q5", "saturation")
    assert (breakdown.part, breakdown.cause) == ("Q5", "breakdown")


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_load_sweep_across_compliance(polarity):
    design = design_for(polarity)
    ev = kit.evaluate(design)
    low, high = ev.compliance.low.voltage, ev.compliance.high.voltage
    grid = np.linspace(low - 10.0, high + 10.0, 201)
    points = solve_points(model_of(design), design.parameters() | {"v_load": grid})
    inside = (grid >= low) & (grid <= high)
    # Past the saturation edge the output's collector-base junction conducts and, a
    # junction drop further, pulls the mirror node until the cell stops: still a
    # solution (saturated, outside compliance), found everywhere.
    assert points.converged.all()
    worst, _ = points.worst_margin()
    outside = (grid < low - 1e-3) | (grid > high + 1e-3)
    assert (worst[outside] < 0).all() and (worst[inside] > -1e-6).all()


@settings(max_examples=20, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(polarity=st.sampled_from(["npn", "pnp"]), r_ptat=st.floats(100.0, 1e6),
       n_area=st.floats(2.0, 24.0), v_supply=st.floats(2.5, 30.0), load_fraction=st.floats(0.0, 1.0),
       beta_core=st.floats(30.0, 500.0), beta_mirror=st.floats(20.0, 300.0),
       v_a=st.floats(30.0, 300.0))
def test_running_cells_follow_the_early_form(polarity, r_ptat, n_area, v_supply, load_fraction,
                                             beta_core, beta_mirror, v_a):
    # Loads at least 0.5 V inside the output's rail, where Q5 cannot saturate (V_CE(sat)
    # 0.2-0.25 V, common practice) and the rest of the cell has its supply to itself:
    # every such design runs, all parts active.
    devices = {n: {"beta_f": beta_core if n in ("Q1", "Q2") else beta_mirror, "v_a": v_a}
               for n in NAMES}
    room = load_fraction * (v_supply - 0.5)
    design = kit.design(KEY, polarity, devices=devices, r_ptat=r_ptat, n_area=n_area, v_supply=v_supply,
                        v_load=room if polarity == "npn" else v_supply - room)
    ev = kit.evaluate(design)
    assert set(ev.regions.values()) == {"active"}
    # on the running branch: V_T ln(N)/R (Gray et al. ch. 4, from memory) with base
    # currents and the Early law (Early 1952), junction drops at Q1's
    at_vbe = solve(design, v_be_on=ev.parts["Q1"].quantities["v_be"])
    early = at_vbe.model.closed_forms(at_vbe.q)["early_first_order"][0]
    assert early == pytest.approx(ev.i_out, rel=2e-3)
