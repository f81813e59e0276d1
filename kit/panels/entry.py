"""What a designer enters, read the way an engineer writes it (no widgets here).

A resistor typed with its tolerance (``"4k7 5%"``) and a slider's value
rounded to the digits its span can show (``26.6 V``, not ``26.6026 V``).
"""

from __future__ import annotations

import math
import re

from kit.errors import ParameterError
from kit.quantities import parse_quantity

SLIDER_DIGITS = 3  # significant digits of the span a slider writes: 26.6 V, not 26.6026 V
_WITH_TOLERANCE = re.compile(r"^\s*(?P<value>\S+(?:\s*[^\s\d.%±+-][^\s%]*)?)\s*(?:±|\+/-)?\s*"
                             r"(?P<tolerance>\d+(?:\.\d*)?\s*%)\s*$")


def split_tolerance(raw, name):
    """``("4k7", 0.05)`` from ``"4k7 5%"`` (also ``"4.7 kΩ ±1 %"``); ``(raw, None)`` without a tolerance.

    Examples
    --------
    >>> split_tolerance("4k7 5%", "r1")
    ('4k7', 0.05)
    >>> split_tolerance("4.7 kΩ ±1 %", "r1")
    ('4.7 kΩ', 0.01)
    >>> split_tolerance("4k7", "r1")
    ('4k7', None)
    """
    if not isinstance(raw, str) or "%" not in raw:
        return raw, None
    match = _WITH_TOLERANCE.match(raw)
    if match is None:
        return raw, None  # the kit's reader says what is wrong with it
    tolerance = parse_quantity(match["tolerance"], "%", name=f"tolerance of {name}")
    if not 0 < tolerance < 0.5:
        raise ParameterError("tolerance out of range", parameter=f"tolerance of {name}",
                             value=match["tolerance"].strip(), valid="above 0 % and below 50 %")
    return match["value"].strip(), tolerance


def rounded(value, low, high, *, log=False):
    """``value`` rounded to :data:`SLIDER_DIGITS` digits of the span ``low … high``, kept inside it.

    Examples
    --------
    >>> rounded(26.6026, 2.303, 42.12)
    26.6
    >>> rounded(2.3001, 2.303, 42.12)
    2.4
    >>> rounded(123.456, 10, 2000, log=True)
    123.0
    """
    if log:
        step = 10.0 ** (math.floor(math.log10(abs(value))) - (SLIDER_DIGITS - 1)) if value else 1.0
    else:
        step = 10.0 ** (math.floor(math.log10(high - low)) - (SLIDER_DIGITS - 1)) if high > low else 1.0
    out = round(value / step) * step
    if out < low:
        out = math.ceil(low / step) * step
    elif out > high:
        out = math.floor(high / step) * step
    return float(f"{out:.12g}")
