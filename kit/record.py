"""Design records: one design point in a small, versioned TOML file.

A record holds what a design review needs to reproduce an evaluation: the
topology and polarity, every value, the conditions, optional resistor TCRs,
hand-analysis values and transistor overrides, and who wrote which revision.
The format is described field by field in ``docs/record-format.md``.

Reading never evaluates anything: numbers are TOML numbers, text goes
through :func:`kit.quantities.parse_quantity` only.  Every problem raises
:class:`kit.errors.RecordError` whose ``parameter`` is the dotted record
field (``"values.r1"``, ``"devices.Q1.beta_f"``) or ``"file"`` for the file
as a whole.

Examples
--------
>>> record = parse_record('''
... biasbook_record = 2
... title = "Doc example"
... [circuit]
... topology = "divider_source"
... polarity = "npn"
... [values]
... r1 = "33k"
... r2 = "10k"
... r_e = "2k2"
... v_supply = "12 V"
... v_load = "8 V"
... ''')
>>> record.design.values["r_e"]
2200.0
>>> parse_record(record.to_toml()).content_hash() == record.content_hash()
True
"""

from __future__ import annotations

import copy
import hashlib
import json
import math
import os
import re
import tempfile
import stat
import tomllib
import unicodedata
from pathlib import Path

import tomli_w

from kit.errors import ParameterError, RecordError
from kit.model.structure import structure
from kit.model.vocabulary import DEFAULT_TEMPERATURE, vocabulary
from kit.record_scan import first_excess

__all__ = ["Record", "load_record", "parse_record", "save_record", "field_path", "json_ready",
           "SCHEMA_VERSION", "MAX_RECORD_BYTES", "MAX_RECORD_DEPTH", "MAX_RECORD_KEYS",
           "MAX_RECORD_TOKENS", "EDGES"]

SCHEMA_VERSION = 2
READABLE_VERSIONS = (1, 2)  # format 1 is migrated on reading (see _migrate_1)
MAX_RECORD_BYTES = 1024 * 1024  # a record is a page of text; anything larger is a mistake
# Bounds on the shape of the text, checked before the TOML parser runs (see
# kit.record_scan).  The examples need at most 5 levels (a spec's matched groups are
# lists in a list), 39 key names and 202 tokens.  Within the bounds the parser's time grows with the byte count only
# (well under a second for 1 MiB of string escapes, its slowest input).
MAX_RECORD_DEPTH = 16
MAX_RECORD_KEYS = 1000
MAX_RECORD_TOKENS = 10_000
EDGES = ("vce_sat", "vcb_zero")
FILE = "file"  # the `parameter` of errors about the file as a whole

# Free-text header fields: name -> (required, longest length, may span lines).
TEXT_FIELDS = {
    "title": (True, 200, False),
    "revision": (False, 40, False),
    "author": (False, 200, False),
    "notes": (False, 20_000, True),
}
HEADER_KEYS = ("biasbook_record", *TEXT_FIELDS)

_PLAIN_KEY = re.compile(r"[A-Za-z0-9_-]+")
_SYNTAX_WHERE = re.compile(r"\s*\(at (line \d+, column \d+|end of document)\)\s*$")
_BIDI_CONTROLS = frozenset("\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069")
_SHOWN_TEXT = 80  # longest offending text quoted back in an error
# Longest quantity text read: "1.234567 kΩ" needs a dozen characters, and the
# parser's time grows faster than linearly with length (seconds at 2000).
LONGEST_QUANTITY_TEXT = 64


# --- small helpers ------------------------------------------------------------

def _key(key):
    """A key as TOML would need to write it, so odd keys cannot garble a message."""
    return key if _PLAIN_KEY.fullmatch(key) else json.dumps(key)


def _shown(value):
    """The offending value, shortened: errors are printed, and files can be large."""
    if isinstance(value, str) and len(value) > _SHOWN_TEXT:
        return value[:_SHOWN_TEXT - 1] + "…"
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) > 10**30:
        return f"an integer of {len(str(abs(value)))} digits"
    if isinstance(value, (dict, list)):
        return _kind(value)
    return value


def _kind(raw):
    kinds = ((bool, "true/false"), (dict, "a table"), (list, "an array"), (str, "text"),
             (int, "an integer"), (float, "a number"))
    for cls, name in kinds:
        if isinstance(raw, cls):
            return name
    return "a date or time"


def _fail(message, field, value=None, valid=None):
    return RecordError(message, parameter=field, value=_shown(value), valid=valid)


def _from_kit(err, field):
    """A kit ParameterError re-raised as a RecordError naming the record field."""
    return RecordError(err.message, parameter=field, value=_shown(err.value), valid=err.valid)


def _table(raw, field):
    if not isinstance(raw, dict):
        raise _fail(f"must be a table ([{field}]), not {_kind(raw)}", field, raw)
    return raw


def _only_keys(table, allowed, field):
    unknown = [k for k in table if k not in allowed]
    if unknown:
        key = unknown[0]
        what = "table" if isinstance(table[key], dict) else "key"
        where = f"in [{field}]" if field else "at the top level"
        raise _fail(f"unknown {what} {where}", f"{field}.{_key(key)}" if field else _key(key),
                    valid=", ".join(allowed))


def _text(raw, field, longest, multiline=False):
    if not isinstance(raw, str):
        raise _fail(f"must be text, not {_kind(raw)}", field, raw)
    allowed = "\n\t" if multiline else ""
    if any(_is_control(ch) and ch not in allowed for ch in raw):
        what = "tabs and line breaks only" if multiline else "one line, no control characters"
        raise _fail("contains control characters", field, raw, valid=what)
    if len(raw) > longest:
        raise _fail("too long", field, raw, valid=f"at most {longest} characters")
    return raw


def _is_control(ch):
    # C0, DEL and C1 (terminal escapes) and the bidirectional overrides, which
    # can make a printed title read differently from what the file says.
    return unicodedata.category(ch) == "Cc" or ch in _BIDI_CONTROLS


def _number(raw, field, unit, limits, hint="", *, allow_inf=False):
    """A TOML number or a quantity text as a float in SI units; nothing is evaluated.

    ``limits`` is the inclusive (low, high) range; the kit checks it again,
    but here the message can name the field and carry a ``hint``.
    """
    valid = _span(*limits, unit) + hint
    value = _finite_number(raw, field, unit, valid, allow_inf)
    if not (limits[0] <= value <= limits[1] or (allow_inf and math.isinf(value))):
        raise _fail("out of range", field, raw, valid)
    return value


