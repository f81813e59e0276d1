"""A design record is mailed between people: nothing in it may run or be read as markup.

Two walls, each tested on its own: every record text is escaped for the
language of each output (HTML, Markdown, LaTeX, CSS), and the page a review
is printed from runs only the review's own scripts and reads no file.
The hostile texts are of the kinds a web page's attacker uses (script
elements, event-handler attributes, ``javascript:`` links, a request for a
local file, equations); common practice of web security, no source.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

from kit.record import load_record
from kit.review.notebook import notebook_for_record
from kit.review.policy import content_policy, with_content_policy
from kit.safety import css_string, html_attribute, html_text, latex_text, markdown_block

needs_printing = pytest.mark.skipif(
    shutil.which("chromium") is None or shutil.which("pdftotext") is None,
    reason="needs Debian's chromium and poppler-utils (python3 dev.py test installs them)")

LEAK_MARKER = "SECRET-FILE-CONTENT-4711"
# What a hostile script writes if it runs; the record only holds it in two
# pieces, so the word can reach a PDF only by being executed.
RAN_MARKER = "HOSTILESCRIPTRAN"
PAYLOAD = "'HOSTILE' + 'SCRIPTRAN'"

HOSTILE_TITLE = "T<script>document.title=" + PAYLOAD + "</script><b>$x^2$</b>"
HOSTILE_NOTES = (
    '<img src=x onerror="document.body.innerHTML=' + PAYLOAD + '">\n'
    '<script>var r = new XMLHttpRequest(); r.open("GET", "LEAK_URL", false); r.send();'
    'document.body.innerHTML = "LEAK:" + r.responseText;</script>\n'
    "# heading [link](javascript:alert(1)) \\(y\\) <iframe src=\"file:///etc/passwd\"></iframe>"
)
HOSTILE_AUTHOR = "<svg onload=alert(1)>"
HOSTILE_REVISION = "</style><i>r</i>"
HOSTILE_LABEL = "<img src=y onerror=alert(2)>"


def hostile_record(tmp_path):
    """A legal record whose every free text is hostile; the file it tries to read holds a marker."""
    secret = tmp_path / "secret.txt"
    secret.write_text(LEAK_MARKER)
    notes = HOSTILE_NOTES.replace("LEAK_URL", secret.as_uri())

    def toml_string(text):
        return '"""\n' + text.replace("\\", "\\\\") + '\n"""' if "\n" in text else (
            '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"')

    path = tmp_path / "hostile.toml"
    path.write_text(f"""biasbook_record = 1
title = {toml_string(HOSTILE_TITLE)}
revision = {toml_string(HOSTILE_REVISION)}
author = {toml_string(HOSTILE_AUTHOR)}
notes = {toml_string(notes)}

[circuit]
topology = "divider_source"
polarity = "npn"

[values]
r1 = "47k"
r2 = "12k"
r_e = "2k4"
v_supply = "15 V"
v_load = "9 V"

