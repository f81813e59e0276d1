"""How long a design panel takes to show a change in a real browser (``panel_browser_update_ms``).

JupyterLab runs a small notebook holding one :class:`kit.panels.DesignPanel`
(the divider source, as the kernel-side ``panel_update`` benchmark uses);
Debian's Chromium, driven by Playwright, types resistor values into the
panel and steps the load-voltage slider with the keyboard.  Nothing is
downloaded.

One change is timed in the page's own clock, from the key press that makes
it (Enter in a field, an arrow key on a slider handle) to the first frame
painted after the last update the change caused: a Bokeh document of the
panel changed, a node or text of the panel changed, or an input of the panel
shows another value.  The page counts a change as over when nothing of the
panel changed for :data:`QUIET_MS`; that wait is not counted.  Each typed
change is then checked: the panel shows the headline current the kit gives
for the new design, and no refusal.

Used by ``benchmarks/run.py`` (full size only) and by
``tests/test_browser.py`` (a few changes, to show the measurement runs).
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import re
import shutil
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = shutil.which("chromium")
TOKEN = "biasbook-panel-latency"
TABS = ("β_F", "temperature", "sensitivities", "tempco", "ledger", "circuit")  # opened after the changes
QUIET_MS = 1200  # nothing of the panel changed this long: the change is fully shown
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]

NOTEBOOK_CODE = """import kit
from kit.panels import DesignPanel