def _finite_number(raw, field, unit, valid, allow_inf):
    if isinstance(raw, bool) or not isinstance(raw, (int, float, str)):
        raise _fail(f"expected a number or text with a unit, not {_kind(raw)}", field, raw, valid)
    if isinstance(raw, str):
        if len(raw) > LONGEST_QUANTITY_TEXT:
            raise _fail("too long for a quantity", field, raw,
                        f"at most {LONGEST_QUANTITY_TEXT} characters, e.g. \"4k7\" or \"12 V\"")
        try:
            return _parse_quantity(raw, unit, name=field, allow_inf=allow_inf)
        except ParameterError as err:  # err.valid lists the accepted spellings; add the range
            raise _fail(err.message, field, raw, f"{valid}, written as {err.valid}") from None
    if isinstance(raw, int):
        try:
            value = float(raw)
        except OverflowError:
            raise _fail("number too large", field, raw, valid) from None
    else:
        value = raw
    if math.isnan(value):
        raise _fail("not a number (nan)", field, raw, valid)
    if math.isinf(value) and not allow_inf:
        raise _fail("not finite", field, raw, valid)
    return value


def _parse_quantity(text, unit, **kwargs):
    from kit.quantities import parse_quantity

    return parse_quantity(text, unit, **kwargs)


def _span(low, high, unit):
    if unit == "%":  # the kit holds fractions; people read per cent
        return f"{100 * low:g} … {100 * high:g} % (a bare number is a fraction: 0.05 is 5 %)"
    return f"{low:g} … {high:g} {unit}".rstrip()


# --- sections -------------------------------------------------------------------
# Each reader takes the raw TOML table (or None when absent) and the circuit
# facts read so far, and returns the keyword arguments it adds to make_design.
# Every field is checked against the one parameter vocabulary
# (kit.model.vocabulary): the same units, ranges and names as everywhere else.

def _read_circuit(raw, context):
    from kit import topologies

    table = _table(raw, "circuit")
    _only_keys(table, ("topology", "polarity"), "circuit")
    for name in ("topology", "polarity"):
        if name not in table:
            raise _fail("missing", f"circuit.{name}", valid=_circuit_valid(name, table))
        _text(table[name], f"circuit.{name}", 100)
    try:
        top = topologies.get(table["topology"])
        top.check_polarity(table["polarity"])
    except ParameterError as err:
        raise _from_kit(err, f"circuit.{err.parameter}") from None
    context["topology"], context["polarity"] = top, table["polarity"]
    context["words"] = vocabulary(top, table["polarity"])
    return {"topology": top, "polarity": table["polarity"]}


def _circuit_valid(name, table):
    from kit import topologies

    if name == "topology":
        return ", ".join(t.key for t in topologies.all_topologies())
    try:
        return " or ".join(topologies.get(table.get("topology")).polarities)
    except ParameterError:
        return "the topology's polarity words (npn or pnp, nmos or pmos)"


def _entry_number(raw, e, hint=""):
    return _number(raw, e.field, e.unit, (e.low, e.high), hint, allow_inf=e.allow_inf)


def _read_values(raw, context):
    top, words = context["topology"], context["words"]
    table = _table(raw, "values")
    _only_keys(table, top.value_names, "values")
    missing = [v for v in top.values if v.name not in table]
    if missing:  # all of them at once: a new record often lacks several
        first = missing[0]
        also = "".join(f", {v.name}" for v in missing[1:])
        raise _fail(f"missing{f' (and{also[1:]})' if also else ''}; a record gives every value "
                    f"of {top.key} (`biasbook topologies` lists them)", f"values.{first.name}",
                    valid=first.valid)
    values = {v.name: _entry_number(table[v.name], words[v.name]) for v in top.values}
    context["values"] = values
    return {"values": values}


def _read_conditions(raw, context):
    words = context["words"]
    table = _table({} if raw is None else raw, "conditions")
    _only_keys(table, ("temp", "t_ref", "edge"), "conditions")
    out = {}
    hint = ' (a bare number is kelvin; write "25 degC" for Celsius)'
    for name in ("temp", "t_ref"):
        out[name] = _entry_number(table[name], words[name], hint) if name in table else DEFAULT_TEMPERATURE
    edge = table.get("edge", EDGES[0])
    _text(edge, "conditions.edge", 40)
    if edge not in EDGES:
        raise _fail("unknown saturation criterion", "conditions.edge", edge, " or ".join(EDGES))
    context["edge"] = edge
    context["t_ref"] = out["t_ref"]
    return out


def _read_resistor_table(raw, context, table_name, prefix, hint):
    if raw is None:
        return {}
    top, words = context["topology"], context["words"]
    table = _table(raw, table_name)
    _only_keys(table, top.resistors, table_name)
    return {table_name: {name: _entry_number(value, words[f"{prefix}{name}"], hint)
                         for name, value in table.items()}}


def _read_tcr(raw, context):
    return _read_resistor_table(raw, context, "tcr", "tcr_", ' (a bare number is per kelvin; write "100 ppm/K")')


def _read_ratings(raw, context):
    return _read_resistor_table(raw, context, "ratings", "p_rated_", ' (watts, e.g. "0.25 W")')


def _read_hand(raw, context):
    if raw is None:
        return {}
    words = context["words"]
    names = [n for n, e in words.items() if e.group == "hand"]
    table = _table(raw, "hand")
    _only_keys(table, names, "hand")
    return {"hand": {name: _entry_number(value, words[name]) for name, value in table.items()}}


DEVICE_TEXT_KEYS = ("label",)
T_RISE_KEY = "t_rise"  # the design's junction rise of one part, kept beside its model
_CELSIUS_TEXT = re.compile(r"deg\s?C|°\s?C|℃")


