"""Keep committed notebooks small and their check cells honest.

The stripping below is standard library only, so git can run it as a clean
filter before ``.venv`` exists.  It is the one stripper of the project: the
``strip`` command, the git filter ``keep-check-outputs``, the Jupyter pre-save
hook (``tools/jupyter/jupyter_server_config.py``) and ``refresh`` all call
:func:`strip`.

``python3 tools/notebooks.py strip NB.ipynb ...``
    Drop every output except the text outputs of check cells (cells nbval
    compares, marked ``# NBVAL_CHECK_OUTPUT``), the execution counts of all
    other cells and widget state, so multi-megabyte inline Bokeh never lands
    in git while nbval still has the stored numbers to compare.
``python3 tools/notebooks.py strip -``
    The same from stdin to stdout: the command of the git clean filter.
``python tools/notebooks.py refresh NB.ipynb ...``
    Execute the notebook in a fresh kernel, then strip it: the way to update
    the stored check outputs after a deliberate change (needs ``.venv``).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

CHECK_MARK = "# NBVAL_CHECK_OUTPUT"

# nbval's markers and tags that switch the output comparison on or off
# (nbval/plugin.py: comment_markers, metadata_tags); comments win over tags.
_CHECK_SWITCHES = {"NBVAL_CHECK_OUTPUT": True, "NBVAL_IGNORE_OUTPUT": False,
                   "PYTEST_VALIDATE_IGNORE_OUTPUT": False}
_CHECK_TAGS = {"nbval-check-output": True, "nbval-ignore-output": False,
               "pytest-validate-ignore-output": False}

# Cell metadata that only records a run (timings), never the author's intent.
_RUN_METADATA = ("execution", "ExecuteTime")


def _text(value):
    """A notebook string field as one string (on disk it may be a list of lines)."""
    return "".join(value) if isinstance(value, list) else value


def is_check_cell(cell):
    """True when nbval (in lax mode) compares this code cell's stored outputs.

    Examples
    --------
    >>> is_check_cell({"cell_type": "code", "metadata": {},
    ...                "source": "# NBVAL_CHECK_OUTPUT\\nprint(1)"})
    True
    >>> is_check_cell({"cell_type": "code", "metadata": {}, "source": ["x = 1\\n"]})
    False
    """
    if cell.get("cell_type") != "code":
        return False
    check = False
    tags = cell.get("metadata", {}).get("tags", [])
    for tag in tags if isinstance(tags, list) else []:
        check = _CHECK_TAGS.get(tag, check)
    for line in _text(cell.get("source", "")).splitlines():
        line = line.strip()
        if line.startswith("#"):
            check = _CHECK_SWITCHES.get(line.lstrip("#").strip(), check)
    return check


def strip(notebook):
    """Keep only what nbval compares; return the same notebook, changed in place.

    Check cells keep their execution count and the text of their outputs
    (streams, errors, and the ``text/plain`` of results); every other code
    cell loses its outputs and execution count; run timings and the widget
    state in the notebook metadata go.  Works on a plain dict as read by
    :mod:`json` (strings as lists of lines) and on an nbformat
    ``NotebookNode`` (joined strings) alike.

    Parameters
    ----------
    notebook : dict
        An nbformat 4 notebook.

    Returns
    -------
    dict
        ``notebook`` itself.

    Examples
    --------
    >>> plot = {"output_type": "display_data", "metadata": {},
    ...         "data": {"application/javascript": "/* 4 MB of Bokeh */"}}
    >>> nb = {"metadata": {"widgets": {"state": {}}}, "cells": [
    ...     {"cell_type": "code", "metadata": {}, "execution_count": 1,
    ...      "source": "show(figure)", "outputs": [plot]}]}
    >>> cell = strip(nb)["cells"][0]
    >>> cell["outputs"], cell["execution_count"], nb["metadata"]
    ([], None, {})
    """
    for cell in notebook.get("cells", []):
        metadata = cell.get("metadata", {})
        for key in _RUN_METADATA:
            metadata.pop(key, None)
        if cell.get("cell_type") != "code":
            continue
        if not is_check_cell(cell):
            cell["outputs"] = []
            cell["execution_count"] = None
            continue
        # Keep only plain text: nbval compares text/plain, and rich reprs
        # (HTML tables, LaTeX, widget views) would bloat the file.
        for output in cell.get("outputs", []):
            if "data" in output:
                output["data"] = {k: v for k, v in output["data"].items() if k == "text/plain"}
            if output.get("output_type") in ("execute_result", "display_data"):
                output["metadata"] = {}
    notebook.get("metadata", {}).pop("widgets", None)
    return notebook


def _split_lines(notebook):
    """Multi-line strings as lists of lines, as nbformat writes them (nbformat.v4.rwbase)."""
    def split(value):
        return value.splitlines(True) if isinstance(value, str) else value

    def split_bundle(bundle):
        for key, value in bundle.items():
            if key.startswith("text/") or key in ("application/javascript", "image/svg+xml"):
                bundle[key] = split(value)

    for cell in notebook.get("cells", []):
        if "source" in cell:
            cell["source"] = split(cell["source"])
        for attachment in cell.get("attachments", {}).values():
            split_bundle(attachment)
        for output in cell.get("outputs", []):
            if output.get("output_type") in ("execute_result", "display_data"):
                split_bundle(output.get("data", {}))
            elif output.get("output_type") == "stream":
                output["text"] = split(output.get("text", ""))


def dumps(notebook):
    """The notebook as JSON text, byte for byte as ``nbformat.writes`` + newline gives it.

    Standard library only, so the git filter runs without the venv; a test
    compares it with nbformat on every committed notebook.
    """
    notebook["metadata"].pop("orig_nbformat", None)
    notebook["metadata"].pop("orig_nbformat_minor", None)
    notebook["metadata"].pop("signature", None)
    for cell in notebook.get("cells", []):
        cell.get("metadata", {}).pop("trusted", None)
    _split_lines(notebook)
    text = json.dumps(notebook, indent=1, sort_keys=True, separators=(",", ": "), ensure_ascii=False)
    return text if text.endswith("\n") else text + "\n"


def strip_text(text, name="<stdin>"):
    """Strip a notebook given as JSON text and return it as JSON text.

    Raises
    ------
    SystemExit
        If ``text`` is not an nbformat 4 notebook, naming ``name`` and the cause.
    """
    try:
        notebook = json.loads(text)
    except json.JSONDecodeError as error:
        raise SystemExit(f"{name}: not a notebook, invalid JSON ({error}); "
                         "resolve any merge markers and save it again") from None
    if not isinstance(notebook, dict) or notebook.get("nbformat") != 4:
        raise SystemExit(f"{name}: not an nbformat 4 notebook "
                         f"(nbformat = {notebook.get('nbformat') if isinstance(notebook, dict) else None!r})")
    return dumps(strip(notebook))


def pre_save_hook_for(notebooks_dir):
    """A Jupyter server pre-save hook that strips notebooks saved inside ``notebooks_dir``.

    Other notebooks (a scratch notebook elsewhere) are saved untouched, so
    their plots survive a reload.

    Parameters
    ----------
    notebooks_dir : str or Path
        Folder whose notebooks (at any depth) are stripped on save.

    Returns
    -------
    callable
        ``hook(model, path, contents_manager, **kwargs)`` as jupyter_server
        calls its ``ContentsManager.pre_save_hook``.
    """
    folder = Path(notebooks_dir).resolve()

    def strip_repository_notebook(model, path, contents_manager, **kwargs):
        if model.get("type") != "notebook" or not isinstance(model.get("content"), dict):
            return
        root = getattr(contents_manager, "root_dir", None)
        if root is None:  # not a file-system store: nothing here is in the repository
            return
        saved_at = (Path(root) / path.strip("/")).resolve()
        if saved_at.is_relative_to(folder):
            strip(model["content"])

    return strip_repository_notebook


def refresh(path, timeout=600):
    """Execute ``path`` in a fresh kernel (cwd = its folder), then strip and save it."""
    import nbformat
    from nbclient import NotebookClient

    notebook = nbformat.read(path, as_version=4)
    NotebookClient(notebook, timeout=timeout, kernel_name="python3",
                   resources={"metadata": {"path": str(Path(path).parent)}}).execute()
    nbformat.write(strip(notebook), path)


def main(argv=None):
    """Run ``strip`` or ``refresh`` on the paths in ``argv``; return the exit code."""
    argv = sys.argv[1:] if argv is None else argv
    if len(argv) < 2 or argv[0] not in ("strip", "refresh"):
        print(__doc__)
        return 2
    command, paths = argv[0], argv[1:]
    if command == "strip" and paths == ["-"]:
        # git filter: bytes in, bytes out, UTF-8 whatever the locale says
        text = sys.stdin.buffer.read().decode("utf-8")
        sys.stdout.buffer.write(strip_text(text).encode("utf-8"))
        return 0
    for path in paths:
        if command == "refresh":
            refresh(path)
        else:
            path = Path(path)
            path.write_bytes(strip_text(path.read_bytes().decode("utf-8"), str(path)).encode("utf-8"))
        print(f"{command}: {path}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