panel = DesignPanel(kit.design("divider_source", "npn"))
panel"""

# Watches the panel: every Bokeh document change, every DOM change inside the
# panel and every input whose shown value changed marks it dirty; the frame
# after a dirty one has been painted, and its time is the latest "shown" time.
_INSTRUMENT = """() => {
    const panel = document.querySelector('.biasbook-panel');
    const watch = window.__panelWatch = {t0: null, last: 0, painted: 0, changes: 0, dirty: false};
    const mark = () => { watch.last = performance.now(); watch.changes += 1; watch.dirty = true; };
    for (const doc of (window.Bokeh ? window.Bokeh.documents : [])) doc.on_change(mark);
    new MutationObserver(mark).observe(panel, {subtree: true, childList: true, characterData: true,
                                               attributes: true});
    const inputs = () => Array.from(panel.querySelectorAll('input')).map(e => e.value).join('\\u0001');
    let shown = inputs();
    const frame = () => {
        const now = inputs();
        if (now !== shown) { shown = now; mark(); }
        if (watch.dirty) {
            watch.dirty = false;
            requestAnimationFrame(() => { watch.painted = performance.now(); });
        }
        requestAnimationFrame(frame);
    };
    requestAnimationFrame(frame);
    // The change starts with the key or the press that makes it (capture: before any widget sees it).
    const start = () => { watch.t0 = performance.now(); watch.changes = 0; watch.painted = 0; };
    document.addEventListener('keydown', (e) => {
        if (['Enter', 'ArrowRight', 'ArrowLeft'].includes(e.key) && panel.contains(e.target)) start();
    }, true);
    document.addEventListener('pointerdown', (e) => {
        if (e.target.closest && e.target.closest('.lm-TabBar-tab') && panel.contains(e.target)) start();
    }, true);
}"""

_SETTLED = """(quiet) => {
    const w = window.__panelWatch;
    return w.t0 !== null && w.changes > 0 && w.painted >= w.last && performance.now() - w.last > quiet;
}"""


def _free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@contextlib.contextmanager
def lab_server(root_dir, env=None, log_path=None):
    """A JupyterLab server on ``root_dir`` at 127.0.0.1 with a token; yields its URL.

    The server is stopped by its process group id at the end.  ``env`` is the
    server's (and so its kernels') environment.
    """
    port = _free_port()
    with tempfile.TemporaryDirectory() as scratch:
        config = Path(scratch) / "jupyter-config"
        (config / "labconfig").mkdir(parents=True)
        # No pop-ups over the page: no news, no update checks.
        (config / "labconfig" / "page_config.json").write_text(json.dumps(
            {"disabledExtensions": {"@jupyterlab/apputils-extension:announcements": True}}))
        env = dict(env or os.environ, BOKEH_RESOURCES="inline", JUPYTER_CONFIG_DIR=str(config))
        log = open(log_path or Path(scratch) / "server.log", "w")
        server = subprocess.Popen(
            [sys.executable, "-m", "jupyterlab", "--allow-root", "--no-browser", "--ip=127.0.0.1",
             f"--port={port}", "--port-retries=0", f"--IdentityProvider.token={TOKEN}",
             f"--ServerApp.root_dir={root_dir}", "--LabApp.news_url=",
             "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate"],
            env=env, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
        try:
            for _ in range(240):
                try:
                    urllib.request.urlopen(f"http://127.0.0.1:{port}/api/status?token={TOKEN}", timeout=1)
                    break
                except OSError:
                    time.sleep(0.5)
            else:
                raise RuntimeError("JupyterLab did not start")
            yield f"http://127.0.0.1:{port}"
        finally:
            os.killpg(server.pid, signal.SIGTERM)
            try:
                server.wait(30)
            except subprocess.TimeoutExpired:
                os.killpg(server.pid, signal.SIGKILL)
            log.close()


def wait_idle(page, timeout=300):
    """Until the kernel says Idle and no cell waits to run (prompt ``[*]``)."""
    end = time.time() + timeout
    status = ""
    while time.time() < end:
        status = page.evaluate("() => Array.from(document.querySelectorAll("
                               "'.jp-StatusBar-TextItem, .jp-StatusBar-Item')).map(e => e.innerText).join('|')")
        prompts = page.evaluate("() => Array.from(document.querySelectorAll('.jp-InputPrompt'))"
                                ".map(e => e.innerText).join('|')")
        if "Idle" in status and "Busy" not in status and "*" not in prompts:
            return
        time.sleep(0.5)
    raise AssertionError(f"the kernel did not go idle: {status}")


def run_notebook(page, url, name, token=TOKEN, file_browser=False):
    """Open notebook ``name`` and run every cell until the kernel is idle.

    With ``file_browser`` the file browser is open beside the notebook, as a designer works.
    """
    page.goto(f"{url}/lab/tree/{name}?reset&token={token}")
    wait_idle(page)
    if file_browser and not page.locator(".jp-FileBrowser").first.is_visible():
        page.locator("[data-id='filebrowser']").first.click()
    page.click("text=Run")
    page.click("text=Run All Cells")
    time.sleep(3)
    wait_idle(page)


def open_panel(page, url, name, token=TOKEN):
    """Open notebook ``name``, run every cell, and return the panel's locator once it is drawn."""
    run_notebook(page, url, name, token)
    panel = page.locator(".biasbook-panel").first
    panel.wait_for(timeout=120_000)
    page.locator(".biasbook-panel canvas").first.wait_for(timeout=120_000)
    return panel


def _labelled(page, kind, label):
    """The widget of class ``kind`` in the panel whose label starts with ``label``."""
    return page.locator(f".biasbook-panel {kind}").filter(
        has=page.locator("label", has_text=re.compile("^" + re.escape(label)))).first


def _field(page, name):
    """The text input of design value ``name``."""
    return _labelled(page, ".widget-text", name).locator("input").first


def _slider_handle(page, label):
    return _labelled(page, ".widget-slider", label).locator(".noUi-handle").first


def _timed(page, act, timeout=60.0):
    """Milliseconds from the key press of ``act()`` to the last painted update it caused."""
    page.evaluate("() => { window.__panelWatch.t0 = null; }")
    act()
    page.wait_for_function(_SETTLED, arg=QUIET_MS, polling=100, timeout=timeout * 1e3)
    watch = page.evaluate("() => window.__panelWatch")
    return watch["painted"] - watch["t0"]


