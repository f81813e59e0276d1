"""kit.devices.mosfet against the textbook square law and its published properties.

The reference laws are written out by hand here (no kit code):

* square law with channel-length modulation, saturation
  ``I_D = (K/2)(V_GS - V_th)^2 (1 + lambda V_DS)`` and triode
  ``I_D = K[(V_GS - V_th) V_DS - V_DS^2/2](1 + lambda V_DS)`` (Sedra & Smith,
  Microelectronic Circuits, MOSFET chapter; Razavi, Design of Analog CMOS
  Integrated Circuits, ch. 2 -- from memory), and its small-signal
  ``g_m = 2 I_D/V_ov``, ``r_o = (1 + lambda V_DS)/(lambda I_D)`` (Razavi ch. 2);
* weak inversion ``I_D ∝ exp(V_GS/(n V_T))`` (Tsividis, Operation and Modeling
  of the MOS Transistor -- from memory);
* mobility ``∝ T^-mu_exp`` and ``dV_th/dT = tc_vth`` (Sedra & Smith; Razavi;
  from memory), and the zero-temperature-coefficient gate bias they imply
  (Filanovsky & Allam, IEEE TCAS-I 48, 2001 -- from memory);
* ``k/q`` from CODATA 2018 via ``scipy.constants``.
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest
import scipy.constants
import sympy as sp

from kit.devices import KINDS, mosfet
from kit.errors import ParameterError

K_OVER_Q = scipy.constants.k / scipy.constants.e  # V/K, CODATA 2018 (exact)
MOS = mosfet.KIND


def law_function(sense):
    """The kit's drain current as a NumPy function of (v_g, v_d, v_s, K, V_th, lambda, n, V_T)."""
    v_g, v_d, v_s = sp.symbols("v_g v_d v_s", real=True)
    symbols = MOS.operating_symbols("M")
    currents, quantities = MOS.stamp(sense, {"g": v_g, "d": v_d, "s": v_s}, symbols)
    args = (v_g, v_d, v_s, symbols["K"], symbols["V_th"], symbols["lambda"], symbols["n"], symbols["V_T"])
    law = {"into_d": currents["d"], "into_s": currents["s"], "into_g": currents["g"],
           "i_d": quantities["i_d"], "v_dsat": quantities["v_dsat"]}
    numeric = {k: sp.lambdify(args, law[k], "numpy") for k in ("into_d", "into_s", "i_d", "v_dsat")}
    return numeric, law, args


@pytest.fixture(scope="module")
def nmos():
    return law_function("n")


@pytest.fixture(scope="module")
def pmos():
    return law_function("p")


def textbook_drain_current(v_gs, v_ds, k, v_th, lam):
    """Square law of Sedra & Smith / Razavi (strong inversion, V_DS >= 0), written by hand."""
    v_ov = v_gs - v_th
    if v_ds >= v_ov:
        return 0.5 * k * v_ov ** 2 * (1 + lam * v_ds)
    return k * (v_ov * v_ds - 0.5 * v_ds ** 2) * (1 + lam * v_ds)


V_T_25C = K_OVER_Q * 298.15


@pytest.mark.parametrize("v_gs, v_ds", [(2.5, 8.0), (2.5, 0.3), (3.1, 1.1), (2.2, 0.15), (4.0, 0.0)])
def test_square_law_matches_textbook(nmos, v_gs, v_ds):
    # Sedra & Smith, MOSFET chapter (saturation and triode), from memory.
    into, _, _ = nmos
    k, v_th, lam = 0.2, 2.0, 0.02
    kit_value = into["i_d"](v_gs, v_ds, 0.0, k, v_th, lam, 1.5, V_T_25C)
    assert kit_value == pytest.approx(textbook_drain_current(v_gs, v_ds, k, v_th, lam), rel=1e-14,
                                      abs=1e-18)


def test_triode_meets_saturation_with_its_slope(nmos):
    # Value and dI/dV_DS agree on both sides of V_DS = V_ov (the triode law with the
    # (1 + lambda V_DS) factor is continuous with saturation: Razavi ch. 2, from memory).
    _, law, args = nmos
    v_g, v_d, v_s = args[:3]
    values = {args[3]: 0.2, args[4]: 2.0, args[5]: 0.03, args[6]: 1.5, args[7]: V_T_25C,
              v_g: 2.7, v_s: 0.0}
    i_d = law["i_d"].subs(values)
    slope = sp.diff(law["i_d"], v_d).subs(values)
    edge = 0.7  # V_ov
    # Either side by 1e-12 V: a jump would show at full size, smooth parts move by ~1e-12.
    below, above = edge - 1e-12, edge + 1e-12
    assert float(i_d.subs(v_d, below)) == pytest.approx(float(i_d.subs(v_d, above)), rel=1e-10)
    assert float(slope.subs(v_d, below)) == pytest.approx(float(slope.subs(v_d, above)), rel=1e-9)
    # the saturation slope is lambda (K/2) V_ov^2 (Razavi ch. 2, from memory)
    assert float(slope.subs(v_d, 3.0)) == pytest.approx(0.03 * 0.1 * edge ** 2, rel=1e-13)


