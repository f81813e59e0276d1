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
... biasbook_record = 1
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
import dataclasses
import hashlib
import json
import math
import os
import re
import tempfile
import tomllib
import unicodedata
from pathlib import Path

import tomli_w

from kit.errors import ParameterError, RecordError

__all__ = ["Record", "load_record", "parse_record", "save_record", "field_path", "json_ready",
           "SCHEMA_VERSION", "MAX_RECORD_BYTES", "EDGES"]

SCHEMA_VERSION = 1
MAX_RECORD_BYTES = 1024 * 1024  # a record is a page of text; anything larger is a mistake
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
        except ParameterError as err:  # err.valid lists the accepted spellings
            raise _from_kit(err, field) from None
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
    return f"{low:g} … {high:g} {unit}".rstrip()


# --- sections -------------------------------------------------------------------
# Each reader takes the raw TOML table (or None when absent) and the circuit
# facts read so far, and returns the keyword arguments it adds to make_design.
# A later schema adds a section by adding a reader here and a row to SECTIONS.

def _read_circuit(raw, context):
    from kit import topologies

    table = _table(raw, "circuit")
    _only_keys(table, ("topology", "polarity"), "circuit")
    for name in ("topology", "polarity"):
        if name not in table:
            raise _fail("missing", f"circuit.{name}", valid=_circuit_valid(name))
        _text(table[name], f"circuit.{name}", 100)
    try:
        top = topologies.get(table["topology"])
        top.check_polarity(table["polarity"])
    except ParameterError as err:
        raise _from_kit(err, f"circuit.{err.parameter}") from None
    context["topology"], context["polarity"] = top, table["polarity"]
    return {"topology": top.key, "polarity": table["polarity"]}


def _circuit_valid(name):
    from kit import topologies

    if name == "topology":
        return ", ".join(t.key for t in topologies.all_topologies())
    return "npn or pnp"


def _read_values(raw, context):
    top = context["topology"]
    table = _table(raw, "values")
    names = [v.name for v in top.values]
    _only_keys(table, names, "values")
    missing = [spec for spec in top.values if spec.name not in table]
    if missing:  # all of them at once: a new record often lacks several
        first = missing[0]
        also = "".join(f", {spec.name}" for spec in missing[1:])
        raise _fail(f"missing{f' (and{also[1:]})' if also else ''}; a record gives every value "
                    f"of {top.key} (`biasbook topologies` lists them)", f"values.{first.name}",
                    valid=_span(first.low, first.high, first.unit))
    out = {}
    for spec in top.values:
        out[spec.name] = _number(table[spec.name], f"values.{spec.name}", spec.unit,
                                 (spec.low, spec.high))
    return {"values": out}


def _read_conditions(raw, context):
    from kit.designs import DEFAULT_TEMPERATURE, TEMPERATURE_RANGE

    table = _table({} if raw is None else raw, "conditions")
    _only_keys(table, ("temp", "t_ref", "edge"), "conditions")
    out = {}
    hint = ' (a bare number is kelvin; write "25 degC" for Celsius)'
    for name in ("temp", "t_ref"):
        out[name] = (_number(table[name], f"conditions.{name}", "K", TEMPERATURE_RANGE, hint)
                     if name in table else DEFAULT_TEMPERATURE)
    edge = table.get("edge", EDGES[0])
    _text(edge, "conditions.edge", 40)
    if edge not in EDGES:
        raise _fail("unknown saturation criterion", "conditions.edge", edge, " or ".join(EDGES))
    context["edge"] = edge
    return out


def _read_tcr(raw, context):
    from kit.designs import TCR_RANGE

    if raw is None:
        return {}
    top = context["topology"]
    table = _table(raw, "tcr")
    _only_keys(table, top.resistors, "tcr")
    hint = ' (a bare number is per kelvin; write "100 ppm/K")'
    return {"tcr": {name: _number(value, f"tcr.{name}", "1/K", TCR_RANGE, hint)
                    for name, value in table.items()}}