def measure_changes(page, typed=10, slider_steps=10, resistor="r_e", slider="v_load", warmup=2):
    """Time ``typed`` typed resistor values and ``slider_steps`` slider steps on the open panel.

    The panel must show the default divider source design (``resistor`` is
    stepped through E24 values around its value); the load slider is
    stepped right.  The first ``warmup`` changes (typed) are not counted.
    Then each view in :data:`TABS` is opened and timed until it shows the
    present design.  Returns the figures as :func:`measure` does.
    """
    import kit
    from kit.analysis.eseries import neighbours
    from kit.report.evaluation import headline

    page.evaluate(_INSTRUMENT)
    start = kit.design("divider_source", "npn")
    values = [float(v) for v in neighbours(start.values[resistor], "E24", count=(typed + warmup) // 2 + 2)
              if v != start.values[resistor]]
    field = _field(page, resistor)
    typed_ms = []
    for k, value in enumerate(values[:typed + warmup]):
        text = f"{value:g}"

        def act():
            field.fill(text)
            field.press("Enter")

        elapsed = _timed(page, act)
        expected = headline(kit.evaluate(start.with_values(**{resistor: value})))["I_out"]
        shown = page.locator(".biasbook-panel").first.inner_text()
        if expected not in shown or "Not applied" in shown:
            raise AssertionError(f"after {resistor} = {text} the panel does not show I_out {expected}")
        if k >= warmup:
            typed_ms.append(elapsed)
    # Back to the starting resistor: the load voltage then steps inside the same compliance.
    _timed(page, lambda: (field.fill(f"{start.values[resistor]:g}"), field.press("Enter")))
    handle = _slider_handle(page, slider)
    slider_ms = []
    for _ in range(slider_steps):
        before = page.locator(".biasbook-panel").first.inner_text()

        def act():
            handle.focus()
            handle.press("ArrowRight")

        elapsed = _timed(page, act)
        shown = page.locator(".biasbook-panel").first.inner_text()
        if shown == before or "Not applied" in shown:
            raise AssertionError(f"a step of the {slider} slider did not change the panel")
        slider_ms.append(elapsed)
    every = typed_ms + slider_ms
    # A view in a closed tab catches up when opened: time that too (not part of the median above).
    tab_ms = []
    for title in TABS:
        tab = page.locator(".biasbook-panel .lm-TabBar-tab", has_text=title).first
        if tab.count():
            tab_ms.append(_timed(page, tab.click))
    page.locator(".biasbook-panel .lm-TabBar-tab").first.click()
    return {"panel_browser_update_ms": statistics.median(every),
            "panel_browser_typed_ms": statistics.median(typed_ms),
            "panel_browser_slider_ms": statistics.median(slider_ms),
            "panel_browser_worst_ms": max(every),
            "panel_browser_changes": len(every),
            "panel_browser_tab_ms": statistics.median(tab_ms)}


def measure(typed=10, slider_steps=10, kit_root=ROOT):
    """Start JupyterLab and Chromium, open a panel notebook and time the changes.

    Returns
    -------
    dict
        ``panel_browser_update_ms`` (median over every change),
        ``panel_browser_typed_ms`` and ``panel_browser_slider_ms`` (medians by
        kind), ``panel_browser_worst_ms``, ``panel_browser_changes`` and
        ``panel_browser_tab_ms`` (median time for a closed view, opened, to
        show the present design).
    """
    import nbformat
    from playwright.sync_api import sync_playwright

    if CHROMIUM is None:
        raise RuntimeError("needs Debian's chromium on PATH")
    with tempfile.TemporaryDirectory() as folder:
        notebook = nbformat.v4.new_notebook(cells=[nbformat.v4.new_code_cell(NOTEBOOK_CODE)])
        notebook.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
        nbformat.write(notebook, Path(folder) / "panel.ipynb")
        # The kernel imports this tree's kit.
        env = dict(os.environ, PYTHONPATH=os.pathsep.join(
            [str(kit_root)] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p]))
        with lab_server(folder, env) as url, sync_playwright() as p:
            browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
            try:
                page = browser.new_page(viewport={"width": 1500, "height": 1400})
                open_panel(page, url, "panel.ipynb")
                time.sleep(2)
                out = measure_changes(page, typed, slider_steps)
            finally:
                browser.close()
    if not all(math.isfinite(v) and v > 0 for v in out.values()):
        raise AssertionError(f"not a time: {out}")
    return out


if __name__ == "__main__":
    print(json.dumps(measure(), indent=2))
