"""A plot's figure as SVG: a toolbar button in the page, and :func:`svg_text` for scripts.

Bokeh's own SVG export drives a browser through a WebDriver, which this
machine does not have and must not download.  Both ways here use what Bokeh
already draws with in the browser: its plot view exports itself through an
SVG drawing context (``view.export("svg")``), the same code its save tool
uses for PNG with the canvas context.

* In a notebook the button runs that export in the page and saves the file
  (no kernel round trip, no network).
* :func:`svg_text` writes a standalone page of the figure (BokehJS inline),
  opens it in headless Chromium (the system binary the reviews print with,
  no network, a throwaway profile, no file access beyond the page), lets the
  page export itself and reads the SVG back from the dumped page.

Examples
--------
>>> from bokeh.plotting import figure
>>> fig = figure(width=200, height=150)
>>> _ = fig.line([0, 1], [0, 1])
>>> add_svg_action(fig, "plot.svg")
>>> [t.description for t in fig.tools if t.name == "svg"]
['Save the figure as SVG']
"""

from __future__ import annotations

import base64
import html
import re
import subprocess
import tempfile
from pathlib import Path

from kit.errors import DesignError

# A small icon of our own: the letters SVG on a page.
_ICON = ("data:image/svg+xml;base64," + base64.b64encode(
    b'<svg xmlns="http://www.w3.org/2000/svg" width="24" height="24" viewBox="0 0 24 24">'
    b'<rect x="1.5" y="4.5" width="21" height="15" rx="2" fill="none" stroke="#555" stroke-width="1.5"/>'
    b'<text x="12" y="15.5" font-family="Helvetica,Arial,sans-serif" font-size="8.5" font-weight="700" '
    b'text-anchor="middle" fill="#555">SVG</text></svg>').decode())

# Finds the plot's view (in a notebook the figure is the root of its own small
# document) and asks it for an SVG drawing of itself.
_FIND_AND_EXPORT = r"""
const view = window.Bokeh.index.find_one(plot);
if (view == null) throw new Error('no view of this plot on the page');
const blob = await view.export('svg').to_blob();
"""

_SAVE_JS = "return (async () => {" + _FIND_AND_EXPORT + r"""
const link = document.createElement('a');
link.href = URL.createObjectURL(blob);
link.download = filename;
document.body.appendChild(link);
link.click();
link.remove();
})();"""

_PAGE_JS = r"""
<script>
(async () => {
  const out = document.getElementById('biasbook-svg');
  try {
    for (let k = 0; k < 400; k++) {  // until BokehJS has drawn the document
      const docs = window.Bokeh ? window.Bokeh.documents : [];
      if (docs.length && window.Bokeh.index.roots && window.Bokeh.index.roots.length) break;
      await new Promise((r) => setTimeout(r, 25));
    }
    const plot = window.Bokeh.documents[0].roots()[0];
    await new Promise((r) => setTimeout(r, 100));
    %s
    out.textContent = await blob.text();
  } catch (err) {
    out.textContent = 'ERROR ' + err;
  }
})();
</script>"""

RENDER_BUDGET_MS = 20000  # virtual time Chromium gives the page to draw and export


def add_svg_action(fig, filename):
    """Add a toolbar button that saves ``fig`` as SVG under ``filename`` (runs in the browser)."""
    from bokeh.models import CustomAction, CustomJS

    fig.add_tools(CustomAction(icon=_ICON, description="Save the figure as SVG", name="svg",
                               callback=CustomJS(args={"plot": fig, "filename": filename}, code=_SAVE_JS)))


def svg_text(fig):
    """The figure ``fig`` drawn as SVG text, rendered offline by the system Chromium.

    Raises
    ------
    kit.errors.DesignError
        When no Chromium is found (parameter ``chromium``) or the page could not export.
    """
    from bokeh.embed import file_html
    from bokeh.resources import INLINE

    from kit.review.build import chromium_path

    page = file_html(fig, resources=INLINE, title="figure")
    page = page.replace("</body>", '<textarea id="biasbook-svg"></textarea>'
                        + _PAGE_JS % _FIND_AND_EXPORT + "</body>", 1)
    with tempfile.TemporaryDirectory(prefix="biasbook-svg-") as folder:
        path = Path(folder) / "figure.html"
        path.write_text(page, encoding="utf-8")
        command = [chromium_path(), "--headless", "--no-sandbox", "--disable-gpu",
                   "--disable-background-networking", "--disable-component-update", "--disable-sync",
                   "--no-first-run", "--disable-extensions", f"--user-data-dir={Path(folder) / 'profile'}",
                   f"--virtual-time-budget={RENDER_BUDGET_MS}", "--dump-dom", path.as_uri()]
        result = subprocess.run(command, capture_output=True, text=True, timeout=120)
    found = re.search(r'<textarea id="biasbook-svg">(.*?)</textarea>', result.stdout, re.S)
    text = html.unescape(found.group(1)) if found else ""
    if not text.lstrip().startswith("<svg"):
        reason = text[:200] if text else (result.stderr.strip()[-200:] or "the page drew nothing")
        raise DesignError(f"the figure could not be drawn as SVG: {reason}", parameter="chromium")
    return text
