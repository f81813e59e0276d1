"""Datasheet-style entry (kit.devices.datasheet): each stated value comes back from the exact solve.

The conversions invert the kit's own laws; the checks here evaluate a design
at the stated test point with the exact solve and read the stated quantity
back (h_FE = I_C/I_B, V_BE, V_GS(th)), plus the textbook relations the
conversions rest on, each with its source beside it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

import kit
from kit.devices import KINDS
from kit.devices.datasheet import Derating, beta_for, check_entries, from_datasheet, saturation_current_for
from kit.devices.part_classes import get
from kit.errors import ParameterError

C25 = 298.15
BJT = KINDS["bjt"]


def solve_at(model, i_c, v_ce, polarity="npn", temp=C25, t_ref=C25):
    """A divider-biased single transistor solved exactly at collector current ``i_c`` and ``v_ce``.

    The emitter resistor is found so that I_C is the test current and the
    load voltage so that V_CE is the test voltage (a few rounds: each moves
    the other a little through the Early effect).
    """
    v_supply = v_ce + 10.0
    v_load = v_ce + v_supply / 3 - 0.65  # V_CE above the emitter, whose resistor drops about this

    def point(r_e, v_load):
        # r1 runs from the supply to the base: swapped for a PNP, the emitter drop is the same.
        r1, r2 = (20e3, 10e3) if polarity == "npn" else (10e3, 20e3)
        d = kit.design("divider_source", polarity, r1=r1, r2=r2, r_e=r_e, v_supply=v_supply,
                       v_load=v_load if polarity == "npn" else v_supply - v_load,
                       temp=temp, t_ref=t_ref, devices={"Q1": model})
        return kit.evaluate(d).parts["Q1"].quantities

    guess = (v_supply / 3 - 0.65) / i_c  # the divider holds the base near a third of the supply
    r_e = guess
    for _ in range(3):
        r_e = brentq(lambda r: point(r, v_load)["i_c"] - i_c, 0.7 * guess, 1.5 * guess, xtol=1e-14, rtol=1e-13)
        q = point(r_e, v_load)
        v_load += v_ce - q["v_ce"]
    q = point(r_e, v_load)
    assert q["i_c"] == pytest.approx(i_c, rel=1e-9) and q["v_ce"] == pytest.approx(v_ce, abs=1e-7)
    return q


# --- h_FE -> beta_F ----------------------------------------------------------------

@pytest.mark.parametrize("which", ["min", "typ", "max"])
def test_h_fe_comes_back_from_the_exact_solve_at_its_test_point(which):
    # I_C/I_B of the exact Ebers-Moll solve at the stated I_C and V_CE equals the stated h_FE:
    # the conversion inverts the kit's law (kit/devices/bjt.py; Ebers & Moll, Proc. IRE 1954).
    sheet = {"h_fe": {"min": 110.0, "typ": 210.0, "max": 420.0, "i_c": 2e-3, "v_ce": 5.0}, "v_a": 60.0}
    part = from_datasheet(BJT, "npn", sheet)
    beta = {"min": part.ranges["beta_f"][0], "typ": part.model.beta_f, "max": part.ranges["beta_f"][1]}[which]
    q = solve_at(part.model.with_values(beta_f=beta), 2e-3, 5.0)
    assert q["i_c"] / q["i_b"] == pytest.approx(sheet["h_fe"][which], rel=1e-7)


def test_h_fe_conversion_holds_for_a_pnp_and_away_from_the_reference_temperature():
    # Stated at 75 degC, the design referred to 25 degC: the kind's temperature law
    # carries beta_F and I_S back (Getreu 1976, the usual scaling, as in kit/devices/bjt.py).
    hot = 348.15
    sheet = {"h_fe": {"min": 90.0, "max": 250.0, "i_c": 1e-3, "v_ce": 4.0, "temp": hot},
             "v_be": {"value": 0.60, "i_c": 1e-3, "v_ce": 4.0, "temp": hot}, "v_a": 45.0}
    part = from_datasheet(BJT, "pnp", sheet, t_ref=C25)
    q = solve_at(part.model, 1e-3, 4.0, polarity="pnp", temp=hot, t_ref=C25)
    assert q["i_c"] / q["i_b"] == pytest.approx(math.sqrt(90.0 * 250.0), rel=1e-7)
    assert q["v_be"] == pytest.approx(0.60, abs=1e-9)


def test_early_factor_worked_example():
    # Forward active with the Early factor on the transport current only:
    # I_C/I_B = beta_F (1 + V_CE/V_A) (Gray, Hurst, Lewis & Meyer, Analysis and Design of
    # Analog ICs, ch. 1, the Early effect; the kit's law, kit/devices/bjt.py).  Worked by hand:
    # beta_F = 60 with V_A = 60 V gives h_FE = 60 (1 + 5/60) = 65 at 5 V.
    values = BJT.typical("npn").with_values(v_a=60.0).numbers()
    assert beta_for(65.0, 1e-3, 5.0, C25, values, C25) == pytest.approx(60.0, rel=1e-9)


# --- V_BE -> I_S --------------------------------------------------------------------

def test_v_be_to_saturation_current_round_trip():
    # I_S from V_BE, then V_BE back from the ideal junction law at the same point,
    # I_C = I_S exp(V_BE/V_T)(1 + V_CE/V_A) with V_T = kT/q (Gray & Meyer ch. 1; k, q from
    # scipy.constants, CODATA): the reverse terms are below 1e-30 at V_CE = 5 V.
    from scipy.constants import Boltzmann, elementary_charge

    values = BJT.typical("npn").numbers()
    i_s = saturation_current_for(0.655, 1e-3, 5.0, C25, values, C25)
    v_t = Boltzmann * C25 / elementary_charge
    v_be = v_t * math.log(1e-3 / (i_s * (1 + 5.0 / values["v_a"])))
    assert v_be == pytest.approx(0.655, abs=1e-9)


def test_v_be_comes_back_from_the_exact_solve():
    part = from_datasheet(BJT, "npn", {"v_be": {"value": 0.64, "i_c": 5e-4, "v_ce": 3.0}})
    q = solve_at(part.model, 5e-4, 3.0)
    assert q["v_be"] == pytest.approx(0.64, abs=1e-9)


def test_output_conductance_gives_the_early_voltage():
    # r_o = (V_A + V_CE)/I_C, the hybrid-pi output resistance of the law (Gray & Meyer ch. 1):
    # h_oe = 10 uS at 1 mA and 5 V means V_A = 1 mA/10 uS - 5 V = 95 V.
    part = from_datasheet(BJT, "npn", {"output_conductance": {"value": 10e-6, "i_c": 1e-3, "v_ce": 5.0}})
    assert part.model.v_a == pytest.approx(95.0)


# --- derating --------------------------------------------------------------------------

def test_derating_line():
    # The linear derating curve of discrete data sheets: flat P_tot up to T_derate, then
    # straight to zero at T_j(max), slope 1/theta (common practice, no source).
    line = Derating(0.625, C25, 423.15)
    assert line.theta == pytest.approx(200.0)
    temps = np.linspace(233.15, 423.15, 39)
    expected = np.where(temps <= C25, 0.625, 0.625 * (423.15 - temps) / (423.15 - C25))
    assert [line.allowed(t) for t in temps] == pytest.approx(expected, abs=1e-12)
    assert line.allowed(450.0) == 0.0


def test_derating_sets_the_models_limit_above_the_knee():
    # The kit's dissipation margin (T_j,max - T)/theta - P at P = 0 is the derating line above T_derate.
    sheet = {"p_tot": {"value": 0.5, "t_derate": C25, "t_j_max": 423.15}}
    part = from_datasheet(BJT, "npn", sheet)
    zero = {k: np.zeros(3) for k in ("v_be", "v_bc", "v_ce", "i_c", "i_b")}
    for temp in (C25, 348.15, 398.15):
        margin = BJT.margins(zero, part.model, temp, "vce_sat")["power"]
        assert margin == pytest.approx(part.derating.allowed(temp))


def test_theta_that_disagrees_with_the_derating_is_refused():
    sheet = {"p_tot": {"value": 0.5, "t_derate": C25, "t_j_max": 423.15}, "theta_ja": 120.0}
    with pytest.raises(ParameterError) as err:
        from_datasheet(BJT, "npn", sheet)
    assert err.value.parameter == "theta_ja" and "250" in err.value.valid


# --- MOSFET -------------------------------------------------------------------------------

def test_threshold_and_transfer_point_come_back_from_the_exact_solve():
    # A diode-connected NMOS fed its threshold test current sits at V_GS(th) (V_DS = V_GS,
    # the usual threshold test), and the output device at the transfer point's V_GS carries
    # its I_D: the square law with channel-length modulation (Sedra & Smith, MOSFET chapter),
    # continued below its join as kit/devices/mosfet.py says.
    sheet = {"v_th": {"min": 1.2, "typ": 1.7, "max": 2.3, "i_d": 250e-6},
             "transfer": {"i_d": 0.5, "v_gs": 4.5, "v_ds": 10.0}, "lambda_clm": 0.004}
    part = from_datasheet(KINDS["mos"], "nmos", sheet)
    cooled = part.model.with_values(theta_ja=1.0)  # on a large heatsink: 0.5 A at 10 V is 5 W
    for i_ref in (250e-6, 0.5):
        d = kit.design("mos_mirror", "nmos", i_ref=i_ref, w_ratio=1.0, v_supply=20.0, v_load=10.0,
                       devices={"M1": cooled, "M2": cooled})
        e = kit.evaluate(d)
        v_gs = e.parts["M1"].quantities["v_gs"]
        if i_ref < 1e-3:
            assert v_gs == pytest.approx(1.7, abs=1e-7)
        else:  # M1 carries 0.5 A at V_DS = V_GS; the law at 4.5 V and V_DS = 10 V carries 0.5 A
            k, v_th, lam = part.model.k_prime, part.model.v_th, part.model.lambda_clm
            i_at_transfer = k / 2 * (4.5 - v_th) ** 2 * (1 + lam * 10.0)
            assert i_at_transfer == pytest.approx(0.5, rel=1e-9)
            assert k / 2 * (v_gs - v_th) ** 2 * (1 + lam * v_gs) == pytest.approx(0.5, rel=1e-7)
    assert part.ranges["v_th"][0] < part.model.v_th < part.ranges["v_th"][1]


# --- zener, reference, op-amp ----------------------------------------------------------------

def test_zener_voltage_tolerance_and_tempco():
    # V_Z = V_Z0 + r_z I_Z (the piecewise-linear zener law, kit/devices/zener.py):
    # 6.2 V +-5 % at 5 mA with r_z = 10 ohm is V_Z0 = 6.15 V in 5.84 ... 6.46 V; 300 ppm/K of 6.2 V is 1.86 mV/K.
    sheet = {"v_z": {"value": 6.2, "tolerance": 0.05, "i_z": 5e-3}, "r_z": 10.0,
             "tc_relative": {"typ": 300e-6}}
    part = from_datasheet(KINDS["zener"], "zener", sheet)
    assert part.model.v_z0 == pytest.approx(6.15)
    assert part.ranges["v_z0"] == pytest.approx((5.84, 6.46))
    assert part.model.tc_z == pytest.approx(1.86e-3)


def test_opamp_swing_follows_the_rail_and_supply_rejection_widens_the_offset():
    # 80 dB of supply rejection is 100 uV/V (20 log10: the decibel); 3 V away from the test
    # supply adds 300 uV to a 2 mV offset bound.
    sheet = {"v_os": {"max": 2e-3}, "swing": {"to_high": 1.5, "to_low": 0.1},
             "psrr": {"min": 80.0, "v_supply": 15.0}}
    kind = KINDS["opamp"]
    at_12 = from_datasheet(kind, "op-amp", sheet, rails=(0.0, 12.0), supply_range=(12.0, 18.0))
    at_24 = from_datasheet(kind, "op-amp", sheet, rails=(0.0, 24.0), supply_range=(24.0, 24.0))
    assert (at_12.model.v_ol, at_12.model.v_oh) == pytest.approx((0.1, 10.5))
    assert at_24.model.v_oh == pytest.approx(22.5)
    assert at_12.ranges["v_os"] == pytest.approx((-2.3e-3, 2.3e-3))


# --- bad input ----------------------------------------------------------------------------------

@pytest.mark.parametrize("sheet, parameter", [
    ({"h_fe": {"min": 100.0, "max": 300.0, "i_c": 1e-3}}, "h_fe.v_ce"),
    ({"h_fe": {"min": 300.0, "max": 100.0, "i_c": 1e-3, "v_ce": 5.0}}, "h_fe.min"),
    ({"h_fe": {"min": 100.0, "max": 300.0, "i_c": -1e-3, "v_ce": 5.0}}, "h_fe.i_c"),
    ({"h_fe": {"min": 100.0, "max": float("nan"), "i_c": 1e-3, "v_ce": 5.0}}, "h_fe.max"),
    ({"gain": {"min": 1e5}}, "gain"),
    ({"v_a": 60.0, "output_conductance": {"value": 1e-5, "i_c": 1e-3, "v_ce": 5.0}}, "output_conductance"),
    ({"v_be": "0.65 V"}, "v_be"),
])
def test_bad_entries_name_the_field(sheet, parameter):
    with pytest.raises(ParameterError) as err:
        from_datasheet(BJT, "npn", sheet)
    assert err.value.parameter == parameter and err.value.valid


def test_class_entries_are_valid_datasheets():
    # Every class passes the same checks a record's entry does.
    from kit.devices.part_classes import CLASSES

    for c in CLASSES.values():
        assert check_entries(c.kind, c.sheet).keys() == c.sheet.keys()
    assert get("npn-small-signal").sheet["h_fe"]["v_ce"] == 5.0