def _read_hand(raw, context):
    from kit.designs import HAND_RANGES

    if raw is None:
        return {}
    table = _table(raw, "hand")
    _only_keys(table, tuple(HAND_RANGES), "hand")
    return {"hand": {name: _number(value, f"hand.{name}", HAND_RANGES[name][2],
                                   HAND_RANGES[name][:2])
                     for name, value in table.items()}}


DEVICE_TEXT_KEYS = ("label",)
T_RISE_KEY = "t_rise"  # the design's junction rise of one transistor, kept beside its model
_CELSIUS_TEXT = re.compile(r"deg\s?C|°\s?C|℃")


def _device_kind(top, name):
    from kit.devices import KINDS

    return KINDS[top.kind_of(name)]


def _read_devices(raw, context):
    from kit.designs import T_RISE_RANGE, transistor_polarity

    if raw is None:
        return {}
    top = context["topology"]
    table = _table(raw, "devices")
    _only_keys(table, top.transistors, "devices")
    models, rises = {}, {}
    for name, overrides in table.items():
        where = f"devices.{name}"
        kind = _device_kind(top, name)
        _table(overrides, where)
        if "polarity" in overrides:
            raise _fail("set by circuit.polarity, not per transistor", f"{where}.polarity",
                        overrides["polarity"], "leave it out")
        _only_keys(overrides, (*kind.MODEL_LIMITS, *DEVICE_TEXT_KEYS, T_RISE_KEY), where)
        changes = {}
        for key, value in overrides.items():
            field = f"{where}.{key}"
            if key in DEVICE_TEXT_KEYS:
                changes[key] = _text(value, field, 200)
            elif key == T_RISE_KEY:
                if isinstance(value, str) and _CELSIUS_TEXT.search(value):
                    raise _fail("a temperature rise is a difference: give it in kelvin", field,
                                value, _span(*T_RISE_RANGE, "K") + ' (write "12 K")')
                rises[name] = _number(value, field, "K", T_RISE_RANGE)
            else:
                low, high, unit = kind.MODEL_LIMITS[key]
                # inf passes here; the model decides (a BJT takes V_A = inf).
                changes[key] = _number(value, field, unit, (low, high), allow_inf=True)
        typical = kind.typical(transistor_polarity(top, context["polarity"], name))
        try:
            models[name] = typical.with_values(**changes)
        except ParameterError as err:
            raise _from_kit(err, f"{where}.{err.parameter}") from None
    context["t_rise"] = rises
    return {"devices": models}


# name -> (reader, required).  Order is the order a saved record lists them.
SPEC_PAIRS = {"v_load": ("V", (-1000.0, 1000.0)), "v_supply": ("V", (0.1, 1000.0)),
              "temp": ("K", (150.0, 500.0))}
SPEC_SCALARS = {"current": ("A", (1e-12, 100.0)), "tolerance": ("%", (0.0, 0.5)),
                "resistor_tolerance": ("%", (0.0, 0.5)), "resistor_tcr": ("1/K", (0.0, 5e-3)),
                "p_max": ("W", (1e-9, 1e4)), "mismatch": ("%", (0.0, 0.5))}
SPEC_TABLES = ("beta", "tolerances", "tcrs", "bounds")
SPEC_OTHER = ("beta_distribution", "samples", "seed", "matched")


def _pair_of(raw, field, unit, limits):
    if not isinstance(raw, list) or len(raw) != 2:
        raise _fail("must be a pair [low, high]", field, raw, _span(*limits, unit))
    low, high = (_number(v, f"{field}[{k}]", unit, limits) for k, v in enumerate(raw))
    if low > high:
        raise _fail("low end above high end", field, raw, "low <= high")
    return (low, high)


