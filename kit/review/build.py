"""Design notebook (or record) -> design-review PDF, on a machine with no network.

Three stages, each reported through ``progress``:

``executing``   the notebook runs top to bottom in a fresh kernel (nbclient),
                with ``BIASBOOK_REVIEW=1`` so panels draw their final state
                as static figures, Bokeh resources inline and plots in the
                print theme (:func:`kit.review.forprint.with_print_setup`);
``converting``  what is for the screen only is left out
                (:func:`kit.review.forprint.for_print`), and nbconvert writes
                HTML through the kit's own template: code hidden unless asked
                for, MathJax from a local copy (the ``jupyter_server_mathjax``
                package) with wide equations fitted to the page, a title
                block, the cautions and the results summary on page one, the
                design's title as the document's title;
``printing``    Debian's Chromium prints the page to PDF, headless, with
                networking switched off, page numbers in the footer.

The page and its margins are :data:`kit.review.page.REVIEW_PAGE`;
:mod:`kit.review.printcheck` measures a printed review against them.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from kit.errors import DesignError

# jsonschema, under nbformat, compiles a grammar for the optional "iri" string
# format when it is imported (about 2 s of a review's 15); a notebook's schema
# never uses that format, so the review's process goes without it.  Set only
# if nothing imported the grammar yet.
sys.modules.setdefault("rfc3987_syntax", None)
from kit.review.forprint import PRINT_SETUP_TAG, for_print, with_print_setup
from kit.review.page import REVIEW_PAGE
from kit.review.pageone import page_one_html
from kit.review.policy import with_content_policy
from kit.review.summary import MIME
from kit.safety import css_string

TEMPLATES = Path(__file__).parent / "templates"
WIDGET_MIME = "application/vnd.jupyter.widget-view+json"
CHROMIUM_CANDIDATES = ("chromium", "chromium-browser")
PRINT_BUDGET_MS = 30000
EXECUTE_TIMEOUT_S = 900


class ReviewError(DesignError):
    """A review could not be built (missing tool, failing notebook, ...)."""


def chromium_path():
    """The Chromium binary: ``$BIASBOOK_CHROMIUM`` or the first on the PATH."""
    configured = os.environ.get("BIASBOOK_CHROMIUM")
    if configured:
        return configured
    for name in CHROMIUM_CANDIDATES:
        found = shutil.which(name)
        if found:
            return found
    raise ReviewError("printing a review needs Chromium (Debian package 'chromium')",
                      parameter="chromium", valid="a chromium binary on the PATH or in $BIASBOOK_CHROMIUM")


def mathjax_url():
    """file:// URL of the local MathJax 2 (from the jupyter_server_mathjax package)."""
    try:
        import jupyter_server_mathjax
    except ImportError:
        raise ReviewError("typesetting equations offline needs the jupyter-server-mathjax package",
                          parameter="mathjax", valid="pip install 'biasbook[notebooks]'") from None
    script = Path(jupyter_server_mathjax.__file__).parent / "static" / "MathJax.js"
    return script.as_uri() + "?config=TeX-AMS-MML_HTMLorMML-full,Safe"


def execute(notebook, directory, *, timeout=EXECUTE_TIMEOUT_S, on_cell=None):
    """Run ``notebook`` in place in a fresh kernel whose working directory is ``directory``.

    ``on_cell(done, total)`` is called before each code cell runs (``done`` cells
    finished of ``total``) and once more when the last has finished.
    """
    from nbclient import NotebookClient
    from nbclient.exceptions import CellExecutionError

    # The user's own code cells: the print theme's set-up cell is ours, not counted.
    code = [i for i, cell in enumerate(notebook.cells) if cell.cell_type == "code" and cell.source.strip()
            and PRINT_SETUP_TAG not in cell.metadata.get("tags", ())]
    position = {index: n for n, index in enumerate(code)}

    def started(cell, cell_index):
        if on_cell is not None and cell_index in position:
            on_cell(position[cell_index], len(code))

    saved = {k: os.environ.get(k) for k in ("BIASBOOK_REVIEW", "BOKEH_RESOURCES")}
    os.environ.update(BIASBOOK_REVIEW="1", BOKEH_RESOURCES="inline")
    try:
        # The kernel talks to this process over loopback only; its start-up warning about
        # unencrypted TCP is not for a reviewer's terminal (cell errors still arrive).
        NotebookClient(notebook, timeout=timeout, kernel_name="python3", on_cell_start=started,
                       extra_arguments=["--IPKernelApp.log_level=ERROR"],
                       resources={"metadata": {"path": str(directory)}}).execute()
        if on_cell is not None:
            on_cell(len(code), len(code))
    except CellExecutionError as err:
        # The exception's name and text, not the kernel's traceback: that one is
        # coloured for a terminal, and the message is printed, logged and saved.
        what = f"{err.ename}: {err.evalue}" if err.ename else "a cell failed"
        raise ReviewError(f"the notebook failed while executing: {what}", parameter="notebook") from None
    finally:
        for key, value in saved.items():
            if value is None:
                os.environ.pop(key, None)
            else:
                os.environ[key] = value
    return notebook


