"""Design records: round trips, the content hash, and hostile files.

External references: TOML 1.0 (toml.io) for what a file may hold, read
here with the standard library's tomllib; SHA-256 as specified in FIPS
180-4, computed here with hashlib; JSON as in RFC 8259, which has no NaN or
Infinity.
"""

from __future__ import annotations

import copy
import hashlib
import json
import math
from pathlib import Path

import pytest
import tomli_w

import kit
from kit.errors import DesignError, RecordError
from kit.model.structure import structure
from kit.record import (MAX_RECORD_BYTES, Record, canonical_json, json_ready, load_record,
                        parse_record, save_record)

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))

# A scenario of our own: a 0.8 mA sink for a thermistor half-bridge on 10 V.
BASE = {
    "biasbook_record": 2,
    "title": "Thermistor half-bridge, 0.8 mA",
    "circuit": {"topology": "divider_source", "polarity": "npn"},
    "values": {"r1": "36k", "r2": "10k", "r_e": "1k8", "v_supply": "10 V", "v_load": "7.5 V"},
}


def text_of(document):
    return tomli_w.dumps(document)


def changed(path, value):
    """BASE with the dotted field `path` set (or removed when value is ...)."""
    doc = copy.deepcopy(BASE)
    *parents, last = path.split(".")
    table = doc
    for key in parents:
        table = table.setdefault(key, {})
    if value is ...:
        del table[last]
    else:
        table[last] = value
    return doc


def error_of(text):
    with pytest.raises(RecordError) as caught:
        parse_record(text)
    return caught.value


# --- round trips -------------------------------------------------------------------

def test_there_are_at_least_three_divider_examples():
    divider = [p for p in EXAMPLES if load_record(p).design.topology.key == "divider_source"]
    assert len(divider) >= 3


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_load_save_load_keeps_design_and_hash(path, tmp_path):
    first = load_record(path)
    target = tmp_path / "copy.toml"
    save_record(first, target)
    second = load_record(target)
    assert second.design == first.design
    assert second.content_hash() == first.content_hash()
    assert second.to_dict() == first.to_dict()
    assert (second.title, second.revision, second.author, second.notes, second.edge) == \
        (first.title, first.revision, first.author, first.notes, first.edge)
    # Saving again gives the same bytes: the writer is deterministic.
    assert second.to_toml() == first.to_toml()


def test_saved_record_keeps_the_spelling_of_text_values(tmp_path):
    record = parse_record(text_of(BASE))
    assert 'r_e = "1k8"' in record.to_toml()
    assert record.design.values["r_e"] == 1800.0  # IEC 60062: 1k8 = 1.8 kΩ


def test_record_from_design_round_trips():
    design = kit.design("divider_source", "pnp", r1="4k7", r2="27k", r_e="680", v_supply=15,
                        v_load=5, temp="40 degC", tcr={"r_e": "50 ppm/K"},
                        devices={"Q1": {"beta_f": 90, "label": "bench-measured PNP"}},
                        title="Round trip")
    record = Record.from_design(design, revision="C", edge="vcb_zero")
    again = parse_record(record.to_toml())
    assert again.design == design
    assert again.edge == "vcb_zero" and again.revision == "C"
    assert again.content_hash() == record.content_hash()


def test_infinite_early_voltage_round_trips_and_hashes():
    # TOML 1.0 has `inf`; the kit's model takes V_A = inf as "no Early effect".
    record = parse_record(text_of(changed("devices", {"Q1": {"v_a": math.inf}})))
    assert record.design.devices["Q1"].v_a == math.inf
    again = parse_record(record.to_toml())
    assert again.content_hash() == record.content_hash()
    assert json.loads(canonical_json(record.to_dict()))["devices"]["Q1"]["v_a"] == "inf"


