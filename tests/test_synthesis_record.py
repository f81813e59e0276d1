"""Synthesis that starts from the engineer's record.

* Every value, part and condition the synthesis does not search comes back
  exactly as the record file states it, for every example record: the
  record files are the outside reference (read here again with ``tomllib``
  where a number is checked by its written value).
* E24 values with 1 % parts: each resistor is a member of E24 per the
  ``eseries`` package's IEC 60063 tables while the worst case varies each
  by ±1 %.
* Specs that used to end in a traceback run: a bound whose nominal is zero
  (an op-amp offset of 0 V, a reference drift of 0 ppm/K), and a bound that
  names a part only one topology has, with every topology tried.
* An ideal reference current or set voltage puts a candidate in its own
  ranking and is flagged; so is a resistor given a zero tolerance.
* Every default the spec applied (resistor tolerance and TCR, the centre of
  the TCR box, self-heating, the E-series) is in the text and the JSON.

The specs added to example records here are scenarios invented for these tests.
"""

from __future__ import annotations

import contextlib
import io
import json
import math
import tomllib
from dataclasses import replace
from pathlib import Path

import eseries
import numpy as np
import pytest

import kit
from kit import cli, report
from kit.analysis.spec import DEFAULT_RESISTOR_TCR, DEFAULT_RESISTOR_TOLERANCE, Spec, factors
from kit.analysis.synthesis import synthesize
from kit.analysis.worstcase import worst_case
from kit.quantities import parse_quantity
from kit.record import load_record

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
RECORDS = sorted(EXAMPLES.glob("*.toml"))
WITH_SPEC = [p for p in RECORDS if "spec" in tomllib.loads(p.read_text(encoding="utf-8"))]
LED = EXAMPLES / "spec-led-driver-passes.toml"
BRIDGE = EXAMPLES / "spec-bridge-excitation-fails.toml"
MIRROR = EXAMPLES / "basic_mirror-thermistor-excitation-pnp.toml"


def _run_cli(*argv):
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = cli.main(list(argv))
    return code, out.getvalue(), err.getvalue()


def _with_spec(tmp_path, source, spec_toml, name="case.toml", replace_lines=()):
    text = source.read_text(encoding="utf-8")
    for old, new in replace_lines:
        assert old in text
        text = text.replace(old, new)
    path = tmp_path / name
    path.write_text(text + "\n" + spec_toml, encoding="utf-8")
    return path


def _own(result):
    """The one candidate of a single-topology synthesis, passing or not."""
    found = result.candidates + result.rejected
    assert len(found) == 1, (found, result.infeasible)
    return found[0]


def _assert_keeps_record(candidate, record):
    """Every value, part and condition not searched is the record's, exactly."""
    d, r = candidate.design, record.design
    assert (d.topology, d.polarity) == (r.topology, r.polarity)
    for name, value in r.values.items():
        if name not in candidate.searched:
            assert d.values[name] == value, name
            assert candidate.held[name] == (value, "record"), name
    for name in candidate.searched:
        assert name in r.topology.resistors or r.topology.value(name).kind == "other"
    assert dict(d.devices) == dict(r.devices)
    assert set(candidate.parts.values()) == {"record"}
    assert (d.temp, d.t_ref, d.title) == (r.temp, r.t_ref, r.title)
    assert (dict(d.tcr), dict(d.ratings), dict(d.hand), dict(d.t_rise)) == \
        (dict(r.tcr), dict(r.ratings), dict(r.hand), dict(r.t_rise))


@pytest.mark.parametrize("path", WITH_SPEC, ids=lambda p: p.stem)
def test_keeps_every_value_it_does_not_search_records_with_a_spec(path):
    # the outside reference: the record file as written
    record = load_record(path)
    result = synthesize(record.spec, start=record.design, topologies=[record.design.topology.key],
                        polarities=[record.design.polarity])
    _assert_keeps_record(_own(result), record)


