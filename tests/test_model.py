"""kit.model: symbolic checks and the generated numeric code against outside references.

The generated functions are compared with the hand-written equations of
tests/conftest.py (residuals, Jacobian by finite differences, temperature
derivatives by hand), with SymPy's own arbitrary-precision ``evalf`` of the
same closed forms, and with mpmath for the Wright omega function.
"""

from __future__ import annotations

from pathlib import Path

import mpmath
import numpy as np
import pytest
import scipy.constants
import sympy as sp

import kit
from kit import topologies
from kit.circuit.blocks import wright_omega as wright_omega_function
from kit.model.cache import cache_directory
from kit.model.codegen import check_bound
from kit.errors import ExpressionError

K_OVER_Q = scipy.constants.k / scipy.constants.e  # CODATA 2018 via scipy.constants


# --- check_bound ------------------------------------------------------------------

def test_check_bound_accepts_bound_expressions():
    a, b = sp.symbols("a b")
    assert check_bound([a + b, sp.exp(a) * b], {a, b}) is None
    assert check_bound([sp.Integer(3)], set()) is None


def test_check_bound_refuses_unbound_symbols_and_names_them():
    # Refuse unbound symbols before compiling (the practice of SymPy's
    # control_plots._check_system): every stray is named, sorted.
    a, b, zeta, omega = sp.symbols("a b zeta omega")
    with pytest.raises(ExpressionError) as err:
        check_bound([a + zeta, b * omega], {a, b}, what="closed forms")
    e = err.value
    assert isinstance(e, kit.DesignError) and isinstance(e, ValueError)
    assert e.parameter == "closed forms"
    assert "omega, zeta" in str(e)
    assert e.valid == "symbols a, b"


def test_the_topology_equations_are_bound_and_a_missing_symbol_is_named():
    top = topologies.get("divider_source")
    for polarity in ("npn", "pnp"):
        eq = top.equations(polarity)
        allowed = set(eq.unknowns) | set(eq.operating)
        check_bound(eq.residuals + [eq.output], allowed, "exact equations")
        check_bound(list(eq.operating.values()), set(eq.parameters), "parameter map")
        v_t = next(s for s in eq.operating if s.name == "V_T_Q1")
        with pytest.raises(ExpressionError) as err:
            check_bound(eq.residuals, allowed - {v_t}, "exact equations")
        assert "V_T_Q1" in str(err.value)


# --- Wright omega -------------------------------------------------------------------

@pytest.mark.parametrize("x", [-3.0, 0.0, 1.5, 40.0, 250.0])
def test_wright_omega_derivative_is_omega_over_one_plus_omega(x):
    # d omega/dx = omega/(1 + omega) (Corless & Jeffrey, "The Wright omega
    # function", LNCS 2385, 2002, from memory), against mpmath's numerical
    # derivative of W0(e^x) at 30 digits.
    omega = wright_omega_function()
    s = sp.Symbol("s")
    derivative = sp.diff(omega(s), s)
    with mpmath.workdps(30):
        reference = mpmath.diff(lambda t: mpmath.lambertw(mpmath.exp(t)), mpmath.mpf(x))
        w = mpmath.lambertw(mpmath.exp(mpmath.mpf(x)))
        ours = derivative.subs(omega(s), sp.Float(str(w.real), 30)).subs(s, x)
        assert float(ours) == pytest.approx(float(reference.real), rel=1e-13)


def test_generated_wright_omega_matches_mpmath(models):
    # omega(x) = W0(e^x) (Corless et al., Adv. Comput. Math. 5, 1996): the
    # generated module's helper, against mpmath at 30 digits; double precision.
    xs = np.array([-20.0, -1.0, 0.0, 2.0, 30.0, 120.0, 400.0])
    got = models["npn"].module._wrightomega(xs)
    with mpmath.workdps(30):
        for x, value in zip(xs, got):
            assert value == pytest.approx(float(mpmath.lambertw(mpmath.exp(mpmath.mpf(x))).real), rel=1e-14)


# --- generated code against the hand-written equations ------------------------------

