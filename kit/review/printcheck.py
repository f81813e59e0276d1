"""Print quality of a design review, measured the way a reader meets the paper.

Two looks at one review:

the kept HTML page
    opened in Chromium (Playwright driving Debian's ``/usr/bin/chromium``, never
    a downloaded browser) with print media emulated, laid out at the printable
    width of :data:`kit.review.page.REVIEW_PAGE`, after the equations are
    typeset and the plots drawn.  Measured: visible elements that reach past
    the printable width, boxes that scroll or clip sideways (a printed
    scrollbar, a cut equation), plot toolbars and the plotting library's
    logo, and text that is not for a reviewer.
the printed PDF
    each page drawn small in grey (``pdftoppm``) to see how far down its ink
    reaches, its text lines with their positions (``pdftotext -bbox-layout``)
    to find the section headings, and its metadata (``pdfinfo``).  Measured:
    pages but the last that are less than a quarter full, headings with
    nothing after them on their page, and the document title.

The checker lives in the kit (not only in the tests) so anyone can run it on
a review of their own notebook::

    python -m kit.review.printcheck review.html review.pdf --title "..."

It needs the ``playwright`` Python package, Chromium and poppler-utils.

Examples
--------
>>> text_not_for_a_reviewer("Checked when the notebook runs in the test suite.")
['test suite']
>>> text_not_for_a_reviewer("I_out 10.03 mA, compliance 0.83 V ... 31.8 V")
[]
"""

from __future__ import annotations

import argparse
import re
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ElementTree
from dataclasses import dataclass, field
from pathlib import Path

from kit.review.notebook import REQUIREMENT_PROMPT
from kit.review.page import MM_PER_INCH, PT_PER_INCH, REVIEW_PAGE

# Text that belongs to the notebook on a screen, never to the printed review.
NOT_FOR_A_REVIEWER = {
    "test-suite marker": re.compile(r"NBVAL", re.IGNORECASE),
    "test suite": re.compile(r"\btest[- ]suite\b", re.IGNORECASE),
    "template prompt": re.compile(re.escape(REQUIREMENT_PROMPT.split(":")[0]), re.IGNORECASE),
    "slider instructions": re.compile(r"\bsliders?\b", re.IGNORECASE),
    "'Try it'": re.compile(r"\bTry it\b", re.IGNORECASE),
    # a check cell's Python repr ("met: False", a tuple of SymPy expressions) is for the test suite
    "check-cell text": re.compile(r"\b\w+: (?:True|False)\b|\(-?\(\w+\*\w+"),
}
QUARTER = 0.25
# Ink this far below a heading's text still belongs to the heading (its rule).
HEADING_RULE_MM = 3.0
RASTER_DPI = 36  # enough to see where ink ends on a page, cheap to read
INK_LEVEL = 200  # grey level (0 black, 255 white) darker than which a pixel is ink
PAGE_READY_TIMEOUT_MS = 60000


def text_not_for_a_reviewer(text):
    """Names of the :data:`NOT_FOR_A_REVIEWER` kinds found in ``text``."""
    return [name for name, pattern in NOT_FOR_A_REVIEWER.items() if pattern.search(text)]


def _squeeze(text):
    """Text without whitespace or heading anchors, for matching across line breaks."""
    return re.sub(r"\s+", "", text.replace("¶", ""))