[devices.Q1]
label = {toml_string(HOSTILE_LABEL)}
""", encoding="utf-8")
    return path


# --- escaping, one output language at a time --------------------------------------------

@pytest.mark.parametrize("text", [HOSTILE_TITLE, HOSTILE_NOTES, HOSTILE_AUTHOR, HOSTILE_REVISION,
                                  HOSTILE_LABEL])
def test_html_text_has_no_tag_and_no_open_equation(text):
    shown = html_text(text)
    # Only the kit's own wrapper element may remain; the record's < and > are entities.
    inner = re.sub(r'^<span class="tex2jax_ignore">(.*)</span>$', r"\1", shown, flags=re.S)
    assert "<" not in inner and ">" not in inner
    if "$" in text or "\\" in text:
        assert shown.startswith('<span class="tex2jax_ignore">')
    assert '"' not in html_attribute(text) and "'" not in html_attribute(text)


def test_markdown_keeps_the_text_and_drops_every_markup():
    import nbconvert.filters

    rendered = nbconvert.filters.markdown2html(markdown_block(HOSTILE_NOTES))
    assert "<img" not in rendered and "<script" not in rendered and "<iframe" not in rendered
    assert 'href="javascript' not in rendered and "<h1" not in rendered
    # every character the record holds is still there, as text
    assert "onerror" in rendered and "javascript:alert(1)" in rendered


def test_latex_and_css_escapes_leave_no_command_or_quote():
    assert latex_text(r"\input{/etc/passwd} $x$ 5% #1 & _") == (
        r"\textbackslash{}input\{/etc/passwd\} \$x\$ 5\% \#1 \& \_")
    css = css_string('a"; } body { display: none } </style><script>')
    assert re.fullmatch(r'"[A-Za-z0-9 \\]*"', css)


def test_template_notebook_shows_record_text_only_as_escaped_text(tmp_path):
    record = load_record(hostile_record(tmp_path))
    notebook = notebook_for_record(record, tmp_path / "hostile.toml")
    markdown = "\n".join(c.source for c in notebook.cells if c.cell_type == "markdown")
    for raw in ("<script", "<img", "<iframe", "<svg", "onerror=\"", "[link](javascript"):
        assert raw not in markdown
    # code cells quote the title as a Python string literal, never as code
    code = "\n".join(c.source for c in notebook.cells if c.cell_type == "code")
    assert "document.title" not in code.replace(repr(record.title), "")


def test_comparison_notebook_shows_record_text_only_as_escaped_text(tmp_path):
    import json

    from kit.review.notebook import comparison_notebook

    hostile = hostile_record(tmp_path)
    notebook = comparison_notebook([hostile, hostile], HOSTILE_TITLE)
    markdown = "\n".join(c.source for c in notebook.cells if c.cell_type == "markdown")
    for raw in ("<script", "<img", "<iframe", "<svg", "<b>"):
        assert raw not in markdown
    # code holds the titles only inside JSON string literals
    code = "\n".join(c.source for c in notebook.cells if c.cell_type == "code")
    assert "document.title" not in code.replace(json.dumps(HOSTILE_TITLE), "")


def test_page_one_shows_record_text_escaped_and_the_schematic_only_as_an_image(tmp_path):
    import kit
    from kit.review.pageone import page_one_html
    from kit.review.summary import review_summary

    record = load_record(hostile_record(tmp_path))
    html = page_one_html(review_summary(kit.evaluate(record.design), None, record).data)
    for raw in ("<script", "<img src=y", "<iframe", "<svg"):
        assert raw not in html
    # the device label is shown as text in the device table ...
    assert html_text(HOSTILE_LABEL) in html
    # ... and the one image is the kit's schematic from a data: address (an image never runs script)
    images = re.findall(r"<img [^>]*>", html)
    assert len(images) == 1 and 'src="data:image/svg+xml;base64,' in images[0]


def test_policy_lists_only_scripts_outside_markdown_cells():
    page = ('<html><head></head><body><script>var ok = 1;</script>'
            '<div class="jp-Cell jp-MarkdownCell"><div><script>var bad = 1;</script></div></div>'
            '<script src="file:///opt/mathjax/MathJax.js"></script></body></html>')
    policy = content_policy(page)
    assert policy.count("'sha256-") == 1
    assert "'unsafe-inline'" not in policy.split("style-src")[0]  # scripts: hashes only
    assert "'unsafe-eval'" not in policy and "'unsafe-hashes'" not in policy
    assert "connect-src 'none'" in policy and "file:" in policy.split(";")[1]
    assert with_content_policy(page).startswith('<html><head><meta http-equiv="Content-Security-Policy"')


# --- the printing browser ---------------------------------------------------------------

def _pdf_text(pdf):
    return subprocess.run(["pdftotext", str(pdf), "-"], capture_output=True, text=True, check=True).stdout


@needs_printing
def test_print_browser_reads_no_file_even_for_a_trusted_script(tmp_path):
    from kit.review.build import print_pdf

    secret = tmp_path / "secret.txt"
    secret.write_text(LEAK_MARKER)
    script = ("var out = 'READ-BLOCKED'; try { var r = new XMLHttpRequest(); r.open('GET', '"
              + secret.as_uri() + "', false); r.send(); out = 'LEAK:' + r.responseText; } catch (e) {} "
              "document.getElementById('out').textContent = out;")
    page = tmp_path / "page.html"
    # No policy on this page: the browser's own file rule is the wall under test.
    page.write_text(f"<html><body><p id='out'>NOT-RUN</p><script>{script}</script></body></html>")
    print_pdf(page, tmp_path / "page.pdf")
    text = _pdf_text(tmp_path / "page.pdf")
    assert "READ-BLOCKED" in text and LEAK_MARKER not in text


@needs_printing
def test_policy_stops_a_script_that_reached_a_markdown_cell(tmp_path):
    from kit.review.build import print_pdf

    page = tmp_path / "page.html"
    page.write_text(with_content_policy(
        "<html><head></head><body><p id='a'>TRUSTED-NOT-RUN</p>"
        "<script>document.getElementById('a').textContent = 'TRUSTED-RAN';</script>"
        "<div class='jp-Cell jp-MarkdownCell'><p id='b'>UNTRUSTED-NOT-RUN</p>"
        f"<script>document.getElementById('b').textContent = '{RAN_MARKER}';</script>"
        f"<img src='missing.png' onerror=\"document.body.textContent = '{RAN_MARKER}'\"></div>"
        "</body></html>"))
    print_pdf(page, tmp_path / "page.pdf")
    text = _pdf_text(tmp_path / "page.pdf")
    assert "TRUSTED-RAN" in text and "UNTRUSTED-NOT-RUN" in text and RAN_MARKER not in text


@needs_printing
def test_review_of_a_hostile_record_shows_its_text_and_runs_none_of_it(tmp_path):
    from kit.review.build import build_review

    pdf = build_review(hostile_record(tmp_path), tmp_path / "review.pdf", keep_html=tmp_path / "review.html")
    text = re.sub(r"\s+", " ", _pdf_text(pdf))
    assert RAN_MARKER not in text
    assert "LEAK:" + LEAK_MARKER not in text and LEAK_MARKER not in text
    # the record's words are there, as text
    assert "onerror" in text and "<svg onload=alert(1)>" in text and "</style><i>r</i>" in text
    html = Path(tmp_path / "review.html").read_text(encoding="utf-8")
    for raw in ("<img src=x", "<img src=y", "<svg onload", "<iframe", "</style><i>"):
        assert raw not in html
    assert 'http-equiv="Content-Security-Policy"' in html
    # the PDF's title metadata is the record's title as text (PDF 32000-1:2008, 14.3.3 /Title)
    from kit.review.printcheck import pdf_info

    assert pdf_info(pdf)["Title"] == HOSTILE_TITLE
