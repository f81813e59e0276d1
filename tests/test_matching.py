"""Matched groups and mismatch in every worst-case method, against published laws.

* A matched group's gain takes one value: the extreme-value bound of a basic
  and a Wilson mirror over a matched gain range is the published mirror ratio
  at the range's ends (basic: N I_REF/(1 + (1 + N)/β), Sedra & Smith, current
  mirrors; Wilson: β(β + 2)/(β² + 2β + 2), Gray, Hurst, Lewis & Meyer,
  *Analysis and Design of Analog Integrated Circuits*, ch. 4 -- both from
  memory), and it lies within a few times the Monte Carlo spread.
* Mismatch of a basic BJT mirror: σ(ΔI/I) = σ(ΔV_BE)/V_T to first order (Gray
  et al., current-mirror mismatch section, from memory), with V_T = kT/q from
  scipy.constants; the exact bound of a pair at ±ΔV_BE/2 is the exponential
  law exp(ΔV_BE/V_T) of the junction (Ebers & Moll, forward active).
* MOSFET mirror: σ(ΔV_th) = A_VT/sqrt(W L), σ(Δk/k) = A_k/sqrt(W L) (Pelgrom,
  Duinmaijer & Welbers, IEEE JSSC 24(5), 1989, from memory) and the square-law
  mirror's (σ_I/I)² = (2 σ(ΔV_th)/V_ov)² + σ(Δk/k)² (Kinget, IEEE JSSC 40(6),
  2005, from memory), with V_ov = sqrt(2 I/K) by hand.
* Monte Carlo against the same laws: the sample standard deviation within the
  standard error of a standard deviation, σ/sqrt(2(N - 1)) (common practice).

Designs are scenarios invented for these tests.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import constants, stats

import kit
from kit.analysis.spec import Spec, factors
from kit.analysis.worstcase import worst_case
from kit.errors import ParameterError
from kit.record import json_ready

IDEAL_BJT = {"v_a": math.inf}


def _v_t(design):
    return constants.k * design.parameters()["t_ref"] / constants.e  # CODATA via scipy.constants


def _basic(**devices):
    """A 1:1 basic mirror of 350 µA for a sensor bias (our scenario), no Early effect."""
    parts = {q: IDEAL_BJT | devices for q in ("Q1", "Q2")}
    return kit.design("basic_mirror", "npn", n_area=1, devices=parts)


def _wilson(polarity="npn"):
    """A 100 µA Wilson tail (our scenario), no Early effect."""
    return kit.design("wilson_mirror", polarity, i_ref=100e-6,
                      devices={q: IDEAL_BJT for q in ("Q1", "Q2", "Q3")})


# --------------------------------------------------------------------------------------
# matched gain: one value in every method

def test_basic_mirror_matched_bound_is_the_published_law_at_the_range_ends():
    d = _basic()
    b_lo, b_hi = 80.0, 400.0
    spec = Spec(350e-6, 0.05, beta={"npn": (b_lo, b_hi)}, matched=(("Q1", "Q2"),), samples=400)
    wc = worst_case(d, spec, self_heating=False)
    i_ref = d.values["i_ref"]
    law = [i_ref / (1 + 2 / b) for b in (b_lo, b_hi)]  # N = 1; Sedra & Smith (from memory)
    eva = wc.methods["extreme-value"]
    assert (eva.low, eva.high) == pytest.approx(law, rel=1e-6)
    # Monte Carlo draws one gain per sample from the same range: inside the bound, and
    # spreading over most of it (log-uniform gain, 400 samples)
    mc = wc.methods["Monte Carlo"]
    assert eva.low <= mc.low * (1 + 1e-9) and mc.high <= eva.high * (1 + 1e-9)
    assert (eva.high - eva.low) < 1.5 * (mc.high - mc.low)
    # RSS: one factor, dI/dβ of the common gain = sum of the members' (chain rule), its
    # ±3 sigma the linear swing over the range
    rss = wc.methods["RSS"]
    nominal = wc.nominal
    assert rss.low < nominal < rss.high and rss.high - rss.low < 1.5 * (eva.high - eva.low)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_wilson_matched_bound_is_the_published_ratio(polarity):
    d = _wilson(polarity)
    b_lo, b_hi = 50.0, 300.0
    matched = worst_case(d, Spec(100e-6, 0.05, beta={polarity: (b_lo, b_hi)}, matched=(("Q1", "Q2", "Q3"),),
                                 samples=300), self_heating=False)
    # Gray et al. ch. 4 (from memory): I_out/I_REF = β(β+2)/(β²+2β+2) for matched parts
    law = [100e-6 * b * (b + 2) / (b * b + 2 * b + 2) for b in (b_lo, b_hi)]
    eva = matched.methods["extreme-value"]
    assert (eva.low, eva.high) == pytest.approx(law, rel=1e-6)
    mc = matched.methods["Monte Carlo"]
    assert eva.low <= mc.low * (1 + 1e-9) and mc.high <= eva.high * (1 + 1e-9)
    assert eva.high - eva.low < 3 * (mc.high - mc.low)  # "within a few times the Monte Carlo spread"
    # RSS: the one common gain, linear: ±3 sigma = |dI/dβ| x half range, with the slope of
    # the same law, d/dβ [1 - 2/(β²+2β+2)] = 2(2β+2)/(β²+2β+2)² (differentiated here)
    b = d.devices["Q1"].beta_f
    slope = 100e-6 * 2 * (2 * b + 2) / (b * b + 2 * b + 2) ** 2
    rss = matched.methods["RSS"]
    assert rss.high - rss.low == pytest.approx(2 * slope * (b_hi - b_lo) / 2, rel=1e-5)
    # unmatched, each gain on its own: a far wider bound (the matched one is the circuit's merit)
    free = worst_case(d, Spec(100e-6, 0.05, beta={polarity: (b_lo, b_hi)}, samples=50), self_heating=False,
                      methods=("extreme-value",)).methods["extreme-value"]
    assert free.high - free.low > 20 * (eva.high - eva.low)


def test_wilson_tail_over_load_and_temperature():
    """The issue's kind of case, self-heated over a load and temperature range: the
    matched bound within a few times the Monte Carlo spread, and containing it."""
    d = _wilson()
    box = dict(beta={"npn": (100.0, 300.0)}, v_load=(3.0, 10.0), temp=(273.15, 343.15), samples=500)
    wc = worst_case(d, Spec(100e-6, 0.05, matched=(("Q1", "Q2", "Q3"),), **box))
    eva, mc = wc.methods["extreme-value"], wc.methods["Monte Carlo"]
    assert eva.low <= mc.low * (1 + 1e-9) and mc.high <= eva.high * (1 + 1e-9)
    assert eva.high - eva.low < 3 * (mc.high - mc.low)
    rows = {b.label: b for b in wc.budget}
    assert "β_F of Q1, Q2, Q3 (matched)" in rows and not any(k == "β_F of Q1" for k in rows)


# --------------------------------------------------------------------------------------
# mismatch: BJT

@pytest.mark.parametrize("bound", [0.5e-3, 2e-3])
def test_basic_mirror_mismatch_sigma_is_delta_vbe_over_vt(bound):
    d = _basic(beta_f=1e4)  # large gain: the base-current terms of the first-order law vanish
    spec = Spec(350e-6, 0.2, matched=(("Q1", "Q2"),), mismatch_vbe=bound, samples=4000, seed=5)
    wc = worst_case(d, spec, self_heating=False)
    (out,) = wc.mismatch
    v_t = _v_t(d)
    sigma_pair = bound / 3  # the spec's bound is 3 sigma of the pair's difference
    # Gray et al., mirror mismatch (from memory): sigma(dI/I) = sigma(dV_BE)/V_T, to first
    # order and for beta -> infinity (the base currents move it by about 1/beta = 1e-4)
    assert out.relative_sigma == pytest.approx(sigma_pair / v_t, rel=2e-4)
    # with the base currents: I_out = m I_REF/(1 + (1 + m)/beta), m = I_S2/I_S1 = exp(dV_BE/V_T)
    # (the finite-beta basic-mirror law, Gray et al. ch. 4, from memory), so
    # d ln I/d ln m = 1 - (1/beta)/(1 + 2/beta) at m = 1 (differentiated here)
    beta, i_ref = d.devices["Q1"].beta_f, d.values["i_ref"]
    assert out.sigma == pytest.approx(wc.nominal * (1 - (1 / beta) / (1 + 2 / beta)) * sigma_pair / v_t, rel=1e-6)

    def law(m):
        return m * i_ref / (1 + (1 + m) / beta)

    # exact bound: the pair at +-bound/2 gives m = exp(+-bound/V_T) (junction law); the larger swing
    assert out.bound == pytest.approx(law(math.exp(bound / v_t)) - law(1.0), rel=1e-6)
    # Monte Carlo: the sample sigma of the current, within 3 standard errors (plus the
    # second-order term of the exponential, (sigma/V_T)^2 / 2 relative).  Each member's
    # Gaussian is cut at the guarantee's ±bound/2, i.e. ±(3/sqrt 2) sigma_member: the
    # sigma of a cut Gaussian from scipy.stats.truncnorm
    current = wc.methods["Monte Carlo"].arrays["current"][:, 0]
    n = current.size
    cut = 3 / math.sqrt(2)
    expected = sigma_pair / v_t * stats.truncnorm(-cut, cut).std()
    assert current.min() >= wc.methods["extreme-value"].low and current.max() <= wc.methods["extreme-value"].high
    assert abs(np.std(current, ddof=1) / wc.nominal - expected) < (
        3 * expected / math.sqrt(2 * (n - 1)) + expected ** 2)
    # the budget: the mismatch is a row of its own
    row = next(b for b in wc.budget if b.kind == "mismatch")
    assert row.swing == out.bound and row.label == "mismatch within Q1, Q2"


def test_beta_mismatch_enters_through_the_base_currents():
    """Basic mirror, N = 1: I_out = I_REF β2/(β1 ... ) -- from I_REF = I_C1 + I_B1 + I_B2 and
    I_C2 = I_C1: I_out = I_REF/(1 + 1/β1 + 1/β2), so dI/I = (dβ1/β1² + dβ2/β2²)/(1 + 2/β)
    (derived here by differentiation): a small effect, of order (Δβ/β)/β."""
    d = _basic()
    beta = d.devices["Q1"].beta_f
    m = 0.06
    wc = worst_case(d, Spec(350e-6, 0.2, matched=(("Q1", "Q2"),), mismatch_beta=m, samples=50),
                    self_heating=False, methods=("RSS",))
    (out,) = wc.mismatch
    sigma_member = m / 3 / math.sqrt(2)
    by_hand = math.sqrt(2) * sigma_member / beta / (1 + 2 / beta)
    assert out.relative_sigma == pytest.approx(by_hand, rel=1e-6)


# --------------------------------------------------------------------------------------
# mismatch: MOSFET, the area law

def _mos(lam=0.0):
    """A 2 mA mirror of two matched NMOS (our scenario), K = 0.2 A/V², lambda off."""
    return kit.design("mos_mirror", "nmos", devices={m: {"lambda_clm": lam} for m in ("M1", "M2")})


@pytest.mark.parametrize("area", [1e-10, 4e-10])
def test_mos_mirror_mismatch_follows_the_area_law(area):
    d = _mos()
    a_vth, a_k = 5e-9, 1e-8  # 5 mV·µm and 1 %·µm: values of our own
    spec = Spec(2e-3, 0.1, matched=(("M1", "M2"),), a_vth=a_vth, a_k=a_k, gate_area=area, samples=3000, seed=4)
    wc = worst_case(d, spec, self_heating=False)
    (out,) = wc.mismatch
    i = d.values["i_ref"]
    k = d.devices["M1"].k_prime * d.devices["M1"].w_over_l
    v_ov = math.sqrt(2 * i / k)  # square law by hand
    s_vth, s_k = a_vth / math.sqrt(area), a_k / math.sqrt(area)  # Pelgrom 1989
    law = math.hypot(2 * s_vth / v_ov, s_k)  # Kinget 2005
    assert out.relative_sigma == pytest.approx(law, rel=1e-6)
    current = wc.methods["Monte Carlo"].arrays["current"][:, 0]
    n = current.size
    cut = 3 / math.sqrt(2)  # each member's Gaussian cut at the guarantee's bound (scipy.stats.truncnorm)
    drawn = law * stats.truncnorm(-cut, cut).std()
    assert abs(np.std(current, ddof=1) / wc.nominal - drawn) < 3 * drawn / math.sqrt(2 * (n - 1)) + law ** 2


def test_pelgrom_halves_sigma_for_four_times_the_area():
    spec = dict(matched=(("M1", "M2"),), a_vth=5e-9, samples=20)
    small, large = (worst_case(_mos(), Spec(2e-3, 0.1, gate_area=a, **spec), self_heating=False,
                               methods=("RSS",)).mismatch[0] for a in (1e-10, 4e-10))
    assert large.sigma == pytest.approx(small.sigma / 2, rel=1e-9)  # sigma ~ 1/sqrt(WL), Pelgrom 1989


def test_direct_mos_mismatch_is_the_bound_of_the_pair():
    d = _mos()
    bound = 3e-3
    wc = worst_case(d, Spec(2e-3, 0.1, matched=(("M1", "M2"),), mismatch_vth=bound, samples=20),
                    self_heating=False, methods=("extreme-value",))
    (out,) = wc.mismatch
    v_ov = math.sqrt(2 * d.values["i_ref"] / (d.devices["M1"].k_prime * d.devices["M1"].w_over_l))
    # square law: the output at ΔV_th = ±bound (members at ±bound/2) is I (1 ∓ bound/V_ov)²
    # relative to M1's point (derived here from I = K/2 (V_GS - V_th)²)
    assert out.bound == pytest.approx(wc.nominal * ((1 + bound / v_ov) ** 2 - 1), rel=1e-6)
    eva = wc.methods["extreme-value"]
    # and the whole bound: I [(1 + a)² - (1 - a)²] = 4 a I, a = bound/V_ov
    assert eva.high - eva.low == pytest.approx(wc.nominal * 4 * bound / v_ov, rel=1e-6)


# --------------------------------------------------------------------------------------
# one die by the topology, errors, JSON

def test_ptat_cell_is_one_die_without_being_told():
    d = kit.design("ptat_cell", "npn")
    names = [f.name for f in factors(Spec(12e-6, 0.5, beta={"npn": (100.0, 300.0), "pnp": (50.0, 150.0)},
                                          mismatch_vbe=1e-3), d)]
    assert "Q1+Q2.beta_f" in names and "Q3+Q4+Q5.beta_f" in names
    assert not any(n in names for n in ("Q1.beta_f", "Q3.beta_f"))
    assert {"Q1.mismatch_vbe", "Q5.mismatch_vbe"} <= set(names)


@pytest.mark.parametrize("changes, parameter", [
    (dict(mismatch_vbe=1e-3), "mismatch_vbe"),  # no matched group: it would do nothing
    (dict(matched=(("Q1", "Q2"),), mismatch_vth=1e-3), "mismatch_vth"),  # no MOSFET group here
    (dict(matched=(("Q1", "Q9"),)), "matched"),
    (dict(matched=(("Q1",),)), "matched"),
    (dict(matched=(("Q1", "Q2"), ("Q2", "Q1"))), "matched"),
    (dict(matched=(("Q1", "Q2"),), beta={"Q1": (100.0, 200.0), "Q2": (150.0, 300.0)}), "beta"),
])
def test_bad_matching_names_the_parameter(changes, parameter):
    with pytest.raises(ParameterError) as info:
        factors(Spec(350e-6, 0.05, **changes), _basic())
    assert info.value.parameter == parameter and info.value.valid


def test_mixed_group_and_missing_gate_area_are_refused():
    d = kit.design("ptat_cell", "npn")
    with pytest.raises(ParameterError) as info:
        factors(Spec(12e-6, 0.5, matched=(("Q2", "Q3"),)), d)  # an NPN and a PNP
    assert info.value.parameter == "matched"
    with pytest.raises(ParameterError) as info:
        factors(Spec(2e-3, 0.1, matched=(("M1", "M2"),), a_vth=5e-9, gate_area={"M1": 1e-10}), _mos())
    assert info.value.parameter == "gate_area" and info.value.value == "M2"


def test_json_budget_has_a_mismatch_row():
    wc = worst_case(_basic(), Spec(350e-6, 0.2, beta={"npn": (100.0, 300.0)}, matched=(("Q1", "Q2"),),
                                   mismatch_vbe=1e-3, mismatch_beta=0.02, samples=100))
    data = json.loads(json.dumps(json_ready(wc.to_dict()), allow_nan=False))
    kinds = [row["kind"] for row in data["budget"]]
    assert kinds.count("mismatch") == 1
    (out,) = data["mismatch"]
    assert out["group"] == ["Q1", "Q2"] and out["sigma"] > 0 and out["bound"] > out["sigma"]
    assert data["methods"]["Monte Carlo"]["detail"]["matched"] == [["Q1", "Q2"]]


# --------------------------------------------------------------------------------------
# the record: [spec] fields, and the example of a matched dual

EXAMPLE = "examples/basic_mirror_rref-matched-dual-electret-bias.toml"


def test_example_record_reads_its_mismatch_and_reports_it():
    from pathlib import Path

    from kit.record import load_record

    rec = load_record(Path(__file__).parent.parent / EXAMPLE)
    spec = rec.spec
    assert spec.matched == (("Q1", "Q2"),)
    assert (spec.mismatch_vbe, spec.mismatch_beta) == pytest.approx((1e-3, 0.10), rel=1e-12)
    wc = worst_case(rec.design, spec, network=rec.thermal)  # the dual's halves share their heat ([thermal])
    (out,) = wc.mismatch
    # Gray et al. (from memory): sigma(dI/I) = sigma(dV_BE)/V_T, the record's 1 mV taken as 3 sigma;
    # the base currents and the Early effect change it by a few parts per thousand here
    assert out.relative_sigma == pytest.approx(1e-3 / 3 / _v_t(rec.design), rel=0.01)
    assert [b.kind for b in wc.budget].count("mismatch") == 1
    assert wc.met  # the example is a design that passes its own spec


def _record_text(spec_lines):
    return "\n".join(["biasbook_record = 2", 'title = "t"', "[circuit]", 'topology = "mos_mirror"',
                      'polarity = "nmos"', "[values]", 'i_ref = "2 mA"', 'i_ref_tc = 0',
                      'w_ratio = 1', 'v_supply = "12 V"', 'v_load = "6 V"', "[spec]", 'current = "2 mA"',
                      'tolerance = "10 %"', *spec_lines])


@pytest.mark.parametrize("lines, field", [
    (['matched = [["M1", "M2"]]', "a_vth = 5e-9", "gate_area = 20.0"], "spec.gate_area"),
    (['matched = [["M1", "M2"]]', 'mismatch_vth = "2 V"'], "spec.mismatch_vth"),
    (['matched = [["M1", "M2"]]', 'mismatch = "2 %"', 'mismatch_beta = "2 %"'], "spec.mismatch"),
    (["mismatch_vth = \"1 mV\""], "spec.mismatch_vth"),  # no matched group for it
])
def test_record_mismatch_errors_name_the_field(tmp_path, lines, field):
    from kit.errors import RecordError
    from kit.record import load_record

    path = tmp_path / "r.toml"
    path.write_text(_record_text(lines), encoding="utf-8")
    with pytest.raises(RecordError) as info:
        load_record(path)
    assert info.value.parameter == field


def test_record_area_law_fields(tmp_path):
    from kit.record import load_record

    path = tmp_path / "r.toml"
    path.write_text(_record_text(['matched = [["M1", "M2"]]', "a_vth = 5e-9", "a_k = 1e-8",
                                  "gate_area = { M1 = 1e-10, M2 = 4e-10 }"]), encoding="utf-8")
    spec = load_record(path).spec
    assert spec.gate_area_of("M2") == 4e-10 and spec.a_vth == 5e-9


def test_record_older_mismatch_name_is_the_gain_mismatch(tmp_path):
    from kit.record import load_record

    path = tmp_path / "r.toml"
    path.write_text("\n".join(["biasbook_record = 2", 'title = "t"', "[circuit]", 'topology = "basic_mirror"',
                               'polarity = "npn"', "[values]", 'i_ref = "350 uA"', "i_ref_tc = 0", "n_area = 1",
                               'v_supply = "9 V"', 'v_load = "4.5 V"', "[spec]", 'current = "350 uA"',
                               'tolerance = "5 %"', 'matched = [["Q1", "Q2"]]', 'mismatch = "4 %"']),
                    encoding="utf-8")
    assert load_record(path).spec.mismatch_beta == pytest.approx(0.04, rel=1e-12)
