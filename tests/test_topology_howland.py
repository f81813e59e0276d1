"""Improved Howland current pump against its nodal equations written out here, by hand.

Independent references, written here without kit code:

* the circuit's Kirchhoff equations with the op-amp gain law ``V_o = A (V_+ -
  V_- + V_OS)`` and the bias current into the - input, written out in this
  file (SymPy for the symbolic limit, ``numpy.linalg.solve`` for numbers);
* the improved Howland's ``I_out = V_in R_2/(R_1 R_2b)``, ``R_2 = R_2a + R_2b``,
  for a balanced bridge ``R_4/R_3 = R_2/R_1`` (Pease, "A Comprehensive Study
  of the Howland Current Pump", National Semiconductor AN-1515, 2008 --
  from memory), recovered here as the limit of the hand-written equations;
* the basic Howland's output resistance ``R_1/eps`` for ``R_4/R_3 = (1 - eps)
  R_2/R_1`` (Franco, *Design with Operational Amplifiers and Analog
  Integrated Circuits*, ch. 2, the Howland current pump -- from memory), and
  its improved-form generalisation ``R_2b (R_1 + R_2a)/(eps R_2)`` derived
  here from the same hand-written equations;
* compliance ends where the op-amp output reaches its swing (common practice).

The designs are scenarios invented for these tests.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import sympy as sp

import kit
from kit.analysis.evaluation import sweep
from kit.errors import OperatingPointError, ParameterError

ROOT = Path(__file__).resolve().parents[1]
RECORD = ROOT / "examples" / "howland-sensor-excitation-bipolar.toml"

# A bridge of our own: 12 kΩ, R_2 = 10.8 kΩ + 1.2 kΩ, ±12 V op-amp.
VALUES = dict(r1=12e3, r2a=10.8e3, r2b=1.2e3, r3=12e3, r4=12e3, v_in=0.6, v_supply=12.0, v_load=1.5)
OPAMP = dict(a_ol=3e5, v_os=0.4e-3, v_os_tc=0.0, i_bias=25e-9, v_oh=10.8, v_ol=-10.6)
IDEAL = dict(a_ol=1e12, v_os=0.0, i_bias=0.0)


def pump(opamp=None, **changes):
    conditions = {k: changes.pop(k) for k in ("temp", "t_ref", "tcr") if k in changes}
    return kit.design("howland", devices={"U1": OPAMP | (opamp or {})}, **conditions, **(VALUES | changes))


def nodal(values, opamp, v_load):
    """(I_out, V_o) from the hand-written nodal equations in V_p, V_n, V_o (numbers)."""
    r1, r2a, r2b, r3, r4 = (values[k] for k in ("r1", "r2a", "r2b", "r3", "r4"))
    a, v_os, i_b, v_in = opamp["a_ol"], opamp["v_os"], opamp["i_bias"], values["v_in"]
    # KCL at p: (V_in - V_p)/R1 + (V_L - V_p)/R2a = 0
    # KCL at n: (V_o - V_n)/R4 - V_n/R3 - I_B = 0
    # gain law: V_o - A (V_p - V_n + V_OS) = 0
    m = np.array([[-1 / r1 - 1 / r2a, 0.0, 0.0],
                  [0.0, -1 / r4 - 1 / r3, 1 / r4],
                  [-a, a, 1.0]])
    rhs = np.array([-v_in / r1 - v_load / r2a, i_b, a * v_os])
    v_p, _, v_o = np.linalg.solve(m, rhs)
    # Into the load node from R2b and R2a.
    return (v_o - v_load) / r2b + (v_p - v_load) / r2a, v_o


def hand_written_current():
    """I_out in SymPy from the nodal equations written out here."""
    v_p, v_n, v_o = sp.symbols("v_p v_n v_o")
    r1, r2a, r2b, r3, r4, a = sp.symbols("R1 R2a R2b R3 R4 A", positive=True)
    v_in, v_l, v_os, i_b = sp.symbols("V_in V_L V_OS I_B", real=True)
    solution = sp.solve([(v_in - v_p) / r1 + (v_l - v_p) / r2a,
                         (v_o - v_n) / r4 - v_n / r3 - i_b,
                         v_o - a * (v_p - v_n + v_os)], [v_p, v_n, v_o], dict=True)[0]
    current = ((v_o - v_l) / r2b + (v_p - v_l) / r2a).subs(solution)
    return current, (r1, r2a, r2b, r3, r4, a, v_in, v_l, v_os, i_b)


def ledger(ev, key):
    return {e.key: e for e in ev.ledger}[key]


# --- the published form from the nodal equations --------------------------------------------------

def test_balanced_limit_of_the_nodal_equations_is_the_published_form():
    current, (r1, r2a, r2b, r3, r4, a, v_in, v_l, v_os, i_b) = hand_written_current()
    ideal = sp.limit(current.subs({v_os: 0, i_b: 0}), a, sp.oo)
    balanced = ideal.subs(r4, r3 * (r2a + r2b) / r1)
    # Pease, AN-1515 (from memory): I_out = V_in R_2/(R_1 R_2b), independent of the load voltage.
    assert sp.simplify(balanced - v_in * (r2a + r2b) / (r1 * r2b)) == 0
    # Off balance, R_out = -1/(dI/dV_L) (derived here); with R_2a = 0 it is Franco's R_1/eps.
    eps = sp.Symbol("epsilon", positive=True)
    off = ideal.subs(r4, r3 * (r2a + r2b) / r1 * (1 - eps))
    r_out = sp.simplify(-1 / sp.diff(off, v_l))
    assert sp.simplify(r_out - r2b * (r1 + r2a) / (eps * (r2a + r2b))) == 0
    assert sp.simplify(r_out.subs(r2a, 0) - r1 / eps) == 0


@pytest.mark.parametrize("v_in", [0.6, -0.6, 2.5, -0.02])
@pytest.mark.parametrize("v_load", [1.5, -4.0])
def test_exact_solve_matches_the_hand_written_equations(v_in, v_load):
    ev = kit.evaluate(pump(v_in=v_in, v_load=v_load))
    expected, v_o = nodal(VALUES | {"v_in": v_in}, OPAMP, v_load)
    assert ev.i_out == pytest.approx(expected, rel=1e-9)
    assert ev.parts["U1"].quantities["v_o"] == pytest.approx(v_o, rel=1e-9, abs=1e-12)
    # The closed form solved in SymPy from the circuit's own equations is exact while U1 is linear.
    assert ledger(ev, "linear_opamp").value == pytest.approx(expected, rel=1e-9)


def test_ideal_form_against_a_near_ideal_op_amp():
    for v_in in (0.6, -0.6):
        ev = kit.evaluate(pump(IDEAL, v_in=v_in))
        published = v_in * (VALUES["r2a"] + VALUES["r2b"]) / (VALUES["r1"] * VALUES["r2b"])
        assert ledger(ev, "ideal").value == pytest.approx(published, rel=1e-12)
        assert ev.i_out == pytest.approx(published, rel=1e-9)
        assert ledger(ev, "ideal_any_ratios").value == pytest.approx(published, rel=1e-12)


def test_output_follows_the_sign_of_the_input():
    # Bidirectional: with no offsets and the load at 0 V the output is odd in V_in.
    d = pump({"v_os": 0.0, "i_bias": 0.0}, v_load=0.0)
    points = sweep(d, "v_in", [-1.0, -0.3, 0.3, 1.0])
    assert points.converged.all()
    assert np.allclose(points.i_out[::-1], -points.i_out, rtol=1e-12, atol=0.0)
    assert list(np.sign(points.i_out)) == [-1, -1, 1, 1]
    sink = kit.evaluate(pump(v_in=-0.6))
    source = kit.evaluate(pump(v_in=0.6))
    assert sink.i_out < 0 < source.i_out
    # R_out does not depend on the direction of the current.
    assert sink.r_out == pytest.approx(source.r_out, rel=1e-9)


# --- output resistance -----------------------------------------------------------------------------

@pytest.mark.parametrize("eps", [1e-3, 1e-2, -1e-2])
def test_output_resistance_from_ratio_mismatch(eps):
    v = VALUES
    r4 = v["r3"] * (v["r2a"] + v["r2b"]) / v["r1"] * (1 - eps)
    ev = kit.evaluate(pump(IDEAL, r4=r4))
    mismatch = v["r2b"] * (v["r1"] + v["r2a"]) / (eps * (v["r2a"] + v["r2b"]))  # derived above
    assert ev.r_out_forms["r_out_mismatch"] == pytest.approx(mismatch, rel=1e-9)
    assert ev.r_out == pytest.approx(mismatch, rel=1e-5)  # A = 1e12 adds its own tiny share


def test_basic_howland_output_resistance_is_francos():
    # R_2a at its smallest value: the basic Howland, R_out = R_1/eps (Franco, from memory).
    eps = 2e-3
    values = dict(r2a=1e-2, r2b=12e3)
    r4 = VALUES["r3"] * (values["r2a"] + values["r2b"]) / VALUES["r1"] * (1 - eps)
    ev = kit.evaluate(pump(IDEAL, r4=r4, **values))
    assert ev.r_out == pytest.approx(VALUES["r1"] / eps, rel=1e-5)


def test_finite_gain_bounds_the_output_resistance_at_balance():
    ev = kit.evaluate(pump())
    # The slope of the hand-written solution (linear: any step gives it).
    i_hi, _ = nodal(VALUES, OPAMP, VALUES["v_load"] + 1.0)
    i_lo, _ = nodal(VALUES, OPAMP, VALUES["v_load"] - 1.0)
    r_out = -2.0 / (i_hi - i_lo)
    assert ev.r_out == pytest.approx(r_out, rel=1e-6)
    assert ev.r_out_forms["r_out_nodal"] == pytest.approx(r_out, rel=1e-6)
    assert ev.r_out_forms["r_out_mismatch"] > 1e6 * ev.r_out  # balanced: infinite but for rounding
    doubled = kit.evaluate(pump({"a_ol": 2 * OPAMP["a_ol"]}))
    assert doubled.r_out == pytest.approx(2 * ev.r_out, rel=1e-3)  # R_out grows with the gain


# --- compliance ----------------------------------------------------------------------------------------

@pytest.mark.parametrize("v_in", [0.6, -0.6])
def test_compliance_ends_at_the_op_amp_swing(v_in):
    d = pump(v_in=v_in)
    ev = kit.evaluate(d)
    values = VALUES | {"v_in": v_in}

    def v_o_at(v_load):
        return nodal(values, OPAMP, v_load)[1]

    # V_o is linear in the load voltage: find where it meets V_OH and V_OL.
    slope = v_o_at(1.0) - v_o_at(0.0)
    high = (OPAMP["v_oh"] - v_o_at(0.0)) / slope
    low = (OPAMP["v_ol"] - v_o_at(0.0)) / slope
    assert ev.compliance.high.voltage == pytest.approx(high, abs=1e-5)
    assert ev.compliance.low.voltage == pytest.approx(low, abs=1e-5)
    assert {ev.compliance.high.part, ev.compliance.low.part} == {"U1"}
    assert ev.compliance.high.cause == ev.compliance.low.cause == "output_swing"
    # The ideal, balanced relation of the module docstring (derived here), to the offsets' size.
    v = VALUES
    gain = 1 + v["r2b"] / (v["r1"] + v["r2a"])
    assert high == pytest.approx((OPAMP["v_oh"] - v_in * v["r2a"] / v["r1"] * gain) / gain, abs=2e-3)


def test_load_voltage_past_the_swing_is_refused_by_name():
    with pytest.raises(OperatingPointError) as err:
        kit.evaluate(pump(v_load=11.0))
    assert err.value.parameter == "v_load"
    assert "U1" in str(err.value)


# --- temperature, bad input, record, drawing ----------------------------------------------------------

def test_equal_tcrs_give_minus_the_tcr():
    # I = V_in R_2/(R_1 R_2b) scales as 1/R: equal TCRs leave a tempco of -TCR (derived here).
    tcr = 50e-6
    d = pump(IDEAL, tcr={k: tcr for k in ("r1", "r2a", "r2b", "r3", "r4")}, v_load=0.0)
    ev = kit.evaluate(d)
    assert ev.tempco == pytest.approx(-tcr, rel=1e-6)


def test_an_input_past_the_swing_at_every_load_names_the_op_amp():
    # 50 V in asks for about 42 mA: U1 cannot deliver that within its swing at any load voltage.
    with pytest.raises(OperatingPointError) as err:
        kit.evaluate(pump(v_in=50.0))
    assert "U1 reaches its output swing limit" in str(err.value)


def test_zero_output_current_is_refused_with_its_cause():
    with pytest.raises(OperatingPointError) as err:
        kit.evaluate(pump({"v_os": 0.0, "i_bias": 0.0}, v_in=0.0, v_load=0.0))
    assert err.value.parameter == "i_out"


def test_bad_input_names_the_parameter():
    with pytest.raises(ParameterError) as err:
        pump(v_in=250.0)
    assert err.value.parameter == "v_in"
    with pytest.raises(ParameterError) as err:
        pump({"v_ol": 12.0})
    assert err.value.parameter == "U1.v_ol"
    with pytest.raises(ParameterError) as err:
        kit.design("howland", "npn")
    assert err.value.parameter == "polarity"


def test_registry_and_example_record():
    from kit.record import load_record

    assert "howland" in [t.key for t in kit.list_topologies()]
    record = load_record(RECORD)
    d = record.design
    ev = kit.evaluate(d)
    numbers = d.parameters()
    opamp = {k: numbers[f"U1.{k}"] for k in ("a_ol", "v_os", "i_bias")}
    # At the record's 35 degC: resistors by their TCRs, offset by its drift.
    warm = {k: numbers[k] * (1 + numbers[f"tcr_{k}"] * (d.temp - d.t_ref))
            for k in ("r1", "r2a", "r2b", "r3", "r4")}
    opamp["v_os"] += numbers["U1.v_os_tc"] * (d.temp - d.t_ref)
    expected, _ = nodal(numbers | warm, opamp, numbers["v_load"])
    assert ev.i_out == pytest.approx(expected, rel=1e-9)
    assert ev.i_out < 0  # the record drives the input negative: the pump sinks
    run = subprocess.run([sys.executable, "-m", "kit.cli", "evaluate", str(RECORD)], capture_output=True,
                         text=True, cwd=ROOT, timeout=300)
    assert run.returncode == 0, run.stderr
    assert "I_out" in run.stdout and "U1" in run.stdout


def test_drawing_shows_the_parts_and_values():
    from kit.report.schematic import render

    svg = render(pump()).svg
    for text in ("U1", "R2b", "10.8"):
        assert text in svg