@pytest.mark.parametrize("path", [p for p in RECORDS if p not in WITH_SPEC], ids=lambda p: p.stem)
def test_keeps_every_value_it_does_not_search_every_other_record(path):
    # a loose spec around the record's own current: what is held must still be the record's
    record = load_record(path)
    own_current = kit.evaluate(record.design, edge=record.edge, network=record.thermal).i_out
    if own_current < 0:
        # A spec states a positive target (a bidirectional source driven negative): it says so, and
        # the same record with its input turned round is synthesised instead.
        from kit.errors import ParameterError

        with pytest.raises(ParameterError, match="i_target"):
            Spec(own_current, 0.5)
        record.design = record.design.with_values(v_in=-record.design.values["v_in"])
        own_current = kit.evaluate(record.design, edge=record.edge, network=record.thermal).i_out
    spec = Spec(own_current, 0.5, resistor_tolerance=0.01)
    result = synthesize(spec, start=record.design, topologies=[record.design.topology.key],
                        polarities=[record.design.polarity], self_heating=False, edge=record.edge)
    if not (result.candidates or result.referenced or result.rejected):
        pytest.fail(f"no candidate: {result.infeasible}")
    _assert_keeps_record(_own(result), record)


def test_led_driver_keeps_the_numbers_the_old_synthesis_dropped():
    # Written in examples/spec-led-driver-passes.toml: set-voltage drift 20 ppm/K, op-amp offset
    # drift 2 uV/K, V_OL 0.1 V, load 14.7 V, 40 degC, the title.  Before, synthesis replaced them
    # with defaults (0, 0, 0.2 V, 14.5 V, 30 degC, no title).
    written = tomllib.loads(LED.read_text(encoding="utf-8"))
    record = load_record(LED)
    result = synthesize(record.spec, start=record.design, topologies=["opamp_mos_source"], polarities=["nmos"])
    c = _own(result)
    d = c.design
    assert d.values["v_set_tc"] == pytest.approx(parse_quantity(written["values"]["v_set_tc"], "1/K"), rel=1e-12)
    assert d.values["v_set_tc"] == pytest.approx(20e-6, rel=1e-12)
    assert d.devices["U1"].values["v_os_tc"] == pytest.approx(2e-6, rel=1e-12)
    assert d.devices["U1"].values["v_ol"] == pytest.approx(0.1, rel=1e-12)
    assert d.values["v_load"] == pytest.approx(14.7, rel=1e-12)
    assert d.temp == pytest.approx(273.15 + 40, abs=1e-9)  # 0 degC = 273.15 K (SI definition)
    assert d.title == written["title"]
    # The record's 49.9 ohm is an E192 value meeting the spec, so the synthesis returns the record's
    # design, and its tempco is the record's (the old synthesis reported 0.025 ppm/K).
    assert c.passed and d.values["r_s"] == pytest.approx(49.9, rel=1e-12)
    mine, theirs = kit.evaluate(d), kit.evaluate(record.design)
    assert mine.i_out == pytest.approx(theirs.i_out, rel=1e-12)
    assert mine.tempco == pytest.approx(theirs.tempco, rel=1e-9)
    assert abs(mine.tempco) > 1e-6  # above 1 ppm/K: the held drifts count


def test_e24_values_with_one_percent_parts(tmp_path):
    # An 8 mA sink from a 15 V rail, +-10 % over 0 ... 60 degC, load 4 ... 9 V, 1 % parts in E24.
    spec = Spec(8e-3, 0.10, v_load=(4.0, 9.0), temp=(273.15, 333.15), beta={"npn": (100.0, 300.0)},
                resistor_tolerance=0.01)
    start = kit.design("divider_source", v_supply=15.0, v_load=6.0)
    result = synthesize(spec, start=start, topologies=["divider_source"], polarities=["npn"], series="E24")
    assert result.series == "E24" and result.tolerance == 0.01
    best = result.best
    assert best is not None and best.passed
    for name in best.design.topology.resistors:
        value = best.design.values[name]
        # E24 membership per the eseries package's IEC 60063 table
        members = list(eseries.erange(eseries.E24, value * 0.98, value * 1.02))
        assert any(math.isclose(value, m, rel_tol=1e-9) for m in members), (name, value)
    # the worst case varies each resistor by +-1 %, not by E24's customary 5 %
    for f in factors(spec, best.design):
        if f.name in best.design.topology.resistors:
            assert (f.low, f.high) == pytest.approx((0.99 * f.nominal, 1.01 * f.nominal), rel=1e-12)
    wc = worst_case(best.design, spec, methods=("extreme-value",))
    assert wc.methods["extreme-value"].low == pytest.approx(best.low, rel=1e-9)
    # the command line asks for it the same way
    path = _with_spec(tmp_path, EXAMPLES / "bridge_excitation_npn.toml", "\n".join([
        "[spec]", 'current = "1 mA"', 'tolerance = "20 %"', 'resistor_tolerance = "1 %"',
        'v_load = ["10.5 V", "11.5 V"]']))
    code, out, err = _run_cli("synthesize", str(path), "--series", "E24", "--json")
    data = json.loads(out)["synthesis"]
    assert code == 0 and data["series"] == "E24" and data["resistor_tolerance"] == 0.01
    values = data["candidates"][0]["values"]
    for name in ("r1", "r2", "r_e"):
        members = list(eseries.erange(eseries.E24, values[name] * 0.98, values[name] * 1.02))
        assert any(math.isclose(values[name], m, rel_tol=1e-9) for m in members), name
    assert "synthesize [1/1] divider_source/npn" in err


