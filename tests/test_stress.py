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