def test_subthreshold_continuation_is_smooth_and_has_the_weak_inversion_slope(nmos):
    into, law, args = nmos
    v_g, v_d, v_s = args[:3]
    n, v_t, k, v_th = 1.5, V_T_25C, 0.2, 2.0
    join = 2 * n * v_t
    values = {args[3]: k, args[4]: v_th, args[5]: 0.0, args[6]: n, args[7]: v_t, v_d: 5.0, v_s: 0.0}
    i_d = law["i_d"].subs(values)
    g_m = sp.diff(law["i_d"], v_g).subs(values)
    at = v_th + join
    for f in (i_d, g_m):  # C1 across the join
        assert float(f.subs(v_g, at - 1e-9)) == pytest.approx(float(f.subs(v_g, at + 1e-9)), rel=1e-7)
    # Below the join, d ln(I_D)/dV_GS = 1/(n V_T): weak inversion (Tsividis, from memory).
    for v_gs in (v_th - 0.3, v_th, v_th + 0.5 * join):
        ratio = float((g_m / i_d).subs(v_g, v_gs))
        assert ratio == pytest.approx(1 / (n * v_t), rel=1e-12)
    # Above it the square law's g_m/I_D = 2/V_ov (Sedra & Smith, from memory).
    assert float((g_m / i_d).subs(v_g, v_th + 0.4)) == pytest.approx(2 / 0.4, rel=1e-12)
    # Below the join the channel saturates at V_J = 2 n V_T, a few V_T as weak inversion does
    # (Tsividis, from memory), and carries current in proportion to small V_DS.
    assert into["v_dsat"](v_th - 0.1, 5.0, 0.0, k, v_th, 0.0, n, v_t) == pytest.approx(join, rel=1e-15)
    small = [into["i_d"](v_th - 0.1, v_ds, 0.0, k, v_th, 0.0, n, v_t) for v_ds in (1e-6, 2e-6)]
    assert small[1] == pytest.approx(2 * small[0], rel=1e-5)
    # Deep below threshold the current is tiny but positive (Newton keeps a direction).
    deep = into["i_d"](v_th - 1.0, 5.0, 0.0, k, v_th, 0.0, n, v_t)
    assert 0 < deep < 1e-12


def test_channel_is_symmetric_and_currents_balance(nmos):
    # Swapping drain and source reverses the current: I_D(V_GS, V_DS) = -I_D(V_GD, -V_DS)
    # (the MOSFET is a symmetric device; Sedra & Smith, from memory).  KCL: gate
    # current zero, drain and source currents equal and opposite.
    into, law, _ = nmos
    p = (0.2, 2.0, 0.02, 1.5, V_T_25C)
    for v_g, v_d, v_s in [(3.0, 0.5, 1.2), (4.0, -2.0, 0.0), (2.6, 0.1, 0.3)]:
        forward = into["i_d"](v_g, v_d, v_s, *p)
        swapped = into["i_d"](v_g, v_s, v_d, *p)
        assert forward == pytest.approx(-swapped, rel=1e-13)
        assert into["into_d"](v_g, v_d, v_s, *p) + into["into_s"](v_g, v_d, v_s, *p) == 0.0
    assert law["into_g"] == 0


def test_pmos_is_the_mirror_image_of_nmos(nmos, pmos):
    # A PMOS with every terminal voltage negated carries the negated terminal
    # currents of the NMOS (complementary devices; common practice, no source).
    p = (0.1, 1.8, 0.02, 1.5, V_T_25C)
    for v_g, v_d, v_s in [(2.5, 6.0, 0.0), (2.2, 0.2, 0.0), (1.0, 3.0, 0.0), (3.0, -0.4, 0.2)]:
        n_d = nmos[0]["into_d"](v_g, v_d, v_s, *p)
        p_d = pmos[0]["into_d"](-v_g, -v_d, -v_s, *p)
        assert p_d == pytest.approx(-n_d, rel=1e-14, abs=1e-300)
        assert pmos[0]["i_d"](-v_g, -v_d, -v_s, *p) == pytest.approx(nmos[0]["i_d"](v_g, v_d, v_s, *p),
                                                                     rel=1e-14, abs=1e-300)


