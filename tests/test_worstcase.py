"""Worst case three ways (extreme values, RSS, Monte Carlo) against outside references.

* Extreme values: a brute-force dense grid over the tolerance box, solved with
  the kit's exact solve (the method under test is the corner and interior
  search, not the solver), including a design whose current is not monotonic
  in temperature; and the full 2^15 corner enumeration for a box too big for
  the kit to enumerate.
* RSS against Monte Carlo on a near-linear case: with a ± tolerance taken as
  3 sigma by RSS and uniform parts in Monte Carlo (standard deviation
  half-range/sqrt(3)), the ratio of the two is sqrt(3) whatever the weights;
  checked within the standard error of a sample standard deviation.
  Monte Carlo propagation of distributions as in JCGM 101:2008; the extreme-
  value / RSS pair as in ECSS-Q-ST-30-01 worst-case analysis (both from memory).
* Yield against cases solvable by hand: one uniform (or log-uniform) factor,
  the spec limits found on the exact solve by root-finding, the yield the
  fraction of the range between them, within 3 standard errors of a
  proportion, and sample by sample.
* Matched groups against the basic-mirror law I_out = N I_REF / (1 + (1+N)/beta)
  (Sedra & Smith, current mirrors, from memory).

Designs are scenarios invented for these tests.
"""

from __future__ import annotations

import itertools
import json
import math
import warnings

import numpy as np
import pytest
from scipy import stats
from scipy.optimize import brentq

import kit
from kit.analysis.spec import Spec, factors
from kit.analysis.thermal import solve_self_heated
from kit.analysis.worstcase import worst_case
from kit.errors import ParameterError
from kit.analysis.evaluation import model_of, sweep
from kit import report
from kit.record import json_ready
from kit.model.solve import solve_points

EVA = ("extreme-value",)


# --------------------------------------------------------------------------------------
# scenarios (our own)

def _sink(**changes):
    """A 1.4 mA sink from a 12 V rail for a sensor-bridge excitation (E24 values:
    V_TH = 12 V x 12k/48k = 3 V, R_TH = 36k || 12k = 9 kOhm; checked below)."""
    values = dict(r1=36e3, r2=12e3, r_e=1.6e3, v_supply=12.0, v_load=7.0) | changes
    return kit.design("divider_source", "npn", **values)


def test_sink_scenario_is_what_it_says(reference):
    """The scenario's current by hand and by the independent reference solver.

    Hand: I = beta (V_TH - V_BE) / (R_TH + (beta + 1) R_E) (fixed V_BE with base-current
    loading; Sedra & Smith, Microelectronic Circuits, BJT biasing, from memory) with
    beta = 200 (the part's beta_F) and V_BE between 0.6 and 0.7 V (common practice):
    200 x 2.4 V / 330.6 kOhm = 1.452 mA down to 200 x 2.3 V / 330.6 kOhm = 1.391 mA.
    The Early effect (V_CE about 4.7 V against V_A = 100 V) raises the effective beta by
    about 5 %; beta enters only through R_TH/(beta + 1) = 45 Ohm beside R_E = 1.6 kOhm, so
    the current moves by about 0.1 %, far less than the bracket's 4 % width."""
    d = _sink()
    assert d.devices["Q1"].beta_f == 200.0
    v_th, r_th, r_e, beta = 12.0 * 12e3 / 48e3, 36e3 * 12e3 / 48e3, 1.6e3, 200.0
    assert (v_th, r_th) == pytest.approx((3.0, 9e3), rel=1e-15)
    hand = [beta * (v_th - v_be) / (r_th + (beta + 1) * r_e) for v_be in (0.7, 0.6)]
    assert hand == pytest.approx([1.391e-3, 1.452e-3], abs=1e-6)
    kit_current = float(_solve(d, {}, False).i_out[0])
    assert hand[0] < kit_current < hand[1]
    # the independent hand-written Ebers-Moll solver of tests/conftest.py agrees with the kit
    r = reference.solve("npn", d.parameters())
    assert kit_current == pytest.approx(r["i_out"], rel=1e-9)
    assert 0.6 < r["v_be"] < 0.7 and r["v_ce"] > 4.0  # forward active, far from saturation


