"""The ``biasbook`` command: exit codes, strict JSON, examples that evaluate.

External references: JSON as in RFC 8259 (no NaN or Infinity), read with
the standard library; the stiff-divider hand estimate of a divider-biased
emitter-degenerated transistor, I = (V_TH - V_BE) / R_E (common practice,
no source); V_BE of a small-signal silicon BJT at 0.1-10 mA between 0.55 and
0.75 V (common practice, no source).
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest
import tomli_w

import kit
from kit.cli import main
from kit.model.structure import structure
from kit.record import load_record
from kit.topologies import all_topologies

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.toml"))
# The divider-biased examples.  Other topologies' examples are evaluated by
# their own tests; evaluating all of them here too would cost minutes on 2 cores
# (tests/test_record.py still round-trips every example).
DIVIDER_EXAMPLES = [p for p in EXAMPLES if load_record(p).design.topology.key == "divider_source"]


def strict_json(text):
    """json.loads that refuses NaN and Infinity, which RFC 8259 does not have."""
    def refuse(name):
        raise ValueError(f"non-standard JSON constant {name}")
    return json.loads(text, parse_constant=refuse)


def write_record(tmp_path, name="design.toml", **values):
    # A scenario of our own: a 1.2 mA sink for a Hall-plate bias on 12 V.
    document = {
        "biasbook_record": 2,
        "title": "Hall plate bias, 1.2 mA",
        "circuit": {"topology": "divider_source", "polarity": "npn"},
        "values": {"r1": "33k", "r2": "10k", "r_e": "1k8", "v_supply": "12 V", "v_load": "9 V"}
                  | values.pop("values", {}),
    } | values
    path = tmp_path / name
    path.write_text(tomli_w.dumps(document), encoding="utf-8")
    return path


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err
    return code, out, err


# --- version and usage -----------------------------------------------------------

def test_version(capsys):
    code, out, _ = run(capsys, "--version")
    assert code == 0 and out.split() == ["biasbook", kit.__version__]


@pytest.mark.parametrize("argv", [[], ["frobnicate"], ["evaluate"], ["topologies", "--yaml"],
                                  ["evaluate", "x.toml", "--edge", "soft"]])
def test_usage_errors_exit_2(capsys, argv):
    code, out, err = run(capsys, *argv)
    assert code == 2 and err.startswith("biasbook: ") and out == ""


def test_usage_error_with_json_prints_an_error_object(capsys):
    code, out, err = run(capsys, "evaluate", "--json")
    assert code == 2 and err
    assert strict_json(out)["error"] == "UsageError"


# --- topologies -------------------------------------------------------------------

def test_topologies_json_lists_every_topology_and_what_it_derives(capsys):
    code, out, _ = run(capsys, "topologies", "--json")
    listed = strict_json(out)
    assert code == 0
    assert [t["name"] for t in listed] == [t.key for t in all_topologies()]
    for entry, top in zip(listed, all_topologies()):
        for quantity in ("dI/dT", "R_out", "compliance"):
            assert quantity in entry["derived"], (entry["name"], quantity)
        # dI/dbeta of every bipolar transistor (its forward-gain model parameter beta_f)
        for part in structure(top, top.polarities[0]).devices:
            if part.kind.key == "bjt":
                assert f"dI/d{part.name}.beta_f" in entry["derived"], (entry["name"], part.name)
        assert all(p["range"][0] <= d <= p["range"][1] for p in entry["parameters"] for d in p["default"].values())


def test_topologies_list_the_derivatives_an_evaluation_reports(capsys):
    code, out, _ = run(capsys, "topologies", "--json")
    listed = {t["name"]: t["derived"] for t in strict_json(out)}
    evaluation = kit.evaluate(kit.design("divider_source"))
    reported = ["T" if s.parameter == "temp" else s.parameter for s in evaluation.sensitivities]
    assert [d[len("dI/d"):] for d in listed["divider_source"] if d.startswith("dI/d")] == reported


def test_topologies_text_has_a_block_per_topology_with_units(capsys):
    code, out, _ = run(capsys, "topologies")
    assert code == 0
    for top in all_topologies():
        assert f"{top.key}: {top.title}" in out
        for value in top.values:
            assert f"[{value.unit or '-'}]" in out and value.name in out


# --- evaluate the examples -----------------------------------------------------------

@pytest.fixture(scope="module", params=DIVIDER_EXAMPLES, ids=lambda p: p.stem)
def example(request):
    return request.param


def test_example_evaluates_as_json(capsys, example):
    code, out, err = run(capsys, "evaluate", str(example), "--json")
    assert code == 0, err
    result = strict_json(out)
    record = load_record(example)
    assert result["content_hash"] == record.content_hash()
    assert result["record"]["title"] == record.title
    # Same code path as the library, so equal to the last bit.
    assert result["evaluation"]["i_out"] == kit.evaluate(record.design, edge=record.edge).i_out
    for name, transistor in result["evaluation"]["devices"].items():
        assert transistor["kind"] == "bjt" and transistor["region"] == "active", name
        # 0.1-10 mA near room temperature: common practice, no source.
        assert 0.55 <= transistor["v_be"] <= 0.75, name


def test_example_current_is_near_the_stiff_divider_estimate(example):
    # Hand analysis, common practice: I = (V_TH - V_BE(on)) / R_E, with V_TH
    # the divider's open-circuit drop across the leg beside the base-emitter
    # loop (R2 for an NPN sink, R1 for a PNP source).  Base current and the
    # exact V_BE move it by a few per cent, so 10 % is a generous bound.
    record = load_record(example)
    v = record.design.values
    leg = v["r2"] if record.design.polarity == "npn" else v["r1"]
    v_be = 0.65 - 2e-3 * (record.design.temp - 298.15)  # -2 mV/K, common practice, no source
    estimate = (v["v_supply"] * leg / (v["r1"] + v["r2"]) - v_be) / v["r_e"]
    assert kit.evaluate(record.design).i_out == pytest.approx(estimate, rel=0.10)


def test_example_text_is_headed_by_the_record(capsys, example):
    record = load_record(example)
    code, out, _ = run(capsys, "evaluate", str(example))
    assert code == 0
    head = out.splitlines()[:3]
    assert record.title in head[0] and record.content_hash() in head[2]
    assert "I_out" in out and "ledger" in out


def test_edge_option_overrides_the_record(capsys, tmp_path):
    path = write_record(tmp_path)
    lows = {}
    for edge in ("vce_sat", "vcb_zero"):
        code, out, _ = run(capsys, "evaluate", str(path), "--json", "--edge", edge)
        compliance = strict_json(out)["evaluation"]["compliance"]
        assert code == 0 and compliance["edge"] == edge
        lows[edge] = compliance["low"]["voltage"]
    # An NPN sink saturates when V_C falls to V_E + V_CE(sat) (0.2 V here) or,
    # by the stricter criterion, to V_B = V_E + V_BE: common practice, no source.
    assert 0.3 < lows["vcb_zero"] - lows["vce_sat"] < 0.6


# --- failures ------------------------------------------------------------------------

def test_bad_record_exits_2_naming_the_field(capsys, tmp_path):
    path = write_record(tmp_path, values={"r_e": "__import__('os')"})
    code, out, err = run(capsys, "evaluate", str(path))
    assert code == 2 and out == "" and "values.r_e" in err


def test_bad_record_with_json_prints_the_error_object(capsys, tmp_path):
    path = write_record(tmp_path, values={"r1": 1e30})
    code, out, err = run(capsys, "evaluate", str(path), "--json")
    error = strict_json(out)
    assert code == 2 and "values.r1" in err
    assert error["error"] == "RecordError" and error["parameter"] == "values.r1"
    assert error["exit_code"] == 2 and "Ω" in error["valid"]


def test_missing_file_exits_2(capsys, tmp_path):
    code, _, err = run(capsys, "evaluate", str(tmp_path / "absent.toml"))
    assert code == 2 and "absent.toml" in err


def test_load_outside_compliance_exits_3_naming_the_range(capsys, tmp_path):
    path = write_record(tmp_path, values={"v_load": "1 V"})  # below V_E: Q1 saturates
    code, out, err = run(capsys, "evaluate", str(path), "--json")
    error = strict_json(out)
    assert code == 3 and "values.v_load" in err
    assert error["error"] == "OperatingPointError" and error["parameter"] == "values.v_load"
    low, high = (float(part.split()[0]) for part in error["valid"].split("…"))
    assert low > 1.0 and high > low


def test_supply_too_low_exits_3(capsys, tmp_path):
    path = write_record(tmp_path, values={"v_supply": "0.3 V", "v_load": "0.25 V"})
    code, _, err = run(capsys, "evaluate", str(path))
    assert code == 3 and "values.v_supply" in err


def test_no_early_effect_record_evaluates_as_text(capsys, tmp_path):
    path = write_record(tmp_path, devices={"Q1": {"v_a": math.inf}})
    code, _, _ = run(capsys, "evaluate", str(path))
    assert code == 0


def test_no_early_effect_record_gives_strict_json(capsys, tmp_path):
    path = write_record(tmp_path, devices={"Q1": {"v_a": math.inf}})
    code, out, _ = run(capsys, "evaluate", str(path), "--json")
    assert code == 0
    assert strict_json(out)["record"]["devices"]["Q1"]["v_a"] == "inf"


# --- cautions -----------------------------------------------------------------------

def test_high_voltage_design_carries_a_caution(capsys, tmp_path):
    path = write_record(tmp_path, values={"r1": "330k", "r2": "10k", "r_e": "2k2",
                                          "v_supply": "100 V", "v_load": "80 V"},
                        devices={"Q1": {"bv_ceo": "300 V"}})
    code, out, _ = run(capsys, "evaluate", str(path), "--json")
    warnings = strict_json(out)["cautions"]
    assert code == 0 and any("60 V DC" in w and "local electrical codes" in w for w in warnings)


def test_self_heating_design_carries_a_caution(capsys, tmp_path):
    # About 10 mA at 23 V across Q1: 0.23 W, tens of kelvin above ambient at 250 K/W.
    path = write_record(tmp_path, values={"r1": "12k", "r2": "1k2", "r_e": "200",
                                          "v_supply": "30 V", "v_load": "25 V"})
    code, out, _ = run(capsys, "evaluate", str(path))
    assert code == 0 and "cautions" in out and "junction reaches" in out


# --- the module as a program ----------------------------------------------------------

@pytest.mark.parametrize("values, expected", [({}, 0), ({"r1": True}, 2)])
def test_python_dash_m_exit_codes(tmp_path, values, expected):
    path = write_record(tmp_path, values=values)
    result = subprocess.run([sys.executable, "-m", "kit.cli", "evaluate", str(path), "--json"],
                            cwd=ROOT, capture_output=True, text=True, timeout=120)
    assert result.returncode == expected, result.stderr
    assert "Traceback" not in result.stderr
    parsed = strict_json(result.stdout)
    assert ("evaluation" in parsed) == (expected == 0)


# --- what a reader sees ---------------------------------------------------------------

DATA = ROOT / "tests" / "data"
RAW_REPRS = ("np.float64", "array(", "{'", "Topology(", "<kit.", "None", "nan")


def test_format1_record_says_it_was_migrated(capsys):
    code, out, _ = run(capsys, "evaluate", str(DATA / "format1-zener-source.toml"))
    assert code == 0
    assert "migrated  read as format 1 and migrated to format 2" in out
    assert "migrated  values.v_z0 -> devices.D1.v_z0" in out
    code, out, _ = run(capsys, "evaluate", str(DATA / "format1-zener-source.toml"), "--json")
    migrated = strict_json(out)["migrated"]
    assert code == 0 and migrated[0] == "read as format 1 and migrated to format 2"
    code, out, _ = run(capsys, "evaluate", str(ROOT / "examples" / "zener_source-led-panel-sink.toml"), "--json")
    assert code == 0 and strict_json(out)["migrated"] == []


def test_mosfet_report_has_units_and_no_bipolar_words(capsys):
    code, out, _ = run(capsys, "evaluate", str(ROOT / "examples" / "mos_mirror-tail-bias-integrated.toml"))
    assert code == 0
    # the saturation criterion (conditions.edge) is a bipolar transistor's
    assert "V_CE(sat)" not in out and not any(line.startswith("edge") for line in out.splitlines())
    for raw in RAW_REPRS + ("r_out_",):  # output-resistance forms by their labels, not their keys
        assert raw not in out, raw
    headline = dict(line.split(None, 1) for line in out.splitlines()
                    if line.startswith("  ") and line.split(None, 1)[0] in ("I_out", "R_out", "compliance", "tempco"))
    assert headline["I_out"].endswith("µA") and headline["R_out"].endswith("Ω")
    assert headline["compliance"].endswith(" V") and headline["tempco"].endswith("ppm/K")


def test_synthesize_heading_gives_the_spec_with_units(capsys):
    code, out, _ = run(capsys, "synthesize", str(ROOT / "examples" / "spec-led-driver-passes.toml"))
    assert code == 0
    spec = next(line for line in out.splitlines() if line.startswith("spec"))
    assert "10 mA ± 3.00%" in spec and "9.7 mA … 10.3 mA" in spec
    assert "0.01 A" not in out


def test_spec_tolerance_range_is_given_in_per_cent(capsys, tmp_path):
    path = write_record(tmp_path, spec={"current": "1 mA", "tolerance": "70 %"})
    code, _, err = run(capsys, "check", str(path))
    assert code == 2 and "spec.tolerance" in err and "0 … 50 %" in err


def test_unreadable_value_error_gives_its_range(capsys, tmp_path):
    path = write_record(tmp_path, values={"r_e": "2k2 V"})
    code, _, err = run(capsys, "evaluate", str(path))
    assert code == 2 and "values.r_e" in err and "0.01 … 1e+09 Ω" in err


def test_not_evaluable_error_gives_the_value_with_its_unit(capsys, tmp_path):
    path = write_record(tmp_path, values={"v_load": "0.5 V"})
    code, _, err = run(capsys, "evaluate", str(path))
    assert code == 3 and "values.v_load = '500 mV'" in err


def test_record_text_cannot_drive_the_terminal(capsys, tmp_path):
    # The reader refuses control characters in a title; the printer drops escapes anyway.
    path = write_record(tmp_path, title="Panel \x1b[2J bias")
    code, out, err = run(capsys, "evaluate", str(path))
    assert code == 2 and "title" in err and "\x1b" not in out + err


# --- review ------------------------------------------------------------------------

def _addresses(page):
    """Every address an element of the page would load (the markup's own tags, not text or scripts)."""
    from html.parser import HTMLParser

    found = []

    class Addresses(HTMLParser):
        def handle_starttag(self, tag, attrs):
            found.extend(v for k, v in attrs if k in ("src", "href", "data", "poster", "srcset") and v)

    Addresses().feed(page)
    return found


REVIEW_TITLE = 'Hall bias <script>document.title="RAN"</script> & <b>bold</b>'


@pytest.mark.slow
@pytest.mark.skipif(__import__("shutil").which("chromium") is None, reason="needs Debian's chromium")
def test_review_writes_the_offline_html_twin_with_the_record_text_as_text(capsys, tmp_path):
    import re

    from kit.review.printcheck import pdf_info

    path = write_record(tmp_path, title=REVIEW_TITLE, notes='<img src="https://example.org/x.png"> as words')
    pdf, twin = tmp_path / "review.pdf", tmp_path / "share" / "twin.html"
    twin.parent.mkdir()
    code, out, err = run(capsys, "review", str(path), "-o", str(pdf), "--html-twin", str(twin))
    assert code == 0, err
    assert out.split() == [str(pdf), str(twin)] and "biasbook review: twin" in err
    page = twin.read_text(encoding="utf-8")
    # opens with no network: nothing it loads is an address outside the file (RFC 3986 scheme names)
    loaded = _addresses(page)
    assert loaded and all(a.startswith(("data:", "#")) for a in loaded), loaded
    assert not re.search(r"<script\b[^>]*\bsrc=", page)
    # the record's words are there as text, never as markup
    assert '<script>document.title="RAN"' not in page and "<b>bold</b>" not in page
    assert "&lt;script&gt;" in page and "&lt;img src=" in page
    # and the PDF's title metadata is the title as written (PDF 32000-1:2008, 14.3.3 /Title)
    assert pdf_info(pdf)["Title"] == REVIEW_TITLE
    # no twin asked for: none written
    code, out, _ = run(capsys, "review", str(path), "-o", str(tmp_path / "again.pdf"))
    assert code == 0 and out.split() == [str(tmp_path / "again.pdf")]