def _random_points(rng, model, n):
    """Random parameter vectors and node voltages (not solutions) for one polarity."""
    from kit.model.design import make_design

    base = make_design("divider_source", model.polarity).parameters()
    values = {k: np.full(n, v) for k, v in base.items()}
    values.update({
        "r1": 10 ** rng.uniform(3, 6, n), "r2": 10 ** rng.uniform(3, 6, n),
        "r_e": 10 ** rng.uniform(1.5, 4.5, n), "v_supply": rng.uniform(3, 40, n),
        "v_load": rng.uniform(0, 40, n), "Q1.beta_f": rng.uniform(30, 500, n),
        "Q1.v_a": rng.uniform(20, 200, n), "Q1.i_s": 10 ** rng.uniform(-16, -13, n),
        "Q1.i_s_temp_exponent": rng.uniform(2, 4, n), "Q1.e_g": rng.uniform(1.05, 1.2, n),
        "Q1.beta_temp_exponent": rng.uniform(0, 2, n), "Q1.beta_tc": rng.uniform(-1e-3, 3e-3, n),
        "Q1.t_rise": rng.uniform(0, 20, n),
        "temp": rng.uniform(230, 400, n), "tcr_r1": rng.uniform(-1e-3, 1e-3, n),
        "tcr_r2": rng.uniform(-1e-3, 1e-3, n), "tcr_r_e": rng.uniform(-1e-3, 1e-3, n),
    })
    # node voltages near a forward-active or lightly saturated point:
    # V_BE 0.4–0.75 V, V_BC -20 … +0.5 V
    v_b = rng.uniform(0.8, 3.0, n)
    v_be = rng.uniform(0.4, 0.75, n)
    reverse = rng.uniform(-0.5, 20.0, n)
    if model.polarity == "npn":
        v_e = v_b - v_be
        values["v_load"] = v_b + reverse
    else:
        v_b = values["v_supply"] - v_b
        v_e = v_b + v_be
        values["v_load"] = v_b - reverse
    p = np.stack([values[n_] for n_ in model.parameter_names])
    q = model.operating(p)
    order = {"V_b": v_b, "V_e": v_e}
    x = np.stack([order[u] for u in model.unknowns])
    return values, p, q, x


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_generated_residuals_equal_the_hand_written_kcl(models, reference, polarity):
    model = models[polarity]
    rng = np.random.default_rng(11)
    values, p, q, x = _random_points(rng, model, 400)
    o = reference.operating_values(values)
    ours = np.array(reference.kcl(polarity, x[model.unknowns.index("V_b")],
                                  x[model.unknowns.index("V_e")], o))
    got = model.residuals(x, q)
    order = [model.unknowns.index("V_b"), model.unknowns.index("V_e")]  # KCL at b, e
    scale = model.scales(x, q)
    # Same sums of the same currents evaluated two ways: 1e-12 of the node scale.
    assert np.all(np.abs(got[order] - ours) <= 1e-12 * scale[order] + 1e-21)


@pytest.mark.parametrize("polarity", ["npn", "pnp"])
def test_generated_jacobian_equals_a_finite_difference_of_the_hand_written_kcl(models, reference, polarity):
    model = models[polarity]
    rng = np.random.default_rng(12)
    values, p, q, x = _random_points(rng, model, 200)
    o = reference.operating_values(values)
    ib, ie = model.unknowns.index("V_b"), model.unknowns.index("V_e")
    jac = model.jacobian_x(x, q)
    h = 1e-6  # V: truncation ~ h^2/(6 V_T^2) ~ 3e-10 relative, rounding ~ 1e-16/h ~ 1e-10
    for j, u in enumerate(model.unknowns):
        plus, minus = x.copy(), x.copy()
        plus[j] += h
        minus[j] -= h
        fp = np.array(reference.kcl(polarity, plus[ib], plus[ie], o))
        fm = np.array(reference.kcl(polarity, minus[ib], minus[ie], o))
        numeric = (fp - fm) / (2 * h)
        for row, node in enumerate((ib, ie)):
            # 1e-6 relative to the row's largest entry (finite difference)
            big = np.max(np.abs(jac[node]), axis=0)
            assert np.all(np.abs(jac[node, j] - numeric[row]) <= 1e-6 * big), (u, row)