def _overcompensated(tcr=2.8e-3):
    """A 0.7 mA sink with a weak divider (beta matters) and an emitter resistor of large
    positive TCR meant to cancel the V_BE drift.  Over -40 ... +90 degC the current first
    rises (V_BE falls and beta grows, common practice) and then falls (the resistor wins):
    its tempco changes sign inside the range, so the highest current is at an interior
    temperature, not at a corner."""
    return kit.design("divider_source", "npn", r1=330e3, r2=100e3, r_e=2.2e3, v_supply=12.0,
                      v_load=8.0, devices={"Q1": {"beta_f": 90.0}}, tcr={"r_e": tcr})


def _solve(design, values, heated):
    model = model_of(design)
    full = design.parameters() | values
    return solve_self_heated(model, full) if heated else solve_points(model, full)


def _dense_grid(design, box, levels, heated):
    """Current on a full grid over the box (linspace per factor, ends included)."""
    axes = [np.linspace(f.low, f.high, n) for f, n in zip(box, levels)]
    mesh = np.meshgrid(*axes, indexing="ij")
    points = _solve(design, {f.name: m.ravel() for f, m in zip(box, mesh)}, heated)
    assert points.converged.all()
    # every grid point forward active (own check: V_CE above the part's V_CE(sat), V_BE on)
    j = points.junctions["Q1"]
    assert np.all(j["v_ce"] > design.devices["Q1"].v_ce_sat) and np.all(j["v_be"] > 0.4)
    current = points.i_out.reshape(mesh[0].shape)
    # Resolution: the largest change between neighbouring grid points along any axis.  A
    # smooth current cannot dip below (or rise above) the grid's extreme by more than
    # that between grid points.
    resolution = max(np.abs(np.diff(current, axis=a)).max() for a in range(current.ndim))
    corners = current[np.ix_(*[[0, -1]] * current.ndim)]
    return current, resolution, corners


# --------------------------------------------------------------------------------------
# 1. extreme values against a brute-force grid

@pytest.mark.parametrize("heated", [False, True], ids=["isothermal", "self-heated"])
def test_extreme_values_match_dense_grid_monotonic(heated):
    d = _sink()
    spec = Spec(1.4e-3, 0.10, temp=(233.15, 358.15), beta={"npn": (100.0, 300.0)},
                resistor_tolerance=0.0, tolerances={"r_e": 0.01}, resistor_tcr=0.0)
    box = factors(spec, d)
    assert [f.name for f in box] == ["r_e", "Q1.beta_f", "temp"]
    grid, resolution, corners = _dense_grid(d, box, (21, 21, 21), heated)
    eva = worst_case(d, spec, self_heating=heated, methods=EVA).methods["extreme-value"]
    assert eva.detail["failing_points"] == 0
    # Every factor acts monotonically here (dI/dR_E < 0, dI/dbeta > 0, and dI/dT > 0 as
    # V_BE falls about 2 mV/K: common practice), so the extremes sit at corners, which
    # are grid points: equal to solver precision, and the search must not flag anything.
    assert eva.low == pytest.approx(grid.min(), rel=1e-9)
    assert eva.high == pytest.approx(grid.max(), rel=1e-9)
    assert grid.min() == pytest.approx(corners.min(), rel=1e-12)
    assert eva.detail["non_monotonic"] == []
    assert eva.detail["interior_beyond_corners"] is False
    assert resolution > 0


@pytest.mark.parametrize("heated", [False, True], ids=["isothermal", "self-heated"])
def test_extreme_values_find_interior_maximum(heated):
    d = _overcompensated()
    spec = Spec(0.7e-3, 0.10, temp=(233.15, 363.15), beta={"npn": (80.0, 100.0)},
                resistor_tolerance=0.0, tolerances={"r_e": 0.01}, resistor_tcr=0.0)
    box = factors(spec, d)
    assert [f.name for f in box] == ["r_e", "Q1.beta_f", "temp"]
    grid, resolution, corners = _dense_grid(d, box, (15, 15, 25), heated)
    # the scenario does what it says: the grid's highest current is at an interior
    # temperature, above every corner by more than the grid's resolution
    t_index = np.unravel_index(np.argmax(grid), grid.shape)[2]
    assert 0 < t_index < 24
    assert grid.max() > corners.max() + resolution
    eva = worst_case(d, spec, self_heating=heated, methods=EVA).methods["extreme-value"]
    assert eva.detail["failing_points"] == 0
    # the sensitivity to temperature changes sign across the corners: named, and searched
    assert eva.detail["non_monotonic"] == ["temp"]
    assert eva.detail["interior_beyond_corners"] is True
    # the bound equals the grid's extremes within the grid's resolution, and never lies
    # inside them by more than that
    assert abs(eva.high - grid.max()) <= resolution
    assert abs(eva.low - grid.min()) <= resolution
    assert eva.high >= grid.max() - resolution and eva.low <= grid.min() + resolution
    # the interior search finds what the corners miss
    assert eva.high > corners.max() + resolution
    # the lowest current is a corner (cold, low beta, high R_E): found exactly
    assert eva.low == pytest.approx(corners.min(), rel=1e-9)