@dataclass
class PrintReport:
    """What :func:`check_review` measured; ``problems()`` is empty for a clean review."""

    wide: list = field(default_factory=list)  # the outermost elements past the printable width
    wide_elements: int = 0  # every element past it, nested ones included
    scrolled: list = field(default_factory=list)  # boxes that scroll or clip sideways
    plot_tools: list = field(default_factory=list)  # visible toolbars and logos
    unwanted_text: list = field(default_factory=list)  # (kind, where, excerpt)
    sparse_pages: list = field(default_factory=list)  # (page, fraction filled)
    stranded_headings: list = field(default_factory=list)  # (page, heading)
    repeated: list = field(default_factory=list)  # section headings or result blocks printed twice
    pages: int = 0
    title: str = ""
    expected_title: str | None = None
    fill: list = field(default_factory=list)  # fraction filled, page by page

    def counts(self):
        """Each measure as a number (0 everywhere for a clean review)."""
        return {"wide elements": self.wide_elements, "scrolled or clipped boxes": len(self.scrolled),
                "plot toolbars and logos": len(self.plot_tools), "text not for a reviewer": len(self.unwanted_text),
                "pages below a quarter full": len(self.sparse_pages),
                "headings ending a page": len(self.stranded_headings),
                "sections printed twice": len(self.repeated),
                "title differs": int(self.expected_title is not None and self.title != self.expected_title)}

    def problems(self):
        """One readable line per problem found."""
        lines = []
        if self.wide:
            lines.append(f"{self.wide_elements} elements reach past the printable width, in "
                         f"{len(self.wide)} places: " + "; ".join(self.wide))
        lines += [f"box scrolls or clips sideways: {b}" for b in self.scrolled]
        lines += [f"plot tool printed: {t}" for t in self.plot_tools]
        lines += [f"{kind} in the {where}: {excerpt!r}" for kind, where, excerpt in self.unwanted_text]
        lines += [f"page {p} is only {f:.0%} full" for p, f in self.sparse_pages]
        lines += [f"heading {h!r} is the last thing on page {p}" for p, h in self.stranded_headings]
        lines += [f"printed twice: {r}" for r in self.repeated]
        if self.expected_title is not None and self.title != self.expected_title:
            lines.append(f"PDF title is {self.title!r}, not {self.expected_title!r}")
        return lines


# --- the HTML page in Chromium's print layout -------------------------------------------