def _read_devices(raw, context):
    from kit.model.design import typical_device

    if raw is None:
        return {}
    words = context["words"]
    s = structure(context["topology"], context["polarity"])
    table = _table(raw, "devices")
    _only_keys(table, s.device_names, "devices")
    models, rises = {}, {}
    for name, overrides in table.items():
        where = f"devices.{name}"
        part = s.part(name)
        _table(overrides, where)
        if "polarity" in overrides:
            raise _fail("set by circuit.polarity, not per part", f"{where}.polarity",
                        overrides["polarity"], "leave it out")
        _only_keys(overrides, (*(p.name for p in part.kind.params), *DEVICE_TEXT_KEYS, T_RISE_KEY,
                               *PART_DATA_KEYS), where)
        changes = {}
        base = _part_data(overrides, part, context, where)
        for key, value in overrides.items():
            field = f"{where}.{key}"
            if key in PART_DATA_KEYS:
                continue
            if key in DEVICE_TEXT_KEYS:
                changes[key] = _text(value, field, 200)
            elif key == T_RISE_KEY:
                e = words[f"{name}.t_rise"]
                if isinstance(value, str) and _CELSIUS_TEXT.search(value):
                    raise _fail("a temperature rise is a difference: give it in kelvin", field,
                                value, e.valid + ' (write "12 K")')
                rises[name] = _entry_number(value, e)
            else:
                changes[key] = _entry_number(value, words[f"{name}.{key}"])
        try:
            models[name] = (base or typical_device(part)).with_values(**changes)
        except ParameterError as err:
            raise _from_kit(err, f"{where}.{err.parameter}") from None
    context["devices"] = models
    context["written_theta"] = {name: "theta_ja" in overrides for name, overrides in table.items()}
    return {"devices": models, "t_rise": rises}


# --- [thermal]: how the parts share their heat (kit.analysis.thermal.ThermalNetwork) ----------
THERMAL_KEYS = ("coupled", "heatsinks")
COUPLED_KEYS = ("parts", "mutual")
HEATSINK_KEYS = ("sink_to_air", "junction_to_sink")
THERMAL_RESISTANCE = ("K/W", (0.0, 2000.0))  # the kit's range of a thermal resistance
MAX_THERMAL_GROUPS = 64  # a record couples a handful of parts
_SINK_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_-]{0,39}")
_SAME_THETA = 1e-9  # relative: a written theta_ja equal to a heatsink's path


def _thermal_number(raw, field):
    unit, limits = THERMAL_RESISTANCE
    return _number(raw, field, unit, limits, " (a thermal resistance, e.g. \"60 K/W\")")


def _read_thermal(raw, context):
    """The optional [thermal] section: parts coupled on one die or package, shared heatsinks.

    Returns the devices with each heatsink member's ``theta_ja`` set to its
    path to the air (junction to sink plus sink to air: what the part's own
    power rating is derated with); the network goes to ``context["thermal"]``.
    """
    from kit.analysis.thermal import Heatsink, ThermalNetwork
    from kit.model.design import typical_device

    context["thermal"] = None
    if raw is None:
        return {}
    table = _table(raw, "thermal")
    _only_keys(table, THERMAL_KEYS, "thermal")
    s = structure(context["topology"], context["polarity"])
    heated = [p.name for p in s.devices if "theta_ja" in p.params]
    models = dict(context.get("devices", {}))
    written = context.get("written_theta", {})

    def part_name(raw_name, field):
        if not isinstance(raw_name, str) or raw_name not in heated:
            raise _fail("names no part with a thermal resistance in this circuit", field, raw_name,
                        ", ".join(heated) or "none in this circuit")
        return raw_name

    heatsinks, sunk = [], {}
    sinks = _table(table.get("heatsinks", {}), "thermal.heatsinks")
    if len(sinks) > MAX_THERMAL_GROUPS:
        raise _fail("too many heatsinks", "thermal.heatsinks", valid=f"at most {MAX_THERMAL_GROUPS}")
    for name, sink in sinks.items():
        where = f"thermal.heatsinks.{_key(name)}"
        if not _SINK_NAME.fullmatch(name):
            raise _fail("a heatsink's name is a plain word", where, name,
                        "a letter, then up to 39 letters, digits, _ or -")
        _table(sink, where)
        _only_keys(sink, HEATSINK_KEYS, where)
        for key in HEATSINK_KEYS:
            if key not in sink:
                raise _fail("missing; a heatsink states its path to the air and each part's path to it",
                            f"{where}.{key}", valid="a thermal resistance (K/W)" if key == "sink_to_air"
                            else "a table: part name = junction-to-sink resistance")
        to_air = _thermal_number(sink["sink_to_air"], f"{where}.sink_to_air")
        members = _table(sink["junction_to_sink"], f"{where}.junction_to_sink")
        if not members:
            raise _fail("names no part", f"{where}.junction_to_sink", valid="one or more of " + ", ".join(heated))
        paths = {}
        for part, value in members.items():
            field = f"{where}.junction_to_sink.{_key(part)}"
            part_name(part, field)
            if part in sunk:
                raise _fail(f"a part sits on one heatsink only; {part} is on {sunk[part]} already", field,
                            valid="each part on one heatsink")
            sunk[part] = name
            paths[part] = _thermal_number(value, field)
            models[part] = _sunk_model(models.get(part) or typical_device(s.part(part)), part,
                                       paths[part] + to_air, written.get(part, False), field)
        heatsinks.append(Heatsink(name, to_air, paths))
    groups = table.get("coupled", [])
    if not isinstance(groups, list) or not all(isinstance(g, dict) for g in groups):
        raise _fail("must be a list of tables ([[thermal.coupled]])", "thermal.coupled", groups,
                    'e.g. [[thermal.coupled]] parts = ["Q1", "Q2"], mutual = "60 K/W"')
    if len(groups) > MAX_THERMAL_GROUPS:
        raise _fail("too many coupled groups", "thermal.coupled", valid=f"at most {MAX_THERMAL_GROUPS}")
    own = {p: models[p].values["theta_ja"] if p in models else typical_device(s.part(p)).values["theta_ja"]
           for p in heated}
    mutual, paired = {}, {}
    for k, group in enumerate(groups):
        where = f"thermal.coupled[{k}]"
        _only_keys(group, COUPLED_KEYS, where)
        for key in COUPLED_KEYS:
            if key not in group:
                raise _fail("missing; a coupled group names its parts and their mutual thermal resistance",
                            f"{where}.{key}", valid='parts = ["Q1", "Q2"]' if key == "parts" else "e.g. \"60 K/W\"")
        parts = group["parts"]
        if not isinstance(parts, list) or len(parts) < 2:
            raise _fail("must list two or more parts", f"{where}.parts", parts, ", ".join(heated))
        names = [part_name(p, f"{where}.parts[{i}]") for i, p in enumerate(parts)]
        if len(set(names)) != len(names):
            raise _fail("names a part twice", f"{where}.parts", ", ".join(names), "each part once")
        value = _thermal_number(group["mutual"], f"{where}.mutual")
        smallest = min(names, key=lambda n: own[n])
        if value > own[smallest]:
            raise _fail(f"a junction cannot warm another more than its own package warms it ({smallest}'s own "
                        f"θ is {own[smallest]:.4g} K/W)", f"{where}.mutual", group["mutual"],
                        f"0 … {own[smallest]:.4g} K/W")
        for i, a in enumerate(names):
            for b in names[i + 1:]:
                pair = tuple(sorted((a, b)))
                if pair in paired:
                    raise _fail(f"{a} and {b} are coupled in {paired[pair]} already", f"{where}.parts",
                                ", ".join(names), "each pair of parts in one group")
                paired[pair] = where
                mutual[(a, b)] = value
    network = ThermalNetwork(mutual=mutual, heatsinks=tuple(heatsinks))
    try:
        network.matrix(heated, own)
    except ParameterError as err:
        raise _from_kit(err, f"thermal.{err.parameter}") from None
    context["thermal"] = network
    return {"devices": models} if heatsinks else {}