@pytest.fixture(scope="module")
def led_all():
    record = load_record(LED)
    calls = []
    result = synthesize(record.spec, start=record.design, progress=lambda *a: calls.append(a))
    return record, result, calls


def test_topology_specific_bound_with_every_topology_runs(led_all):
    record, result, calls = led_all
    # every topology of the record's sense (a sink) was tried and accounted for
    tried = [key for _, _, key in calls]
    expected = [f"{t.key}/{t.polarities[0]}" for t in kit.topologies.all_topologies()]
    assert tried == expected
    assert [(i, n) for i, n, _ in calls] == [(k, len(expected)) for k in range(1, len(expected) + 1)]
    found = {f"{c.design.topology.key}/{c.design.polarity}" for c in result.candidates}
    assert found | set(result.infeasible) == set(expected)
    # the op-amp offset bound is skipped, with its reason, where there is no op-amp
    skipped = dict(result.skipped["divider_source/npn"])
    assert "U1.v_os" in skipped["bounds.U1.v_os"] and "v_set" in skipped["bounds.v_set"]
    assert "opamp_mos_source/nmos" not in result.skipped
    assert not any("names no parameter" in r for reasons in result.infeasible.values() for r in reasons)
    # where it applies it is applied as written (absolute: the record's own value is held)
    own = next(c for c in result.referenced if c.design.topology.key == "opamp_mos_source")
    assert {b["name"]: (b["low"], b["high"], b["applied"]) for b in own.bounds}["U1.v_os"] == \
        (-2e-3, 2e-3, "absolute")
    # JSON says it too, strictly
    data = json.loads(json.dumps(result.to_dict(), allow_nan=False))
    assert {"entry": "bounds.U1.v_os", "why": skipped["bounds.U1.v_os"]} in data["skipped"]["divider_source/npn"]


def test_ideal_references_are_ranked_apart_and_flagged(led_all):
    _, result, _ = led_all
    assert result.referenced, "the mirrors and op-amp sources should be there"
    for c in result.referenced:
        assert not c.self_contained and c.references
        whys = dict(c.ideal)
        # an ideal current source feeding the mirror, or an ideal set voltage (common practice, no source)
        assert whys.get("I_REF") == "reference current" or whys.get("v_set") == "reference voltage" \
            or any(name in whys for name in ("v_bias", "v_in")), c.ideal
    assert result.candidates == result.self_contained + result.referenced  # two rankings, in this order
    for c in result.self_contained:
        assert c.self_contained and not c.references
        assert not any(why in ("reference current", "reference voltage") for _, why in c.ideal)
    margins = [c.margin for c in result.referenced]
    assert margins == sorted(margins, reverse=True)
    text = report.text(result)
    assert "needing an external (ideal) reference, ranked apart:" in text
    assert "IDEAL I_REF" in text or "IDEAL v_set" in text
    # a mirror's reference that does not drift at all is flagged too (the record does not hold one)
    mirrors = [c for c in result.referenced if "i_ref_tc" in c.design.values]
    for c in mirrors:
        assert ("i_ref_tc", "zero drift") in c.ideal


