"""The content-security policy of a review page: only the review's own scripts run.

A review is printed from a local HTML page.  Its text comes partly from a
design record that someone mailed, and even though every record text is
escaped (:mod:`kit.safety`), the page carries a policy as a second wall:

* inline scripts run only if their SHA-256 is listed, and only the scripts
  of code-cell outputs and of the kit's template are listed — never one
  inside a Markdown cell, where record text is shown;
* event-handler attributes (``onerror=...``) and ``javascript:`` URLs never
  run (no ``'unsafe-inline'``, no ``'unsafe-hashes'``);
* external scripts only from local files (the typesetting library), no
  network, no requests from script (``connect-src 'none'``), no frames,
  objects, forms or base URL.

Examples
--------
>>> page = ('<html><head></head><body><script>var a = 1;</script>'
...         '<div class="jp-Cell jp-MarkdownCell"><script>alert(1)</script></div></body></html>')
>>> policy = content_policy(page)
>>> "'sha256-" in policy and policy.count("sha256-") == 1
True
>>> "connect-src 'none'" in policy
True
"""

from __future__ import annotations

import base64
import hashlib
from html.parser import HTMLParser

# Where record text is shown: scripts in these never get a hash.
UNTRUSTED_CLASS = "jp-MarkdownCell"


class _ScriptFinder(HTMLParser):
    """Inline script texts and external script sources outside Markdown cells."""

    def __init__(self, text):
        super().__init__(convert_charrefs=False)
        self.text = text
        self.line_starts = [0]
        for k, ch in enumerate(text):
            if ch == "\n":
                self.line_starts.append(k + 1)
        self.depth = 0
        self.untrusted_depth = None
        self.script_start = None
        self.script_trusted = False
        self.inline = []
        self.sources = []

    def _offset(self):
        line, column = self.getpos()
        return self.line_starts[line - 1] + column

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        if tag == "div":
            self.depth += 1
            classes = (attributes.get("class") or "").split()
            if self.untrusted_depth is None and UNTRUSTED_CLASS in classes:
                self.untrusted_depth = self.depth
        elif tag == "script":
            trusted = self.untrusted_depth is None
            if attributes.get("src"):
                if trusted:
                    self.sources.append(attributes["src"])
            else:
                self.script_start = self._offset() + len(self.get_starttag_text())
                self.script_trusted = trusted

    def handle_endtag(self, tag):
        if tag == "div":
            if self.untrusted_depth == self.depth:
                self.untrusted_depth = None
            self.depth = max(self.depth - 1, 0)
        elif tag == "script" and self.script_start is not None:
            if self.script_trusted:
                self.inline.append(self.text[self.script_start:self._offset()])
            self.script_start = None


def _hash(script):
    digest = hashlib.sha256(script.encode("utf-8")).digest()
    return "'sha256-" + base64.b64encode(digest).decode("ascii") + "'"


def content_policy(page, *, local_files=True):
    """The policy for ``page`` (HTML text), as the value of a CSP meta element.

    With ``local_files=False`` (the offline twin, :mod:`kit.review.twin`)
    nothing is loaded from a ``file:`` address at all.
    """
    finder = _ScriptFinder(page)
    finder.feed(page)
    finder.close()
    scripts = sorted({_hash(s) for s in finder.inline})
    files = " file:" if local_files else ""
    if local_files and any(src.startswith("file:") for src in finder.sources):
        scripts.append("file:")
    return "; ".join([
        "default-src 'none'",
        "script-src " + (" ".join(scripts) or "'none'"),
        f"style-src 'unsafe-inline'{files}",
        f"img-src data: blob:{files}",
        f"font-src data:{files}",
        "connect-src 'none'",
        "media-src 'none'",
        "object-src 'none'",
        "frame-src 'none'",
        "worker-src 'none'",
        "base-uri 'none'",
        "form-action 'none'",
    ])


def with_content_policy(page, *, local_files=True):
    """``page`` with its content-security policy as the first element of ``<head>``."""
    policy = content_policy(page, local_files=local_files)
    meta = f'<meta http-equiv="Content-Security-Policy" content="{policy}">'
    head = page.find("<head")
    if head < 0:
        return meta + page
    close = page.index(">", head) + 1
    return page[:close] + meta + page[close:]