def test_defaults_are_filled_in_the_resolved_record():
    resolved = parse_record(text_of(BASE)).to_dict()
    assert resolved["conditions"] == {"temp": 298.15, "t_ref": 298.15, "edge": "vce_sat"}
    assert resolved["tcr"] == {"r1": 0.0, "r2": 0.0, "r_e": 0.0}
    # common practice, no source: a hand-analysis V_BE(on) of 0.6-0.7 V
    assert 0.6 <= resolved["hand"]["v_be_on"] <= 0.7


# --- content hash ---------------------------------------------------------------------

def test_content_hash_is_sha256_of_the_canonical_json():
    record = parse_record(text_of(BASE))
    # FIPS 180-4 SHA-256 via hashlib, over sorted-key compact ASCII JSON (RFC 8259).
    expected = hashlib.sha256(json.dumps(json_ready(record.to_dict()), sort_keys=True,
                                         separators=(",", ":")).encode("ascii")).hexdigest()
    assert record.content_hash() == expected


def test_hash_ignores_key_order_layout_comments_and_number_spelling():
    plain = parse_record(text_of(BASE)).content_hash()
    reordered = {k: BASE[k] for k in ("values", "circuit", "title", "biasbook_record")}
    reordered["values"] = dict(reversed(list(BASE["values"].items())))
    assert parse_record(text_of(reordered)).content_hash() == plain
    spaced = "\n\n# a comment\n" + text_of(BASE).replace(" = ", "   =   ") + "\n# end\n"
    assert parse_record(spaced).content_hash() == plain
    # 1k8, 1.8k, 1800 and 1800.0 are the same resistor.
    for spelling in ("1.8k", 1800, 1800.0, "1800 Ω"):
        assert parse_record(text_of(changed("values.r_e", spelling))).content_hash() == plain
    explicit = changed("conditions", {"temp": "25 degC", "t_ref": 298.15, "edge": "vce_sat"})
    assert parse_record(text_of(explicit)).content_hash() == plain


@pytest.mark.parametrize("path, value", [
    ("values.r_e", "2k0"), ("values.v_load", "7.4 V"), ("conditions.temp", "26 degC"),
    ("conditions.edge", "vcb_zero"), ("tcr.r_e", "1 ppm/K"), ("hand.v_be_on", "0.66 V"),
    ("devices.Q1.beta_f", 201), ("title", "Another title"), ("revision", "B"),
])
def test_hash_changes_when_meaning_changes(path, value):
    plain = parse_record(text_of(BASE)).content_hash()
    assert parse_record(text_of(changed(path, value))).content_hash() != plain


# --- hostile records -------------------------------------------------------------------