def _temperature_map(temp, t_ref, scale=1, t_rise=0):
    """The kind's operating values at ``temp`` with parameter symbols named after the parameters."""
    params = {p.name: sp.Symbol(p.name) for p in MOS.params}
    return MOS.temperature_map("M", params, temp + t_rise, t_ref, scale), params, MOS.operating_symbols("M")


def test_temperature_laws():
    # k'(T) = k'(T0)(T/T0)^-mu_exp, V_th(T) = V_th + tc_vth (T - T0), V_T = kT/q at the
    # channel temperature temp + t_rise (Sedra & Smith / Razavi, from memory; CODATA 2018).
    temp, t_ref, rise = sp.symbols("temp t_ref rise")
    mapping, ref, op = _temperature_map(temp, t_ref, scale=3, t_rise=rise)
    values = {temp: 348.15, t_ref: 298.15, ref["k_prime"]: 2e-4, ref["w_over_l"]: 10.0,
              ref["mu_exp"]: 1.5, ref["v_th"]: 0.5, ref["tc_vth"]: -2e-3, rise: 5.0,
              ref["lambda_clm"]: 0.05, ref["n_sub"]: 1.4}
    channel = 353.15
    assert float(mapping[op["K"]].subs(values)) == pytest.approx(
        3 * 10.0 * 2e-4 * (channel / 298.15) ** -1.5, rel=1e-14)
    assert float(mapping[op["V_th"]].subs(values)) == pytest.approx(0.5 - 2e-3 * 55.0, rel=1e-14)
    assert float(mapping[op["V_T"]].subs(values)) == pytest.approx(K_OVER_Q * channel, rel=1e-15)


def test_zero_tc_gate_bias():
    # With K ∝ T^-m and dV_th/dT = a < 0, a fixed V_GS gives dI_D/dT = 0 at
    # V_ov = -2 a T/m: the zero-TC point (Filanovsky & Allam, IEEE TCAS-I 48,
    # 2001, from memory; follows from the square law).  Check it on the kit's laws.
    temp = sp.Symbol("temp", positive=True)
    mapping, ref, op = _temperature_map(temp, 298.15)
    m, a, t0 = 1.5, -2e-3, 298.15
    v_ov_zero_tc = -2 * a * t0 / m
    v_gs = 1.0 + v_ov_zero_tc
    current = op["K"] / 2 * (v_gs - op["V_th"]) ** 2
    current = current.subs(mapping).subs({ref["k_prime"]: 0.2, ref["w_over_l"]: 1.0, ref["mu_exp"]: m,
                                          ref["v_th"]: 1.0, ref["tc_vth"]: a})
    tempco = sp.diff(current, temp) / current
    assert abs(float(tempco.subs(temp, t0))) < 1e-14
    # ... and only there: 50 K warmer the threshold has fallen 0.1 V and its slope wins
    # (-m/T - 2a/V_ov = -1.5/348 + 0.004/0.895 > 0).
    expected = -m / (t0 + 50.0) - 2 * a / (v_ov_zero_tc - 50.0 * a)
    assert float(tempco.subs(temp, t0 + 50.0)) == pytest.approx(expected, rel=1e-12)


def test_small_signal_parameters_are_the_textbook_ones():
    # In saturation g_m = 2 I_D/V_ov and r_o = (1 + lambda V_DS)/(lambda I_D) (Razavi ch. 2,
    # from memory), for the hand-written square law.
    k, v_th, lam, v_gs, v_ds = 0.2, 2.0, 0.02, 2.6, 7.0
    i_d = textbook_drain_current(v_gs, v_ds, k, v_th, lam)
    symbols = {"K": k, "lambda": lam}
    s = MOS.small_signal({"v_ov": v_gs - v_th, "v_ds": v_ds}, symbols)
    assert s["g_m"] == pytest.approx(2 * i_d / (v_gs - v_th), rel=1e-13)
    assert s["r_o"] == pytest.approx((1 + lam * v_ds) / (lam * i_d), rel=1e-9)


# --- model, ranges and the kind interface ------------------------------------------

def test_typical_models_are_labelled_typical_and_polarised():
    for sense, word in (("n", "nmos"), ("p", "pmos")):
        for given in (sense, word):
            model = MOS.typical(given)
            assert model.polarity == word and model.sense == sense
            assert "typical" in model.label
    assert KINDS["mos"] is MOS
    assert MOS.sense_of("pmos") == "p"