def test_sampled_corners_cover_the_full_enumeration():
    """15 factors: more than the kit enumerates (it takes the sensitivity-sign pair and
    random corners); the bound must still contain every one of the 2^15 corners."""
    d = _sink()
    spec = Spec(1.4e-3, 0.25, v_load=(4.0, 10.0), v_supply=(11.5, 12.5), temp=(233.15, 373.15),
                beta={"npn": (100.0, 300.0)}, resistor_tcr=200e-6,
                bounds={"Q1.v_a": (50.0, 150.0), "Q1.i_s": (5e-15, 2e-14), "Q1.e_g": (1.09, 1.13),
                        "Q1.beta_r": (1.0, 5.0), "Q1.beta_temp_exponent": (1.0, 2.0)})
    box = factors(spec, d)
    assert len(box) == 15
    eva = worst_case(d, spec, self_heating=False, methods=EVA).methods["extreme-value"]
    bits = np.array(list(itertools.product((0.0, 1.0), repeat=len(box))))
    points = _solve(d, {f.name: f.low + bits[:, i] * (f.high - f.low) for i, f in enumerate(box)}, False)
    assert points.converged.all()
    assert np.all(points.junctions["Q1"]["v_ce"] > d.devices["Q1"].v_ce_sat)
    lo, hi = points.i_out.min(), points.i_out.max()
    assert eva.low <= lo * (1 + 1e-9)
    assert eva.high >= hi * (1 - 1e-9)
    # and not wider than the corners by more than an interior extremum could explain
    # (here 0.1 % of the target, a generous bound for the TCR/e_g/beta-exponent interactions)
    assert lo - eva.low <= 1e-3 * spec.i_target and eva.high - hi <= 1e-3 * spec.i_target


def test_interior_flag_is_not_solver_noise():
    """TCRs enter as R (1 + alpha (T - T0)), linear in alpha, and every other factor here is
    monotonic, so the extremes are at corners: the search may sweep the TCR axes (their
    sensitivity changes sign with T - T0) but must not report an interior extremum."""
    d = kit.design("divider_source", "npn")  # the topology's default 1 mA sink
    spec = Spec(0.95e-3, 0.10, v_load=(4.0, 10.0), temp=(253.15, 343.15), beta={"npn": (100.0, 300.0)})
    box = factors(spec, d)
    eva = worst_case(d, spec, self_heating=True, methods=EVA).methods["extreme-value"]
    bits = np.array(list(itertools.product((0.0, 1.0), repeat=len(box))))
    corners = _solve(d, {f.name: f.low + bits[:, i] * (f.high - f.low) for i, f in enumerate(box)}, True)
    beyond = max(corners.i_out.min() - eva.low, eva.high - corners.i_out.max()) / spec.i_target
    assert beyond < 1e-9  # the search found nothing beyond the corners (solver noise aside)
    assert eva.detail["interior_beyond_corners"] is False


def test_box_contains_the_design_itself():
    """A design with a chosen TCR (+3000 ppm/K on R_E, at 60 degC): its own nominal current
    must lie inside the extreme-value range, and RSS and extreme values must describe the
    same box (the RSS range, a linearisation about the nominal, must overlap it)."""
    d = kit.design("divider_source", "npn", tcr={"r_e": 3e-3}, temp=333.15)
    spec = Spec(0.95e-3, 0.10, temp=(313.15, 343.15), resistor_tolerance=0.0, resistor_tcr=100e-6)
    # the spec's TCR bound is a spread about the design's own TCR (kit.analysis.spec.factors)
    tcr = {f.name: f for f in factors(spec, d)}["tcr_r_e"]
    assert (tcr.low, tcr.nominal, tcr.high) == pytest.approx((3e-3 - 100e-6, 3e-3, 3e-3 + 100e-6), rel=1e-12)
    wc = worst_case(d, spec, self_heating=False, methods=("extreme-value", "RSS"))
    eva, rss = wc.methods["extreme-value"], wc.methods["RSS"]
    assert eva.low <= wc.nominal <= eva.high
    assert rss.low <= eva.high and eva.low <= rss.high