@pytest.mark.parametrize("path, value, parameter", [
    ("biasbook_record", 3, "biasbook_record"),
    ("biasbook_record", 0, "biasbook_record"),
    ("biasbook_record", "1", "biasbook_record"),
    ("biasbook_record", True, "biasbook_record"),
    ("biasbook_record", ..., "biasbook_record"),
    ("title", ..., "title"),
    ("title", "", "title"),
    ("title", "two\nlines", "title"),
    ("title", "escape \x1b[2J", "title"),
    ("title", "C1 \x9b31m", "title"),
    ("title", "spoof \u202egnp.exe", "title"),
    ("title", "x" * 201, "title"),
    ("title", 12, "title"),
    ("revision", ["A"], "revision"),
    ("colour", "red", "colour"),
    ("spec", {"i_out": "1 mA"}, "spec.i_out"),  # [spec] is known; i_out is not one of its keys
    ("worst_case", {"i_out": "1 mA"}, "worst_case"),
    ("circuit", "divider_source", "circuit"),
    ("circuit", ..., "circuit"),
    ("circuit.topology", ..., "circuit.topology"),
    ("circuit.topology", "no_such_circuit", "circuit.topology"),
    ("circuit.polarity", "nmos", "circuit.polarity"),
    ("circuit.polarity", ..., "circuit.polarity"),
    ("circuit.colour", "red", "circuit.colour"),
    ("values", ..., "values"),
    ("values.r_e", ..., "values.r_e"),
    ("values.r9", "1k", "values.r9"),
    ("values.r1", True, "values.r1"),
    ("values.r1", [33e3], "values.r1"),
    ("values.r1", {"value": 33e3}, "values.r1"),
    ("values.r1", 10**30, "values.r1"),
    ("values.r1", 10**400, "values.r1"),
    ("values.r1", math.inf, "values.r1"),
    ("values.r1", -math.inf, "values.r1"),
    ("values.r1", math.nan, "values.r1"),
    ("values.r1", -33e3, "values.r1"),
    ("values.r1", "4k7 V", "values.r1"),
    ("values.r1", "__import__('os')", "values.r1"),
    ("values.r1", "33e3 if True else 0", "values.r1"),
    ("values.v_supply", "1e400 V", "values.v_supply"),
    ("conditions.temp", 25, "conditions.temp"),
    ("conditions.temp", "-300 degC", "conditions.temp"),
    ("conditions.edge", "hard", "conditions.edge"),
    ("conditions.humidity", 0.5, "conditions.humidity"),
    ("tcr.r9", "100 ppm/K", "tcr.r9"),
    ("tcr.r_e", 100, "tcr.r_e"),
    ("hand.v_be_on", "2 V", "hand.v_be_on"),
    ("hand.v_be_rough", 0.6, "hand.v_be_rough"),
    ("devices.Q2", {"beta_f": 100}, "devices.Q2"),
    ("devices.Q1", 5, "devices.Q1"),
    ("devices.Q1.beta_f", 0, "devices.Q1.beta_f"),
    ("devices.Q1.beta_f", "lots", "devices.Q1.beta_f"),
    ("devices.Q1.i_s", "1 A", "devices.Q1.i_s"),
    ("devices.Q1.polarity", "pnp", "devices.Q1.polarity"),
    ("devices.Q1.colour", "red", "devices.Q1.colour"),
    ("devices.Q1.label", 3, "devices.Q1.label"),
])
def test_bad_field_names_its_path(path, value, parameter):
    err = error_of(text_of(changed(path, value)))
    assert err.parameter == parameter
    assert isinstance(err, DesignError) and isinstance(err, ValueError)
    assert str(err).startswith(parameter)


@pytest.mark.parametrize("literal", ["1e400", "-1e400", "nan", "inf", "1_000_000_000_000_000"])
def test_raw_numbers_out_of_range_are_refused(literal):
    text = text_of(BASE).replace('r1 = "36k"', f"r1 = {literal}")
    assert f"r1 = {literal}" in text
    assert error_of(text).parameter == "values.r1"


def test_values_as_nested_table_headers():
    # TOML 1.0: [values.r1] opens a table inside [values]; a value was expected there.
    nested = text_of(changed("values.r1", ...)) + "\n[values.r1]\nvalue = 33000\n"
    assert error_of(nested).parameter == "values.r1"
    unknown = text_of(BASE) + "\n[values.r_x]\nvalue = 1\n"
    assert error_of(unknown).parameter == "values.r_x"


def test_code_in_a_value_is_never_run(tmp_path):
    marker = tmp_path / "ran"
    attack = f"__import__('pathlib').Path({str(marker)!r}).touch()"
    err = error_of(text_of(changed("values.r_e", attack)))
    assert err.parameter == "values.r_e"
    assert not marker.exists()


def test_out_of_range_error_gives_the_valid_range():
    err = error_of(text_of(changed("values.r1", 1e30)))
    assert "1e+09" in err.valid and "Ω" in err.valid


def test_unknown_section_lists_the_valid_ones():
    err = error_of(text_of(changed("worst_case", {"i_out": "1 mA"})))
    for section in ("circuit", "values", "conditions", "tcr", "hand", "devices", "spec"):
        assert section in err.valid


def test_newer_schema_is_reported_before_unknown_sections():
    # A newer record may carry sections this version does not know.
    err = error_of(text_of(changed("biasbook_record", 3) | {"worst_case": {"i_out": "1 mA"}}))
    assert err.parameter == "biasbook_record" and "newer" in err.message