def _sunk_model(model, part, path, written, field):
    """``model`` with ``theta_ja`` the heatsink's path; a different one written in [devices] is refused."""
    stated = model.values["theta_ja"]
    if written and abs(stated - path) > _SAME_THETA * path:
        raise _fail(f"on its heatsink {part}'s path to the air is {path:.6g} K/W (junction to sink plus sink "
                    f"to air), but devices.{part}.theta_ja says {stated:.6g} K/W", field,
                    valid=f"leave devices.{part}.theta_ja out or give {path:.6g} K/W")
    try:
        return model.with_values(theta_ja=path)
    except ParameterError as err:
        raise _from_kit(err, field) from None


# --- part classes and datasheet entries (kit.devices.part_classes, kit.devices.datasheet)
PART_DATA_KEYS = ("class", "datasheet")


def _part_data(overrides, part, context, where):
    """The model a part's ``class`` and ``datasheet`` make (None without either); keeps its spreads.

    The class's entry comes first, the record's datasheet entries over it key
    by key, and the part's direct parameters over the result (the caller).
    """
    from kit.devices import part_classes

    if not any(k in overrides for k in PART_DATA_KEYS):
        return None
    chosen = None
    if "class" in overrides:
        field = f"{where}.class"
        if not isinstance(overrides["class"], str):
            raise _fail(f"must be text, not {_kind(overrides['class'])}", field, overrides["class"],
                        "a class name (`biasbook parts` lists them)")
        _text(overrides["class"], field, 100)
        try:
            chosen = part_classes.get(overrides["class"])
        except ParameterError as err:
            raise _from_kit(err, field) from None
        if chosen.kind != part.kind.key or part.kind.sense_of(chosen.polarity) != part.sense:
            fitting = part_classes.classes_for(part.kind.key, part.polarity)
            raise _fail(f"a {chosen.polarity} class cannot be {part.name}, a {part.polarity} "
                        f"{part.kind.title}", field, overrides["class"],
                        ", ".join(c.key for c in fitting) or "no class of this kind yet")
    sheet = _read_datasheet(overrides.get("datasheet"), part, f"{where}.datasheet")
    rails = _rails(context, part)
    convert = _converter(chosen, sheet, part, context, rails)
    try:
        converted = convert(None)
    except ParameterError as err:
        raise _from_kit(err, f"{where}.datasheet.{err.parameter}") from None
    context.setdefault("part_data", {})[part.name] = (convert, f"{where}.datasheet",
                                                      dict(chosen.matching) if chosen else {})
    return converted.model


def _converter(chosen, sheet, part, context, rails):
    from kit.devices import datasheet
    from kit.model.design import typical_device

    def convert(supply_range):
        if chosen is not None:
            return chosen.convert(sheet, t_ref=context["t_ref"], rails=rails, supply_range=supply_range,
                                  base=typical_device(part))
        return datasheet.from_datasheet(part.kind, part.sense, sheet, base=typical_device(part),
                                        t_ref=context["t_ref"], rails=rails, supply_range=supply_range,
                                        label=typical_device(part).label + "; datasheet entry of the record")
    return convert


def _rails(context, part):
    """An op-amp's supply rails: 0 V and v_supply, or ±v_supply where the topology's op-amp swings below 0 V."""
    from kit.model.design import typical_device

    supply = context.get("values", {}).get("v_supply")
    if part.kind.key != "opamp" or supply is None:
        return None
    return (-supply, supply) if typical_device(part).v_ol < 0 else (0.0, supply)


def _read_datasheet(raw, part, where):
    """A part's ``datasheet`` table: entries of kit.devices.datasheet.ENTRIES, units read like any number."""
    from kit.devices.datasheet import ENTRIES

    if raw is None:
        return {}
    known = ENTRIES.get(part.kind.key)
    if known is None:
        raise _fail(f"no datasheet entry for a {part.kind.title}", where,
                    valid="a datasheet table for " + ", ".join(ENTRIES) + " parts")
    table = _table(raw, where)
    _only_keys(table, tuple(known), where)
    sheet = {}
    for name, value in table.items():
        entry, field = known[name], f"{where}.{name}"
        if entry.scalar and not isinstance(value, dict):
            value = {"value": value}
        value = _table(value, field)
        _only_keys(value, tuple(entry.keys), field)
        sheet[name] = {key: _number(number, f"{field}.{key}", entry.keys[key][0], entry.keys[key][1:])
                       for key, number in value.items()}
    return sheet


SPEC_PAIRS = {"v_load": "V", "v_supply": "V", "temp": "K"}
SPEC_SCALARS = {"current": ("A", (1e-12, 100.0)), "tolerance": ("%", (0.0, 0.5)),
                "resistor_tolerance": ("%", (0.0, 0.5)), "resistor_tcr": ("1/K", (0.0, 5e-3)),
                "p_max": ("W", (1e-9, 1e4)), "mismatch_beta": ("%", (0.0, 0.5)),
                "mismatch_vbe": ("V", (0.0, 0.1)), "mismatch_vth": ("V", (0.0, 1.0)),
                "mismatch_k": ("%", (0.0, 0.5)), "a_vth": ("", (0.0, 1e-6)), "a_k": ("", (0.0, 1e-6))}
SPEC_OLD_NAMES = {"mismatch": "mismatch_beta"}  # format-2 records written before the mismatch fields
SPEC_TABLES = ("beta", "tolerances", "tcrs", "bounds")
SPEC_OTHER = ("beta_distribution", "samples", "seed", "matched", "gate_area")