# --------------------------------------------------------------------------------------
# 2. RSS against Monte Carlo on a near-linear case

def test_rss_sigma_against_monte_carlo_sigma():
    d = _sink()
    n = 2000
    spec = Spec(1.4e-3, 0.05, resistor_tolerance=0.001, beta={"npn": (190.0, 210.0)},
                beta_distribution="uniform", samples=n, seed=7)
    box = factors(spec, d)
    assert [f.name for f in box] == ["r1", "r2", "r_e", "Q1.beta_f"]
    assert all(f.distribution == "uniform" for f in box)
    wc = worst_case(d, spec, self_heating=False)
    rss, mc, eva = wc.methods["RSS"], wc.methods["Monte Carlo"], wc.methods["extreme-value"]
    # the stated mapping: a +- tolerance is 3 sigma
    assert "3" in rss.detail["mapping"] and rss.detail["coverage"] == "±3 sigma"

    # Independent linearisation by central differences of the exact solve: a step of 1e-4
    # of each value for the derivative (truncation ~1e-8, rounding ~1e-8 relative), and
    # the half-swing between the range ends for what the samples see.
    nominal = float(_solve(d, {}, False).i_out[0])
    slope_half, half_swing = [], []
    for f in box:
        step = 1e-4 * f.nominal
        near = _solve(d, {f.name: np.array([f.nominal - step, f.nominal + step])}, False).i_out
        slope_half.append((near[1] - near[0]) / (2 * step) * f.half_range)
        ends = _solve(d, {f.name: np.array([f.low, f.high])}, False).i_out
        half_swing.append(0.5 * (ends[1] - ends[0]))
    slope_half, half_swing = np.array(slope_half), np.array(half_swing)
    sigma_rss = math.sqrt(np.sum((slope_half / 3.0) ** 2))  # +-h = 3 sigma
    sigma_uniform = math.sqrt(np.sum(half_swing ** 2 / 3.0))  # uniform: sigma = h / sqrt(3)
    assert rss.detail["sigma_max"] == pytest.approx(sigma_rss, rel=1e-6)
    assert (rss.low, rss.high) == pytest.approx((nominal - 3 * sigma_rss, nominal + 3 * sigma_rss), rel=1e-9)

    current = mc.arrays["current"]
    assert current.shape == (n, 1)
    sd = float(np.std(current[:, 0], ddof=1))
    # Expected ratio, whatever the weights: sigma_MC / sigma_RSS = (h/sqrt 3) / (h/3) = sqrt(3).
    # Statistical tolerance: the relative standard error of a sample standard deviation is
    # sqrt((kurtosis - 1) / (4 N)); a sum of uniforms has kurtosis below the normal's 3, so
    # 1/sqrt(2N) = 1.6 % (N = 2000) is an upper bound.  4 standard errors, fixed seed.
    tolerance = 4.0 / math.sqrt(2 * n)
    assert sd / rss.detail["sigma_max"] == pytest.approx(math.sqrt(3.0), rel=tolerance)
    assert sd == pytest.approx(sigma_uniform, rel=tolerance)
    # the Monte Carlo mean is the nominal within 4 standard errors of a mean
    assert abs(current.mean() - nominal) < 4 * sd / math.sqrt(n)
    # linear case: the RSS half-width sqrt(sum h_i^2) cannot exceed the extreme-value
    # half-width sum |h_i| (triangle inequality), and Monte Carlo stays inside the bound
    assert eva.low <= rss.low and rss.high <= eva.high
    assert eva.high - eva.low == pytest.approx(2 * np.sum(np.abs(half_swing)), rel=1e-4)
    assert eva.low <= mc.low and mc.high <= eva.high


# --------------------------------------------------------------------------------------
# 3. yield against cases solvable by hand

def _root(design, name, target, lo, hi):
    """Value of ``name`` in [lo, hi] where the exact current equals ``target``."""
    return brentq(lambda v: float(_solve(design, {name: np.array([v])}, False).i_out[0]) - target,
                  lo, hi, xtol=1e-12 * hi, rtol=1e-13)