def test_celsius_hint_for_a_bare_temperature():
    err = error_of(text_of(changed("conditions.temp", 25)))
    assert "degC" in err.valid


def test_syntax_error_reports_the_line():
    text = text_of(BASE).replace('r2 = "10k"', "r2 = = 10k")
    line = text.splitlines().index("r2 = = 10k") + 1
    err = error_of(text)
    assert err.parameter == "file" and f"line {line}" in str(err)


def test_deep_nesting_is_refused():
    assert error_of("a = " + "[" * 50_000 + "]" * 50_000).parameter == "file"


def test_two_mebibyte_file_is_refused(tmp_path):
    path = tmp_path / "big.toml"
    filler = ("# " + "x" * 98 + "\n") * (2 * MAX_RECORD_BYTES // 100)
    path.write_text(text_of(BASE) + filler, encoding="utf-8")
    with pytest.raises(RecordError) as caught:
        load_record(path)
    assert caught.value.parameter == "file" and "1 MiB" in caught.value.valid
    assert error_of(text_of(BASE) + filler).parameter == "file"


def test_just_under_the_limit_still_loads():
    text = text_of(BASE)
    padding = "#" * (MAX_RECORD_BYTES - len(text.encode()) - 1) + "\n"
    assert parse_record(text + padding).design.values["r1"] == 36e3


def test_non_utf8_file_is_refused(tmp_path):
    path = tmp_path / "latin1.toml"
    path.write_bytes(text_of(BASE).replace("half-bridge", "Brücke").encode("latin-1"))
    with pytest.raises(RecordError) as caught:
        load_record(path)
    assert caught.value.parameter == "file" and "UTF-8" in caught.value.message


def test_utf8_byte_order_mark_is_accepted(tmp_path):
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + text_of(BASE).encode())
    assert load_record(path).title == BASE["title"]


def test_missing_file_names_the_path(tmp_path):
    with pytest.raises(RecordError) as caught:
        load_record(tmp_path / "absent.toml")
    assert caught.value.parameter == "file" and "absent.toml" in caught.value.value


def test_text_must_be_a_string():
    with pytest.raises(RecordError) as caught:
        parse_record(text_of(BASE).encode())
    assert caught.value.parameter == "file"


def test_long_quantity_text_is_refused_and_shortened_in_the_message():
    # Refused before parsing: the quantity parser slows down badly on long text.
    err = error_of(text_of(changed("values.r1", "9" * 200_000 + " furlongs")))
    assert err.parameter == "values.r1" and "characters" in err.valid and len(str(err)) < 600
    long_title = error_of(text_of(changed("title", "t" * 50_000)))
    assert long_title.parameter == "title" and len(str(long_title)) < 600


# --- strict JSON ---------------------------------------------------------------------

def test_json_ready_gives_strict_json():
    # RFC 8259 has no NaN or Infinity; json.loads must see none.
    text = json.dumps(json_ready({"a": math.inf, "b": [-math.inf, 1.5]}), allow_nan=False)
    assert json.loads(text) == {"a": "inf", "b": ["-inf", 1.5]}


def test_json_ready_refuses_nan_with_its_path():
    with pytest.raises(ValueError, match=r"\$\.x\[1\]"):
        json_ready({"x": [0.0, math.nan]})


# --- every registered topology, every kind of device ---------------------------------

@pytest.mark.parametrize("top", kit.list_topologies(), ids=lambda t: t.key)
def test_every_topology_round_trips_through_a_record(top):
    for polarity in top.polarities:
        design = kit.design(top.key, polarity, title=f"{top.key} defaults")
        record = Record.from_design(design)
        again = parse_record(record.to_toml())
        assert again.design == design
        assert again.content_hash() == record.content_hash()


def test_missing_values_are_listed_together():
    doc = copy.deepcopy(BASE)
    del doc["values"]["r2"], doc["values"]["v_load"]
    err = error_of(text_of(doc))
    assert err.parameter == "values.r2" and "v_load" in err.message