_MEASURE_PAGE = r"""
({width, tolerance}) => {
  const describe = (el, extra) => {
    const cls = (typeof el.className === "string" ? el.className : "").trim().split(/\s+/).slice(0, 2).join(".");
    // by code points, so a mathematical letter is never cut in half
    const text = Array.from((el.innerText || el.textContent || "").replace(/\s+/g, " ").trim()).slice(0, 50).join("");
    return `<${el.tagName.toLowerCase()}${cls ? "." + cls : ""}> ${extra} "${text}"`;
  };
  const clipsX = (style) => style.overflowX !== "visible";
  // The CSS 'clip' rectangle of an absolutely positioned element, in page coordinates.
  const clipRect = (el, style) => {
    const m = /^rect\(([^)]*)\)$/.exec(style.clip || "");  /* # safe: a JavaScript RegExp, not Python exec */
    if (!m || !["absolute", "fixed"].includes(style.position)) return null;
    const r = el.getBoundingClientRect();
    const [t, ri, b, l] = m[1].split(/[ ,]+/).map((v) => (v === "auto" ? null : parseFloat(v)));
    return {left: r.left + (l ?? 0), right: ri === null ? r.right : r.left + ri,
            top: r.top + (t ?? 0), bottom: b === null ? r.bottom : r.top + b};
  };
  // Whether any of el's box is painted: its rectangle cut by its own clip and by
  // every ancestor that clips (overflow other than visible, or a clip rectangle).
  const paintedRange = (el, rect) => {
    let left = rect.left, right = rect.right, top = rect.top, bottom = rect.bottom;
    for (let a = el; a && a !== document.body; a = a.parentElement) {
      const style = getComputedStyle(a);
      const r = a.getBoundingClientRect();
      if (a !== el && clipsX(style)) { left = Math.max(left, r.left); right = Math.min(right, r.right); }
      if (a !== el && style.overflowY !== "visible") { top = Math.max(top, r.top); bottom = Math.min(bottom, r.bottom); }
      const c = clipRect(a, style);
      if (c) {
        left = Math.max(left, c.left); right = Math.min(right, c.right);
        top = Math.max(top, c.top); bottom = Math.min(bottom, c.bottom);
      }
    }
    return right - left > 0.5 && bottom - top > 0.5;
  };
  const visible = (el, rect) => rect.width > 0.5 && rect.height > 0.5
    && el.checkVisibility({visibilityProperty: true, opacityProperty: true}) && paintedRange(el, rect);
  const wide = [], scrolled = [];
  let outermost = null;
  for (const el of document.body.querySelectorAll("*")) {
    const rect = el.getBoundingClientRect();
    if (!visible(el, rect)) continue;
    if (rect.right > width + tolerance || rect.left < -tolerance) {
      if (!(outermost && outermost.contains(el))) outermost = el;
      wide.push(outermost === el ? describe(el, `${rect.left.toFixed(0)}..${rect.right.toFixed(0)} px of ${width.toFixed(0)}`) : null);
    }
    const style = getComputedStyle(el);
    if (clipsX(style) && el.scrollWidth > el.clientWidth + 1 && el.clientWidth > 0) {
      const how = ["auto", "scroll"].includes(style.overflowX) ? "scrolls" : "clips";
      scrolled.push(describe(el, `${how} ${el.scrollWidth} px in ${el.clientWidth} px`));
    }
  }
  // Plot toolbars and logos live inside the plots' shadow trees.
  const tools = [];
  const walk = (root) => {
    for (const el of root.querySelectorAll("*")) {
      const classes = typeof el.className === "string" ? el.className : "";
      if (/\bbk-(toolbar|logo)\b/i.test(classes)) {
        const rect = el.getBoundingClientRect();
        if (rect.width > 0.5 && rect.height > 0.5 && el.checkVisibility({visibilityProperty: true}))
          tools.push(classes.split(/\s+/)[0]);
      }
      if (el.shadowRoot) walk(el.shadowRoot);
    }
  };
  walk(document);
  const headings = [...document.body.querySelectorAll("h1, h2, h3, h4, h5, h6")]
    .filter((h) => visible(h, h.getBoundingClientRect()))
    .map((h) => h.innerText.replace(/\s+/g, " ").trim()).filter((t) => t);
  // The notebook's own sections (h1-h3; a result's table titles are h4) and every result block.
  const sections = [...document.body.querySelectorAll("h1, h2, h3")]
    .filter((h) => visible(h, h.getBoundingClientRect()))
    .map((h) => h.innerText.replace(/\s+/g, " ").trim()).filter((t) => t);
  const blocks = [...document.body.querySelectorAll(".bb-result")]
    .filter((b) => visible(b, b.getBoundingClientRect()))
    .map((b) => b.innerText.replace(/\s+/g, " ").trim()).filter((t) => t);
  return {wide, scrolled, tools, headings, sections, blocks, text: document.body.innerText, title: document.title};
}
"""

# Ready when the equations are typeset (the template marks <body>) and every
# embedded plot has drawn into its placeholder.
_PAGE_READY = r"""
() => (document.body.dataset.typeset === "done" || !window.MathJax)
   && [...document.querySelectorAll("[data-root-id]")].every((el) => el.childElementCount > 0 || el.shadowRoot)
"""


def chromium_for_checks():
    """The system Chromium that Playwright drives (``$BIASBOOK_CHROMIUM`` or the PATH)."""
    from kit.review.build import chromium_path

    return chromium_path()