def test_yield_one_uniform_resistor():
    d = _sink()
    n = 2000
    i0 = float(_solve(d, {}, False).i_out[0])
    # target 1 % above the nominal, +-2 %: the limits cut R_E's +-5 % range off-centre
    spec = Spec(1.01 * i0, 0.02, resistor_tolerance=0.0, tolerances={"r_e": 0.05}, resistor_tcr=0.0,
                samples=n, seed=11)
    (f,) = factors(spec, d)
    lo, hi = spec.limits
    # the current falls as R_E rises: R_E at the upper limit is the smaller root
    r_a = _root(d, "r_e", hi, f.low, f.nominal)
    r_b = _root(d, "r_e", lo, f.nominal, f.high)
    expected = (min(r_b, f.high) - max(r_a, f.low)) / (f.high - f.low)  # a ratio of lengths
    assert 0.2 < expected < 0.8  # both limits cut the range
    mc = worst_case(d, spec, self_heating=False, methods=("Monte Carlo",)).methods["Monte Carlo"]
    se = math.sqrt(expected * (1 - expected) / n)  # standard error of a proportion
    assert abs(mc.detail["yield"] - expected) < 3 * se
    # the yield's interval is Wilson's score interval (Wilson 1927), as SciPy computes it
    passing = n - mc.detail["failing_samples"]
    wilson = stats.binomtest(passing, n).proportion_ci(confidence_level=0.95, method="wilson")
    assert mc.detail["yield_interval"] == pytest.approx([wilson.low, wilson.high], rel=1e-12)
    assert mc.detail["yield_confidence"] == 0.95
    # sample by sample: a sample passes exactly when its R_E lies between the two roots
    draws = mc.arrays["draws"]["r_e"]
    assert np.array_equal(mc.arrays["passed"], (draws >= r_a) & (draws <= r_b))
    # the draws are uniform over the tolerance (Kolmogorov-Smirnov, fixed seed)
    assert stats.kstest(draws, "uniform", args=(f.low, f.high - f.low)).pvalue > 1e-3


def test_yield_one_log_uniform_gain():
    # a weak divider: the base current through R_TH makes the current depend on beta
    d = kit.design("divider_source", "npn", r1=330e3, r2=100e3, r_e=2.2e3, v_supply=12.0,
                   v_load=8.0, devices={"Q1": {"beta_f": 110.0}})
    n = 2000
    b_lo, b_hi = 40.0, 320.0
    i_top = float(_solve(d, {"Q1.beta_f": np.array([b_hi])}, False).i_out[0])
    spec = Spec(i_top / 1.03, 0.05, beta={"npn": (b_lo, b_hi)}, resistor_tolerance=0.0,
                resistor_tcr=0.0, samples=n, seed=5)
    (f,) = factors(spec, d)
    assert f.distribution == "log-uniform"
    lo, hi = spec.limits
    assert i_top < hi  # the highest gain is inside: only the lower limit cuts
    b_cut = _root(d, "Q1.beta_f", lo, b_lo, b_hi)
    expected = math.log(b_hi / b_cut) / math.log(b_hi / b_lo)  # a ratio of log-lengths
    assert 0.2 < expected < 0.8
    mc = worst_case(d, spec, self_heating=False, methods=("Monte Carlo",)).methods["Monte Carlo"]
    se = math.sqrt(expected * (1 - expected) / n)
    assert abs(mc.detail["yield"] - expected) < 3 * se
    draws = mc.arrays["draws"]["Q1.beta_f"]
    assert np.array_equal(mc.arrays["passed"], draws >= b_cut)
    log_lo, log_hi = math.log(b_lo), math.log(b_hi)
    assert stats.kstest(np.log(draws), "uniform", args=(log_lo, log_hi - log_lo)).pvalue > 1e-3


# --------------------------------------------------------------------------------------
# 4. reproducibility and matched groups

def test_monte_carlo_is_reproducible_and_seeded():
    d = _sink()
    base = dict(i_target=1.4e-3, tolerance=0.05, temp=(253.15, 343.15), v_load=(4.0, 9.0),
                beta={"npn": (100.0, 300.0)}, samples=300)
    run = [worst_case(d, Spec(**base, seed=s), self_heating=False, methods=("Monte Carlo",))
           .methods["Monte Carlo"] for s in (3, 3, 4)]
    first, again, other = run
    assert first.arrays["current"].shape == (300, 3 * 2)  # 3 temperature levels x 2 load ends
    assert np.array_equal(first.arrays["current"], again.arrays["current"])
    assert first.detail == again.detail
    assert not np.array_equal(first.arrays["draws"]["r_e"], other.arrays["draws"]["r_e"])
    assert not np.allclose(first.arrays["current"], other.arrays["current"])
    assert first.detail["seed"] == 3 and other.detail["seed"] == 4