def test_zero_tolerance_and_zero_drift_are_flagged():
    record = load_record(LED)
    spec = replace(record.spec, tolerances={"r_s": 0.0})
    start = record.design.with_parameter("U1.v_os_tc", 0.0)
    result = synthesize(spec, start=start, topologies=["opamp_mos_source"], polarities=["nmos"])
    c = _own(result)
    assert ("r_s", "zero tolerance") in c.ideal
    assert ("U1.v_os_tc", "zero drift") in c.ideal
    assert ("v_set_tc", "zero drift") not in c.ideal  # the record's 20 ppm/K is held, not ideal


def test_zero_nominal_bounds_run(tmp_path):
    # An op-amp offset of exactly 0 V bounded to +-2 mV; before, bounds on a zero value divided by it.
    path = _with_spec(tmp_path, LED, "", replace_lines=[('v_os = "0.5 mV"', 'v_os = "0 V"')])
    code, out, err = _run_cli("synthesize", str(path), "--json")
    assert code == 0 and "Traceback" not in err
    data = json.loads(out)["synthesis"]
    assert data["candidates"][0]["self_contained"] is False
    held = data["candidates"][0]["design"]["devices"]["U1"]
    assert held["v_os"] == 0.0
    # A mirror whose reference drift is 0 ppm/K, bounded to +-100 ppm/K, every topology tried.
    mirror = _with_spec(tmp_path, MIRROR, "\n".join([
        "[spec]", 'current = "0.3 mA"', 'tolerance = "10 %"', 'v_load = ["1 V", "2 V"]',
        'temp = ["0 degC", "50 degC"]', "[spec.bounds]", 'i_ref_tc = ["-100 ppm/K", "100 ppm/K"]']),
        name="mirror.toml")
    record = load_record(mirror)
    result = synthesize(record.spec, start=record.design, topologies=["basic_mirror", "divider_source"])
    own = next(c for c in result.referenced + result.rejected if c.design.topology.key == "basic_mirror")
    assert own.design.values["i_ref_tc"] == 0.0
    assert {b["name"]: b["applied"] for b in own.bounds} == {"i_ref_tc": "absolute"}
    assert ("i_ref_tc", "zero drift") not in own.ideal  # varied by the spec, so not idealised
    assert dict(result.skipped["divider_source/pnp"])["bounds.i_ref_tc"]


def test_bound_on_a_searched_value_moves_with_it(tmp_path):
    # The mirror's reference current is what synthesis sizes; a +-2 % bound written around the
    # record's 150 uA is applied as +-2 % around the chosen value.
    mirror = _with_spec(tmp_path, MIRROR, "\n".join([
        "[spec]", 'current = "0.3 mA"', 'tolerance = "15 %"', 'v_load = ["1 V", "2 V"]',
        "[spec.bounds]", 'i_ref = ["147 uA", "153 uA"]']))
    record = load_record(mirror)
    result = synthesize(record.spec, start=record.design, topologies=["basic_mirror"], polarities=["pnp"])
    c = _own(result)
    assert "i_ref" in c.searched
    bound = {b["name"]: b for b in c.bounds}["i_ref"]
    chosen = c.design.values["i_ref"]
    assert bound["applied"] == "relative"
    assert (bound["low"] / chosen, bound["high"] / chosen) == pytest.approx((0.98, 1.02), rel=1e-12)