def measure_html(html_path, page_geometry=REVIEW_PAGE, *, tolerance_px=0.5):
    """Measure the kept review page in Chromium's print layout (see the module docstring).

    Returns
    -------
    dict
        ``wide`` and ``scrolled`` (descriptions of offending elements; ``wide``
        names the outermost element of each offending subtree and holds ``None``
        for the elements inside it), ``tools``, ``headings`` (visible heading
        texts in order), ``text`` (the visible text) and ``title``.
    """
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        from kit.review.build import ReviewError

        raise ReviewError("checking a printed review needs the playwright Python package "
                          "(it drives the system Chromium; no browser is downloaded)",
                          parameter="playwright", valid="pip install 'biasbook[dev]'") from None

    width = page_geometry.content_width_px
    with sync_playwright() as driver:
        browser = driver.chromium.launch(
            executable_path=chromium_for_checks(), headless=True,
            args=["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                  "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-extensions"])
        try:
            context = browser.new_context(viewport={"width": round(width), "height": round(
                page_geometry.content_height_px)}, device_scale_factor=1)
            page = context.new_page()
            page.emulate_media(media="print")
            page.goto(Path(html_path).resolve().as_uri(), wait_until="load")
            page.wait_for_function(_PAGE_READY, timeout=PAGE_READY_TIMEOUT_MS, polling=250)
            page.evaluate("() => document.fonts.ready")
            found = page.evaluate(_MEASURE_PAGE, {"width": width, "tolerance": tolerance_px})
        finally:
            browser.close()
    return found


# --- the PDF ----------------------------------------------------------------------------

def _run(*command):
    try:
        return subprocess.run([str(c) for c in command], capture_output=True, check=True).stdout
    except FileNotFoundError:
        from kit.review.build import ReviewError

        raise ReviewError(f"checking a printed review needs {command[0]} (Debian package 'poppler-utils')",
                          parameter=command[0]) from None


def pdf_info(pdf_path):
    """``pdfinfo`` fields as a dict of strings (``Title``, ``Pages``, ...)."""
    info = {}
    for line in _run("pdfinfo", "-enc", "UTF-8", pdf_path).decode("utf-8", "replace").splitlines():
        key, _, value = line.partition(":")
        info[key.strip()] = value.strip()
    return info


def _read_pgm(path):
    """Width, height and grey bytes of a binary PGM (P5) file as pdftoppm writes it."""
    data = Path(path).read_bytes()
    fields, position = [], 0
    while len(fields) < 4:
        while data[position:position + 1].isspace():
            position += 1
        if data[position:position + 1] == b"#":
            position = data.index(b"\n", position) + 1
            continue
        end = position
        while not data[end:end + 1].isspace():
            end += 1
        fields.append(data[position:end])
        position = end
    if fields[0] != b"P5" or int(fields[3]) > 255:
        raise ValueError(f"{path}: not an 8-bit binary PGM")
    width, height = int(fields[1]), int(fields[2])
    return width, height, data[position + 1:position + 1 + width * height]


def ink_rows(pdf_path, page_geometry=REVIEW_PAGE, dpi=RASTER_DPI):
    """For each page, the rows (in mm from the sheet's top) of the content area that hold ink.

    The footer in the bottom margin is left out, so is the top margin.
    """
    with tempfile.TemporaryDirectory(prefix="biasbook-printcheck-") as scratch:
        _run("pdftoppm", "-gray", "-r", dpi, pdf_path, Path(scratch) / "page")
        pages = sorted(Path(scratch).glob("page-*.pgm"), key=lambda p: int(p.stem.rsplit("-", 1)[1]))
        result = []
        for path in pages:
            width, height, grey = _read_pgm(path)
            mm_per_row = page_geometry.height / height
            first = int(page_geometry.top / mm_per_row)
            last = int((page_geometry.height - page_geometry.bottom) / mm_per_row)
            rows = [row * mm_per_row for row in range(first, min(last, height))
                    if min(grey[row * width:(row + 1) * width]) < INK_LEVEL]
            result.append(rows)
    return result


def text_lines(pdf_path):
    """For each page, its text lines as ``(text, top_mm, bottom_mm)`` from ``pdftotext -bbox-layout``."""
    xhtml = _run("pdftotext", "-bbox-layout", "-enc", "UTF-8", pdf_path, "-")
    root = ElementTree.fromstring(xhtml)
    ns = {"x": "http://www.w3.org/1999/xhtml"}
    to_mm = MM_PER_INCH / PT_PER_INCH
    pages = []
    for page in root.iter("{http://www.w3.org/1999/xhtml}page"):
        lines = []
        for line in page.iterfind(".//x:line", ns):
            words = [w.text or "" for w in line.iterfind("x:word", ns)]
            lines.append((" ".join(words), float(line.get("yMin")) * to_mm, float(line.get("yMax")) * to_mm))
        lines.sort(key=lambda item: item[1])
        pages.append(lines)
    return pages


def pdf_text(pdf_path):
    """The PDF's text in reading order."""
    return _run("pdftotext", "-enc", "UTF-8", pdf_path, "-").decode("utf-8", "replace")


def _heading_bottoms(lines, headings):
    """``(heading, bottom_mm)`` of every heading set on a page (up to three lines long)."""
    wanted = {_squeeze(h): h for h in headings}
    found = []
    for start in range(len(lines)):
        joined = ""
        for end in range(start, min(start + 3, len(lines))):
            joined += _squeeze(lines[end][0])
            if joined in wanted:
                found.append((wanted[joined], lines[end][2]))
                break
    return found


def measure_pdf(pdf_path, headings, page_geometry=REVIEW_PAGE):
    """Fill of each page, headings that end a page, title and page count of a printed review."""
    ink = ink_rows(pdf_path, page_geometry)
    lines = text_lines(pdf_path)
    info = pdf_info(pdf_path)
    fill, stranded = [], []
    for number, rows in enumerate(ink, start=1):
        bottom = rows[-1] if rows else page_geometry.top
        fill.append(max(0.0, (bottom - page_geometry.top) / page_geometry.content_height))
        for heading, heading_bottom in _heading_bottoms(lines[number - 1] if number <= len(lines) else [],
                                                        headings):
            if not any(row > heading_bottom + HEADING_RULE_MM for row in rows):
                stranded.append((number, heading))
    return {"fill": fill, "stranded": stranded, "title": info.get("Title", ""),
            "pages": int(info.get("Pages", len(ink)))}


# --- both -------------------------------------------------------------------------------

def _excerpt(text, pattern):
    match = pattern.search(text)
    return re.sub(r"\s+", " ", text[max(0, match.start() - 30):match.end() + 30]).strip()


def _repeats(texts, what):
    """``"<what> '<start of its text>'"`` for every text met more than once."""
    seen, out = set(), []
    for text in texts:
        if text in seen and not any(text[:60] in r for r in out):
            out.append(f"{what} {text[:60]!r}")
        seen.add(text)
    return out


def check_review(html_path, pdf_path, expected_title=None, page_geometry=REVIEW_PAGE):
    """Measure a review's kept HTML page and its PDF; see :class:`PrintReport`.

    Parameters
    ----------
    html_path, pdf_path : path
        The page kept by ``build_review(..., keep_html=...)`` and the PDF printed from it.
    expected_title : str, optional
        The design's title, which the PDF's title metadata must equal.
    """
    page = measure_html(html_path, page_geometry)
    printed = measure_pdf(pdf_path, page["headings"], page_geometry)
    report = PrintReport(wide=[w for w in page["wide"] if w is not None], wide_elements=len(page["wide"]),
                         scrolled=page["scrolled"], plot_tools=page["tools"], pages=printed["pages"],
                         title=printed["title"], expected_title=expected_title, fill=printed["fill"],
                         stranded_headings=printed["stranded"])
    for where, text in (("page", page["text"]), ("PDF", pdf_text(pdf_path))):
        for kind, pattern in NOT_FOR_A_REVIEWER.items():
            if pattern.search(text):
                report.unwanted_text.append((kind, where, _excerpt(text, pattern)))
    report.repeated = _repeats(page["sections"], "section") + _repeats(page["blocks"], "result block")
    report.sparse_pages = [(n, f) for n, f in enumerate(printed["fill"][:-1], start=1) if f < QUARTER]
    return report


def main(argv=None):
    """``python -m kit.review.printcheck PAGE.html REVIEW.pdf [--title T]``; exit 1 on problems."""
    parser = argparse.ArgumentParser(prog="python -m kit.review.printcheck",
                                     description="print quality of a design review")
    parser.add_argument("html", help="the review's kept HTML page")
    parser.add_argument("pdf", help="the PDF printed from it")
    parser.add_argument("--title", help="the design's title, expected in the PDF's metadata")
    args = parser.parse_args(argv)
    report = check_review(args.html, args.pdf, args.title)
    for name, count in report.counts().items():
        print(f"{name:28} {count}")
    print("fill by page: " + " ".join(f"{f:.0%}" for f in report.fill))
    for line in report.problems():
        print("  " + line)
    return 1 if report.problems() else 0


if __name__ == "__main__":
    sys.exit(main())