def _pair_of(raw, field, unit, limits):
    if not isinstance(raw, list) or len(raw) != 2:
        raise _fail("must be a pair [low, high]", field, raw, _span(*limits, unit))
    low, high = (_number(v, f"{field}[{k}]", unit, limits) for k, v in enumerate(raw))
    if low > high:
        raise _fail("low end above high end", field, f"[{low:g}, {high:g}] {unit}".rstrip(),
                    "low <= high")
    return (low, high)


def _read_spec(raw, context):
    """The optional [spec] section: what the current must do (see kit.analysis.spec.Spec)."""
    if raw is None:
        context["spec"] = None
        return {}
    words = context["words"]
    table = _table(raw, "spec")
    _only_keys(table, (*SPEC_SCALARS, *SPEC_OLD_NAMES, *SPEC_PAIRS, *SPEC_TABLES, *SPEC_OTHER), "spec")
    for old, new in SPEC_OLD_NAMES.items():
        if old in table:
            if new in table:
                raise _fail(f"give {new} only ({old} is its older name)", f"spec.{old}", table[old])
            table = dict(table) | {new: table[old]}
    for name in ("current", "tolerance"):
        if name not in table:
            raise _fail("missing; a spec states the current and its tolerance", f"spec.{name}")
    args = {}
    for name, (unit, limits) in SPEC_SCALARS.items():
        if name in table:
            args["i_target" if name == "current" else name] = _number(table[name], f"spec.{name}", unit, limits)
    for name, unit in SPEC_PAIRS.items():
        if name in table:
            e = words[name]
            args[name] = _pair_of(table[name], f"spec.{name}", unit, (e.low, e.high))
    top = context["topology"]
    if "beta" in table:
        beta = _table(table["beta"], "spec.beta")
        args["beta"] = {k: _pair_of(v, f"spec.beta.{_key(k)}", "", (1.0, 1e5)) for k, v in beta.items()}
    for name, unit, limits in (("tolerances", "%", (0.0, 0.5)), ("tcrs", "1/K", (0.0, 5e-3))):
        if name in table:
            entries = _table(table[name], f"spec.{name}")
            _only_keys(entries, top.resistors, f"spec.{name}")
            args[name] = {k: _number(v, f"spec.{name}.{k}", unit, limits) for k, v in entries.items()}
    if "bounds" in table:
        entries = _table(table["bounds"], "spec.bounds")
        bounds = {}
        for key, value in entries.items():
            field = f"spec.bounds.{_key(key)}"
            if key not in words:
                raise _fail("names no parameter of this design", field,
                            valid="a flat parameter name: " + ", ".join(words))
            e = words[key]
            bounds[key] = _pair_of(value, field, e.unit, (e.low, e.high))
        args["bounds"] = bounds
    if "beta_distribution" in table:
        args["beta_distribution"] = _text(table["beta_distribution"], "spec.beta_distribution", 20)
    for name in ("samples", "seed"):
        if name in table:
            if isinstance(table[name], bool) or not isinstance(table[name], (int, float)):
                raise _fail("must be a whole number", f"spec.{name}", table[name])  # 1e5 is one; Spec checks
            args[name] = table[name]
    if "matched" in table:
        groups = table["matched"]
        if not isinstance(groups, list) or not all(isinstance(g, list) and all(isinstance(n, str) for n in g)
                                                    for g in groups):
            raise _fail("must be a list of lists of transistor names", "spec.matched", groups,
                        'e.g. [["Q1", "Q2"]]')
        args["matched"] = tuple(tuple(g) for g in groups)
    if "gate_area" in table:
        area, limits = table["gate_area"], (1e-15, 1e-3)
        if isinstance(area, dict):
            args["gate_area"] = {k: _number(v, f"spec.gate_area.{_key(k)}", "", limits) for k, v in area.items()}
        else:
            args["gate_area"] = _number(area, "spec.gate_area", "", limits)
    context["spec"] = args
    return {}


def _make_spec(args, design, part_data=None):
    """Build and check the Spec against the design (names must exist); errors name spec fields.

    The stated spreads of parts given by class or datasheet (h_FE min/max,
    V_GS(th) min/max, a zener's tolerance, an op-amp's offset) fill the
    ranges the spec does not give itself; ``Record.spec_from_parts`` says which.
    """
    from kit.analysis.spec import Spec, factors

    if args is None:
        return None, ()
    try:
        added = ()
        if part_data:
            args, added = _with_part_ranges(args, design, part_data)
        spec = Spec(**args)
        factors(spec, design)
    except ParameterError as err:
        name = {"i_target": "current"}.get(err.parameter, err.parameter)
        raise _from_kit(err, f"spec.{name}") from None
    return spec, added


def _with_part_ranges(args, design, part_data):
    """``args`` with the parts' stated spreads where the spec gives none, and what was added.

    A gain range given for the part or its polarity, or a bound on the
    parameter (on any member of its matched group), is the user's and wins.
    """
    from kit.analysis import mismatch
    from kit.analysis.spec import Spec

    groups = mismatch.groups(Spec(**args), design)
    members = {m: g.members for g in groups for m in g.members}
    beta, bounds = dict(args.get("beta", {})), dict(args.get("bounds", {}))
    added = []
    for part, (convert, where, _) in part_data.items():
        try:
            converted = convert(args.get("v_supply"))
        except ParameterError as err:
            raise _from_kit(err, f"{where}.{err.parameter}") from None
        for param, (low, high) in converted.ranges.items():
            if param == "beta_f":
                if part in beta or design.devices[part].polarity in beta:
                    continue
                beta[part], what = (low, high), f"spec.beta.{part}"
            else:
                if any(f"{m}.{param}" in bounds for m in members.get(part, (part,))):
                    continue
                bounds[f"{part}.{param}"], what = (low, high), f"spec.bounds.{part}.{param}"
            added.append(f"{what} = [{low:.6g}, {high:.6g}] from {where.rsplit('.', 1)[0]}")
    matching = _class_matching(args, groups, part_data)
    added += [f"spec.{k} = {v:.6g} from the class of {', '.join(g)}" for k, (v, g) in matching.items()]
    return args | {"beta": beta, "bounds": bounds} | {k: v for k, (v, _) in matching.items()}, tuple(added)


def _class_matching(args, groups, part_data):
    """Mismatch bounds of matched-pair classes for the spec fields it leaves at zero.

    Only where every member of every matched group of that kind names a class
    stating them (a spec's mismatch applies to all groups of a kind); the
    largest stated bound is taken.
    """
    out = {}
    for kind in ("bjt", "mos"):
        of_kind = [g for g in groups if g.kind == kind]
        if not of_kind:
            continue
        stated = [part_data.get(m, (None, None, {}))[2] for g in of_kind for m in g.members]
        for key in sorted({k for entry in stated for k in entry}):
            if args.get(key) or not all(key in entry for entry in stated):
                continue
            out[key] = (max(entry[key] for entry in stated), tuple(m for g in of_kind for m in g.members))
    return out