@pytest.mark.parametrize("name, bad", [("k_prime", -1e-3), ("k_prime", 2e3), ("v_th", 0.0),
                                       ("lambda_clm", -0.01), ("lambda_clm", math.inf),
                                       ("mu_exp", float("nan")), ("n_sub", 0.5), ("bv_dss", 0.0),
                                       ("tc_vth", 0.02), ("w_over_l", "10")])
def test_bad_parameters_name_themselves_and_the_range(name, bad):
    with pytest.raises(ParameterError) as info:
        MOS.typical("nmos").with_values(**{name: bad})
    assert info.value.parameter == name
    param = MOS.param(name)
    assert f"{param.low:g}" in info.value.valid and f"{param.high:g}" in info.value.valid


def test_unknown_parameter_and_polarity_are_refused():
    with pytest.raises(ParameterError, match="unknown MOSFET parameter") as info:
        MOS.typical("nmos").with_values(beta_f=100)
    assert info.value.parameter == "beta_f"
    for word in ("nfet", "npn"):
        with pytest.raises(ParameterError) as info:
            MOS.typical(word)
        assert info.value.parameter == "polarity" and "nmos" in info.value.valid


def test_regions_and_margins():
    j = {"v_gs": np.array([2.5, 2.5, 1.5]), "v_ds": np.array([5.0, 0.2, 5.0]),
         "v_ov": np.array([0.5, 0.5, -0.5]), "v_dsat": np.array([0.5, 0.5, 0.01]),
         "i_d": np.array([0.025, 0.015, 1e-9])}
    p = SimpleNamespace(**MOS.typical("nmos").numbers())
    assert list(MOS.regions(j, p, 298.15, "vce_sat")) == ["saturation", "triode", "cutoff"]
    margins = MOS.margins(j, p, 298.15, "vce_sat")
    assert margins["triode"][1] == pytest.approx(-0.3)
    assert margins["cutoff"][2] == pytest.approx(-0.5)
    assert margins["breakdown"][0] == pytest.approx(55.0)
    # allowed power (T_J,max - T)/theta_JA less V_DS I_D (common practice, no source)
    assert margins["power"][0] == pytest.approx((423.15 - 298.15) / 350.0 - 5.0 * 0.025)
    assert MOS.dissipation(j)[0] == pytest.approx(0.125)
    # every cause and region is worded for a MOSFET, none for a bipolar part
    words = " ".join(MOS.cause_text(c) for c in margins).lower() + " " + " ".join(
        label for _, _, label in MOS.symbol_roles.values()).lower()
    for bipolar in ("saturates", "bv_ceo", "beta", "β", "collector", "forward active"):
        assert bipolar not in words


@pytest.mark.parametrize("current, v_ds", [(0.01, 6.0), (0.01, 0.1), (0.05, 0.5)])
def test_start_inverse_reproduces_the_current(current, v_ds):
    # The starting-point inverse of the law (numeric and its compiled SymPy twin), checked
    # on the hand-written square law.
    k, lam, join = 0.2, 0.02, 2 * 1.5 * V_T_25C
    i, v = sp.symbols("i v", positive=True)
    twin = sp.lambdify((i, v), mosfet.overdrive_for_current_expression(i, v, k, lam, join), "numpy")
    for v_ov in (float(mosfet.overdrive_for_current(current, v_ds, k, lam, join)), float(twin(current, v_ds))):
        assert textbook_drain_current(2.0 + v_ov, v_ds, k, 2.0, lam) == pytest.approx(current, rel=1e-12)


def test_start_inverse_below_the_join_inverts_the_continuation(nmos):
    # Below the join the inverse is the exponential continuation's: the kit's law at the
    # returned overdrive carries the current again (saturated and not).
    into, _, _ = nmos
    k, lam, n = 0.2, 0.02, 1.5
    join = 2 * n * V_T_25C
    i, v = sp.symbols("i v", positive=True)
    twin = sp.lambdify((i, v), mosfet.overdrive_for_current_expression(i, v, k, lam, join), "numpy")
    for current, v_ds in [(1e-6, 5.0), (1e-9, 0.02)]:
        v_ov = float(twin(current, v_ds))
        assert v_ov < join
        assert v_ov == pytest.approx(float(mosfet.overdrive_for_current(current, v_ds, k, lam, join)), rel=1e-13)
        assert into["i_d"](2.0 + v_ov, v_ds, 0.0, k, 2.0, lam, n, V_T_25C) == pytest.approx(current, rel=1e-12)