def _mirror():
    """A 2:1 basic mirror, 350 uA reference, no Early effect (so the closed form is exact
    apart from the Ebers-Moll leakage terms)."""
    return kit.design("basic_mirror", "npn", devices={"Q1": {"v_a": math.inf}, "Q2": {"v_a": math.inf}})


def test_matched_group_draws_one_gain():
    d = _mirror()
    n = 500
    spec = Spec(0.69e-3, 0.05, beta={"npn": (100.0, 300.0)}, matched=(("Q1", "Q2"),), samples=n, seed=2)
    mc = worst_case(d, spec, self_heating=False, methods=("Monte Carlo",)).methods["Monte Carlo"]
    b1, b2 = mc.arrays["draws"]["Q1.beta_f"], mc.arrays["draws"]["Q2.beta_f"]
    assert np.array_equal(b1, b2)
    assert np.ptp(b1) > 100.0  # the gain itself still varies over the range
    # each sample's current is the basic-mirror law at its one gain (Sedra & Smith, from memory)
    n_area, i_ref = d.values["n_area"], d.values["i_ref"]
    law = n_area * i_ref / (1 + (1 + n_area) / b1)
    assert np.allclose(mc.arrays["current"][:, 0], law, rtol=1e-8, atol=0)

    # unmatched: independent draws (correlation within 4/sqrt(N) of zero)
    free = worst_case(d, Spec(0.69e-3, 0.05, beta={"npn": (100.0, 300.0)}, samples=n, seed=2),
                      self_heating=False, methods=("Monte Carlo",)).methods["Monte Carlo"]
    r = np.corrcoef(np.log(free.arrays["draws"]["Q1.beta_f"]), np.log(free.arrays["draws"]["Q2.beta_f"]))[0, 1]
    assert abs(r) < 4 / math.sqrt(n)

    # with a gain mismatch bound m (3 sigma of the difference of two members), the ratio of
    # the members' gains is 1 + (d2 - d1) with d1, d2 independent of sigma m/(3 sqrt 2), each
    # cut at ±m/2 (the guarantee's bound): its standard deviation is m/3 times the sigma of a
    # Gaussian cut at ±3/sqrt(2) (scipy.stats.truncnorm), to first order, within the standard
    # error of a sample standard deviation, sigma/sqrt(2(N - 1)) (common practice), away from
    # the range's ends; and no two members differ by more than the bound
    m = 0.05
    loose = worst_case(d, Spec(0.69e-3, 0.05, beta={"npn": (100.0, 300.0)}, matched=(("Q1", "Q2"),),
                               mismatch_beta=m, samples=n, seed=2),
                       self_heating=False, methods=("Monte Carlo",)).methods["Monte Carlo"]
    common = loose.arrays["draws"]["Q1+Q2.beta_f"]
    inside = (common > 110.0) & (common < 270.0)  # no member clipped at the range's ends
    ratio = (loose.arrays["draws"]["Q2.beta_f"] / loose.arrays["draws"]["Q1.beta_f"])[inside]
    sigma = m / 3 * stats.truncnorm(-3 / math.sqrt(2), 3 / math.sqrt(2)).std()
    assert abs(np.std(ratio) - sigma) < 3 * sigma / math.sqrt(2 * (inside.sum() - 1)) + 2 * sigma ** 2
    assert np.all(np.abs(ratio - 1) <= m * (1 + m))
    assert abs(np.mean(ratio) - 1) < 4 * sigma / math.sqrt(inside.sum())


def test_matched_draws_stay_in_the_gain_range():
    """The spec says beta_F lies in 100 ... 300; a sample outside is a part the spec
    excludes (JCGM 101: draw from the assigned distribution, whose support is the range)."""
    spec = Spec(0.69e-3, 0.05, beta={"npn": (100.0, 300.0)}, matched=(("Q1", "Q2"),), mismatch_beta=0.05,
                samples=500, seed=2)
    mc = worst_case(_mirror(), spec, self_heating=False, methods=("Monte Carlo",)).methods["Monte Carlo"]
    for name in ("Q1.beta_f", "Q2.beta_f"):
        b = mc.arrays["draws"][name]
        assert b.min() >= 100.0 and b.max() <= 300.0, (name, b.min(), b.max())


# --------------------------------------------------------------------------------------
# consistency between the methods, the budget, the verdict

