"""MOSFET square-law mirror against the published mirror relations and a hand-written solve.

Independent references, written here without kit code:

* square law with channel-length modulation ``I_D = (K/2)(V_GS - V_th)^2
  (1 + lambda V_DS)`` in saturation (Sedra & Smith, MOSFET chapter; Razavi,
  Design of Analog CMOS ICs, ch. 2 -- from memory), the input transistor's
  equation solved with ``scipy.optimize.brentq``;
* the mirror ratio ``I_out/I_REF = [(W/L)2/(W/L)1](1 + lambda V_DS2)/(1 + lambda
  V_GS1)`` and ``r_o = (1 + lambda V_DS)/(lambda I_D)`` (Razavi ch. 5 and ch. 2,
  from memory); compliance ``V_DS2 >= V_ov`` (Razavi ch. 5, from memory);
* threshold mismatch moves the ratio by ``-2 dV_th/V_ov`` to first order (Razavi
  ch. 5 / Pelgrom et al., IEEE JSSC 24, 1989 -- from memory);
* mobility ``∝ T^-mu_exp``, ``dV_th/dT = tc_vth`` (from memory); ``k/q`` from
  CODATA 2018 via ``scipy.constants``.

The designs are scenarios invented for these tests.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.constants
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

import kit
from kit.errors import OperatingPointError, ParameterError
from kit.evaluation import model_of, sweep
from kit.solve import solve_points

K_OVER_Q = scipy.constants.k / scipy.constants.e  # V/K, CODATA 2018 (exact)
EXAMPLES = Path(__file__).resolve().parent.parent / "examples"

# an integrated-style pair of our own and a discrete one
INTEGRATED = {"k_prime": 180e-6, "w_over_l": 12.0, "v_th": 0.55, "lambda_clm": 0.06, "tc_vth": -1.8e-3}
VALUES = dict(i_ref=25e-6, w_ratio=3.0, v_supply=5.0, v_load=2.2)


def mirror(polarity="npn", m1=None, m2=None, **changes):
    conditions = {k: changes.pop(k) for k in ("temp", "t_ref") if k in changes}
    devices = {"M1": INTEGRATED | (m1 or {}), "M2": INTEGRATED | (m2 or {})}
    return kit.design("mos_mirror", polarity, devices=devices, **conditions, **(VALUES | changes))


def device_at_temperature(design, name):
    """K = k'(W/L)(T/T0)^-mu_exp and V_th(T) of one device (laws from memory, see above)."""
    d, t, t0 = design.devices[name], design.temp, design.t_ref
    scale = design.values["w_ratio"] if name == "M2" else 1.0
    return (scale * d.k_prime * d.w_over_l * (t / t0) ** -d.mu_exp, d.v_th + d.tc_vth * (t - t0),
            d.lambda_clm)


def reference(design):
    """(I_out, V_GS1) from the square law solved by brentq (M1 and M2 saturated)."""
    k1, vth1, lam1 = device_at_temperature(design, "M1")
    k2, vth2, lam2 = device_at_temperature(design, "M2")
    v = design.values
    i_ref = v["i_ref"] * (1 + v["i_ref_tc"] * (design.temp - design.t_ref))
    v_gs1 = brentq(lambda x: k1 / 2 * (x - vth1) ** 2 * (1 + lam1 * x) - i_ref, vth1, vth1 + 10.0,
                   xtol=1e-15, rtol=4 * np.finfo(float).eps)
    v_ds2 = v["v_load"] if design.polarity == "npn" else v["v_supply"] - v["v_load"]
    return k2 / 2 * (v_gs1 - vth2) ** 2 * (1 + lam2 * v_ds2), v_gs1


@pytest.fixture(scope="module")
def evaluations():
    return {p: kit.evaluate(mirror(p)) for p in ("npn", "pnp")}


# --- exact solve and the published ratio --------------------------------------------------

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
@pytest.mark.parametrize("conditions", [{}, {"temp": 358.15}, {"temp": 248.15, "i_ref_tc": 3e-3}])
def test_exact_solve_matches_the_square_law(polarity, conditions):
    design = mirror(polarity, m2={"v_th": 0.56, "lambda_clm": 0.05}, **conditions)
    points = solve_points(model_of(design), design.parameters()).require()
    i_out, v_gs1 = reference(design)
    assert points.i_out[0] == pytest.approx(i_out, rel=1e-12)
    v_g = points.x[0, 0]
    assert (v_g if polarity == "npn" else design.values["v_supply"] - v_g) == pytest.approx(v_gs1, rel=1e-13)
    assert points.in_good_region(devices=design.devices)[0]


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_ratio_with_channel_length_modulation(polarity, evaluations):
    # I_out/I_REF = [(W/L)2/(W/L)1](1 + lambda V_DS2)/(1 + lambda V_GS1) (Razavi ch. 5).
    ev = evaluations[polarity]
    t1, t2 = ev.transistors["M1"], ev.transistors["M2"]
    lam = INTEGRATED["lambda_clm"]
    expected = VALUES["w_ratio"] * (1 + lam * t2["v_ds"]) / (1 + lam * t1["v_gs"])
    assert ev.i_out / VALUES["i_ref"] == pytest.approx(expected, rel=1e-13)


