"""Units of derived quantities, composed and simplified (dI/dp of a parameter in V/K is A·K/V).

The kit's units are products of a few symbols with integer powers; this
module multiplies and divides them and writes the result the way an
engineer does: positive powers first, then ``/`` and the rest.

Why not a unit library: pint (tests/test_report_units.py checks this module
against it) gives the same text for every unit the kit uses, but importing it
and building its registry takes about 0.4 s on the first call, which every
``biasbook evaluate`` would pay for a dozen fixed unit strings.

Examples
--------
>>> per("A", "K"), per("A", "1/K"), per("A", "A/V²"), per("A", ""), per("A", "A")
('A/K', 'A·K', 'V²', 'A', '')
"""

from __future__ import annotations

import re
from functools import lru_cache

_SUPERSCRIPTS = {"²": 2, "³": 3}
_TO_SUPERSCRIPT = {2: "²", 3: "³"}
_FACTOR = re.compile(r"([^·/*]+?)(\^-?\d+|[²³])?$")


def parse_unit(unit):
    """``"A/V²"`` -> ``{"A": 1, "V": -2}``; ``"1/K"`` -> ``{"K": -1}``; ``""`` -> ``{}``.

    Examples
    --------
    >>> parse_unit("A/(V·K)"), write_unit(parse_unit("A/(V·K)"))
    ({'A': 1, 'V': -1, 'K': -1}, 'A/(V·K)')
    """
    powers = {}
    if not unit:
        return powers
    numerator, _, denominator = unit.partition("/")
    denominator = denominator.strip()
    if denominator.startswith("(") and denominator.endswith(")"):  # A/(V·K), as write_unit puts it
        denominator = denominator[1:-1]
    for part, sign in ((numerator, 1), (denominator, -1)):
        for factor in filter(None, re.split(r"[·*]", part)):
            factor = factor.strip()
            if factor == "1":
                continue
            match = _FACTOR.match(factor)
            name, power = match.group(1), match.group(2)
            exponent = _SUPERSCRIPTS[power] if power in _SUPERSCRIPTS else int(power[1:]) if power else 1
            powers[name] = powers.get(name, 0) + sign * exponent
    return {k: v for k, v in powers.items() if v}


def write_unit(powers):
    """The inverse of :func:`parse_unit`, positive powers first."""
    def factor(name, power):
        return name + (_TO_SUPERSCRIPT.get(power, f"^{power}") if power != 1 else "")

    up = [factor(n, p) for n, p in powers.items() if p > 0]
    down = [factor(n, -p) for n, p in powers.items() if p < 0]
    if not up and not down:
        return ""
    head = "·".join(up) or "1"
    if len(down) > 1:  # A/(V·K), not A/V·K (which reads as A·K/V)
        return f"{head}/({'·'.join(down)})"
    return head + ("/" + down[0] if down else "")


@lru_cache(maxsize=256)
def per(numerator, denominator):
    """The unit of ``numerator`` per ``denominator`` (the unit of a derivative)."""
    powers = parse_unit(numerator)
    for name, power in parse_unit(denominator).items():
        powers[name] = powers.get(name, 0) - power
    return write_unit({k: v for k, v in powers.items() if v})


def format_with_unit(value, unit, digits=4):
    """``value`` in ``unit`` for a person: SI prefix on a plain unit, none on a power or a bare number.

    A prefix on ``V²`` would be read two ways (mV² as m·V² or as (mV)²), so a
    unit with a power gets powers of ten instead; a dimensionless value gets none.

    Examples
    --------
    >>> format_with_unit(-2.86e-8, "A/Ω"), format_with_unit(0.9979, ""), format_with_unit(-9.979e-3, "V²")
    ('-28.6 nA/Ω', '0.9979', '-0.009979 V²')
    """
    from kit.quantities import format_quantity

    if not unit:
        return f"{value:.{digits}g}"
    if any(mark in unit for mark in ("²", "³", "^")):
        return f"{value:.{digits}g} {unit}"
    return format_quantity(value, unit, digits)