SECTIONS = {
    "circuit": (_read_circuit, True),
    "values": (_read_values, True),
    "conditions": (_read_conditions, False),
    "tcr": (_read_tcr, False),
    "ratings": (_read_ratings, False),
    "hand": (_read_hand, False),
    "devices": (_read_devices, False),
    "thermal": (_read_thermal, False),
    "spec": (_read_spec, False),
}


def field_path(parameter, topology, polarity=None):
    """The record field of a kit parameter name (``"r1"`` -> ``"values.r1"``).

    Parameters
    ----------
    parameter : str or None
        A flat parameter name as kit errors report it.
    topology : kit.topologies.base.Topology
    polarity : str, optional
        Default: the topology's first.

    Examples
    --------
    >>> from kit import topologies
    >>> top = topologies.get("divider_source")
    >>> [field_path(p, top) for p in ("v_load", "temp", "tcr_r_e", "Q1.beta_f", "v_be_on")]
    ['values.v_load', 'conditions.temp', 'tcr.r_e', 'devices.Q1.beta_f', 'hand.v_be_on']
    """
    if parameter is None:
        return None
    if parameter in ("topology", "polarity"):
        return f"circuit.{parameter}"
    words = vocabulary(topology, polarity or topology.polarities[0])
    if parameter in words:
        return words[parameter].field
    head = parameter.split(".")[0]
    if any(e.part == head for e in words.values()):
        return f"devices.{parameter}"
    return parameter


# --- the record -------------------------------------------------------------------

class Record:
    """A validated design record (read with :func:`load_record` or :func:`parse_record`).

    Parameters
    ----------
    document : dict
        The record as TOML data (what :func:`tomllib.loads` returns).
    source : str
        Where it came from, for messages only (not part of the record).

    Attributes
    ----------
    design : kit.model.design.Design
        The design point, values in SI units.
    edge : str
        Saturation criterion for evaluation (``conditions.edge``).
    title, revision, author, notes : str
        Header text (``""`` when absent).
    thermal : kit.analysis.thermal.ThermalNetwork or None
        How the parts share heat (``[thermal]``); None: each part in its own
        package.  Pass it to :func:`kit.evaluate` and ``worst_case`` as ``network``.
    spec_from_parts : tuple of str
        The spec ranges filled from parts given by class or datasheet
        (``"spec.beta.Q1 = [114.286, 342.857] from devices.Q1"``).

    Examples
    --------
    >>> import kit
    >>> d = kit.design("divider_source", r_e="1k8", title="Bench check")
    >>> record = Record.from_design(d, revision="B")
    >>> record.design == d, record.revision
    (True, 'B')
    """

    def __init__(self, document, source="<string>"):
        self._document = copy.deepcopy(_table(document, FILE))
        self.source = str(source)
        self._read()

    # Equal records mean the same design, however they are spelled.
    def __eq__(self, other):
        return isinstance(other, Record) and self.to_dict() == other.to_dict()

    __hash__ = None

    def __repr__(self):
        return f"Record({self.title!r}, source={self.source!r}, sha256={self.content_hash()[:12]})"

    def _read(self):
        from kit.model.design import make_design

        self.migrated = ()
        if _check_version(self._document) == 1:
            self._document, self.migrated = _migrate_1(self._document)
        doc = self._document
        _only_keys(doc, (*HEADER_KEYS, *SECTIONS), "")
        header = {}
        for name, (required, longest, multiline) in TEXT_FIELDS.items():
            if name not in doc and required:
                raise _fail("missing; every record has one", name, valid="one line of text")
            header[name] = _text(doc.get(name, ""), name, longest, multiline)
            if required and not header[name].strip():
                raise _fail("must not be empty", name, valid="one line of text")
        context = {}
        arguments = {}
        for name, (reader, required) in SECTIONS.items():
            if required and name not in doc:
                raise _fail(f"missing section [{name}]", name)
            arguments |= reader(doc.get(name), context)
        values = arguments.pop("values")
        try:
            design = make_design(**arguments, title=header["title"], **values)
        except ParameterError as err:  # ranges and cross-checks the readers leave to the kit
            raise _from_kit(err, field_path(err.parameter, context["topology"], context["polarity"])) from None
        self.design = design
        self.thermal = context.get("thermal")
        self.spec, self.spec_from_parts = _make_spec(context.get("spec"), design, context.get("part_data"))
        self.edge = context["edge"]
        self.title, self.revision = header["title"], header["revision"]
        self.author, self.notes = header["author"], header["notes"]

    @classmethod
    def from_design(cls, design, *, edge="vce_sat", title=None, revision="", author="", notes="", thermal=None):
        """A record of a :class:`kit.model.design.Design` (values written as SI numbers).

        Part parameters equal to the part's typical model are left out, as a
        hand-written record would; ``hand``, ``tcr`` and ``ratings`` are
        written in full.

        Parameters
        ----------
        design : kit.model.design.Design
        edge : {"vce_sat", "vcb_zero"}
            Saturation criterion stored as ``conditions.edge``.
        title : str, optional
            Record title (default: the design's title, which must not be empty).
        revision, author, notes : str
            Optional header text.
        thermal : kit.analysis.thermal.ThermalNetwork, optional
            How the parts share heat, written as ``[thermal]`` (each mutual
            resistance as a coupled pair).
        """
        from kit.model.design import typical_device

        document = {"biasbook_record": SCHEMA_VERSION,
                    "title": design.title if title is None else title}
        document |= {k: v for k, v in (("revision", revision), ("author", author),
                                       ("notes", notes)) if v}
        document["circuit"] = {"topology": design.topology.key, "polarity": design.polarity}
        document["values"] = dict(design.values)
        document["conditions"] = {"temp": design.temp, "t_ref": design.t_ref, "edge": edge}
        for table in ("tcr", "ratings", "hand"):
            if getattr(design, table):
                document[table] = dict(getattr(design, table))
        devices = {}
        for part in design.structure.devices:
            model = design.devices[part.name]
            typical = typical_device(part)
            changed = {k: v for k, v in model.numbers().items() if typical.values[k] != v}
            if model.label != typical.label:
                changed["label"] = model.label
            if design.t_rise.get(part.name):
                changed[T_RISE_KEY] = design.t_rise[part.name]
            if changed:
                devices[part.name] = changed
        if devices:
            document["devices"] = devices
        if thermal is not None and (thermal.mutual or thermal.heatsinks):
            document["thermal"] = _thermal_document(thermal)
        return cls(document, source="<design>")

    # -- output ---------------------------------------------------------------
    def as_written(self):
        """A copy of the TOML data as read (text values keep their spelling)."""
        return copy.deepcopy(self._document)

    def to_dict(self):
        """The resolved record: SI floats, every default filled in.

        This is what :meth:`content_hash` hashes.  It may hold ``inf``
        (an Early voltage); pass it through :func:`json_ready` for JSON.
        """
        d = self.design
        return {
            "biasbook_record": SCHEMA_VERSION,
            "title": self.title, "revision": self.revision, "author": self.author,
            "notes": self.notes,
            "circuit": {"topology": d.topology.key, "polarity": d.polarity},
            "values": dict(d.values),
            "conditions": {"temp": d.temp, "t_ref": d.t_ref, "edge": self.edge},
            "tcr": {name: float(d.tcr.get(name, 0.0)) for name in d.topology.resistors},
            "ratings": {name: float(d.ratings.get(name, math.inf)) for name in d.topology.resistors},
            "hand": dict(d.hand),
            "devices": {name: m.numbers() | {"label": m.label,
                                             T_RISE_KEY: float(d.t_rise.get(name, 0.0))}
                        for name, m in d.devices.items()},
        } | ({"thermal": self.thermal.to_dict()} if self.thermal is not None else {}) \
          | ({"spec": self.spec.to_dict()} if self.spec is not None else {})

    def content_hash(self):
        """SHA-256 (hex) of the canonical JSON of :meth:`to_dict`.

        Key order, layout, comments and the spelling of numbers (``"4k7"``
        or ``4700``) do not change it; any change of meaning does.
        """
        return hashlib.sha256(canonical_json(self.to_dict()).encode("ascii")).hexdigest()

    def to_toml(self):
        """The record as TOML text (sections in schema order, text values as written)."""
        doc = self._document
        ordered = {k: doc[k] for k in HEADER_KEYS if k in doc}
        ordered |= {k: doc[k] for k in SECTIONS if k in doc}
        head = f"# biasbook design record, schema {SCHEMA_VERSION} (docs/record-format.md)\n"
        return head + tomli_w.dumps(ordered, multiline_strings=True)


