"""Error text of the ``biasbook`` command: colour only on a terminal, never in a file.

External references: the NO_COLOR convention (no-color.org: a set, non-empty
NO_COLOR turns colour off); ECMA-48 for what a terminal escape sequence is
(CSI ``ESC [`` … final byte); a real pseudo-terminal from the standard
library's ``pty`` module for "a terminal".  The reproducer is the issue's:
``biasbook review`` of a notebook that fails wrote the kernel's colour codes
into the error line, and so into any file stderr went to.
"""

from __future__ import annotations

import io
import os
import subprocess
import sys
from pathlib import Path

import pytest

from kit import cli
from kit.errors import DesignError
from kit.safety import terminal_text

ROOT = Path(__file__).resolve().parents[1]
ESC = "\x1b"
BAD_RECORD = ('biasbook_record = 2\ntitle = "Bad"\n[circuit]\ntopology = "divider_source"\npolarity = "npn"\n'
              '[values]\nr1 = -5\nr2 = "10k"\nr_e = "2k2"\nv_supply = "12 V"\nv_load = "8 V"\n')


def _run(args, **kwargs):
    return subprocess.run([sys.executable, "-m", "kit.cli", *args], cwd=ROOT, timeout=300, **kwargs)


def test_error_text_written_to_a_file_has_no_colour_codes(tmp_path):
    record = tmp_path / "bad.toml"
    record.write_text(BAD_RECORD, encoding="utf-8")
    log = tmp_path / "errors.txt"
    with open(log, "wb") as stderr:
        done = _run(["evaluate", str(record)], stderr=stderr, stdout=subprocess.DEVNULL)
    assert done.returncode == 2
    text = log.read_text(encoding="utf-8")
    assert text.startswith("biasbook: values.r1") and ESC not in text


@pytest.mark.slow
def test_failing_notebook_review_error_is_plain_text(tmp_path):
    """The issue's reproducer: a notebook cell raising; the error line names the exception
    and its text, with no colour codes from the kernel's traceback."""
    nbformat = pytest.importorskip("nbformat")
    pytest.importorskip("nbclient")
    notebook = nbformat.v4.new_notebook()
    notebook.cells = [nbformat.v4.new_code_cell('import kit\nkit.design("divider_source", r1=-5)')]
    path = tmp_path / "fails.ipynb"
    nbformat.write(notebook, path)
    done = _run(["review", str(path), "-o", str(tmp_path / "out.pdf")], capture_output=True, text=True,
                env=dict(os.environ, BOKEH_RESOURCES="inline"))
    assert done.returncode == 3
    line = [ln for ln in done.stderr.splitlines() if ln.startswith("biasbook: notebook")]
    assert line == ["biasbook: notebook: the notebook failed while executing: ParameterError: r1 = -5: out of "
                    "range (valid: 0.01 … 1e+09 Ω)"], done.stderr
    assert ESC not in done.stderr


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="pseudo-terminals as on Linux")
@pytest.mark.parametrize("no_color, coloured", [(None, True), ("1", False), ("", True)],
                         ids=["terminal", "NO_COLOR set", "NO_COLOR empty"])
def test_colour_only_on_a_terminal_without_no_color(tmp_path, no_color, coloured):
    import pty

    record = tmp_path / "bad.toml"
    record.write_text(BAD_RECORD, encoding="utf-8")
    env = {k: v for k, v in os.environ.items() if k not in ("NO_COLOR", "TERM")} | {"TERM": "xterm"}
    if no_color is not None:
        env["NO_COLOR"] = no_color
    leader, follower = pty.openpty()
    try:
        done = _run(["evaluate", str(record)], stderr=follower, stdout=subprocess.DEVNULL, env=env)
        os.close(follower)
        follower = None
        seen = b""
        while True:
            try:
                chunk = os.read(leader, 4096)
            except OSError:  # the other end is closed: all read
                break
            if not chunk:
                break
            seen += chunk
    finally:
        if follower is not None:
            os.close(follower)
        os.close(leader)
    text = seen.decode("utf-8")
    assert done.returncode == 2 and "values.r1" in text
    assert (f"{ESC}[" in text) is coloured
    # colour marks the program's name only; the message itself is plain
    assert ESC not in text.split("biasbook:", 1)[1].split(ESC + "[0m", 1)[-1]


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_escape_sequences_in_an_error_never_reach_the_terminal(monkeypatch):
    """Text from elsewhere (a kernel, a file) may hold escapes; they are dropped or shown."""
    monkeypatch.delenv("NO_COLOR", raising=False)
    monkeypatch.setenv("TERM", "xterm")
    terminal = _Terminal()
    monkeypatch.setattr(sys, "stderr", terminal)
    hostile = DesignError(f"cell said {ESC}]0;owned{chr(7)}{ESC}[2J{ESC}[31mred{ESC}[0m", parameter="notebook")
    assert cli._failure(hostile, 3, False) == 3
    line = terminal.getvalue()
    head, message = line.split(" ", 1)
    assert head == f"{ESC}[1;31mbiasbook:{ESC}[0m"
    assert ESC not in message and chr(7) not in message
    assert message == "notebook: cell said 0;owned\\x07red\n"  # inert without its ESC and BEL


def test_terminal_text_keeps_ordinary_text():
    text = "r1 = -5: out of range (valid: 0.01 … 1e+09 Ω)\n\tsecond line"
    assert terminal_text(text) == text
    # a sequence the pattern does not know keeps its text but loses the ESC that would start it
    assert terminal_text(f"{ESC}[1;31mError{ESC}[0m {ESC}(B") == "Error \\x1b(B"
