"""Packaging checks: metadata agrees with the code and ``import kit`` stays light."""

from __future__ import annotations

import importlib.metadata
import json
import subprocess
import sys
import tomllib
from pathlib import Path

import kit

ROOT = Path(__file__).resolve().parents[1]
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))

# Modules only the notebook panels may import (optional "notebooks" extra).
PANEL_ONLY_MODULES = ("bokeh", "ipywidgets", "IPython")


def test_pyproject_version_equals_kit_version():
    assert PYPROJECT["project"]["version"] == kit.__version__


def test_installed_metadata_matches_the_tree():
    # A stale install (pyproject bumped, not reinstalled) shows up here.
    assert importlib.metadata.version("biasbook") == kit.__version__


def test_console_script_points_at_cli_main():
    assert PYPROJECT["project"]["scripts"]["biasbook"] == "kit.cli:main"
    installed = importlib.metadata.entry_points(group="console_scripts", name="biasbook")
    assert [entry.value for entry in installed] == ["kit.cli:main"]


def test_import_kit_loads_no_notebook_modules():
    # scikit-rf makes the same check (skrf/tests/test_init.py): a fresh
    # interpreter, so modules loaded by pytest or other tests do not count.
    code = (
        "import json, sys, kit; "
        f"wanted = {PANEL_ONLY_MODULES!r}; "
        "print(json.dumps(sorted({m.split('.')[0] for m in sys.modules} & set(wanted))))"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True
    )
    loaded = json.loads(result.stdout)
    assert loaded == [], f"`import kit` pulled in notebook-only modules: {loaded}"
