"""Hostile record files: bounded work before the TOML parser runs, regular files only.

External references: TOML 1.0 (toml.io) for what nests and what is a string,
checked against the standard library's tomllib and the tomli_w writer (the
scan's depth is compared with the depth of what tomllib builds from the same
text); POSIX file kinds through the standard library's os and stat modules.
The reproducers are the ones of the reliability issue: dotted keys 496,
20 000 and 50 000 names deep, a named pipe given as the record, /dev/zero.
"""

from __future__ import annotations

import os
import stat
import subprocess
import sys
import threading
import tracemalloc
from pathlib import Path

import pytest
import tomli_w
from hypothesis import given, settings
from hypothesis import strategies as st

import kit.record
from kit.errors import RecordError
from kit.record import (MAX_RECORD_BYTES, MAX_RECORD_DEPTH, MAX_RECORD_KEYS, MAX_RECORD_TOKENS,
                        load_record, parse_record)
from kit.record_scan import first_excess

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.toml"))
HEAD = 'biasbook_record = 2\ntitle = "Hostile"\n'


@pytest.fixture
def parser_never_runs(monkeypatch):
    """Fail the test if the TOML parser is called: the refusal must come before it."""
    def refuse(*_args, **_kwargs):
        raise AssertionError("tomllib.loads ran on a record the shape check should refuse")

    monkeypatch.setattr(kit.record.tomllib, "loads", refuse)


def _refused(text):
    with pytest.raises(RecordError) as caught:
        parse_record(text, source="hostile.toml")
    err = caught.value
    assert err.parameter == "file" and "hostile.toml" in err.message
    return err


HOSTILE_SHAPES = {
    # the reproducers: a 1 kB file of 496 dotted names gave a RecursionError traceback,
    # 20 000 names (40 kB) took 1.6 GB and 14 s, 50 000 passed 9.9 GB
    "dotted 496": ".".join(["a"] * 496) + " = 1\n",
    "dotted 20000": ".".join(["a"] * 20_000) + " = 1\n",
    "dotted 50000": ".".join(["a"] * 50_000) + " = 1\n",
    "table header": "[" + ".".join(["a"] * 2_000) + "]\n",
    "arrays": "x = " + "[" * 5_000 + "]" * 5_000 + "\n",
    "inline tables": "x = " + "{a = " * 5_000 + "1" + "}" * 5_000 + "\n",
    "mixed": "[a.b.c]\nd.e.f = [{g.h = [[{i.j = [[[1]]]}]]}]\n",
}


@pytest.mark.parametrize("text", HOSTILE_SHAPES.values(), ids=HOSTILE_SHAPES.keys())
def test_deeply_nested_record_is_refused_quickly(text, parser_never_runs):
    """Refused by the scan, before the parser builds anything, with little memory."""
    tracemalloc.start()
    try:
        err = _refused(HEAD + text)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert "nested more than" in err.message and str(MAX_RECORD_DEPTH) in err.valid
    assert peak < 5e6 + 4 * len(text)  # the text itself and a few small objects, never gigabytes


def test_deeply_nested_record_file_gives_one_line_and_exit_2(tmp_path):
    """The CLI on the 1 kB reproducer: no traceback, one line naming the bound."""
    path = tmp_path / "deep.toml"
    path.write_text(HEAD + HOSTILE_SHAPES["dotted 496"], encoding="utf-8")
    done = subprocess.run([sys.executable, "-m", "kit.cli", "evaluate", str(path)], capture_output=True,
                          text=True, timeout=60, cwd=ROOT)
    assert done.returncode == 2
    assert "Traceback" not in done.stderr and "RecursionError" not in done.stderr
    assert done.stderr.count("\n") == 1 and "nested more than 16 levels" in done.stderr


def test_many_keys_are_refused_before_parsing(parser_never_runs):
    text = HEAD + "[values]\n" + "".join(f"k{i} = 1\n" for i in range(MAX_RECORD_KEYS + 1))
    err = _refused(text)
    assert f"more than {MAX_RECORD_KEYS} key names" in err.message