def test_junction_rise_is_kept_beside_the_transistor():
    record = parse_record(text_of(changed("devices", {"Q1": {"t_rise": "12 K"}})))
    assert record.design.t_rise["Q1"] == 12.0
    assert record.to_dict()["devices"]["Q1"]["t_rise"] == 12.0
    assert parse_record(record.to_toml()).content_hash() == record.content_hash()
    assert Record.from_design(record.design).design == record.design


@pytest.mark.parametrize("rise", ["12 degC", "12 °C", 1e4, "hot"])
def test_bad_junction_rise_names_its_field(rise):
    # A rise is a temperature difference: 12 degC would read as 285 K.
    assert error_of(text_of(changed("devices.Q1.t_rise", rise))).parameter == "devices.Q1.t_rise"


def mosfet_topology():
    """The first topology with a MOSFET, its sinking polarity and that MOSFET's name."""
    for top in kit.list_topologies():
        polarity = top.polarities[0]
        mos = [p.name for p in structure(top, polarity).devices if p.kind.key == "mos"]
        if mos:
            return top, polarity, mos[0]
    pytest.skip("no topology with a MOSFET is registered")


def test_mosfet_overrides_use_the_mosfet_model():
    top, polarity, name = mosfet_topology()
    doc = copy.deepcopy(BASE)
    doc["circuit"] = {"topology": top.key, "polarity": polarity}
    doc["values"] = {v.name: v.default_for(polarity) for v in top.values}
    doc["devices"] = {name: {"v_th": "1.5 V"}}
    record = parse_record(text_of(doc))
    assert record.design.devices[name].v_th == 1.5
    doc["devices"] = {name: {"beta_f": 100}}  # a BJT parameter on a MOSFET
    assert error_of(text_of(doc)).parameter == f"devices.{name}.beta_f"


# --- format 1 --------------------------------------------------------------------------
# Format-1 files are the examples as they were written before format 2: part values
# among the topology's values, MOSFET circuits as npn/pnp, other exponent names.

DATA = Path(__file__).resolve().parent / "data"
FORMAT_1 = [("format1-zener-source.toml", "zener_source-led-panel-sink.toml"),
            ("format1-led-driver.toml", "spec-led-driver-passes.toml")]


@pytest.mark.parametrize("old, new", FORMAT_1, ids=[old for old, _ in FORMAT_1])
def test_format1_record_reads_as_its_format2_twin(old, new):
    migrated = load_record(DATA / old)
    current = load_record(Path(__file__).resolve().parents[1] / "examples" / new)
    assert migrated.design == current.design
    assert migrated.content_hash() == current.content_hash()
    assert migrated.migrated[0] == "read as format 1 and migrated to format 2"
    assert current.migrated == ()


def test_format1_notes_name_every_moved_field():
    notes = load_record(DATA / "format1-led-driver.toml").migrated
    assert "circuit.polarity npn -> nmos" in notes
    for name in ("a_ol", "v_os", "v_os_tc", "i_bias", "v_oh", "v_ol"):
        assert f"values.{name} -> devices.U1.{name}" in notes
    assert "spec.bounds.v_os -> spec.bounds.U1.v_os" in notes
    zener = load_record(DATA / "format1-zener-source.toml").migrated
    assert {f"values.{n} -> devices.D1.{n}" for n in ("v_z0", "r_z", "tc_z", "i_z_min", "p_z_max")} <= set(zener)


def test_format1_exponent_names_are_renamed():
    doc = changed("devices", {"Q1": {"xti": 3.5, "xtb": 1.7}}) | {"biasbook_record": 1}
    record = parse_record(text_of(doc))
    assert record.design.devices["Q1"].values["i_s_temp_exponent"] == 3.5
    assert record.design.devices["Q1"].values["beta_temp_exponent"] == 1.7
    assert "devices.Q1.xti -> devices.Q1.i_s_temp_exponent" in record.migrated
    assert "devices.Q1.xtb -> devices.Q1.beta_temp_exponent" in record.migrated


