"""Small HTML pieces for the rich displays of result objects.

Plain functions returning strings; no Jupyter import, so results render in
a notebook, in an exported page and in a test alike.
"""

from __future__ import annotations

from kit.safety import html_text

STYLE = (
    "<style>"
    ".bb-result{font-family:system-ui,sans-serif;font-size:13px;max-width:60em}"
    ".bb-result h4{margin:.8em 0 .3em;color:#264653;border-bottom:2px solid #e9c46a}"
    ".bb-result table{border-collapse:collapse;margin:.2em 0 .6em}"
    ".bb-result td,.bb-result th{padding:2px 10px;border-bottom:1px solid #ddd;"
    "text-align:left!important;vertical-align:top}"
    ".bb-result th{background:#f4f1e8}"
    ".bb-result td.num{text-align:right!important;font-variant-numeric:tabular-nums}"
    ".bb-ok{color:#2a7d4f;font-weight:600}.bb-bad{color:#b23a48;font-weight:600}"
    "</style>"
)


def escape(value):
    """Text for an HTML element: escaped and never typeset (:func:`kit.safety.html_text`)."""
    return html_text(value)


def table(headers, rows, *, numeric=()):
    """An HTML table; columns whose index is in ``numeric`` are right-aligned.

    Cells are escaped unless wrapped in :class:`Raw`.

    Examples
    --------
    >>> table(["a"], [["<1>"]])
    '<table><tr><th>a</th></tr><tr><td>&lt;1&gt;</td></tr></table>'
    """
    head = "".join(f"<th>{escape(h)}</th>" for h in headers)
    body = []
    for row in rows:
        cells = []
        for k, cell in enumerate(row):
            css = ' class="num"' if k in numeric else ""
            text = cell.text if isinstance(cell, Raw) else escape(cell)
            cells.append(f"<td{css}>{text}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><tr>{head}</tr>{''.join(body)}</table>"


class Raw:
    """Trusted HTML (made by the kit itself) that :func:`table` must not escape."""

    def __init__(self, text):
        self.text = text


def section(title, content):
    return f"<h4>{escape(title)}</h4>{content}"


def wrap(content):
    return f'{STYLE}<div class="bb-result">{content}</div>'