def find_summary(notebook):
    """The review summary data displayed by the notebook (the last one wins)."""
    found = None
    for cell in notebook.cells:
        for output in cell.get("outputs", []):
            data = output.get("data", {})
            if MIME in data:
                found = (data[MIME], data.get("text/html", ""))
    if found is None:
        raise ReviewError("the notebook displays no review summary; end it with "
                          "kit.review.review_summary(evaluation, ...)", parameter="notebook")
    return found


def _drop_live_widgets(notebook):
    # Widget views need a live kernel; their static stand-ins are printed instead.
    for cell in notebook.cells:
        for output in cell.get("outputs", []):
            output.get("data", {}).pop(WIDGET_MIME, None)
    notebook.metadata.pop("widgets", None)


def to_html(notebook, *, with_code=False):
    """HTML of an executed notebook through the kit's review template."""
    from nbconvert import HTMLExporter

    summary, _ = find_summary(notebook)
    notebook = for_print(notebook, with_code=with_code)
    _drop_live_widgets(notebook)
    # The page's <title> (escaped by the template) becomes the PDF's title.
    notebook.metadata["title"] = summary["title"]
    exporter = HTMLExporter(template_name="biasbook", extra_template_basedirs=[str(TEMPLATES)],
                            exclude_input=not with_code, exclude_input_prompt=True,
                            exclude_output_prompt=True)
    footer = f"{summary['title']} — rev. {summary['revision']} — biasbook {summary['versions']['biasbook']}"
    resources = {"biasbook": {"summary": summary, "summary_html": page_one_html(summary),
                              "mathjax_url": mathjax_url(), "footer_css": css_string(footer),
                              "page_css": REVIEW_PAGE.css(), "page_width": f"{REVIEW_PAGE.content_width:g}mm"}}
    body, _ = exporter.from_notebook_node(notebook, resources=resources)
    return with_content_policy(body)


def print_pdf(html_path, pdf_path):
    """Print a local HTML file to PDF with headless Chromium (no network).

    The page gets the browser's default file policy: it may load the scripts
    it names, but never read other files (no ``--allow-file-access-from-files``);
    its content-security policy (:mod:`kit.review.policy`) runs only the
    review's own scripts.
    """
    with tempfile.TemporaryDirectory(prefix="biasbook-chromium-") as profile:
        command = [chromium_path(), "--headless", "--no-sandbox", "--disable-gpu",
                   "--disable-background-networking", "--disable-component-update", "--disable-sync",
                   "--no-first-run", "--disable-extensions", f"--user-data-dir={profile}",
                   f"--virtual-time-budget={PRINT_BUDGET_MS}",
                   "--no-pdf-header-footer", f"--print-to-pdf={pdf_path}", Path(html_path).resolve().as_uri()]
        result = subprocess.run(command, capture_output=True, text=True, timeout=180)
    if result.returncode != 0 or not Path(pdf_path).exists():
        raise ReviewError(f"Chromium could not print the page: {result.stderr.strip()[-300:]}",
                          parameter="chromium")


def build_review(source, output, *, with_code=False, progress=None, keep_html=None, twin=None):
    """Build the design-review PDF of a notebook or a design record.

    Parameters
    ----------
    source : path
        A design notebook (``.ipynb``) or a design record (``.toml``, turned into
        a notebook by :func:`kit.review.notebook.notebook_for_record`).
    output : path
        The PDF to write.
    with_code : bool
        Show code cells (hidden by default: a review wants results).
    progress : callable, optional
        Called with each stage: ``"executing"``, ``"converting"``, ``"printing"``,
        (``"twin"``), ``"done"``; while executing, also with ``"executing"``
        and the keywords ``cell`` (cells finished) and ``cells`` (code cells in all).
    keep_html : path, optional
        Also keep the HTML page the PDF is printed from (it loads the local
        typesetting library: for tests and this machine).
    twin : path, optional
        Also write the offline HTML twin of the PDF (:mod:`kit.review.twin`):
        one file, equations set, plots interactive, no network, for sharing.

    Returns
    -------
    pathlib.Path
        The PDF written.
    """
    import nbformat

    from kit.review.notebook import notebook_for_record

    report = progress or (lambda stage, **count: None)
    source, output = Path(source), Path(output)
    if not source.exists():
        raise ReviewError("no such file", parameter="source", value=str(source))
    if source.suffix == ".toml":
        from kit.record import load_record

        notebook = notebook_for_record(load_record(source), source.resolve())
    elif source.suffix == ".ipynb":
        notebook = nbformat.read(source, as_version=4)
    else:
        raise ReviewError("not a notebook or a design record", parameter="source", value=str(source),
                          valid="a .ipynb or .toml file")
    report("executing")
    notebook = execute(with_print_setup(notebook), source.resolve().parent,
                       on_cell=lambda done, total: report("executing", cell=done, cells=total))
    report("converting")
    html = to_html(notebook, with_code=with_code)
    with tempfile.TemporaryDirectory(prefix="biasbook-review-") as scratch:
        page = Path(scratch) / "review.html"
        page.write_text(html, encoding="utf-8")
        if keep_html:
            shutil.copyfile(page, keep_html)
        report("printing")
        output.parent.mkdir(parents=True, exist_ok=True)
        print_pdf(page, output.resolve())
        if twin:
            from kit.review.twin import write_twin

            report("twin")
            write_twin(page, twin)
    report("done")
    return output
