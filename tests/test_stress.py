"""Stress over the spec box: the largest power and junction temperature of each part.

The checks are against the box itself (every corner solved here, independently of the
search) and against facts of the trade: a transistor's junction is ambient + theta_JA P
(linear heat flow, the thermal circuit of any heat-transfer text, e.g. Incropera & DeWitt
ch. 3), and its power rating derates linearly to zero at T_J(max) (the usual datasheet
derating curve, common practice, no source).
"""

import itertools
import json

import numpy as np
import pytest

from kit.analysis.spec import factors
from kit.analysis.thermal import junction_temperatures, solve_self_heated
from kit.analysis.worstcase import worst_case
from kit.analysis.evaluation import model_of
from kit.cli import main
from kit.record import load_record

EVA = ("extreme-value",)
RECORDS = ["examples/spec-led-driver-passes.toml", "examples/spec-bridge-excitation-fails.toml",
           "examples/opamp_mos_source-power-led-heatsink.toml"]


def _corners(record):
    box = factors(record.spec, record.design)
    grid = np.array(list(itertools.product((0, 1), repeat=len(box))), dtype=float)
    base = record.design.parameters()
    values = base | {f.name: f.low + grid[:, i] * (f.high - f.low) for i, f in enumerate(box)}
    # factors with targets (matched groups) are not in these records; a plain factor is its parameter
    assert all(not f.targets for f in box)
    return box, solve_self_heated(model_of(record.design), values)


@pytest.mark.parametrize("path", RECORDS)
def test_stress_max_is_no_lower_than_any_corner_and_inside_the_spec(path):
    record = load_record(path)
    result = worst_case(record.design, record.spec, edge=record.edge, methods=EVA)
    box, corners = _corners(record)
    junctions = junction_temperatures(corners)
    by_part = {s.part: s for s in result.stress}
    assert by_part  # every record here has dissipating parts
    for part in corners.model.parts:
        if part.name not in by_part:
            continue
        s = by_part[part.name]
        power = part.kind.dissipation(corners.junctions[part.name])[corners.converged]
        assert s.power >= power.max() * (1 - 1e-9)
        if part.name in junctions and "t_j_max" in part.params:
            assert s.junction_temperature >= junctions[part.name][corners.converged].max() - 1e-9
        # where it happens is a point of the spec: every varied factor inside its range
        for conditions in (s.conditions, s.power_conditions):
            for f in box:
                assert f.low - 1e-12 <= conditions[f.name] <= f.high + 1e-12
            lo, hi = record.spec.v_load
            assert lo - 1e-12 <= conditions["v_load"] <= hi + 1e-12


def test_junction_and_margin_follow_the_linear_derating():
    record = load_record("examples/opamp_mos_source-power-led-heatsink.toml")
    result = worst_case(record.design, record.spec, edge=record.edge, methods=EVA)
    m1 = next(s for s in result.stress if s.part == "M1")
    theta = record.design.parameters()["M1.theta_ja"]
    t_max = record.design.parameters()["M1.t_j_max"]
    t_a = m1.conditions["temp"]
    # one package: the hottest junction is ambient + theta P at that point (P no larger than the max)
    assert m1.junction_temperature <= t_a + theta * m1.power + 1e-9
    assert m1.junction_temperature > t_a
    # margin = (T_J(max) - T_j) / (T_J(max) - T_a), the fraction of the derated allowance left
    assert m1.rating_margin == pytest.approx((t_max - m1.junction_temperature) / (t_max - t_a), rel=1e-6)
    # the largest power sits at the high end of the drain voltage (fewest LEDs) and low supply? no:
    # the drain voltage sets V_DS, so the largest power is at the spec's highest load voltage
    assert m1.power_conditions["v_load"] == pytest.approx(record.spec.v_load[1])


def test_runaway_record_names_runaway_and_the_short_does_not_survive():
    record = load_record("examples/basic_mirror-discrete-runaway.toml")
    result = worst_case(record.design, record.spec, edge=record.edge, methods=EVA)
    assert not result.met
    assert result.runaway is not None and result.runaway.text().startswith(
        "thermal runaway: no stable operating point above V_load = ")
    lo, hi = record.spec.v_load
    assert lo < result.runaway.v_load < hi
    shorted = next(f for f in result.faults if f.fault == "output shorted")
    assert shorted.survives is False and any("thermal runaway" in r for r in shorted.reasons)
    # no stress is quoted outside the spec's load range
    for s in result.stress:
        assert lo <= s.power_conditions["v_load"] <= hi