def _thermal_document(network):
    """``[thermal]`` as TOML data from a ThermalNetwork."""
    out = {}
    if network.heatsinks:
        out["heatsinks"] = {h.name: {"sink_to_air": float(h.theta_sa),
                                     "junction_to_sink": {p: float(v) for p, v in h.theta_js.items()}}
                            for h in network.heatsinks}
    if network.mutual:
        out["coupled"] = [{"parts": list(pair), "mutual": float(value)} for pair, value in network.mutual.items()]
    return out


def _check_version(doc):
    """The record's schema version (refused before anything else if this biasbook cannot read it)."""
    field = "biasbook_record"
    valid = f"{SCHEMA_VERSION} (an integer; format {READABLE_VERSIONS[0]} is still read)"
    if field not in doc:
        raise _fail("not a biasbook record: the schema version is missing", field, valid=valid)
    version = doc[field]
    if isinstance(version, bool) or not isinstance(version, int):
        raise _fail(f"schema version must be an integer, not {_kind(version)}", field, version,
                    valid)
    if version > SCHEMA_VERSION:
        raise _fail(f"written for a newer schema than this biasbook reads ({SCHEMA_VERSION})",
                    field, version, valid)
    if version not in READABLE_VERSIONS:
        raise _fail("no such schema version", field, version, valid)
    return version


# Format 1 -> 2.  Format 1 named the temperature exponents of a transistor with
# abbreviations of our own no longer use, held the values of zeners, diodes and
# op-amps among the topology's values, and wrote MOSFET circuits as npn/pnp.
_RENAMED_DEVICE_KEYS = {"xti": "i_s_temp_exponent", "xtb": "beta_temp_exponent"}
# A diode's values in format 1: (kind of part, its parameter now).
_RENAMED_VALUES = {"i_sd": ("diode", "i_s"), "n_id": ("diode", "n"), "xti_d": ("diode", "i_s_temp_exponent"),
                   "e_g_d": ("diode", "e_g"), "n_diodes": ("diode", "count")}


def _migrate_1(doc):
    """A format-1 document in format 2, and what was changed (said with every report)."""
    from kit import topologies

    doc = copy.deepcopy(doc)
    notes = ["read as format 1 and migrated to format 2"]
    doc["biasbook_record"] = SCHEMA_VERSION
    circuit = doc.get("circuit")
    try:
        top = topologies.get(circuit["topology"])
    except (TypeError, KeyError, ParameterError):
        return doc, tuple(notes)  # the reader names what is wrong
    old_words = {"npn": top.polarities[0], "pnp": top.polarities[1] if len(top.polarities) > 1 else "pnp"}
    if circuit.get("polarity") in old_words and circuit["polarity"] not in top.polarities:
        notes.append(f"circuit.polarity {circuit['polarity']} -> {old_words[circuit['polarity']]}")
        circuit["polarity"] = old_words[circuit["polarity"]]
    polarity = circuit.get("polarity")
    if polarity not in top.polarities:
        return doc, tuple(notes)
    s = structure(top, polarity)
    for name, overrides in (doc.get("devices") or {}).items():
        if isinstance(overrides, dict):
            for old, new in _RENAMED_DEVICE_KEYS.items():
                if old in overrides:
                    overrides[new] = overrides.pop(old)
                    notes.append(f"devices.{name}.{old} -> devices.{name}.{new}")

    def part_parameter(name):
        kind, key = _RENAMED_VALUES.get(name, (None, name))
        owners = [p.name for p in s.devices if key in {q.name for q in p.kind.params}
                  and kind in (None, p.kind.key)]
        return f"{owners[0]}.{key}" if len(owners) == 1 else None

    values = doc.get("values")
    if isinstance(values, dict):
        for name in [n for n in values if n not in top.value_names]:
            target = part_parameter(name)
            if target:
                part, key = target.split(".")
                doc.setdefault("devices", {}).setdefault(part, {})[key] = values.pop(name)
                notes.append(f"values.{name} -> devices.{target}")
    bounds = (doc.get("spec") or {}).get("bounds")
    if isinstance(bounds, dict):
        for name in [n for n in bounds if n not in vocabulary(top, polarity)]:
            target = part_parameter(name)
            if target:
                bounds[target] = bounds.pop(name)
                notes.append(f"spec.bounds.{name} -> spec.bounds.{target}")
    return doc, tuple(notes)


