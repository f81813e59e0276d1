"""The exact solve (kit.model.solve) against an independent solution of the same KCL.

The reference is ``scipy.optimize.root`` (MINPACK hybrd) on the divider
source's node equations written out by hand in tests/conftest.py from the
Ebers–Moll transport equations (Ebers & Moll, Proc. IRE 1954) with the M-CE
Early factor and the Getreu temperature laws — no kit code involved.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import kit
from kit.errors import ConvergenceError
from kit.analysis.evaluation import sweep
from kit.model.solve import MAX_ITERATIONS, solve_points

SCENARIO_NAMES = ["sink_15v", "sink_5v", "sink_weak", "source_12v", "source_9v"]  # tests/conftest.py

VARIANTS = {
    "nominal": {},
    "no_early": {"v_a": math.inf},
    "hot_self_heated": {"temp": 358.15, "t_rise": 15.0, "tcr": {"r1": 100e-6, "r_e": -200e-6}},
    "cold_low_beta": {"temp": 233.15, "beta_f": 45.0, "beta_tc": 4e-3, "beta_temp_exponent": 0.0},
}


def _design(scenario, name, variant):
    changes = dict(VARIANTS[variant])
    t_rise = changes.pop("t_rise", None)
    design = scenario(name, **changes)
    if t_rise is not None:
        design = design.with_parameter("Q1.t_rise", t_rise)
    return design


def _kit_point(design, **override):
    points = sweep(design, "v_load", [override.get("v_load", design.values["v_load"])]).require()
    j = points.junctions["Q1"]
    index = points.model.unknowns
    return {"i_out": float(points.i_out[0]),
            "v_b": float(points.x[index.index("V_b"), 0]),
            "v_e": float(points.x[index.index("V_e"), 0]),
            "v_ce": float(j["v_ce"][0])}


@pytest.mark.parametrize("variant", list(VARIANTS))
@pytest.mark.parametrize("name", SCENARIO_NAMES)
def test_exact_solve_matches_scipy_root(scenario, reference, name, variant):
    design = _design(scenario, name, variant)
    ours = reference.solve(design.polarity, design.parameters())
    got = _kit_point(design)
    # Both solve the same equations to double precision (the kit's Newton to a
    # 1e-12 relative step, MINPACK to xtol 1e-15 with residuals < 1e-12 of the
    # node currents); I_out = I_S e^{V_BE/V_T} amplifies a node-voltage error by
    # V/V_T ~ 400, still far inside 1e-9.
    assert got["i_out"] == pytest.approx(ours["i_out"], rel=1e-9)
    assert got["v_b"] == pytest.approx(ours["v_b"], rel=1e-9, abs=1e-12)
    assert got["v_e"] == pytest.approx(ours["v_e"], rel=1e-9, abs=1e-12)


@pytest.mark.parametrize("name", ["sink_15v", "source_12v"])
def test_exact_solve_matches_scipy_root_in_saturation(scenario, reference, name):
    # Outside compliance the exact equations still have one solution (the
    # Ebers–Moll model covers saturation); the load is put 0.3 V past V_E so the
    # collector-base junction is forward biased.
    design = scenario(name)
    npn = design.polarity == "npn"
    nominal = reference.solve(design.polarity, design.parameters())
    v_load = nominal["v_e"] + (0.05 if npn else -0.05)
    ours = reference.solve(design.polarity, design.parameters() | {"v_load": v_load})
    got = _kit_point(design, v_load=v_load)
    assert ours["v_bc"] > 0.3  # genuinely saturated
    assert got["i_out"] == pytest.approx(ours["i_out"], rel=1e-9)
    assert got["v_b"] == pytest.approx(ours["v_b"], rel=1e-9, abs=1e-12)
    assert got["v_e"] == pytest.approx(ours["v_e"], rel=1e-9, abs=1e-12)
    # and the saturated current is smaller than the active one (Ebers–Moll: the
    # forward-biased collector junction injects back): common practice, no source
    assert got["i_out"] < nominal["i_out"]


def test_self_heating_is_the_device_alone_at_the_junction_temperature(scenario):
    # With every resistor TCR zero, a junction t_rise above temp is the same
    # circuit as the whole design at temp + t_rise (definition of the junction
    # temperature; the closed-form device laws depend on T_J only).
    base = scenario("sink_5v")
    heated = base.with_parameter("temp", 310.0).with_parameter("Q1.t_rise", 12.5)
    uniform = base.with_parameter("temp", 322.5)
    assert _kit_point(heated)["i_out"] == pytest.approx(_kit_point(uniform)["i_out"], rel=1e-12)


# ---------------------------------------------------------------------------
# vectorised solve over many random designs

def _random_parameters(rng, n, polarity):
    """Random but valid parameter vectors (every value inside its documented range)."""
    inf_mask = rng.random(n) < 0.1
    v_a = np.where(inf_mask, np.inf, 10 ** rng.uniform(1.3, 2.5, n))
    # Ratings (breakdown, power, junction limit) only judge the solved point:
    # they keep their typical values.
    typical = kit.design("divider_source", polarity).parameters()
    ratings = {name: np.full(n, typical[name]) for name in
               ("Q1.bv_ceo", "Q1.t_j_max", "Q1.theta_ja", "Q1.v_ce_sat", "p_rated_r1", "p_rated_r2",
                "p_rated_r_e")}
    return ratings | {
        "r1": 10 ** rng.uniform(2.5, 6.5, n), "r2": 10 ** rng.uniform(2.5, 6.5, n),
        "r_e": 10 ** rng.uniform(1.0, 5.0, n), "v_supply": rng.uniform(1.0, 60.0, n),
        "v_load": rng.uniform(-10.0, 70.0, n),
        "Q1.beta_f": 10 ** rng.uniform(1.3, 3.0, n), "Q1.beta_r": rng.uniform(0.5, 10.0, n),
        "Q1.v_a": v_a, "Q1.i_s": 10 ** rng.uniform(-16.0, -12.0, n),
        "Q1.e_g": rng.uniform(1.05, 1.2, n), "Q1.i_s_temp_exponent": rng.uniform(2.0, 4.0, n),
        "Q1.beta_temp_exponent": rng.uniform(0.0, 2.0, n), "Q1.beta_tc": rng.uniform(-2e-3, 5e-3, n),
        "Q1.t_rise": rng.uniform(0.0, 30.0, n),
        "temp": rng.uniform(220.0, 420.0, n), "t_ref": np.full(n, 298.15),
        "tcr_r1": rng.uniform(-1e-3, 1e-3, n), "tcr_r2": rng.uniform(-1e-3, 1e-3, n),
        "tcr_r_e": rng.uniform(-1e-3, 1e-3, n),
        "v_be_on": np.full(n, 0.65), "v_be_tc": np.full(n, -2e-3),
    }


@pytest.fixture(scope="module")
def random_batches(models):
    rng = np.random.default_rng(20261201)  # fixed seed: reproducible
    out = {}
    for polarity in ("npn", "pnp"):
        values = _random_parameters(rng, 2500, polarity)
        out[polarity] = (values, solve_points(models[polarity], values))
    return out


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_vectorised_solve_converges_or_flags_and_never_returns_nan(random_batches, polarity):
    values, points = random_batches[polarity]
    assert points.size == 2500
    assert points.converged.dtype == bool
    good = points.converged
    assert np.all(np.isfinite(points.i_out[good]))
    assert np.all(np.isfinite(points.x[:, good]))
    # Most random designs solve (the rest sit in saturation, reverse or cut-off,
    # see the forward-active test below and the regression checks at the end).
    assert good.mean() > 0.9, f"{(~good).sum()} of 2500 did not converge"


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_vectorised_solve_does_not_fail_in_forward_active(random_batches, reference, polarity):
    # Every design the independent solver finds well inside forward active
    # (V_BE > 0.3 V and V_CE > 0.3 V, i.e. V_BC < 0) must converge in the kit.
    values, points = random_batches[polarity]
    failed_active = []
    for k in np.flatnonzero(~points.converged):
        try:
            ours = reference.solve(polarity, {n: float(v[k]) for n, v in values.items()})
        except AssertionError:
            continue  # the reference cannot solve it either
        if ours["v_be"] > 0.3 and ours["v_ce"] > 0.3:
            failed_active.append((int(k), ours))
    assert not failed_active, failed_active[:3]


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_vectorised_solutions_satisfy_the_hand_written_kcl(random_batches, reference, polarity):
    values, points = random_batches[polarity]
    good = points.converged
    params = {k: v[good] for k, v in values.items()}
    o = reference.operating_values(params)
    v_b = points.x[points.model.unknowns.index("V_b"), good]
    v_e = points.x[points.model.unknowns.index("V_e"), good]
    f_b, f_e = reference.kcl(polarity, v_b, v_e, o)
    # Residual against the currents flowing at each node (the kit's own
    # acceptance test is 1e-9 of its node scale plus an absolute 1 fA, the
    # rounding of a large node voltage over its resistor; the hand-written KCL
    # is a different evaluation of the same sums, so allow the same).
    v_be = v_b - v_e if polarity == "npn" else v_e - v_b
    v_bc = v_b - o["v_out"] if polarity == "npn" else o["v_out"] - v_b
    i_c, i_b = reference.ebers_moll(v_be, v_bc, o)
    scale_b = np.abs(v_b - o["v_cc"]) / o["r1"] + np.abs(v_b) / o["r2"] + np.abs(i_b)
    scale_e = np.abs(v_e - (0.0 if polarity == "npn" else o["v_cc"])) / o["r_e"] + np.abs(i_c) + np.abs(i_b)
    assert np.all(np.abs(f_b) <= 1e-9 * scale_b + 1e-15)
    assert np.all(np.abs(f_e) <= 1e-9 * scale_e + 1e-15)
    # and the output is the collector current of the hand-written model
    assert np.allclose(points.i_out[good], i_c, rtol=1e-9, atol=1e-18)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_vectorised_solve_equals_one_point_at_a_time(random_batches, models, polarity):
    values, points = random_batches[polarity]
    # 100 points per polarity, one solve each (all 5000 would take ~15 s).
    rng = np.random.default_rng(7)
    for k in rng.choice(points.size, 100, replace=False):
        single = solve_points(models[polarity], {n: v[k] for n, v in values.items()})
        assert bool(single.converged[0]) == bool(points.converged[k])
        if single.converged[0]:
            # Elementwise arithmetic on the same numbers: 1e-12 relative.
            assert single.i_out[0] == pytest.approx(points.i_out[k], rel=1e-12, abs=1e-30)
            assert np.allclose(single.x[:, 0], points.x[:, k], rtol=1e-12, atol=1e-15)


def test_points_that_do_not_converge_are_flagged_and_refused(models, scenario):
    design = scenario("sink_15v")
    values = design.parameters() | {"v_load": np.linspace(0.0, 30.0, 7)}
    # Two Newton steps cannot reach a 1e-12 relative step from every node at
    # 0 V (an explicit start: no declared start, no source stepping to rescue it).
    points = solve_points(models["npn"], values, x0=np.zeros((2, 1)), max_iterations=2)
    assert not points.converged.all()
    with pytest.raises(ConvergenceError) as err:
        points.require("test points")
    assert err.value.parameter == "test points"
    assert isinstance(err.value, kit.DesignError)


# ---------------------------------------------------------------------------
# points the random batches above once found the kit getting wrong (kept as
# regression checks)

def test_cut_off_pnp_at_high_supply_is_reported_as_an_operating_point_error():
    # R1 (supply to base) 1 kOhm against R2 1.5 MOhm: 32 mV across the base-emitter
    # loop, the PNP is off.  The NPN mirror image is reported as
    # OperatingPointError(parameter="v_supply") by the kit already.
    design = kit.design("divider_source", "pnp", r1=1e3, r2=1.5e6, r_e=47.0, v_supply=48.0, v_load=5.0)
    mirror = kit.design("divider_source", "npn", r1=1.5e6, r2=1e3, r_e=47.0, v_supply=48.0, v_load=43.0)
    with pytest.raises(kit.DesignError) as npn_err:
        kit.evaluate(mirror)
    assert type(npn_err.value).__name__ == "OperatingPointError"
    points = sweep(design, "v_load", [5.0])
    assert points.converged[0]
    with pytest.raises(kit.DesignError) as err:
        kit.evaluate(design)
    assert type(err.value).__name__ == "OperatingPointError"
    assert err.value.parameter == npn_err.value.parameter


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_lightly_saturated_hot_point_converges(reference, polarity):
    # Damped Newton once wandered off from the declared start here (V_CE =
    # 0.096 V, V_BC = +0.154 V per scipy root; I_out 130 uA): the start put
    # 0.55 V across a collector junction whose V_BE is only ~0.25 V at 400 K
    # with this I_S.  The PNP case is the mirror image (R1 and R2 swapped, the
    # load the same distance from the supply).
    npn = polarity == "npn"
    design = kit.design("divider_source", polarity, r1=1.2e6 if npn else 5.1e5, r2=5.1e5 if npn else 1.2e6,
                        r_e=43e3, v_supply=30.0, v_load=6.0 if npn else 24.0, temp=400.0,
                        devices={"Q1": {"beta_f": 27.0, "i_s": 7e-13}})
    ours = reference.solve(polarity, design.parameters())
    assert 0 < ours["v_bc"] < 0.3 and abs(ours["v_ce"]) > 0.05  # saturated but not deeply
    points = sweep(design, "v_load", [design.values["v_load"]])
    assert points.converged[0]
    # from the declared start itself, not rescued by the source-stepping retry
    assert points.iterations[0] < MAX_ITERATIONS
    assert points.i_out[0] == pytest.approx(ours["i_out"], rel=1e-9)


# -- the compliance scan's shortcuts change no number (internal consistency, no outside source) --------

SCAN_CASES = [("divider_source", "npn"), ("improved_wilson_mirror", "pnp"), ("ptat_cell", "npn"),
              ("opamp_bjt_source", "npn"), ("zener_diode_source", "npn"), ("mos_mirror", "nmos")]


@pytest.mark.parametrize("key,polarity", SCAN_CASES)
def test_scan_gives_the_design_point_as_solved_alone(key, polarity):
    from kit.analysis.evaluation import model_of
    from kit.model.compliance import compliance_and_point

    design = kit.design(key, polarity)
    model, values = model_of(design), design.parameters()
    _, point, _ = compliance_and_point(model, values)
    alone = solve_points(model, values)
    assert point is not None and point.size == 1 and bool(point.converged[0])
    np.testing.assert_allclose(point.x, alone.x, rtol=1e-15, atol=0)
    assert float(point.i_out[0]) == pytest.approx(float(alone.i_out[0]), rel=1e-14)


@pytest.mark.parametrize("steps", [2, 4, None])  # None: the kit's own first pass
@pytest.mark.parametrize("key,polarity", SCAN_CASES)
def test_few_first_scan_steps_give_the_edges_of_a_full_scan(key, polarity, steps, monkeypatch):
    # Points iterate independently: a point that converged within the first pass's few
    # steps is where the full solve ends; those in or next to the stretch that did not
    # are solved in full.  So the edges must be the same to the last bit, even when the
    # first pass leaves most points unconverged (2 or 4 steps).
    from kit.analysis.evaluation import model_of
    from kit.model import compliance

    design = kit.design(key, polarity)
    model, values = model_of(design), design.parameters()
    if steps is not None:
        monkeypatch.setattr(compliance, "SCAN_FIRST_ITERATIONS", steps)
    few = compliance.find_compliance(model, values)
    monkeypatch.setattr(compliance, "SCAN_FIRST_ITERATIONS", MAX_ITERATIONS)
    full = compliance.find_compliance(model, values)
    assert few == full
