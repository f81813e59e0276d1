"""Shared fixtures for the physics tests, and an independent reference solver.

The reference solver below writes the divider-biased source's Kirchhoff
equations out by hand from the published device laws — it shares no code with
``kit`` (no generated functions, no SymPy model), so agreement between the
two is a check of the kit, not of itself:

* Ebers–Moll transport form (Ebers & Moll, Proc. IRE 42, 1954) with the
  forward Early factor ``1 + V_CE/V_A`` on the transport current only
  (Early, Proc. IRE 40, 1952; the textbook active-region form of Sedra & Smith,
  Microelectronic Circuits, and Gray, Hurst, Lewis & Meyer, Analysis and
  Design of Analog ICs, ch. 1 — from memory);
* temperature laws of Getreu, Modeling the Bipolar Transistor (1976) /
  Gummel–Poon: ``I_S(T) = I_S0 (T/T0)^m_IS exp[(q E_g/k)(1/T0 - 1/T)]``,
  ``beta(T) = beta0 (T/T0)^m_beta (1 + TC_beta (T - T0))`` (from memory);
  resistors ``R (1 + TCR (T - T_ref))`` (IEC 60115-1 TCR convention, from memory);
* constants k and q from CODATA 2018 via ``scipy.constants`` (exact in the 2019 SI).

The designs are scenarios invented for these tests.
"""

from __future__ import annotations

import functools
import math
import os
import shutil
import tempfile

import numpy as np
import pytest
import scipy.constants
from hypothesis import settings
from scipy.optimize import root

# Property tests are deterministic: the same examples on every machine, so a
# clean CI clone is never red by chance (and a failure found once replays).
settings.register_profile("biasbook", derandomize=True, deadline=None, print_blob=True)
settings.load_profile("biasbook")

# Generated code goes to a scratch directory for this session, never to the
# user's home.  Set at import time: the first compile may happen while
# collecting a test module.  A BIASBOOK_CACHE set by the caller is respected
# (and left in place at the end).
_OWN_CACHE = None
if "BIASBOOK_CACHE" not in os.environ:
    _OWN_CACHE = tempfile.mkdtemp(prefix="biasbook-test-cache-")
    os.environ.setdefault("BIASBOOK_CACHE", _OWN_CACHE)


def pytest_addoption(parser):
    # The on-demand fuzz run (tests/test_fuzz.py, marker "fuzz").
    parser.addoption("--fuzz-count", type=int, default=1000,
                     help="random designs per topology for the fuzz run (default 1000)")


@pytest.fixture(scope="session")
def fuzz_count(request):
    return request.config.getoption("--fuzz-count")


def pytest_sessionfinish(session, exitstatus):
    if _OWN_CACHE is not None:
        shutil.rmtree(_OWN_CACHE, ignore_errors=True)


K_B = scipy.constants.k  # J/K, CODATA 2018 (exact)
Q_E = scipy.constants.e  # C, CODATA 2018 (exact)


# ---------------------------------------------------------------------------
# independent reference model (hand-written; see the module docstring)

def operating_values(p):
    """Device and resistor values at the temperature of the point.

    ``p`` is a flat parameter dict (the kit's public names); values may be
    floats or NumPy arrays.
    """
    t, t0 = p["temp"], p["t_ref"]
    # the junction sits t_rise above the temperature of the point (self-heating);
    # the resistors stay at the temperature of the point
    t_j = t + p.get("Q1.t_rise", 0.0)
    v_t = K_B * t_j / Q_E
    i_s = (p["Q1.i_s"] * (t_j / t0) ** p["Q1.i_s_temp_exponent"]
           * np.exp(p["Q1.e_g"] * Q_E / K_B * (1.0 / t0 - 1.0 / t_j)))
    beta = p["Q1.beta_f"] * (t_j / t0) ** p["Q1.beta_temp_exponent"] * (1.0 + p["Q1.beta_tc"] * (t_j - t0))

    def resistance(name):
        return p[name] * (1.0 + p[f"tcr_{name}"] * (t - t0))

    return {"v_t": v_t, "i_s": i_s, "beta": beta, "beta_r": p["Q1.beta_r"], "v_a": p["Q1.v_a"],
            "r1": resistance("r1"), "r2": resistance("r2"), "r_e": resistance("r_e"),
            "v_cc": p["v_supply"], "v_out": p["v_load"]}


def ebers_moll(v_be, v_bc, o):
    """Collector and base currents (forward-active positive) of the transport model."""
    v_ce = v_be - v_bc
    forward = np.exp(v_be / o["v_t"])
    reverse = np.exp(v_bc / o["v_t"])
    i_c = (o["i_s"] * (forward - reverse) * (1.0 + v_ce / o["v_a"])
           - o["i_s"] / o["beta_r"] * (reverse - 1.0))
    i_b = o["i_s"] / o["beta"] * (forward - 1.0) + o["i_s"] / o["beta_r"] * (reverse - 1.0)
    return i_c, i_b


