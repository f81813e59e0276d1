"""Notebooks in the repository never carry plot scripts or widget state.

Three walls keep a run notebook out of git, all built on the one stripper in
``tools/notebooks.py``: the pre-save hook of the tour's Jupyter server, the git
clean filter ``keep-check-outputs``, and the size and content checks of the
committed notebooks below.  What counts as a check cell is nbval's rule
(nbval/plugin.py: a ``# NBVAL_CHECK_OUTPUT`` comment line); the file format is
checked against nbformat, the reference reader and writer of the Jupyter
notebook format, and the hook runs inside jupyter_server's own ContentsManager.

The 300 kB ceiling is the project's rule; a stripped notebook here is 5-12 kB,
a run tour with inline Bokeh about 16 MB.
"""

from __future__ import annotations

import asyncio
import copy
import importlib.util
import json
import shutil
import subprocess
import sys
from pathlib import Path

import nbformat
import pytest
from nbformat.v4 import new_code_cell, new_markdown_cell, new_notebook, new_output

ROOT = Path(__file__).resolve().parents[1]
SIZE_LIMIT = 300_000  # bytes; the project's rule for every committed notebook
CONFIG = ROOT / "tools" / "jupyter" / "jupyter_server_config.py"


def _load(name, path):
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


tools = _load("notebook_tools", ROOT / "tools" / "notebooks.py")
dev = _load("dev_script", ROOT / "dev.py")


def _committed_notebooks():
    """Notebooks git tracks, plus any in notebooks/ (nbval collects those too)."""
    listed = subprocess.run(["git", "-C", str(ROOT), "ls-files", "*.ipynb"],
                            capture_output=True, text=True) if shutil.which("git") else None
    tracked = set(listed.stdout.split()) if listed is not None and listed.returncode == 0 else set()
    found = {path.relative_to(ROOT).as_posix() for path in (ROOT / "notebooks").glob("*.ipynb")}
    return sorted(tracked | found)


NOTEBOOKS = _committed_notebooks()


def test_the_repository_has_notebooks_to_check():
    assert "notebooks/tour.ipynb" in NOTEBOOKS


@pytest.mark.parametrize("name", NOTEBOOKS)
def test_committed_notebook_is_under_the_size_limit(name):
    size = (ROOT / name).stat().st_size
    assert size < SIZE_LIMIT, (f"{name} is {size / 1e3:.0f} kB (limit {SIZE_LIMIT / 1e3:.0f} kB): "
                               f"run `python3 tools/notebooks.py strip {name}`")


@pytest.mark.parametrize("name", NOTEBOOKS)
def test_committed_notebook_is_already_stripped(name):
    # Stripping changes nothing: no outputs outside check cells, no widget
    # state, and the bytes nbformat writes (so a save shows no diff).
    text = (ROOT / name).read_bytes().decode("utf-8")
    assert tools.strip_text(text, name) == text, f"run `python3 tools/notebooks.py strip {name}`"


# ---------------------------------------------------------------------------
# a notebook as a run leaves it: our own invented cells, outputs shaped like
# the ones Bokeh (inline), ipywidgets and IPython produce

BOKEH_SCRIPT = "(function(root) {/* inline BokehJS */ " + "x" * 4_000_000 + "})(window);\n"


def _run_notebook():
    """A run notebook: two check cells among plot, widget and table cells."""
    check_stream = new_code_cell(
        "# NBVAL_CHECK_OUTPUT\nprint('I_out', '1.02 mA')\nprint('R_out', '4.7 MΩ')", execution_count=3,
        outputs=[new_output("stream", name="stdout", text="I_out 1.02 mA\nR_out 4.7 MΩ\n")])
    check_result = new_code_cell(
        "# a comment first\n#  NBVAL_CHECK_OUTPUT\nround(1.0 / 3.0, 4)", execution_count=5,
        outputs=[new_output("execute_result", execution_count=5,
                            data={"text/plain": "0.3333", "text/html": "<b>0.3333</b>",
                                  "text/latex": "$0.3333$"},
                            metadata={"text/html": {"isolated": True}})])
    notebook = new_notebook(
        cells=[
            new_markdown_cell("# A bias network of our own\nNotes stay as they are."),
            new_code_cell("# NBVAL_IGNORE_OUTPUT\nfrom bokeh.io import output_notebook\noutput_notebook()",
                          execution_count=1,
                          outputs=[new_output("display_data", data={
                              "application/javascript": BOKEH_SCRIPT,
                              "application/vnd.bokehjs_load.v0+json": ""})]),
            new_code_cell("design = 'npn divider'", execution_count=2,
                          metadata={"execution": {"iopub.execute_input": "2030-01-01T00:00:00Z"}}),
            check_stream,
            new_code_cell("panel  # says NBVAL_CHECK_OUTPUT only inside a comment after code", execution_count=4,
                          outputs=[new_output("display_data", data={
                              "application/vnd.jupyter.widget-view+json": {
                                  "model_id": "3f1c", "version_major": 2, "version_minor": 0},
                              "text/plain": "VBox(children=(FloatSlider(value=4700.0),))"})]),
            check_result,
            new_code_cell("print(undefined_name)", execution_count=6,
                          outputs=[new_output("error", ename="NameError", evalue="undefined_name",
                                              traceback=["NameError: undefined_name"])]),
        ],
        metadata={"kernelspec": {"name": "python3", "display_name": "Python 3", "language": "python"},
                  "widgets": {"application/vnd.jupyter.widget-state+json": {
                      "state": {"3f1c": {"model_name": "VBoxModel", "state": {"children": ["x" * 20_000]}}},
                      "version_major": 2, "version_minor": 0}}})
    for index, cell in enumerate(notebook.cells):
        cell.id = f"cell-{index}"  # fixed, so two builds are equal byte for byte
    return notebook