def test_ideal_ratio_is_exact_without_clm():
    # I_out = [(W/L)2/(W/L)1] I_REF for lambda -> 0 (Razavi ch. 5).
    for polarity in ("npn", "pnp"):
        ev = kit.evaluate(mirror(polarity, m1={"lambda_clm": 0.0}, m2={"lambda_clm": 0.0}))
        assert abs({e.key: e for e in ev.ledger}["ratio"].error) < 1e-13


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_clm_ratio_form_error_is_that_of_one_refinement(polarity, evaluations):
    # The form takes V_ov1 from one fixed-point step u1 = g(u0) of u = g(u) =
    # sqrt(2 I_REF/(K1 (1 + lambda (V_th + u)))), started at u0 = sqrt(2 I_REF/K1).  With
    # g' = -(lambda/2) u/(1 + lambda V_GS) and u0 - u = u (sqrt(1 + lambda V_GS) - 1) the
    # ratio comes out high by (lambda^2 V_ov^2/2)(sqrt(1 + lambda V_GS) - 1)/(1 + lambda V_GS)^2
    # (derived here; ~ lambda^3 V_ov^2 V_GS/4 for small lambda V_GS).
    ev = evaluations[polarity]
    t1 = ev.transistors["M1"]
    lam, u, v_gs = INTEGRATED["lambda_clm"], t1["v_ov"], t1["v_gs"]
    estimate = lam ** 2 * u ** 2 / 2 * (math.sqrt(1 + lam * v_gs) - 1) / (1 + lam * v_gs) ** 2
    error = {e.key: e for e in ev.ledger}["clm_ratio"].error
    assert error == pytest.approx(estimate, rel=0.02)


def test_threshold_mismatch_moves_the_ratio_by_twice_dvth_over_vov():
    # dI/I = -2 dV_th/V_ov to first order (Razavi ch. 5 / Pelgrom 1989, from memory).
    base = kit.evaluate(mirror())
    shift = 2e-3
    moved = kit.evaluate(mirror(m2={"v_th": INTEGRATED["v_th"] + shift}))
    v_ov = base.transistors["M1"]["v_ov"]
    ratio = moved.i_out / base.i_out - 1
    assert ratio == pytest.approx(-2 * shift / v_ov, abs=1.5 * (shift / v_ov) ** 2)


# --- output resistance, compliance, sensitivities --------------------------------------------

@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_output_resistance(polarity, evaluations):
    ev = evaluations[polarity]
    h = 0.05
    pts = sweep(ev.design, "v_load", ev.design.values["v_load"] + np.array([-h, h]))
    sign = 1 if polarity == "npn" else -1
    assert ev.r_out == pytest.approx(sign * 2 * h / (pts.i_out[1] - pts.i_out[0]), rel=1e-4)
    # r_o = (1 + lambda V_DS)/(lambda I_D) (Razavi ch. 2, from memory)
    t2 = ev.transistors["M2"]
    lam = INTEGRATED["lambda_clm"]
    assert ev.r_out == pytest.approx((1 + lam * t2["v_ds"]) / (lam * t2["i_d"]), rel=1e-10)
    assert ev.r_out_forms["r_out_ro2"] == pytest.approx(ev.r_out, rel=1e-10)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_compliance_edges(polarity, evaluations):
    # Saturation edge V_DS2 = V_ov (Razavi ch. 5); the far edge is BV_DSS here (the tail
    # dissipates microwatts), named as M2's breakdown.
    ev = evaluations[polarity]
    v_ov = ev.transistors["M1"]["v_ov"]  # = M2's: matched thresholds, one gate node
    v_dd, bv = VALUES["v_supply"], ev.design.devices["M2"].bv_dss
    triode, breakdown = ((ev.compliance.low, ev.compliance.high) if polarity == "npn"
                         else (ev.compliance.high, ev.compliance.low))
    assert (triode.transistor, triode.cause) == ("M2", "triode")
    assert (breakdown.transistor, breakdown.cause) == ("M2", "breakdown")
    if polarity == "npn":
        assert triode.voltage == pytest.approx(v_ov, abs=1e-5)
        assert breakdown.voltage == pytest.approx(bv, abs=1e-5)
    else:
        assert triode.voltage == pytest.approx(v_dd - v_ov, abs=1e-5)
        assert breakdown.voltage == pytest.approx(v_dd - bv, abs=1e-5)