def _read_spec(raw, context):
    """The optional [spec] section: what the current must do (see kit.analysis.spec.Spec)."""
    if raw is None:
        context["spec"] = None
        return {}
    table = _table(raw, "spec")
    _only_keys(table, (*SPEC_SCALARS, *SPEC_PAIRS, *SPEC_TABLES, *SPEC_OTHER), "spec")
    for name in ("current", "tolerance"):
        if name not in table:
            raise _fail("missing; a spec states the current and its tolerance", f"spec.{name}")
    args = {}
    for name, (unit, limits) in SPEC_SCALARS.items():
        if name in table:
            args["i_target" if name == "current" else name] = _number(table[name], f"spec.{name}", unit, limits)
    for name, (unit, limits) in SPEC_PAIRS.items():
        if name in table:
            args[name] = _pair_of(table[name], f"spec.{name}", unit, limits)
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
        from kit.designs import parameter_range

        entries = _table(table["bounds"], "spec.bounds")
        bounds = {}
        for key, value in entries.items():
            field = f"spec.bounds.{_key(key)}"
            try:
                low, high, unit = parameter_range(top, key)
            except ParameterError as err:
                raise _from_kit(err, field) from None
            bounds[key] = _pair_of(value, field, unit, (low, high))
        args["bounds"] = bounds
    if "beta_distribution" in table:
        args["beta_distribution"] = _text(table["beta_distribution"], "spec.beta_distribution", 20)
    for name in ("samples", "seed"):
        if name in table:
            if isinstance(table[name], bool) or not isinstance(table[name], int):
                raise _fail("must be a whole number", f"spec.{name}", table[name])
            args[name] = table[name]
    if "matched" in table:
        groups = table["matched"]
        if not isinstance(groups, list) or not all(isinstance(g, list) and all(isinstance(n, str) for n in g)
                                                    for g in groups):
            raise _fail("must be a list of lists of transistor names", "spec.matched", groups,
                        'e.g. [["Q1", "Q2"]]')
        args["matched"] = tuple(tuple(g) for g in groups)
    context["spec"] = args
    return {}


def _make_spec(args, design):
    """Build and check the Spec against the design (names must exist); errors name spec fields."""
    from kit.analysis.spec import Spec, factors

    if args is None:
        return None
    try:
        spec = Spec(**args)
        factors(spec, design)
    except ParameterError as err:
        name = {"i_target": "current"}.get(err.parameter, err.parameter)
        raise _from_kit(err, f"spec.{name}") from None
    return spec


SECTIONS = {
    "circuit": (_read_circuit, True),
    "values": (_read_values, True),
    "conditions": (_read_conditions, False),
    "tcr": (_read_tcr, False),
    "hand": (_read_hand, False),
    "devices": (_read_devices, False),
    "spec": (_read_spec, False),
}