def test_check_json_has_stress_box_and_faults(capsys):
    code = main(["check", "examples/spec-led-driver-passes.toml", "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0
    assert out["stress"] and all({"part", "power", "junction_temperature", "rating_margin", "conditions"}
                                 <= set(s) and "v_load" in s["conditions"] for s in out["stress"])
    items = {b["item"]: b for b in out["box"]}
    # written in the record: not defaults; not written: listed as defaults
    assert items["load voltage"]["default"] is False and items["resistor tolerance"]["default"] is False
    assert items["matching"]["default"] is True and items["dissipation limit"]["default"] is True
    assert {f["fault"] for f in out["faults"]} == {"output shorted", "open load"}


def test_check_text_prints_the_box_with_the_verdict(capsys):
    main(["check", "examples/spec-bridge-excitation-fails.toml"])
    text = capsys.readouterr().out
    assert "over (the spec's box)" in text
    # the record writes its resistor tolerance (equal to the default: still written, not a default)
    assert "  resistor tolerance: ±1 %\n" in text
    assert "matching: no matched group written [default, not written]" in text
    assert "stress inside the spec" in text and "verdict:" in text
    assert text.index("over (the spec's box)") < text.index("verdict:")


def test_opamp_output_stress_is_the_base_drive_by_hand():
    """The op-amp sinks the PNP's base current; its output stage dissipates V_o I_B.

    Hand model (the op-amp current source with a bipolar pass device, any op-amp text, e.g.
    Horowitz & Hill ch. 4, and the bipolar transistor's I_E = (beta + 1) I_B): the loop holds
    V_SET across R_S, so I_E = V_SET/R_S; I_B = I_E/(1 + beta_F(T)(1 + V_EC/V_A)) with the
    kit's stated laws beta_F(T) = beta_F (T/T_ref)^XTB and the Early factor on I_C/I_B; the
    output sits a V_EB (0.6-0.7 V, a fact of the trade) and I_B R_B below the emitter;
    sinking from a 0 V negative rail the output stage dissipates (V_o - 0) I_B.
    """
    from kit.analysis.spec import Spec

    record = load_record("examples/opamp_bjt_source-sensor-excitation-pnp.toml")
    spec = Spec(1e-3, 0.05, v_load=(0.0, 5.0))
    result = worst_case(record.design, spec, edge=record.edge, methods=EVA, self_heating=False)
    u1 = next(s for s in result.stress if s.part == "U1")
    assert u1.kind == "opamp" and not u1.negligible and u1.rating_margin is None
    v = record.design.parameters() | u1.power_conditions
    t = v["temp"]
    r_s = v["r_s"] * (1 + v["tcr_r_s"] * (t - v["t_ref"]))
    v_rs = v["v_set"] * (1 + v["v_set_tc"] * (t - v["t_ref"]))  # the offset, 0.2 mV of 1 V, left out
    i_e = v_rs / r_s
    v_e = v["v_supply"] - v_rs
    beta = v["Q1.beta_f"] * (t / v["t_ref"]) ** v["Q1.beta_temp_exponent"] * (1 + (v_e - v["v_load"]) / v["Q1.v_a"])
    i_b = i_e / (1 + beta)
    v_o = v_e - 0.65 - i_b * v["r_b"]
    assert u1.output_current == pytest.approx(-i_b, rel=0.01)  # negative: the output sinks it
    assert u1.power == pytest.approx(v_o * i_b, rel=0.01)  # V_EB 0.6-0.7 V moves it by 0.5 %
    # the largest over the box: the lowest load voltage (widest V_EC, yet the largest base current)
    # is not assumed; the maximum is no lower than the design point's own output power
    own = worst_case(record.design, Spec(1e-3, 0.05), edge=record.edge, methods=EVA, self_heating=False)
    assert u1.power >= next(s for s in own.stress if s.part == "U1").power * (1 - 1e-9)


def test_opamp_driving_a_gate_is_reported_negligible(capsys):
    record = load_record("examples/opamp_mos_source-power-led-heatsink.toml")
    result = worst_case(record.design, record.spec, edge=record.edge, methods=EVA, network=record.thermal)
    u1 = next(s for s in result.stress if s.part == "U1")
    # a MOSFET gate draws no DC current in the square law: nothing for the output to deliver
    assert u1.negligible and u1.power == 0.0 and u1.output_current == 0.0
    main(["check", "examples/opamp_mos_source-power-led-heatsink.toml"])
    text = capsys.readouterr().out
    assert "U1 output: drives a gate only, no DC output current; output-stage dissipation negligible" in text
    # the headline's hottest part is still the pass device, never the op-amp
    assert "stress inside the spec: M1 up to" in text


def test_howland_opamp_output_is_its_two_resistor_currents_by_ohms_law():
    """The Howland pump's op-amp feeds R4 (to its - input) and R2b (to the output): by Ohm's law
    I_o = (V_o - V_-)/R4 + (V_o - V_load)/R2b, and sinking from the -V_S rail its output stage
    dissipates (V_o + V_S) |I_o| (the output transistor's V_CE times its current, common practice,
    no source).  Node voltages from one solve at the worst point; the rest by hand here."""
    from kit.analysis.spec import Spec
    from kit.model.solve import solve_points

    record = load_record("examples/howland-sensor-excitation-bipolar.toml")
    d = record.design
    spec = Spec(0.4e-3, 0.2, v_load=(-2.0, 2.0))
    result = worst_case(d, spec, edge=record.edge, methods=EVA, self_heating=False)
    u1 = next(s for s in result.stress if s.part == "U1")
    v = d.parameters() | u1.power_conditions
    model = model_of(d)
    point = solve_points(model, v)
    node = dict(zip(model.unknowns, (float(x) for x in point.x[:, 0])))
    r2b = v["r2b"] * (1 + v["tcr_r2b"] * (v["temp"] - v["t_ref"]))
    r4 = v["r4"] * (1 + v["tcr_r4"] * (v["temp"] - v["t_ref"]))
    i_o = (node["V_o"] - node["V_n"]) / r4 + (node["V_o"] - v["v_load"]) / r2b
    rail = v["v_supply"] if i_o >= 0 else -v["v_supply"]  # the split rails are +-v_supply
    assert u1.output_current == pytest.approx(i_o, rel=1e-6)
    assert u1.power == pytest.approx(abs(rail - node["V_o"]) * abs(i_o), rel=1e-6)
    assert not u1.negligible and u1.power > 0