def test_load_sweep_across_compliance_converges():
    ev = kit.evaluate(mirror())
    pts = sweep(ev.design, "v_load", np.linspace(-2.0, ev.compliance.high.voltage + 5, 200))
    assert pts.converged.all() and pts.iterations.max() <= 6


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_sensitivities_match_central_differences(polarity):
    # Implicit-function-theorem derivatives against central differences of the exact solve.
    design = mirror(polarity, m2={"v_th": 0.56}, temp=333.15, i_ref_tc=1e-3)
    model = model_of(design)
    values = design.parameters()
    base = solve_points(model, values).require()
    exact = dict(zip(model.parameter_names, base.di_dp[:, 0]))
    names = list(model.parameter_names)
    steps = {n: 1e-4 * abs(values[n]) if values[n] else (1e-3 if n.endswith("t_rise") else 1e-6)
             for n in names}
    columns = {n: np.full(2 * len(names), float(values[n])) for n in names}
    for k, n in enumerate(names):
        columns[n][2 * k] -= steps[n]
        columns[n][2 * k + 1] += steps[n]
    current = solve_points(model, columns).require().i_out
    rounding = 64 * np.finfo(float).eps * abs(base.i_out[0])
    for k, n in enumerate(names):
        fd = (current[2 * k + 1] - current[2 * k]) / (2 * steps[n])
        assert abs(fd - exact[n]) <= 1e-6 * abs(exact[n]) + rounding / steps[n], n


def test_pmos_mirror_is_the_mirror_image_of_nmos():
    # Same parameters, every voltage mirrored about V_DD (complementary devices;
    # common practice, no source).
    sink = solve_points(model_of(mirror("npn")), mirror("npn").parameters()).require()
    source_design = mirror("pnp", v_load=VALUES["v_supply"] - VALUES["v_load"])
    source = solve_points(model_of(source_design), source_design.parameters()).require()
    assert source.i_out[0] == pytest.approx(sink.i_out[0], rel=1e-13)


def test_a_reference_current_below_threshold_is_refused():
    # 20 nA into a discrete-size device: the input sits below V_th, where the kit calls the
    # device cut off instead of trusting its subthreshold continuation.
    design = kit.design("mos_mirror", i_ref=20e-9)
    with pytest.raises(OperatingPointError) as info:
        kit.evaluate(design)
    assert info.value.parameter in {"v_supply", "v_load"}
    regions = solve_points(model_of(design), design.parameters()).regions(devices=design.devices)
    assert regions["M1"][0] == "cutoff"


# --- random designs, bad input, records ---------------------------------------------------------

@st.composite
def random_mirrors(draw):
    polarity = draw(st.sampled_from(["npn", "pnp"]))
    supply = draw(st.floats(1.5, 30.0))
    device = {"k_prime": 10 ** draw(st.floats(-5.0, -0.5)), "w_over_l": draw(st.floats(1.0, 100.0)),
              "v_th": draw(st.floats(0.3, 2.5)), "lambda_clm": draw(st.floats(0.0, 0.1))}
    return kit.design("mos_mirror", polarity, devices={"M1": device, "M2": device},
                      i_ref=10 ** draw(st.floats(-7.0, -1.5)), w_ratio=10 ** draw(st.floats(-1.0, 1.0)),
                      v_supply=supply, v_load=draw(st.floats(0.0, 1.0)) * supply)


@settings(max_examples=20, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(random_mirrors())
def test_random_mirrors_converge_in_saturation_or_say_why(design):
    try:
        ev = kit.evaluate(design)
    except OperatingPointError as err:
        assert err.parameter in {"v_load", "v_supply"} and err.valid
        return
    assert ev.regions == {"M1": "saturation", "M2": "saturation"}
    assert ev.compliance.contains(design.values["v_load"])
    assert math.isfinite(ev.i_out) and ev.i_out > 0 and math.isfinite(ev.r_out_forms["r_out_ro2"])


@pytest.mark.parametrize("name, bad", [("w_ratio", 0.0), ("i_ref", -1e-6), ("v_supply", 0.0)])
def test_bad_values_name_the_parameter_and_range(name, bad):
    with pytest.raises(ParameterError) as info:
        kit.design("mos_mirror", **{name: bad})
    assert info.value.parameter == name and info.value.valid


@pytest.mark.parametrize("path", sorted(EXAMPLES.glob("mos_mirror-*.toml")), ids=lambda p: p.name)
def test_example_records_evaluate(path):
    from kit.cli import main
    from kit.record import load_record

    record = load_record(path)
    ev = kit.evaluate(record.design, edge=record.edge)
    assert ev.regions == {"M1": "saturation", "M2": "saturation"}
    assert main(["evaluate", "--json", str(path)]) == 0