def test_migrated_record_is_saved_as_format2(tmp_path):
    target = tmp_path / "saved.toml"
    save_record(load_record(DATA / "format1-led-driver.toml"), target)
    again = load_record(target)
    assert again.migrated == ()
    assert "biasbook_record = 2" in target.read_text(encoding="utf-8")
    assert 'polarity = "nmos"' in target.read_text(encoding="utf-8")


def test_format1_field_out_of_range_names_its_new_field():
    doc = {**BASE, "biasbook_record": 1, "circuit": {"topology": "zener_source", "polarity": "npn"},
           "values": {"r_feed": "3k6", "r_e": "240", "v_supply": "24 V", "v_load": "6 V", "v_z0": "-5 V"}}
    assert error_of(text_of(doc)).parameter == "devices.D1.v_z0"


# --- [thermal]: parts coupled on one die or package, shared heatsinks ------------------------

# A scenario of our own: a two-transistor mirror as a dual in one package, its output on a clip.
MIRROR = {
    "biasbook_record": 2,
    "title": "Mirror dual, 2 mA",
    "circuit": {"topology": "basic_mirror", "polarity": "npn"},
    "values": {"i_ref": "2 mA", "i_ref_tc": "0 ppm/K", "n_area": 1, "v_supply": "12 V", "v_load": "3 V"},
}


def _thermal(thermal, devices=None):
    return text_of(MIRROR | {"thermal": thermal} | ({"devices": devices} if devices else {}))


COUPLED = {"coupled": [{"parts": ["Q1", "Q2"], "mutual": "150 K/W"}]}
SINK = {"heatsinks": {"clip": {"sink_to_air": "40 K/W", "junction_to_sink": {"Q2": "60 K/W"}}}}
# on the clip Q2's own path is 100 K/W: a coupling of 80 K/W fits under it
BOTH = SINK | {"coupled": [{"parts": ["Q1", "Q2"], "mutual": "80 K/W"}]}


def test_thermal_section_round_trips_with_its_hash(tmp_path):
    from kit.analysis.thermal import Heatsink, ThermalNetwork

    record = parse_record(_thermal(BOTH))
    assert record.thermal == ThermalNetwork(mutual={("Q1", "Q2"): 80.0},
                                            heatsinks=(Heatsink("clip", 40.0, {"Q2": 60.0}),))
    # the heatsink sets Q2's own path to the air: junction to sink + sink to air
    assert record.design.devices["Q2"].values["theta_ja"] == 100.0
    path = tmp_path / "dual.toml"
    save_record(record, path)
    again = load_record(path)
    assert again == record and again.content_hash() == record.content_hash() and again.thermal == record.thermal
    # written from the design and its network: the same design and network
    built = Record.from_design(record.design, thermal=record.thermal)
    assert built.design == record.design and built.thermal == record.thermal
    # the network is part of the meaning: dropping it changes the hash; no section, no key
    plain = parse_record(text_of(MIRROR))
    assert plain.thermal is None and "thermal" not in plain.to_dict()
    assert parse_record(_thermal(COUPLED)).content_hash() != plain.content_hash()