def field_path(parameter, topology):
    """The record field of a kit parameter name (``"r1"`` -> ``"values.r1"``).

    Parameters
    ----------
    parameter : str or None
        A flat parameter name as kit errors report it.
    topology : kit.topologies.base.Topology

    Examples
    --------
    >>> from kit import topologies
    >>> top = topologies.get("divider_source")
    >>> [field_path(p, top) for p in ("v_load", "temp", "tcr_r_e", "Q1.beta_f", "v_be_on")]
    ['values.v_load', 'conditions.temp', 'tcr.r_e', 'devices.Q1.beta_f', 'hand.v_be_on']
    """
    from kit.designs import HAND_RANGES

    if parameter is None:
        return None
    if parameter in {v.name for v in topology.values}:
        return f"values.{parameter}"
    if parameter in ("temp", "t_ref"):
        return f"conditions.{parameter}"
    if parameter in ("topology", "polarity"):
        return f"circuit.{parameter}"
    if parameter.startswith("tcr_"):
        return f"tcr.{parameter[4:]}"
    if parameter in HAND_RANGES:
        return f"hand.{parameter}"
    if parameter.split(".")[0] in topology.transistors:
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
    design : kit.designs.Design
        The design point, values in SI units.
    edge : str
        Saturation criterion for evaluation (``conditions.edge``).
    title, revision, author, notes : str
        Header text (``""`` when absent).

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
        from kit.designs import make_design

        doc = self._document
        _check_version(doc)
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
            if context.get("t_rise"):
                design = dataclasses.replace(design, t_rise=context["t_rise"])
        except ParameterError as err:  # ranges the readers leave to the kit
            raise _from_kit(err, field_path(err.parameter, context["topology"])) from None
        self.design = design
        self.spec = _make_spec(context.get("spec"), design)
        self.edge = context["edge"]
        self.title, self.revision = header["title"], header["revision"]
        self.author, self.notes = header["author"], header["notes"]

    @classmethod
    def from_design(cls, design, *, edge="vce_sat", title=None, revision="", author="", notes=""):
        """A record of a :class:`kit.designs.Design` (values written as SI numbers).

        Transistor parameters equal to the typical model are left out, as a
        hand-written record would; ``hand`` and ``tcr`` are written in full.

        Parameters
        ----------
        design : kit.designs.Design
        edge : {"vce_sat", "vcb_zero"}
            Saturation criterion stored as ``conditions.edge``.
        title : str, optional
            Record title (default: the design's title, which must not be empty).
        revision, author, notes : str
            Optional header text.
        """
        from kit.designs import transistor_polarity

        document = {"biasbook_record": SCHEMA_VERSION,
                    "title": design.title if title is None else title}
        document |= {k: v for k, v in (("revision", revision), ("author", author),
                                       ("notes", notes)) if v}
        document["circuit"] = {"topology": design.topology, "polarity": design.polarity}
        document["values"] = dict(design.values)
        document["conditions"] = {"temp": design.temp, "t_ref": design.t_ref, "edge": edge}
        if design.tcr:
            document["tcr"] = dict(design.tcr)
        document["hand"] = dict(design.hand)
        devices = {}
        for name, model in design.devices.items():
            kind = _device_kind(design.spec, name)
            typical = kind.typical(transistor_polarity(design.spec, design.polarity, name))
            changed = {k: v for k, v in (model.numbers() | {"label": model.label}).items()
                       if getattr(typical, k) != v}
            if design.t_rise.get(name):
                changed[T_RISE_KEY] = design.t_rise[name]
            if changed:
                devices[name] = changed
        if devices:
            document["devices"] = devices
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
            "circuit": {"topology": d.topology, "polarity": d.polarity},
            "values": dict(d.values),
            "conditions": {"temp": d.temp, "t_ref": d.t_ref, "edge": self.edge},
            "tcr": {name: float(d.tcr.get(name, 0.0)) for name in d.spec.resistors},
            "hand": dict(d.hand),
            "devices": {name: m.numbers() | {"label": m.label,
                                             T_RISE_KEY: float(d.t_rise.get(name, 0.0))}
                        for name, m in d.devices.items()},
        } | ({"spec": self.spec.to_dict()} if self.spec is not None else {})

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


def _check_version(doc):
    field = "biasbook_record"
    valid = f"{SCHEMA_VERSION} (an integer)"
    if field not in doc:
        raise _fail("not a biasbook record: the schema version is missing", field, valid=valid)
    version = doc[field]
    if isinstance(version, bool) or not isinstance(version, int):
        raise _fail(f"schema version must be an integer, not {_kind(version)}", field, version,
                    valid)
    if version > SCHEMA_VERSION:
        raise _fail(f"written for a newer schema than this biasbook reads ({SCHEMA_VERSION})",
                    field, version, valid)
    if version != SCHEMA_VERSION:
        raise _fail("no such schema version", field, version, valid)


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
    >>> parse_record("biasbook_record = 2")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    kit.errors.RecordError: biasbook_record = 2: written for a newer schema ...
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
    try:
        document = tomllib.loads(text.removeprefix("\ufeff"))
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


def load_record(path):
    """Read a record file (UTF-8 TOML, at most 1 MiB).

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    Record
    """
    path = Path(path)
    try:
        with path.open("rb") as stream:
            data = stream.read(MAX_RECORD_BYTES + 1)
    except OSError as err:
        raise _fail(f"cannot read the record: {err.strerror or err}", FILE, str(path)) from None
    if len(data) > MAX_RECORD_BYTES:
        raise _too_large(path.stat().st_size)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as err:
        raise _fail(f"not UTF-8 text (byte {err.start})", FILE, str(path), "UTF-8 text") from None
    return parse_record(text, source=str(path))


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
