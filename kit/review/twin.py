"""The offline HTML twin of a review PDF: one file, the same page, no network, no other file.

The review page is printed from HTML that loads its typesetting library from
a local folder, which a colleague who gets the file by mail does not have.
The twin is that page after Chromium has typeset it (its DOM, as the
``--dump-dom`` switch gives it): the equations are already set, so the
typesetting library's scripts are taken out, and the fonts it set them in
are carried inside the file as ``data:`` addresses.  The plots' scripts stay,
so they are drawn afresh and stay interactive when the twin is opened.  The
page gets a new content-security policy without ``file:``: it runs only its
own inline scripts and loads nothing.

Only fonts from the typesetting package's own folder are read into the
file; any other ``file:`` address is dropped.

Examples
--------
>>> page = ('<html><head><script src="file:///x/MathJax.js"></script></head>'
...         '<body><div data-root-id="p1"><div class="bk-Figure"></div></div></body></html>')
>>> twin_of_dom(page, None, '<div id="a" data-root-id="p1">')  # doctest: +ELLIPSIS
'<html><head><meta http-equiv="Content-Security-Policy" ...><body><div id="a" data-root-id="p1"></div></body></html>'
"""

from __future__ import annotations

import base64
import re
import subprocess
import tempfile
from pathlib import Path
from urllib.parse import unquote, urlparse

from kit.review.policy import with_content_policy

_EXTERNAL_SCRIPT = re.compile(r"<script\b[^>]*\bsrc=[^>]*>\s*</script>", re.IGNORECASE)
_POLICY_META = re.compile(r'<meta http-equiv="Content-Security-Policy"[^>]*>', re.IGNORECASE)
_FILE_URL = re.compile(r"""url\((['"]?)(file:[^'")]*)\1\)""")
# A plot's placeholder as the browser left it: the embed script draws it again on opening.
_DRAWN_PLOT = re.compile(r'<div\b[^>]*\bdata-root-id="([^"]*)"[^>]*>(?:<div class="bk-[A-Za-z]+"></div>)?</div>')
_PLOT_PLACEHOLDER = re.compile(r'<div\b[^>]*\bdata-root-id="([^"]*)"[^>]*>')
FONT_TYPES = {".woff": "font/woff", ".woff2": "font/woff2", ".otf": "font/otf", ".ttf": "font/ttf"}


def _font_data(url, fonts_root):
    """``data:`` address of a font file under ``fonts_root``, or None for anything else."""
    if fonts_root is None:
        return None
    path = Path(unquote(urlparse(url).path)).resolve()
    root = Path(fonts_root).resolve()
    kind = FONT_TYPES.get(path.suffix.lower())
    if kind is None or root not in path.parents or not path.is_file():
        return None
    return f"data:{kind};base64," + base64.b64encode(path.read_bytes()).decode("ascii")


def twin_of_dom(dom, fonts_root, original=""):
    """The twin page from a typeset page's DOM text (see the module docstring).

    Parameters
    ----------
    dom : str
        The page after typesetting, serialised.
    fonts_root : path or None
        The typesetting package's folder; fonts under it are embedded.
    original : str
        The page before typesetting: each plot's placeholder is taken from it
        as it was (the plotting library takes the drawn one's id away).
    """
    page = _EXTERNAL_SCRIPT.sub("", dom)
    page = _POLICY_META.sub("", page)

    def font(match):
        data = _font_data(match.group(2), fonts_root)
        return f'url("{data}")' if data else 'url("data:font/woff;base64,")'

    page = _FILE_URL.sub(font, page)
    placeholders = {m.group(1): m.group(0) for m in _PLOT_PLACEHOLDER.finditer(original)}

    def plot(match):
        tag = placeholders.get(match.group(1))
        return tag + "</div>" if tag else match.group(0)

    page = _DRAWN_PLOT.sub(plot, page)
    return with_content_policy(page, local_files=False)


def typeset_dom(html_path):
    """The review page's DOM after Chromium has typeset it and drawn its plots (no network)."""
    from kit.review.build import PRINT_BUDGET_MS, ReviewError, chromium_path

    with tempfile.TemporaryDirectory(prefix="biasbook-chromium-") as profile:
        command = [chromium_path(), "--headless", "--no-sandbox", "--disable-gpu",
                   "--disable-background-networking", "--disable-component-update", "--disable-sync",
                   "--no-first-run", "--disable-extensions", f"--user-data-dir={profile}",
                   f"--virtual-time-budget={PRINT_BUDGET_MS}", "--dump-dom", Path(html_path).resolve().as_uri()]
        result = subprocess.run(command, capture_output=True, text=True, timeout=180)
    if result.returncode != 0 or 'data-typeset="done"' not in result.stdout:
        raise ReviewError("Chromium could not typeset the page for its HTML twin", parameter="chromium")
    return result.stdout


def write_twin(html_path, twin_path):
    """Write the offline twin of the review page ``html_path`` to ``twin_path``."""
    from kit.review.build import mathjax_url

    fonts_root = Path(unquote(urlparse(mathjax_url()).path)).parent
    original = Path(html_path).read_text(encoding="utf-8")
    page = twin_of_dom(typeset_dom(html_path), fonts_root, original)
    Path(twin_path).write_text(page, encoding="utf-8")
    return Path(twin_path)