def test_monte_carlo_inside_the_guaranteed_bound():
    d = _sink()
    spec = Spec(1.4e-3, 0.25, v_load=(4.0, 9.0), temp=(233.15, 358.15), beta={"npn": (100.0, 300.0)},
                samples=400, seed=9)
    wc = worst_case(d, spec)  # self-heating on: the default
    eva, mc = wc.methods["extreme-value"], wc.methods["Monte Carlo"]
    # Monte Carlo samples are points of the box: a guaranteed bound contains them all
    assert eva.low <= mc.low * (1 + 1e-9) and mc.high <= eva.high * (1 + 1e-9)
    assert eva.passed and wc.met
    assert mc.detail["yield"] == 1.0 and mc.passed
    assert wc.reasons() == []


def test_budget_swings_against_own_solves():
    d = _sink()
    spec = Spec(1.4e-3, 0.005, v_load=(4.0, 9.0), resistor_tolerance=0.0, tolerances={"r_e": 0.01},
                resistor_tcr=0.0)
    wc = worst_case(d, spec, self_heating=False, methods=EVA)
    budget = {b.name: b for b in wc.budget}
    assert set(budget) == {"r_e", "v_load"}
    # R_E alone, at each load end (where its swing is largest), against R_E nominal there
    r_e = d.values["r_e"]
    swings = []
    for v in (4.0, 9.0):
        i = sweep(d, "r_e", [0.99 * r_e, r_e, 1.01 * r_e], v_load=v).i_out
        swings.append(max(abs(i[0] - i[1]), abs(i[2] - i[1])))
    assert budget["r_e"].swing == pytest.approx(max(swings), rel=1e-9)
    i = sweep(d, "v_load", [4.0, 7.0, 9.0]).i_out
    assert budget["v_load"].swing == pytest.approx(max(abs(i[0] - i[1]), abs(i[2] - i[1])), rel=1e-9)
    assert sum(b.share for b in wc.budget) == pytest.approx(1.0, rel=1e-12)
    # near-linear: the linear estimate is close to the exact swing (1 % of R_E)
    assert budget["r_e"].linear == pytest.approx(budget["r_e"].swing, rel=0.02)
    # R_E +-1 % moves the current by about 1 %, more than the +-0.5 % the spec allows: named
    assert not wc.met
    assert any(reason.startswith("r_e ±1 % alone moves the current") for reason in wc.reasons())


def test_dissipation_limit(reference):
    d = _sink()
    p = reference.solve("npn", d.parameters())
    power = p["v_ce"] * p["i_c"] + p["v_be"] * p["i_b"]  # own P_D = V_CE I_C + V_BE I_B
    # R_E +-10 %: P_D = (V_load - I R_E) I rises with I here (V_load > 2 I R_E), so the
    # points with R_E below nominal dissipate more than the nominal, those above less
    wide = dict(resistor_tolerance=0.0, tolerances={"r_e": 0.10}, resistor_tcr=0.0)
    loose = worst_case(d, Spec(1.4e-3, 0.15, p_max=1.5 * power, **wide), self_heating=False, methods=EVA)
    assert loose.met
    tight = worst_case(d, Spec(1.4e-3, 0.15, p_max=power, **wide), self_heating=False, methods=EVA)
    assert not tight.met
    detail = tight.methods["extreme-value"].detail
    assert detail["failures"] == ["Q1 dissipates more than the spec's limit"]
    assert 0 < detail["failing_points"] < detail["points"]
    assert "Q1 dissipates more than the spec's limit" in tight.reasons()


def test_empty_box_is_the_nominal_point():
    """With every tolerance zero and no ranges the box is the nominal point: every method
    answers the nominal current, and every Monte Carlo sample is that point."""
    d = _sink()
    spec = Spec(1.4e-3, 0.10, resistor_tolerance=0.0, resistor_tcr=0.0, samples=50)
    assert factors(spec, d) == []
    wc = worst_case(d, spec, self_heating=False)
    i0 = float(_solve(d, {}, False).i_out[0])
    assert spec.limits[0] < i0 < spec.limits[1]
    for m in wc.methods.values():
        assert m.low == pytest.approx(i0, rel=1e-12) and m.high == pytest.approx(i0, rel=1e-12)
        assert m.passed
    mc = wc.methods["Monte Carlo"]
    assert mc.detail["yield"] == 1.0 and mc.detail["valid_points"] == 50
    assert mc.detail["percentiles"]["50"] == pytest.approx(i0, rel=1e-12)


# --------------------------------------------------------------------------------------
# choosing the methods

@pytest.mark.parametrize("methods", [("Monte Carlo",), ("RSS",), ("RSS", "Monte Carlo"), "RSS"],
                         ids=["Monte Carlo", "RSS", "RSS and Monte Carlo", "one name as text"])