# --- JSON -----------------------------------------------------------------------

def json_ready(value, path="$"):
    """A copy of ``value`` that strict JSON can hold: infinities become ``"inf"``/``"-inf"``.

    NaN is refused (the kit never hands one out, so one here is a bug to
    report); numpy scalars become Python numbers; tuples become lists.

    Examples
    --------
    >>> json_ready({"v_a": float("inf"), "r": (1.0, -float("inf"))})
    {'v_a': 'inf', 'r': [1.0, '-inf']}
    """
    if isinstance(value, dict):
        return {str(k): json_ready(v, f"{path}.{k}") for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_ready(v, f"{path}[{i}]") for i, v in enumerate(value)]
    if value is None or isinstance(value, (str, bool)):
        return value
    if hasattr(value, "item") and not isinstance(value, (int, float)):
        value = value.item()  # numpy scalar
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        if math.isnan(value):
            raise ValueError(f"NaN at {path}: the kit should never produce one; please report it")
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return value
    raise TypeError(f"{type(value).__name__} at {path} has no JSON form")


def canonical_json(value):
    """Sorted keys, no spaces, ASCII: one text per meaning (the content hash's input)."""
    return json.dumps(json_ready(value), sort_keys=True, separators=(",", ":"),
                      ensure_ascii=True, allow_nan=False)


# --- files ----------------------------------------------------------------------

def parse_record(text, source="<string>"):
    """Read a record from TOML text.

    Parameters
    ----------
    text : str
        The record (at most 1 MiB as UTF-8).
    source : str
        Where it came from, for messages.

    Returns
    -------
    Record

    Raises
    ------
    kit.errors.RecordError
        With ``parameter`` the dotted field at fault, or ``"file"``.

    Examples
    --------
    >>> parse_record("biasbook_record = 3")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    kit.errors.RecordError: biasbook_record = 3: written for a newer schema ...
    """
    if not isinstance(text, str):
        raise _fail(f"a record is text, not {type(text).__name__}", FILE, valid="str")
    if len(text) > MAX_RECORD_BYTES:  # cheap test first: a character is at least a byte
        raise _too_large(len(text.encode("utf-8", "surrogatepass")))
    try:
        size = len(text.encode("utf-8"))
    except UnicodeEncodeError:
        raise _fail("text cannot be written as UTF-8 (lone surrogate)", FILE, valid="UTF-8 text") \
            from None
    if size > MAX_RECORD_BYTES:
        raise _too_large(size)
    text = text.removeprefix("\ufeff")
    _check_shape(text, source)
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        where = _SYNTAX_WHERE.search(str(err))
        what = _SYNTAX_WHERE.sub("", str(err))
        raise _fail(f"not valid TOML in {source}: {what}", FILE,
                    where.group(1) if where else None, "TOML 1.0 (toml.io)") from None
    except RecursionError:
        raise _fail(f"nested too deeply in {source}", FILE, valid="TOML 1.0, a few levels deep") \
            from None
    return Record(document, source)


def _too_large(size):
    return _fail("file too large for a design record", FILE, f"{size} bytes",
                 f"at most {MAX_RECORD_BYTES} bytes (1 MiB)")


# What each bound of the shape says when passed: (message, valid).
_SHAPE_WORDS = {
    "depth": ("nested more than {limit} levels deep in {source}",
              "at most {limit} levels of tables, dotted keys and arrays; a record needs about 5"),
    "keys": ("more than {limit} key names in {source}",
             "at most {limit} key names, each part of a dotted key counted; a record has about 40"),
    "tokens": ("more than {limit} words, strings and brackets in {source}",
               "at most {limit}; a record has a few hundred"),
}


def _check_shape(text, source):
    """Refuse text whose shape would make the TOML parser slow or deep (see kit.record_scan)."""
    excess = first_excess(text, depth=MAX_RECORD_DEPTH, keys=MAX_RECORD_KEYS, tokens=MAX_RECORD_TOKENS)
    if excess is not None:
        message, valid = _SHAPE_WORDS[excess.what]
        words = {"found": excess.found, "limit": excess.limit, "source": source}
        raise _fail(message.format(**words), FILE, valid=valid.format(**words))


def load_record(path):
    """Read a record file (UTF-8 TOML, at most 1 MiB).

    Only a regular file is read: a named pipe would wait for a writer
    forever, and a device or directory is no record.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    Record
    """
    path = Path(path)
    data = _read_regular_file(path)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as err:
        raise _fail(f"not UTF-8 text (byte {err.start})", FILE, str(path), "UTF-8 text") from None
    return parse_record(text, source=str(path))


_FILE_KINDS = ((stat.S_ISDIR, "a directory"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
               (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
               (stat.S_ISSOCK, "a socket"))


def _refuse_unless_regular(mode, path):
    if not stat.S_ISREG(mode):
        kind = next((name for test, name in _FILE_KINDS if test(mode)), "another kind of file")
        raise _fail(f"not a regular file but {kind}", FILE, str(path),
                    "a regular file of UTF-8 TOML")


def _read_regular_file(path):
    """At most MAX_RECORD_BYTES + 1 bytes of ``path``, refusing anything but a regular file.

    The kind is checked before opening (a named pipe would block the open)
    and again on the open descriptor, opened without waiting, so a file
    swapped in between is caught too.
    """
    try:
        _refuse_unless_regular(os.stat(path).st_mode, path)
        handle = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0))
    except OSError as err:
        raise _fail(f"cannot read the record: {err.strerror or err}", FILE, str(path)) from None
    with os.fdopen(handle, "rb") as stream:
        info = os.fstat(stream.fileno())
        _refuse_unless_regular(info.st_mode, path)
        try:
            data = stream.read(MAX_RECORD_BYTES + 1)
        except OSError as err:
            raise _fail(f"cannot read the record: {err.strerror or err}", FILE, str(path)) from None
    if len(data) > MAX_RECORD_BYTES:
        raise _too_large(max(info.st_size, len(data)))
    return data


def save_record(record, path):
    """Write ``record`` as TOML to ``path``, replacing the file in one step.

    Parameters
    ----------
    record : Record
    path : str or os.PathLike
    """
    path = Path(path)
    text = record.to_toml()
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(handle, "w", encoding="utf-8", newline="\n") as stream:
            stream.write(text)
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
