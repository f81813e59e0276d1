"""A cheap look at the shape of TOML text before a parser builds it.

:mod:`tomllib` does work that grows faster than the text for some shapes:
a dotted key 20 000 names deep (40 kB) takes gigabytes and seconds, and a
few hundred levels of nesting overflow the interpreter's stack in any code
that walks the result.  A design record is a page of text a few levels deep,
so :func:`first_excess` scans the text once, in linear time and constant
memory, and reports the first of three bounds it exceeds:

* **depth**: tables, dotted-key names, arrays and inline tables nested
  inside one another (``[spec.beta]`` then ``npn = [100, 300]`` is 4 deep);
* **keys**: key names, each name of a dotted key or table header counted;
* **tokens**: words, strings and punctuation (a backstop that bounds the
  parser's work on any text, valid or not).

The scan stops as soon as a bound is passed, so its own work is bounded by
the limits, not by the text.  It never decides whether the text is valid
TOML (the parser does that afterwards); where it cannot follow the text (an
unterminated string) it stops, and the parser reports the syntax error at
that place.  Strings and comments are skipped whole, so a dot, bracket or
``=`` inside them counts for nothing, as in TOML 1.0 (toml.io).

Examples
--------
>>> first_excess('[spec.beta]\\nnpn = [100, 300]\\n', depth=16, keys=100, tokens=1000) is None
True
>>> first_excess("a.b.c.d = 1", depth=3, keys=100, tokens=1000)
Excess(what='depth', found=4, limit=3)
"""

from __future__ import annotations

import re
from dataclasses import dataclass

# One token after optional blanks: a quote, a comment, a line break, a
# punctuation mark, or a bare word (key names, numbers, dates, true/false).
_TOKEN = re.compile(r"""[ \t\r]*(?:(["'])|(\#)|(\n)|([\[\]{}=,.])|([^\s"'\#\[\]{}=,.]+))""")

# Modes of the scan
_LINE, _HEADER, _KEY, _VALUE, _REST = range(5)


@dataclass(frozen=True)
class Excess:
    """The first bound the text passes: ``what`` (depth, keys, tokens), the count reached, the limit."""

    what: str
    found: int
    limit: int


class _Unfollowable(Exception):
    """An unterminated string: the scan stops there and leaves the text to the parser."""


# The four kinds of TOML string, each matched in one pass (possessive repeats:
# no backtracking, so an unterminated string costs one look to its end).
_STRINGS = {
    '"""': re.compile(r'"""(?:[^"\\]++|\\.|"(?!""))*+"""', re.DOTALL),
    "'''": re.compile(r"'''(?:[^']++|'(?!''))*+'''"),
    '"': re.compile(r'"(?:[^"\\\n]++|\\.)*+"'),
    "'": re.compile(r"'[^'\n]*+'"),
}


def _string_end(text, start):
    """Index just past the string opening at ``start`` (a quote), per TOML 1.0's four kinds."""
    quote = text[start]
    kind = quote * 3 if text.startswith(quote * 3, start) else quote
    match = _STRINGS[kind].match(text, start)
    if match is None:
        raise _Unfollowable
    end = match.end()
    if len(kind) == 3:  # up to two quotes right before the closing three belong to the string
        extra = 0
        while extra < 2 and text.startswith(quote, end):
            end, extra = end + 1, extra + 1
    return end


def first_excess(text, *, depth, keys, tokens):
    """The first bound ``text`` passes, or None; see the module docstring.

    Parameters
    ----------
    text : str
        TOML text (not necessarily valid).
    depth, keys, tokens : int
        The largest nesting depth, number of key names and number of tokens
        allowed.

    Returns
    -------
    Excess or None
    """
    limits = {"depth": depth, "keys": keys, "tokens": tokens}
    seen = {"keys": 0, "tokens": 0}
    stack = []  # (bracket, depth) of each open [ or {
    # table_depth: names of the last [header]; base: depth a key's names start from;
    # names: names of the key or header being read; here: depth of the next value
    mode, table_depth, base, names, here, listed = _LINE, 0, 0, 0, 0, False
    position = 0

    def over(what, value):
        return Excess(what, value, limits[what]) if value > limits[what] else None

    def one_more(what):
        seen[what] += 1
        return over(what, seen[what])

    try:
        while position < len(text):
            match = _TOKEN.match(text, position)
            if match is None:  # a lone blank of another kind (form feed ...): the parser judges it
                position += 1
                continue
            quote, comment, newline, mark, word = match.groups()
            position = match.end()
            excess = one_more("tokens")
            if excess:
                return excess
            if quote:
                position = _string_end(text, match.start(1))
            elif comment:
                line_end = text.find("\n", position)
                position = len(text) if line_end < 0 else line_end
                continue
            elif newline:
                if not stack:
                    mode = _LINE
                continue
            name = bool(quote or word)
            if mode == _LINE:
                if mark == "[":
                    mode, names, listed = _HEADER, 0, False
                    continue
                if name:
                    mode, base, names = _KEY, table_depth, 0
                else:
                    mode = _REST  # not TOML; the parser will say where
            if mode in (_HEADER, _KEY) and name:
                names += 1
                excess = one_more("keys") or over("depth", names + (base if mode == _KEY else listed))
                if excess:
                    return excess
                continue
            if mode == _HEADER:
                if mark == "[" and names == 0:
                    listed = True  # [[name]]: a table inside an array, one level more
                elif mark == "]":
                    table_depth, mode = names + listed, _REST
                    excess = over("depth", table_depth)
                    if excess:
                        return excess
                continue
            if mode == _KEY and mark == "=":
                here, mode = base + names, _VALUE
                excess = over("depth", here)
                if excess:
                    return excess
                continue
            if mark in ("[", "{") and mode == _VALUE:
                level = here + 1
                excess = over("depth", level)
                if excess:
                    return excess
                stack.append((mark, level))
                if mark == "[":
                    here = level
                else:
                    mode, base, names = _KEY, level, 0
            elif mark in ("]", "}") and stack:
                stack.pop()
                if not stack:
                    mode = _REST
                elif stack[-1][0] == "[":
                    mode, here = _VALUE, stack[-1][1]
                else:
                    mode = _VALUE  # after a value inside an inline table: a comma or the closing brace
            elif mark == "," and stack:
                if stack[-1][0] == "[":
                    mode, here = _VALUE, stack[-1][1]
                else:
                    mode, base, names = _KEY, stack[-1][1], 0
    except _Unfollowable:
        return None
    return None
