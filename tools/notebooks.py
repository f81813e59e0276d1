"""Keep committed notebooks small and their check cells honest.

``python tools/notebooks.py strip NB.ipynb ...``
    Drop every output except those of cells marked ``# NBVAL_CHECK_OUTPUT``
    (and their execution counts), so multi-megabyte inline Bokeh never lands
    in git while nbval still has the stored numbers to compare.
``python tools/notebooks.py refresh NB.ipynb ...``
    Execute the notebook in a fresh kernel, then strip it: the way to update
    the stored check outputs after a deliberate change.
"""

from __future__ import annotations

import sys
from pathlib import Path

CHECK_MARK = "# NBVAL_CHECK_OUTPUT"


def strip(notebook):
    """Remove outputs of all cells but the check cells; return the notebook."""
    for cell in notebook.cells:
        if cell.cell_type != "code":
            continue
        if CHECK_MARK in cell.source:
            # Keep only plain text: nbval compares text/plain, and rich
            # reprs (HTML tables, LaTeX) would bloat the file.
            for output in cell.outputs:
                if "data" in output:
                    output["data"] = {k: v for k, v in output["data"].items() if k == "text/plain"}
                if output.get("output_type") == "execute_result":
                    output["metadata"] = {}
        else:
            cell.outputs = []
            cell.execution_count = None
        cell.metadata.pop("execution", None)
    notebook.metadata.pop("widgets", None)
    return notebook


def refresh(path, timeout=600):
    """Execute ``path`` in a fresh kernel (cwd = its folder), then strip and save it."""
    import nbformat
    from nbclient import NotebookClient

    notebook = nbformat.read(path, as_version=4)
    NotebookClient(notebook, timeout=timeout, kernel_name="python3",
                   resources={"metadata": {"path": str(Path(path).parent)}}).execute()
    nbformat.write(strip(notebook), path)


def main(argv=None):
    import nbformat

    argv = sys.argv[1:] if argv is None else argv
    if len(argv) < 2 or argv[0] not in ("strip", "refresh"):
        print(__doc__)
        return 2
    for path in argv[1:]:
        if argv[0] == "refresh":
            refresh(path)
        else:
            nbformat.write(strip(nbformat.read(path, as_version=4)), path)
        print(f"{argv[0]}: {path}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