CHECK_CELLS = (3, 5)


def _check_outputs_as_written(notebook):
    """The check cells' stored counts and text outputs, as they sit in the file."""
    cells = json.loads(nbformat.writes(notebook))["cells"]
    kept = []
    for index in CHECK_CELLS:
        cell = cells[index]
        text = [output.get("text", output.get("data", {}).get("text/plain")) for output in cell["outputs"]]
        kept.append(json.dumps([cell["execution_count"], text,
                                [output.get("execution_count") for output in cell["outputs"]]],
                               ensure_ascii=False))
    return kept


def test_the_sample_is_a_valid_run_notebook_of_several_megabytes():
    notebook = _run_notebook()
    nbformat.validate(notebook)
    assert len(nbformat.writes(notebook)) > 4_000_000


def test_strip_keeps_check_cells_byte_for_byte_and_drops_the_rest():
    notebook = _run_notebook()
    before = _check_outputs_as_written(notebook)
    stripped = tools.strip(copy.deepcopy(notebook))
    nbformat.validate(stripped)
    assert _check_outputs_as_written(stripped) == before
    for index, cell in enumerate(stripped.cells):
        if cell.cell_type == "code" and index not in CHECK_CELLS:
            assert cell.outputs == [] and cell.execution_count is None, index
        assert "execution" not in cell.metadata
    # the rich reprs of the check result go, its plain text stays
    assert stripped.cells[5].outputs[0]["data"] == {"text/plain": "0.3333"}
    assert stripped.cells[5].outputs[0]["metadata"] == {}
    assert "widgets" not in stripped.metadata
    assert stripped.metadata.kernelspec.name == "python3"
    assert stripped.cells[0].source == notebook.cells[0].source
    written = nbformat.writes(stripped)
    assert len(written) < 10_000
    for dropped in ("inline BokehJS", "bokehjs_load", "widget-view", "widget-state", "<b>0.3333</b>", "NameError"):
        assert dropped not in written, dropped


def test_strip_is_idempotent():
    once = tools.strip(_run_notebook())
    assert tools.strip(copy.deepcopy(once)) == once


def test_a_tagged_check_cell_keeps_its_output_and_a_comment_marker_wins_over_a_tag():
    # nbval/plugin.py: metadata tags switch checking too; comment markers override them
    tagged = new_code_cell("1 + 1", execution_count=7, metadata={"tags": ["nbval-check-output"]},
                           outputs=[new_output("execute_result", execution_count=7, data={"text/plain": "2"})])
    overruled = new_code_cell("# NBVAL_IGNORE_OUTPUT\n2 + 2", execution_count=8,
                              metadata={"tags": ["nbval-check-output"]},
                              outputs=[new_output("execute_result", execution_count=8, data={"text/plain": "4"})])
    stripped = tools.strip(new_notebook(cells=[tagged, overruled]))
    assert stripped.cells[0].outputs[0]["data"] == {"text/plain": "2"}
    assert stripped.cells[0].execution_count == 7
    assert stripped.cells[1].outputs == [] and stripped.cells[1].execution_count is None


# ---------------------------------------------------------------------------
# the git clean filter: the same bytes, from stdin, with the standard library


def _filter(data):
    # -S -I: no site-packages, no PYTHONPATH -- the filter runs before the venv exists
    return subprocess.run([sys.executable, "-S", "-I", "tools/notebooks.py", "strip", "-"],
                          input=data, capture_output=True, cwd=ROOT, timeout=60)


def test_git_filter_gives_the_bytes_of_the_function_and_nbformat():
    notebook = _run_notebook()
    result = _filter(nbformat.writes(notebook).encode("utf-8"))
    assert result.returncode == 0, result.stderr.decode()
    expected = nbformat.writes(tools.strip(copy.deepcopy(notebook))) + "\n"
    assert result.stdout.decode("utf-8") == expected


@pytest.mark.parametrize("name", NOTEBOOKS)
def test_git_filter_leaves_a_committed_notebook_as_nbformat_writes_it(name):
    data = (ROOT / name).read_bytes()
    result = _filter(data)
    assert result.returncode == 0, result.stderr.decode()
    expected = nbformat.writes(tools.strip(nbformat.reads(data.decode("utf-8"), as_version=4))) + "\n"
    assert result.stdout.decode("utf-8") == expected