def test_defaults_are_shown_with_the_verdict(tmp_path):
    # no resistor tolerance or TCR written: both defaults are named, in text and JSON
    spec = Spec(1e-3, 0.10, v_load=(3.0, 8.0), temp=(273.15, 343.15))
    assert set(spec.assumed) == {"resistor_tolerance", "resistor_tcr"}
    assert (spec.resistor_tolerance, spec.resistor_tcr) == (DEFAULT_RESISTOR_TOLERANCE, DEFAULT_RESISTOR_TCR)
    start = kit.design("divider_source", tcr={"r_e": 25e-6})
    result = synthesize(spec, start=start, topologies=["divider_source"], polarities=["npn"])
    data = json.loads(json.dumps(result.to_dict(), allow_nan=False))
    defaults = {d["name"]: d for d in data["defaults"]}
    assert defaults["resistor_tolerance"] == {"name": "resistor_tolerance", "value": 0.01, "given": False}
    assert defaults["resistor_tcr"] == {"name": "resistor_tcr", "value": 100e-6, "given": False}
    assert defaults["self_heating"] == {"name": "self_heating", "value": True, "given": False}
    assert defaults["series"] == {"name": "series", "value": "E96", "given": False}
    assert defaults["tcr_centre"]["value"] == {"r1": 0.0, "r2": 0.0, "r_e": 25e-6}
    assert defaults["tcr_centre"]["given"] is True
    text = report.text(result)
    assert "resistor tolerance ±1 % (every resistor without its own) [DEFAULT, not written]" in text
    assert "resistor TCR ±100 ppm/K" in text and "r_e +25 ppm/K" in text
    assert "self-heating: junction = ambient + θ_JA × dissipation [DEFAULT, not written]" in text
    html = report.html(result)
    assert "DEFAULT, not written" in html and "Assumed" in html
    # written in the spec and asked for: "given"
    written = Spec(1e-3, 0.10, v_load=(3.0, 8.0), resistor_tolerance=0.01, resistor_tcr=50e-6)
    assert written.assumed == () and written == replace(written)
    result = synthesize(written, start=start, topologies=["divider_source"], polarities=["npn"],
                        series="E48", self_heating=False)
    given = {d["name"]: d["given"] for d in result.to_dict()["defaults"]}
    assert given == {"resistor_tolerance": True, "resistor_tcr": True, "tcr_centre": True,
                     "self_heating": True, "series": True}
    assert "no self-heating" in report.text(result)


def test_spec_defaults_do_not_change_equality_or_the_record_hash():
    # two specs that differ only in whether 1 % was written are the same requirement
    assert Spec(1e-3, 0.1) == Spec(1e-3, 0.1, resistor_tolerance=0.01, resistor_tcr=100e-6)
    assert "assumed" not in Spec(1e-3, 0.1).to_dict()
    record = load_record(BRIDGE)
    assert record.spec.assumed == ()  # the bridge record writes both


def test_unknown_series_and_bad_progress_are_refused():
    from kit.errors import ParameterError

    spec = Spec(1e-3, 0.1)
    with pytest.raises(ParameterError, match="series"):
        synthesize(spec, topologies=["divider_source"], series="E25")
    with pytest.raises(ParameterError, match="progress"):
        synthesize(spec, topologies=["divider_source"], progress="yes")
    code, out, err = _run_cli("synthesize", str(BRIDGE), "--series", "E7")
    assert code == 2 and "--series" in err and "E24" in err


def test_all_topologies_print_progress_on_stderr():
    code, out, err = _run_cli("synthesize", str(BRIDGE), "--all", "--json")
    lines = [line for line in err.splitlines() if line.startswith("synthesize [")]
    count = len(kit.topologies.all_topologies())  # each has a sink (its first polarity)
    assert len(lines) == count and lines[0].startswith(f"synthesize [1/{count}] ")
    data = json.loads(out)
    assert code in (0, 1) and set(data["synthesis"]) >= {"candidates", "rejected", "infeasible", "defaults"}
    assert np.isfinite([c["margin"] for c in data["synthesis"]["candidates"]]).all()


def test_held_value_outside_an_absolute_bound_moves_into_it():
    # The bridge record has no set voltage; an op-amp source tried for it starts from its default
    # set voltage (0.5 V), which an absolute bound of 1.19 ... 1.21 V must override (the bound rules).
    record = load_record(BRIDGE)
    assert kit.topologies.get("opamp_mos_source").value("v_set").default_for("nmos") == 0.5
    spec = replace(record.spec, bounds={"v_set": (1.19, 1.21)}, beta={})
    result = synthesize(spec, start=record.design, topologies=["opamp_mos_source"], polarities=["nmos"])
    c = _own(result)
    assert c.held["v_set"] == (pytest.approx(1.2, rel=1e-12), "spec")
    assert {b["name"]: b["applied"] for b in c.bounds} == {"v_set": "absolute"}
    # what the record has is still the record's
    assert c.held["v_supply"] == (12.0, "record") and c.held["v_load"] == (11.0, "record")
    assert c.design.temp == record.design.temp and c.design.title == record.design.title