@pytest.mark.parametrize("thermal, devices, parameter, valid", [
    ({"coupled": [{"parts": ["Q1", "Q2"], "mutual": "-5 K/W"}]}, None, "thermal.coupled[0].mutual", "0 … 2000 K/W"),
    ({"coupled": [{"parts": ["Q1", "Q2"], "mutual": "nan"}]}, None, "thermal.coupled[0].mutual", "0 … 2000 K/W"),
    ({"coupled": [{"parts": ["Q1", "Q9"], "mutual": "5 K/W"}]}, None, "thermal.coupled[0].parts[1]", "Q1, Q2"),
    ({"coupled": [{"parts": ["Q1", "Q2"], "mutual": "300 K/W"}]}, None, "thermal.coupled[0].mutual",
     "0 … 250 K/W"),
    ({"coupled": [{"parts": ["Q1"], "mutual": "5 K/W"}]}, None, "thermal.coupled[0].parts", "Q1, Q2"),
    ({"coupled": [{"parts": ["Q1", "Q1"], "mutual": "5 K/W"}]}, None, "thermal.coupled[0].parts", "each part once"),
    ({"coupled": [{"parts": ["Q1", "Q2"], "mutual": 5}, {"parts": ["Q2", "Q1"], "mutual": 6}]}, None,
     "thermal.coupled[1].parts", "each pair of parts in one group"),
    ({"coupled": [{"parts": ["Q1", "Q2"]}]}, None, "thermal.coupled[0].mutual", '"60 K/W"'),
    ({"coupled": {"parts": ["Q1", "Q2"], "mutual": 5}}, None, "thermal.coupled", "[[thermal.coupled]]"),
    ({"heatsinks": {"a": {"sink_to_air": 5, "junction_to_sink": {"Q1": 2}},
                    "b": {"sink_to_air": 5, "junction_to_sink": {"Q1": 2}}}}, None,
     "thermal.heatsinks.b.junction_to_sink.Q1", "each part on one heatsink"),
    ({"heatsinks": {"a": {"sink_to_air": -1, "junction_to_sink": {"Q1": 2}}}}, None,
     "thermal.heatsinks.a.sink_to_air", "0 … 2000 K/W"),
    ({"heatsinks": {"a": {"junction_to_sink": {"Q1": 2}}}}, None, "thermal.heatsinks.a.sink_to_air", "K/W"),
    ({"heatsinks": {"a": {"sink_to_air": 5, "junction_to_sink": {}}}}, None, "thermal.heatsinks.a.junction_to_sink",
     "Q1, Q2"),
    ({"heatsinks": {"<b>a</b>": {"sink_to_air": 5, "junction_to_sink": {"Q1": 2}}}}, None,
     'thermal.heatsinks."<b>a</b>"', "a letter"),
    ({"heatsinks": {"a": {"sink_to_air": 5, "junction_to_sink": {"Q1": 2}}}}, {"Q1": {"theta_ja": "250 K/W"}},
     "thermal.heatsinks.a.junction_to_sink.Q1", "give 7 K/W"),
    (SINK | {"coupled": [{"parts": ["Q1", "Q2"], "mutual": "150 K/W"}]}, None, "thermal.coupled[0].mutual",
     "0 … 100 K/W"),
    ({"spread": 1}, None, "thermal.spread", "coupled, heatsinks"),
])
def test_bad_thermal_entry_names_its_field_and_range(thermal, devices, parameter, valid):
    err = error_of(_thermal(thermal, devices))
    assert err.parameter == parameter
    assert valid in (err.valid or "")


def test_thermal_text_is_never_markup_in_outputs():
    # a heatsink name is a plain word: markup cannot get in at all (refused above); what is
    # printed about the network is built from part names and numbers
    record = parse_record(_thermal(BOTH))
    said = record.thermal.describe()
    assert said == ("Q1 and Q2 coupled by 80 K/W (one die or package); heatsink clip (40 K/W to the air) "
                    "under Q2 (60 K/W junction to sink); parts not named here each in their own package")
    assert "<" not in said and "&" not in said


def test_evaluate_uses_the_records_network():
    # one package (mutual 150 K/W): Q2's heat warms Q1 too, the mirror stays matched; apart they run away
    text = _thermal(COUPLED).replace('"2 mA"', '"5 mA"')
    record = parse_record(text)
    coupled = kit.evaluate(record.design, network=record.thermal)
    apart = kit.evaluate(record.design)
    assert coupled.thermal_network == record.thermal
    assert coupled.compliance.high.voltage > apart.compliance.high.voltage
    assert apart.compliance.high.cause == "thermal_runaway"
