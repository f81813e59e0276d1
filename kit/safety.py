r"""Text from a design record shown safely in every kind of output.

A design record is mailed between people, so its free text (title, notes,
author, revision, device labels) is data from a stranger.  Nothing of it may
ever run as script or be read as markup: every output escapes it for its own
language.  These helpers are the only way record text enters HTML, Markdown,
LaTeX, CSS or a terminal.

Examples
--------
>>> html_text('<img src=x onerror="alert(1)">')
'&lt;img src=x onerror=&quot;alert(1)&quot;&gt;'
>>> html_text("costs $5")
'<span class="tex2jax_ignore">costs $5</span>'
>>> print(markdown_text("# $x$ <b>"))
\# \$x\$ &lt;b&gt;
>>> print(latex_text("50% & $5"))
50\% \& \$5
>>> print(css_string('a"b'))
"a\000022 b"
"""

from __future__ import annotations

import html
import re
import unicodedata

# Characters with a meaning in Markdown (CommonMark punctuation), in MathJax
# ($ and \) or in Jupyter's Markdown renderer; each is shown literally when
# preceded by a backslash.
_MARKDOWN_SPECIALS = re.compile(r"([\\`*_{}\[\]()#+\-.!|~$=:])")
_LATEX_SPECIALS = {
    "\\": r"\textbackslash{}", "{": r"\{", "}": r"\}", "$": r"\$", "&": r"\&", "%": r"\%",
    "#": r"\#", "_": r"\_", "^": r"\textasciicircum{}", "~": r"\textasciitilde{}",
}


# Terminal escape sequences: CSI ("ESC [", parameters, a final letter) and
# the two-character ones (ESC and one of @ … _).
_TERMINAL_ESCAPE = re.compile(r"\x1b\[[0-?]*[ -/]*[@-~]|\x1b[@-Z\\-_]")

# Elements of this class are skipped by the equation typesetter (MathJax 2
# and 3, and JupyterLab): text inside is never read as an equation.
NO_MATH_CLASS = "tex2jax_ignore"
# Text containing none of these cannot open an equation ($, $$, \( or \[).
_MATH_TRIGGERS = ("$", "\\")


def html_attribute(value):
    """``value`` for an HTML attribute in double quotes: ``& < > " '`` escaped."""
    return html.escape(str(value), quote=True)


def html_text(value):
    """``value`` as the text of an HTML element: escaped, and never typeset as an equation.

    Text that could open an equation (a ``$`` or a backslash) is wrapped in
    an element the typesetter skips.
    """
    text = html_attribute(value)
    if any(trigger in text for trigger in _MATH_TRIGGERS):
        return f'<span class="{NO_MATH_CLASS}">{text}</span>'
    return text


def markdown_text(value):
    """``value`` for a Markdown cell: shown as typed, never as markup, a link or an equation.

    Every Markdown and MathJax punctuation character gets a backslash, then
    HTML is escaped (so raw HTML shows as text; ``<`` and ``>`` need no
    backslash once they are entities).  Line breaks are kept.  Use it inside
    :func:`markdown_block` or :func:`markdown_inline`, which also keep the
    equation typesetter away.
    """
    return html_attribute(_MARKDOWN_SPECIALS.sub(r"\\\1", str(value)))


def markdown_block(value):
    """``value`` as paragraphs of a Markdown cell, shown as typed (see :func:`markdown_text`)."""
    return f'<div class="{NO_MATH_CLASS}">\n\n{markdown_text(value)}\n\n</div>'


def markdown_inline(value):
    """``value`` inside a line of Markdown (a heading, say), shown as typed."""
    return f'<span class="{NO_MATH_CLASS}">{markdown_text(value)}</span>'


def latex_text(value):
    r"""``value`` for LaTeX text mode (inside ``\text{...}``): every special character escaped."""
    return "".join(_LATEX_SPECIALS.get(ch, ch) for ch in str(value))


def css_string(value):
    """``value`` as a quoted CSS string: everything but letters, digits and spaces as a CSS escape.

    Safe inside a ``<style>`` element too: no quote, angle bracket, backslash
    sequence or line break of the input survives.
    """
    out = []
    for ch in str(value):
        if ch.isascii() and (ch.isalnum() or ch == " "):
            out.append(ch)
        else:
            # Six hex digits plus a space: a complete escape that cannot swallow the next character.
            out.append(f"\\{ord(ch):06x} ")
    return '"' + "".join(out) + '"'


def terminal_text(value):
    r"""``value`` for a terminal or a log: escape sequences dropped, other control
    characters (but line breaks and tabs) shown as ``\xNN``.

    Error text can carry another program's colours (a kernel's traceback) or
    a hostile file's bytes; neither may drive the reader's terminal.

    Examples
    --------
    >>> terminal_text("\x1b[31mValueError\x1b[39m: bad\x07")
    'ValueError: bad\\x07'
    """
    text = _TERMINAL_ESCAPE.sub("", str(value))
    return "".join(ch if ch in "\n\t" or unicodedata.category(ch) != "Cc" else f"\\x{ord(ch):02x}"
                   for ch in text)