def test_temperature_derivatives_of_the_operating_values(models):
    # d/dT of the Getreu laws, by hand (from memory):
    # dI_S/dT_J = I_S (m_IS/T_J + E_g/(V_T T_J))  [E_g in eV, V_T = k T_J/q]
    # dbeta/dT_J = beta (m_beta/T_J + TC_beta/(1 + TC_beta (T_J - T0)))
    # dR/dT = R_ref TCR, dV_T/dT = k/q (CODATA 2018 via scipy.constants)
    model = models["npn"]
    rng = np.random.default_rng(13)
    values, p, q, _ = _random_points(rng, model, 50)
    d = model.dq_dp(p)[:, model.parameter_index["temp"]]
    at = model.operating_index
    t_j = values["temp"] + values["Q1.t_rise"]
    v_t = K_OVER_Q * t_j
    i_s, beta = q[at["I_S_Q1"]], q[at["beta_Q1"]]
    expected = {
        "I_S_Q1": i_s * (values["Q1.i_s_temp_exponent"] / t_j + values["Q1.e_g"] / (v_t * t_j)),
        "beta_Q1": beta * (values["Q1.beta_temp_exponent"] / t_j + values["Q1.beta_tc"]
                           / (1 + values["Q1.beta_tc"] * (t_j - values["t_ref"]))),
        "R1": values["r1"] * values["tcr_r1"], "R_E": values["r_e"] * values["tcr_r_e"],
        "V_T_Q1": np.full(50, K_OVER_Q),
    }
    for name, value in expected.items():
        assert np.allclose(d[at[name]], value, rtol=1e-12, atol=0), name  # closed forms
    # and the junction rise acts exactly like the temperature on the device
    d_rise = model.dq_dp(p)[:, model.parameter_index["Q1.t_rise"]]
    for name in ("I_S_Q1", "beta_Q1", "V_T_Q1"):
        assert np.allclose(d_rise[at[name]], d[at[name]], rtol=1e-12, atol=0), name
    assert np.all(d_rise[at["R1"]] == 0)


def test_generated_closed_forms_equal_sympy_evalf(models):
    # The code printer against SymPy's own 30-digit evaluation of the same
    # closed forms (SymPy evalf), Wright omega written as LambertW(exp(x)).
    top = topologies.get("divider_source")
    omega = wright_omega_function()
    for polarity in ("npn", "pnp"):
        model = models[polarity]
        eq = top.equations(polarity)
        rng = np.random.default_rng(14)
        _, p, q, _ = _random_points(rng, model, 5)
        got = model.closed_forms(q)
        assert [form.key for form in eq.closed_forms] == list(got)
        for form in eq.closed_forms:
            key, expression = form.key, form.expression
            plain = expression.replace(omega, lambda arg: sp.LambertW(sp.exp(arg)))
            for k in range(q.shape[1]):
                subs = {s: sp.Float(q[model.operating_index[s.name], k], 20)
                        for s in plain.free_symbols}
                reference = complex(plain.evalf(30, subs=subs)).real
                assert got[key][k] == pytest.approx(reference, rel=1e-12), (polarity, key)


def test_parameter_vector_is_the_design_vocabulary(models):
    # Every parameter the compiled model takes is a name a design supplies, and
    # no design value is ignored by the model.
    design = kit.design("divider_source", "pnp")
    assert sorted(models["pnp"].parameter_names) == sorted(design.parameters())


def test_generated_code_lives_in_the_session_cache_not_home(models):
    # conftest sets BIASBOOK_CACHE to a scratch directory for the session.
    import os

    root = Path(os.environ["BIASBOOK_CACHE"])
    directory = cache_directory()
    assert directory.is_relative_to(root)
    assert any(directory.glob("divider_source-npn-*.py"))