@pytest.mark.parametrize("text", [
    "x = [" + "1," * MAX_RECORD_TOKENS + "]\n",  # half a megabyte of values: seconds in the parser
    "# filler\n" * 10 + "," * (MAX_RECORD_BYTES // 2),
    "[" * 3 + "]" * (MAX_RECORD_BYTES // 2),
], ids=["long array", "punctuation", "brackets"])
def test_token_floods_are_refused_before_parsing(text, parser_never_runs):
    assert "words, strings and brackets" in _refused(HEAD + text).message


def test_brackets_dots_and_equals_inside_strings_and_comments_count_for_nothing():
    """TOML 1.0: a string or comment is one token whatever it holds (four kinds of string)."""
    noise = "[[{{a.b.c.d.e.f.g.h.i.j.k.l.m.n.o.p.q = [[[[[[[[[[[[[[[[[[" * 50
    text = (f"# {noise}\n"
            f'biasbook_record = 2\ntitle = "{noise[:150]}"\n'
            f"author = '{noise[:150]}'\n"
            f'notes = """{noise}\n""\\"""{noise}\n"""\n'
            f"revision = 'A'  # {noise}\n"
            '[circuit]\ntopology = "divider_source"\npolarity = "npn"\n'
            '[values]\nr1 = "33k"\nr2 = "10k"\nr_e = "2k2"\nv_supply = "12 V"\nv_load = "8 V"\n')
    record = parse_record(text)
    assert record.notes.startswith(noise) and record.design.values["r_e"] == 2200.0
    assert first_excess(text, depth=2, keys=20, tokens=200) is None


def _measure(text, what):
    """The scan's count of ``what`` for ``text`` (the lowest limit it does not pass)."""
    limits = {"depth": 10**9, "keys": 10**9, "tokens": 10**9}
    limit = 0
    while True:
        limits[what] = limit
        excess = first_excess(text, **limits)
        if excess is None or excess.what != what:
            return limit
        limit = excess.found


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_example_records_sit_far_inside_the_bounds(path):
    """The bounds must never refuse a real record: each example uses a quarter at most
    (a third of the depth: a matched group is a list in a list of the spec)."""
    text = path.read_text(encoding="utf-8")
    assert _measure(text, "depth") <= MAX_RECORD_DEPTH // 3
    assert _measure(text, "keys") <= MAX_RECORD_KEYS // 4
    assert _measure(text, "tokens") <= MAX_RECORD_TOKENS // 4
    assert load_record(path).title


def _true_depth(value):
    """Nesting of what tomllib built: each table key and each array element one level."""
    if isinstance(value, dict):
        return max((1 + _true_depth(v) for v in value.values()), default=0)
    if isinstance(value, list):
        return max((1 + _true_depth(v) for v in value), default=0)
    return 0


_KEYS = st.sampled_from(["a", "b.c", "Q1.v_a", "x y", "[z]", "k=1", "#", "'", '"'])
_LEAVES = st.one_of(st.integers(-5, 5), st.floats(-1e3, 1e3, allow_nan=False), st.booleans(),
                    st.text(alphabet="ab.[]{}=,#'\"\\\n", max_size=6))
_DOCUMENTS = st.dictionaries(_KEYS, st.recursive(
    _LEAVES, lambda inner: st.one_of(st.lists(inner, max_size=3), st.dictionaries(_KEYS, inner, max_size=3)),
    max_leaves=12), min_size=1, max_size=4)


@settings(max_examples=150, deadline=None, derandomize=True, database=None)
@given(document=_DOCUMENTS)
def test_scan_depth_bounds_what_the_parser_builds(document):
    """For any document tomli_w writes, the scan's depth is at least the depth tomllib
    builds (so nothing deeper slips through) and at most twice it (an inline table counts
    its brace and its keys)."""
    import tomllib

    text = tomli_w.dumps(document)
    built = _true_depth(tomllib.loads(text))
    scanned = _measure(text, "depth")
    assert built <= scanned <= 2 * built, (text, built, scanned)


# --- only regular files -----------------------------------------------------------------

def _load_in_thread(path):
    """load_record in a thread; ``(finished, error)`` after at most 20 s (a FIFO used to block)."""
    outcome = {}

    def run():
        try:
            load_record(path)
        except RecordError as err:
            outcome["error"] = err

    thread = threading.Thread(target=run, daemon=True)
    thread.start()
    thread.join(timeout=20)
    return not thread.is_alive(), outcome.get("error")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes are POSIX")
def test_fifo_record_is_refused(tmp_path):
    fifo = tmp_path / "record.toml"
    os.mkfifo(fifo)
    finished, err = _load_in_thread(fifo)
    assert finished, "load_record blocked on a named pipe"
    assert err.parameter == "file" and err.value == str(fifo)
    assert "named pipe" in err.message and "regular file" in err.valid


@pytest.mark.skipif(not os.path.exists("/dev/zero") or not stat.S_ISCHR(os.stat("/dev/zero").st_mode),
                    reason="needs /dev/zero")
def test_device_record_is_refused():
    """The issue's /dev/zero gave "'0 bytes': file too large"; it is no file at all."""
    finished, err = _load_in_thread("/dev/zero")
    assert finished
    assert "character device" in err.message and "bytes" not in str(err.value)


def test_directory_record_is_refused(tmp_path):
    finished, err = _load_in_thread(tmp_path)
    assert finished and "directory" in err.message and err.value == str(tmp_path)


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symbolic links")
def test_link_to_a_regular_record_still_loads(tmp_path):
    link = tmp_path / "link.toml"
    link.symlink_to(EXAMPLES[0])
    assert load_record(link).title == load_record(EXAMPLES[0]).title


def test_too_large_file_reports_its_true_size(tmp_path):
    path = tmp_path / "big.toml"
    path.write_bytes(b"# " + b"x" * (3 * MAX_RECORD_BYTES) + b"\n")
    finished, err = _load_in_thread(path)
    assert finished and err.value == f"{path.stat().st_size} bytes"
