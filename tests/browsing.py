"""One way for the real-browser tests to run JupyterLab: the latency benchmark's own.

``benchmarks/panel_browser.py`` starts JupyterLab on 127.0.0.1 with a token
(no news, no update checks, stopped by its process group) and waits for a
notebook's kernel to go idle (and runs a notebook, launches Chromium with the
same switches); the browser tests use the same code instead of
copies.  benchmarks/ is no package, so the module is loaded from its file.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _load():
    spec = importlib.util.spec_from_file_location("panel_browser", ROOT / "benchmarks" / "panel_browser.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


bench = _load()
lab_server, wait_idle, run_notebook = bench.lab_server, bench.wait_idle, bench.run_notebook
TOKEN, CHROMIUM_ARGS = bench.TOKEN, bench.CHROMIUM_ARGS