def junction_voltages(polarity, v_b, v_e, o):
    """Normalised (forward-bias positive) v_BE and v_BC."""
    if polarity == "npn":
        return v_b - v_e, v_b - o["v_out"]
    return v_e - v_b, o["v_out"] - v_b


def kcl(polarity, v_b, v_e, o):
    """KCL residuals (A, currents leaving the node) at the base and emitter nodes.

    NPN sink: R1 V_CC->B, R2 B->0, R_E E->0, collector at the load voltage.
    PNP source: R1 V_CC->B, R2 B->0, R_E V_CC->E, collector at the load voltage.
    """
    v_be, v_bc = junction_voltages(polarity, v_b, v_e, o)
    i_c, i_b = ebers_moll(v_be, v_bc, o)
    through_r1 = (v_b - o["v_cc"]) / o["r1"]
    through_r2 = v_b / o["r2"]
    if polarity == "npn":
        # base current flows into the NPN base, emitter current out of the emitter
        return (through_r1 + through_r2 + i_b, v_e / o["r_e"] - (i_c + i_b))
    # base current flows out of the PNP base, emitter current into the emitter
    return (through_r1 + through_r2 - i_b, (v_e - o["v_cc"]) / o["r_e"] + (i_c + i_b))


def _first_guess(polarity, o):
    """Start for the reference solve from a hand estimate (no kit code): the
    base-loop current with V_BE ~ 0.6 V, its junction voltage V_T ln(I/I_S),
    and the base kept within 0.5 V of the collector (saturation)."""
    r_th = o["r1"] * o["r2"] / (o["r1"] + o["r2"])
    v_th = o["v_cc"] * o["r2"] / (o["r1"] + o["r2"])
    drive = v_th if polarity == "npn" else o["v_cc"] - v_th
    current = max((drive - 0.6) / (o["r_e"] + r_th / o["beta"]), 1e-12)
    v_be = o["v_t"] * math.log(current / o["i_s"] + 1.0)
    if polarity == "npn":
        v_b = min(v_th - r_th * current / o["beta"], o["v_out"] + 0.5)
    else:
        v_b = max(v_th + r_th * current / o["beta"], o["v_out"] - 0.5)
    return v_b, v_be


def reference_solve(polarity, p):
    """Operating point of the hand-written equations by ``scipy.optimize.root``.

    Returns a dict with ``v_b, v_e, v_be, v_bc, v_ce, i_c, i_b, i_out``.
    Unknowns are V_B (V) and V_BE in thermal voltages; residuals are scaled by
    the divider current.  MINPACK's hybrd runs first, Levenberg–Marquardt then
    hybrd again if it stalls; the answer is accepted only if both KCL
    residuals are below 1e-12 of the currents flowing at the node.
    """
    o = operating_values(p)
    sign = 1.0 if polarity == "npn" else -1.0
    scale = abs(o["v_cc"]) / (o["r1"] + o["r2"]) + 1e-3

    def voltages(x):
        v_b = x[0]
        return v_b, v_b - sign * x[1] * o["v_t"]

    def residual(x):
        f_b, f_e = kcl(polarity, *voltages(x), o)
        return [f_b / scale, f_e / scale]

    def accept(x):
        v_b, v_e = voltages(x)
        v_be, v_bc = junction_voltages(polarity, v_b, v_e, o)
        i_c, i_b = ebers_moll(v_be, v_bc, o)
        f_b, f_e = kcl(polarity, v_b, v_e, o)
        node_b = abs(v_b - o["v_cc"]) / o["r1"] + abs(v_b) / o["r2"] + abs(i_b)
        node_e = abs(i_c) + abs(i_b) + 1e-300
        return bool(np.isfinite(node_b) and np.isfinite(node_e)
                    and abs(f_b) <= 1e-12 * node_b and abs(f_e) <= 1e-12 * node_e)

    v_b, v_be = _first_guess(polarity, o)
    x = np.array([v_b, v_be / o["v_t"]])
    # MINPACK may stop with "xtol too small, no further improvement": at
    # xtol = 1e-15 that is the end of double precision, so the residual test
    # in accept() is what counts.
    # A wild iterate may overflow the exponential: that trial point is simply
    # rejected (inf residual), so silence the warning during the iterations only.
    with np.errstate(over="ignore", invalid="ignore"):
        result = root(residual, x, method="hybr", options={"xtol": 1e-15, "maxfev": 20000})
        if not accept(result.x):
            rough = root(residual, x, method="lm", options={"xtol": 1e-15, "maxiter": 20000})
            result = root(residual, rough.x, method="hybr", options={"xtol": 1e-15, "maxfev": 20000})
        good = accept(result.x)
    assert good, f"reference solve failed: {result.message}"
    v_b, v_e = voltages(result.x)
    v_be, v_bc = junction_voltages(polarity, v_b, v_e, o)
    i_c, i_b = ebers_moll(v_be, v_bc, o)
    return {"v_b": v_b, "v_e": v_e, "v_be": v_be, "v_bc": v_bc, "v_ce": v_be - v_bc,
            "i_c": i_c, "i_b": i_b, "i_out": i_c}