def test_single_method_verdict_names_its_method(methods):
    """The issue's reproducer: without the extreme-value run, .met, .text() and .to_dict()
    raised KeyError: 'extreme-value'.  Now the verdict is the method's that ran (RSS before
    Monte Carlo) and says it is no guarantee."""
    spec = Spec(1.4e-3, 0.10, v_load=(4.0, 9.0), beta={"npn": (100.0, 300.0)}, samples=200)
    wc = worst_case(_sink(), spec, self_heating=False, methods=methods)
    expected = "RSS" if "RSS" in methods else "Monte Carlo"
    assert wc.decided_by == expected and wc.met is wc.methods[expected].passed
    assert "no guarantee" in wc.verdict() and expected in wc.verdict()
    text = report.text(wc)
    assert f"verdict: {wc.verdict()}" in text
    data = json.loads(json.dumps(json_ready(wc.to_dict()), allow_nan=False))
    assert data["decided_by"] == expected and data["met"] is wc.met and set(data["methods"]) <= set(methods) | {
        "RSS", "Monte Carlo"}
    assert "no guarantee" in report.html(wc)
    assert isinstance(wc.reasons(), list)


def test_single_method_that_fails_gives_its_reason():
    spec = Spec(1.4e-3, 0.01, v_load=(4.0, 9.0), beta={"npn": (100.0, 300.0)}, samples=200)
    for method in ("RSS", "Monte Carlo"):
        wc = worst_case(_sink(), spec, self_heating=False, methods=(method,))
        assert not wc.met and "spec NOT met" in wc.verdict()
        assert wc.reasons(), method


def test_extreme_value_verdict_is_the_guarantee():
    spec = Spec(1.4e-3, 0.10, v_load=(4.0, 9.0), samples=100)
    wc = worst_case(_sink(), spec, self_heating=False)
    assert wc.decided_by == "extreme-value" and wc.met is wc.methods["extreme-value"].passed
    assert wc.verdict() == "spec met (extreme-value bound)" and "no guarantee" not in report.text(wc)


@pytest.mark.parametrize("methods, value", [(("extreme value",), "extreme value"), (("monte carlo",), "monte carlo"),
                                            ((), ()), (42, 42)], ids=["misspelt", "lower case", "none", "number"])
def test_unknown_method_is_refused_naming_it(methods, value):
    with pytest.raises(ParameterError) as caught:
        worst_case(_sink(), Spec(1.4e-3, 0.10), methods=methods)
    err = caught.value
    assert err.parameter == "methods" and err.value == value
    assert err.valid == "extreme-value, RSS, Monte Carlo"


# --------------------------------------------------------------------------------------
# 9. plain data

def test_to_dict_is_strict_json():
    d = _sink()
    spec = Spec(1.4e-3, 0.02, v_load=(4.0, 9.0), temp=(253.15, 343.15), beta={"npn": (100.0, 300.0)},
                samples=200)
    wc = worst_case(d, spec)
    data = json.loads(json.dumps(wc.to_dict(), allow_nan=False))
    assert set(data["methods"]) == {"extreme-value", "RSS", "Monte Carlo"}
    assert data["met"] is wc.met
    assert [f["name"] for f in data["factors"]] == [f.name for f in factors(spec, d)]
    # the result is data; the report layer (text for the CLI, HTML for notebooks) states the verdict
    assert not any(hasattr(wc, name) for name in ("text", "html", "_repr_html_"))
    assert ("spec met" in report.text(wc)) if wc.met else ("spec NOT met" in report.text(wc))
    assert "Worst case" in report.html(wc)
    # an infinite Early voltage is a valid design: strict JSON through the kit's json_ready
    ideal = kit.design("divider_source", "npn", devices={"Q1": {"v_a": math.inf}}, **dict(d.values))
    wc = worst_case(ideal, Spec(1.4e-3, 0.05, samples=200), self_heating=False)
    json.dumps(json_ready(wc.to_dict()), allow_nan=False)


def test_to_dict_when_every_point_fails():
    d = _sink()
    spec = Spec(1.4e-3, 0.05, v_load=(0.5, 1.0), samples=200)  # the sink saturates below ~2.5 V
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        wc = worst_case(d, spec, self_heating=False)
    assert not wc.met
    assert "Q1 saturates" in wc.reasons()
    # strict JSON (infinities as text through json_ready; a NaN is refused there)
    json.dumps(json_ready(wc.to_dict()), allow_nan=False)