def test_git_filter_refuses_a_notebook_with_merge_markers():
    result = _filter(b'<<<<<<< HEAD\n{"cells": []}\n')
    assert result.returncode != 0 and result.stdout == b""
    assert b"invalid JSON" in result.stderr and b"merge markers" in result.stderr


@pytest.mark.skipif(shutil.which("git") is None, reason="needs git")
def test_git_add_stores_the_stripped_notebook(tmp_path):
    # A scratch repository laid out like ours; dev.py setup's registration, our .gitattributes.
    git = ["git", "-C", str(tmp_path)]
    subprocess.run([*git, "init", "-q"], check=True)
    (tmp_path / "tools").mkdir()
    shutil.copy(ROOT / "tools" / "notebooks.py", tmp_path / "tools")
    shutil.copy(ROOT / ".gitattributes", tmp_path)
    assert dev.register_notebook_filter(tmp_path)
    (tmp_path / "notebooks").mkdir()
    run = tmp_path / "notebooks" / "design.ipynb"
    nbformat.write(_run_notebook(), run)
    # from a subfolder, as a user might: git still runs the filter at the top
    subprocess.run(["git", "-C", str(tmp_path / "notebooks"), "add", "design.ipynb"], check=True)
    stored = subprocess.run([*git, "show", ":notebooks/design.ipynb"], capture_output=True, check=True).stdout
    assert stored.decode("utf-8") == nbformat.writes(tools.strip(_run_notebook())) + "\n"
    assert run.stat().st_size > 4_000_000  # the working copy keeps its plots
    diff = subprocess.run([*git, "diff", "--stat"], capture_output=True, text=True, check=True).stdout
    assert diff == ""


def test_filter_is_not_registered_outside_a_git_checkout(tmp_path):
    assert dev.register_notebook_filter(tmp_path) is False


# ---------------------------------------------------------------------------
# the pre-save hook in jupyter_server's own ContentsManager


def _scratch_repository(tmp_path):
    """tmp_path laid out like the repository, with the shipped config and stripper."""
    (tmp_path / "tools" / "jupyter").mkdir(parents=True)
    shutil.copy(ROOT / "tools" / "notebooks.py", tmp_path / "tools")
    shutil.copy(CONFIG, tmp_path / "tools" / "jupyter")
    (tmp_path / "notebooks").mkdir()
    (tmp_path / "scratch").mkdir()
    return tmp_path


def _contents_manager(repository, root_dir):
    from jupyter_server.serverapp import ServerApp
    from traitlets.config.loader import PyFileConfigLoader

    config = PyFileConfigLoader(CONFIG.name, path=str(repository / "tools" / "jupyter")).load_config()
    # the class a Jupyter server uses by default (AsyncLargeFileManager in jupyter_server 2)
    manager_class = ServerApp.contents_manager_class.default_value
    return manager_class(config=config, root_dir=str(root_dir))


def _save(manager, path):
    # the model as JupyterLab sends it: JSON, sources as joined strings
    content = json.loads(json.dumps(_run_notebook()))
    result = manager.save({"type": "notebook", "format": "json", "content": content}, path)
    return asyncio.run(result) if asyncio.iscoroutine(result) else result


@pytest.mark.parametrize("root, path", [(".", "notebooks/design.ipynb"), ("notebooks", "design.ipynb")])
def test_saving_under_notebooks_strips_through_the_contents_manager(tmp_path, root, path):
    repository = _scratch_repository(tmp_path)
    manager = _contents_manager(repository, repository / root)
    assert manager.pre_save_hook is not None
    _save(manager, path)
    saved = repository / "notebooks" / "design.ipynb"
    expected = nbformat.writes(tools.strip(_run_notebook())) + "\n"
    assert saved.read_bytes().decode("utf-8") == expected
    assert saved.stat().st_size < 10_000


def test_a_notebook_outside_notebooks_is_saved_whole(tmp_path):
    repository = _scratch_repository(tmp_path)
    _save(_contents_manager(repository, repository), "scratch/plots.ipynb")
    saved = nbformat.read(repository / "scratch" / "plots.ipynb", as_version=4)
    assert saved.cells[1].outputs[0]["data"]["application/javascript"] == BOKEH_SCRIPT
    assert "widgets" in saved.metadata


@pytest.mark.slow
def test_dev_tour_loads_the_repository_settings():
    # The JupyterLab of `dev.py tour` reads tools/jupyter/jupyter_server_config.py
    result = subprocess.run([sys.executable, "-m", "jupyterlab", "--show-config"],
                            env=dev.jupyter_environment(), capture_output=True, text=True,
                            cwd=ROOT, timeout=120)
    assert result.returncode == 0, result.stderr[-2000:]
    assert str(CONFIG) in result.stdout
    assert "pre_save_hook = <function pre_save_hook_for.<locals>.strip_repository_notebook" in result.stdout
    assert "Overriding existing pre_save_hook" not in result.stderr