# ---------------------------------------------------------------------------
# designs: scenarios of our own invention (none is a textbook problem)

# name -> (polarity, values, device overrides, conditions)
SCENARIOS = {
    # a 1.2 mA sink from a 15 V rail for a relay-driver bias
    "sink_15v": ("npn", dict(r1=39e3, r2=8.2e3, r_e=1.8e3, v_supply=15.0, v_load=9.0),
                 {"beta_f": 180.0, "v_a": 85.0}, {}),
    # a 250 uA sink from 5 V with a stiff low-impedance divider
    "sink_5v": ("npn", dict(r1=6.8e3, r2=2.7e3, r_e=3.3e3, v_supply=5.0, v_load=3.5),
                {"beta_f": 320.0, "v_a": 60.0, "i_s": 4e-15}, {}),
    # a 4 mA sink with a weak (high-impedance) divider, warm
    "sink_weak": ("npn", dict(r1=150e3, r2=47e3, r_e=680.0, v_supply=24.0, v_load=12.0),
                  {"beta_f": 95.0, "v_a": 140.0}, {"temp": 318.15}),
    # a 2 mA PNP source into a grounded load from 12 V
    "source_12v": ("pnp", dict(r1=10e3, r2=33e3, r_e=1.2e3, v_supply=12.0, v_load=4.0),
                   {"beta_f": 140.0, "v_a": 45.0}, {}),
    # a 600 uA PNP source from 9 V, cold
    "source_9v": ("pnp", dict(r1=18e3, r2=56e3, r_e=3.9e3, v_supply=9.0, v_load=2.5),
                  {"beta_f": 210.0, "v_a": 70.0, "i_s": 2e-14}, {"temp": 263.15}),
}


def make_scenario(name, **changes):
    """Build one of :data:`SCENARIOS` as a kit design; ``changes`` override values,
    device parameters (``beta_f=...``) or conditions (``temp=...``)."""
    import kit

    polarity, values, device, conditions = SCENARIOS[name]
    values, device, conditions = dict(values), dict(device), dict(conditions)
    for key, value in changes.items():
        if key in values:
            values[key] = value
        elif key in ("temp", "t_ref", "tcr"):
            conditions[key] = value
        else:
            device[key] = value
    return kit.design("divider_source", polarity, devices={"Q1": device}, **conditions, **values)


def _freeze(value):
    return tuple(sorted(value.items())) if isinstance(value, dict) else value


@functools.lru_cache(maxsize=None)
def _evaluate_cached(name, frozen_changes, edge):
    import kit

    changes = {k: dict(v) if isinstance(v, tuple) else v for k, v in frozen_changes}
    return kit.evaluate(make_scenario(name, **changes), edge=edge)


@pytest.fixture(scope="session")
def evaluated():
    """Factory fixture: ``evaluated("sink_15v", v_a=math.inf)`` -> kit Evaluation,
    computed once per session (an evaluation runs a compliance search, ~0.3 s)."""
    def get(name, edge="vce_sat", **changes):
        return _evaluate_cached(name, tuple(sorted((k, _freeze(v)) for k, v in changes.items())), edge)

    return get


@pytest.fixture(scope="session")
def scenario():
    """Factory fixture: ``scenario("sink_15v", v_a=math.inf)`` -> kit Design."""
    return make_scenario


@pytest.fixture(scope="session")
def reference():
    """The independent hand-written solver (namespace of functions)."""
    class Reference:
        solve = staticmethod(reference_solve)
        kcl = staticmethod(kcl)
        operating_values = staticmethod(operating_values)
        ebers_moll = staticmethod(ebers_moll)

    return Reference


@pytest.fixture(scope="session")
def models():
    """Compiled exact models, ``models["npn"]`` and ``models["pnp"]``."""
    from kit import topologies
    from kit.model.compiled import compile_model

    top = topologies.get("divider_source")
    return {pol: compile_model(top, pol) for pol in ("npn", "pnp")}


def thermal_voltage_reference(temp):
    """k T / q from the CODATA 2018 exact constants."""
    return K_B * temp / Q_E


