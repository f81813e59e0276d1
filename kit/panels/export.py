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
>>> [t.description for t in fig.tools if t.name == "svg"] == [TIPS["SVG"]]
True
"""

from __future__ import annotations

import base64
import html
import re
import subprocess
import tempfile
from pathlib import Path

from kit.errors import DesignError

# The three exports' toolbar icons, drawn here: a glyph for what the file holds above
# the format's letters, so the buttons differ at a glance and by name.
#   PNG  a block of pixels (a picture made of dots)
#   SVG  a curve with its two end handles (a drawing that scales)
#   CSV  a small table of rows and columns (the numbers)
_INK = "#4a4a4a"
_GLYPHS = {
    "PNG": ('<g fill="%s">' % _INK + "".join(
        f'<rect x="{3 + 4.6 * c}" y="{0.5 + 3.6 * r}" width="3.6" height="3"/>'
        for r in range(3) for c in range(4) if c >= 2 - r or (r + c) % 2 == 0) + "</g>"),
    "SVG": (f'<path d="M4.5 9.5 C 8 -1, 15 12, 19.5 2.5" fill="none" stroke="{_INK}" stroke-width="1.8"/>'
            f'<rect x="2.5" y="7.7" width="4" height="4" fill="white" stroke="{_INK}" stroke-width="1.3"/>'
            f'<rect x="17.5" y="0.7" width="4" height="4" fill="white" stroke="{_INK}" stroke-width="1.3"/>'),
    "CSV": (f'<g fill="none" stroke="{_INK}" stroke-width="1.4"><rect x="3" y="0.9" width="18" height="10.4"/>'
            '<path d="M3 4.4 H21 M3 7.8 H21 M10 0.9 V11.3"/></g>'),
}


def icon(kind):
    """The toolbar icon of export ``kind`` (``"PNG"``, ``"SVG"``, ``"CSV"``) as a data URL.

    Examples
    --------
    >>> icon("CSV").startswith("data:image/svg+xml;base64,")
    True
    >>> icon("PNG") != icon("CSV")
    True
    """
    text = (f'<svg xmlns="http://www.w3.org/2000/svg" width="24" height="24" viewBox="0 0 24 24">{_GLYPHS[kind]}'
            '<text x="12" y="23.2" font-family="Helvetica,Arial,sans-serif" font-size="11" font-weight="700" '
            f'text-anchor="middle" textLength="23.5" lengthAdjust="spacingAndGlyphs" fill="{_INK}">{kind}</text>'
            '</svg>')
    return "data:image/svg+xml;base64," + base64.b64encode(text.encode()).decode()


# What each export button says when the pointer rests on it.
TIPS = {"PNG": "PNG: a picture of this plot (pixels; for slides and mail)",
        "SVG": "SVG: this plot as a drawing that scales (for reports and print)",
        "CSV": "CSV: the numbers this plot shows, as a table (SI units)"}


def style_png_button(fig):
    """Give the figure's own save button (which writes PNG) our PNG icon and words."""
    for tool in fig.tools:
        if type(tool).__name__ == "SaveTool":
            tool.icon = icon("PNG")
            tool.description = TIPS["PNG"]


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

    fig.add_tools(CustomAction(icon=icon("SVG"), description=TIPS["SVG"], name="svg",
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
