"""SI-prefixed input and output at the edges of the kit.

Inside the kit every value is a float in SI units (Ω, A, V, K, 1/K).  This
module reads what a designer types (``"4k7"``, ``"10 mA"``, ``"25 degC"``,
``"100 ppm/K"``) into such floats and renders floats with SI prefixes
(``"598 µA"``).  quantiphy does the SI prefixes and engineering notation; this
module adds the IEC 60062 letter code, %, ppm, °C and unit checking.
"""

from __future__ import annotations

import math
import numbers
import re
from decimal import Decimal
from functools import lru_cache

import numpy as np
from quantiphy import QuantiPhyError, Quantity
from scipy.constants import zero_Celsius

from kit.errors import ParameterError

__all__ = ["parse_quantity", "format_quantity", "format_temperature",
           "celsius_to_kelvin", "kelvin_to_celsius", "rkm_code"]

MICRO_SIGN = "\u00b5"  # what quantiphy reads and its map_sf_to_greek emits
OHM = "\u03a9"  # GREEK CAPITAL OMEGA; Unicode normalises U+2126 OHM SIGN to it
MISSING = "\u2014"  # em dash, shown for a non-finite value when allowed
ACCEPTED_FORMS = ("a number with optional SI prefix and unit (4.7k, 10 mA, 2.5e-3), "
                  "an IEC 60062 code (4k7, R47), 1 %, 100 ppm/K or 25 degC")


class _KiloQuantity(Quantity):
    """quantiphy with the kit's preferences, kept apart from global ones."""


# Short input_sf: quantiphy's default reads "5 R" as 5 ronna (5e27).
_KiloQuantity.set_prefs(
    input_sf="TGMKk_munpfaµμ", output_sf="TGMkmunpfa", form="si", spacer=" ",
    map_sf={"u": MICRO_SIGN}, tight_units=[],  # SI Brochure: a space before % and °C
    strip_zeros=True, strip_radix=True, unity_sf="", minus="-", show_label=False,
    show_units=True, known_units=[], accept_binary=False)


class _KelvinQuantity(_KiloQuantity):
    """As above, but upper-case K is the kelvin, not kilo."""


_KelvinQuantity.set_prefs(input_sf="TGMk_munpfaµμ")

_UNIT_ALIASES = {"Ohm": OHM, "ohm": OHM, "Ohms": OHM, "ohms": OHM, "R": OHM,
                 "\u2126": OHM, "%": "", "1": "", "ppm/K": "1/K", "/K": "1/K"}
_RATIO = "% or ppm"  # unit found in "1 %" or "100 ppm"; "" means none was given
_RKM_EXPONENT = {"R": 0, "K": 3, "k": 3, "M": 6, "G": 9, "T": 12, "m": -3,
                 "u": -6, MICRO_SIGN: -6, "\u03bc": -6, "n": -9, "p": -12}
_RKM = re.compile(r"(?P<head>\d*)(?P<letter>[RKkMGTmuµμnp])(?P<tail>\d*)"
                  r"\s*(?P<unit>[^\W\d_]\S*)?")
_RELATIVE = re.compile(r"(?P<number>.*?)\s*(?P<unit>%|ppm)"
                       r"\s*(?P<per_kelvin>/\s*(?:K|°C|degC|℃))?")
_CELSIUS = re.compile(r"(?P<number>.*?)\s*(?:deg\s?C|°\s?C|℃)")
_BARE_K = re.compile(r"[\d.]\s*K\Z")
_NUMBER_START = re.compile(r"[+\-−]?(?:\d|\.\d|inf)")
_FIXED_SCALE = {"%": 100, "ppm": 1e6, "ppm/K": 1e6, "1/K": 1e6}  # shown without prefixes


def _canonical(unit):
    return _UNIT_ALIASES.get(unit, unit)


def _unreadable(text, name, why="not a recognised quantity"):
    return ParameterError(why, parameter=name, value=text, valid=ACCEPTED_FORMS)


def _quantiphy(text, name, whole, kind=_KiloQuantity, ignore_sf=False):
    """Read `text` with quantiphy; errors quote `whole`, the text as given."""
    if not _NUMBER_START.match(text):  # keeps out quantiphy's constants ("k", "c")
        raise _unreadable(whole, name)
    try:
        quantity = kind(text, ignore_sf=ignore_sf)
    except (QuantiPhyError, ValueError):
        raise _unreadable(whole, name) from None
    units_ok = all(ch.isalpha() or ch in "°%/·*²³-" for ch in quantity.units)
    if quantity.name or quantity.desc or not units_ok:  # "x = 1", "1 # note", "0x1F"
        raise _unreadable(whole, name)
    return float(quantity), _canonical(quantity.units)


def _read(text, expected, name):
    """Return (value in SI units, canonical unit found in the text or '')."""
    stripped = text.strip()
    if "," in stripped:
        raise _unreadable(text, name, "write '.' as the decimal mark, no thousands separator")
    if expected not in ("K", OHM) and _BARE_K.search(stripped):
        raise _unreadable(text, name, "'K' alone may mean kelvin or kilo; "
                                      "pass unit='K' for kelvin or write k for kilo")
    rkm = _RKM.fullmatch(stripped)
    if expected != "K" and rkm and (rkm["head"] or rkm["tail"]):
        mantissa = f"{rkm['head'] or 0}.{rkm['tail'] or 0}"
        exponent = _RKM_EXPONENT[rkm["letter"]]
        return float(f"{mantissa}e{exponent}"), _canonical(rkm["unit"] or "")
    relative = _RELATIVE.fullmatch(stripped)  # before _CELSIUS, which "ppm/°C" also fits
    special = relative or _CELSIUS.fullmatch(stripped)
    if special:
        number, unit = _quantiphy(special["number"], name, text, ignore_sf=True)
        if unit:
            raise _unreadable(text, name)
        if not relative:
            return _shift(number, name, zero_Celsius, -zero_Celsius, ">= -273.15 °C"), "K"
        number /= 100 if relative["unit"] == "%" else 1_000_000
        return number, "1/K" if relative["per_kelvin"] else _RATIO
    kind = _KelvinQuantity if expected == "K" else _KiloQuantity
    value, unit = _quantiphy(stripped, name, text, kind)
    if expected == "K" and unit == "C":
        raise ParameterError("'C' alone is the coulomb; write degC or °C for Celsius",
                             parameter=name, value=text, valid="25 degC, 25 °C or 298.15 K")
    return value, unit


def parse_quantity(text, unit=None, *, name="value", allow_inf=False):
    """Read a number or a designer's text as a float in SI units.

    Parameters
    ----------
    text : str or real number
        ``"4.7 kΩ"``, ``"4k7"`` (IEC 60062), ``"10 mA"``, ``"1 %"``,
        ``"100 ppm/K"``, ``"25 degC"``; a number is taken as already in SI units.
    unit : str, optional
        Expected unit (``"Ω"``, ``"A"``, ``"K"``, ``"1/K"``, ``"%"`` for a
        ratio); text in another unit is refused.  None checks no unit.
        A trailing upper-case K (``"10K"``, ``"300 K"``) is the kelvin for
        ``unit="K"``, kilo for ``unit="Ω"`` and refused as ambiguous otherwise.
    name : str
        Parameter name for error messages.
    allow_inf : bool
        Accept an infinite value (NaN is always refused).

    Returns
    -------
    float
        SI value: ratios as fractions, tempcos in 1/K, temperatures in K.

    Examples
    --------
    >>> parse_quantity("4k7", "Ω"), parse_quantity("10 mA", "A")
    (4700.0, 0.01)
    >>> parse_quantity("1 %"), parse_quantity("25 degC", "K")
    (0.01, 298.15)
    """
    if unit is not None and not isinstance(unit, str):
        raise ParameterError("unit must be text", parameter="unit", value=unit,
                             valid="a unit symbol such as Ω, A, K, or None")
    expected = None if unit is None else _canonical(unit)
    if isinstance(text, str):
        value, found = _read(text, expected, name)
        ratio_ok = found == _RATIO and expected in ("", "1/K")
        if expected is not None and found not in ("", expected) and not ratio_ok:
            raise ParameterError(f"unit {found} does not match the expected unit {unit}",
                                 parameter=name, value=text, valid=f"a value in {unit}")
    elif isinstance(text, numbers.Real) and not isinstance(text, bool):
        value = float(text)
    else:
        raise _unreadable(text, name, "expected a number or text")
    if math.isnan(value) or (math.isinf(value) and not allow_inf):
        raise ParameterError("value is not finite", parameter=name, value=text,
                             valid="a finite number")
    return value


def _finite_or_missing(value, parameter, allow_nan):
    """`value` as a float, or None if it is not finite and that is allowed."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise ParameterError("expected a real number", parameter=parameter, value=value,
                             valid="a finite real number")
    if math.isfinite(value):
        return float(value)
    if allow_nan:
        return None
    raise ParameterError("value is not finite", parameter=parameter, value=value,
                         valid="a finite real number, or allow_nan=True to show —")


def _check_digits(digits):
    if isinstance(digits, bool) or not isinstance(digits, numbers.Integral) \
            or not 1 <= digits <= 15:
        raise ParameterError("significant digits out of range", parameter="digits",
                             value=digits, valid="an integer 1 to 15")


def _render_fixed(value, unit, digits, max_decimals=None):
    """Fixed point to `digits` significant digits; engineering form if extreme."""
    if value == 0:
        return _KiloQuantity(0.0, unit).render(form="fixed", prec=0)
    if max_decimals is None and not 1e-3 <= abs(value) < 1e9:
        return _KiloQuantity(value, unit).render(form="eng", prec=digits - 1)
    decimals = digits - 1 - math.floor(math.log10(abs(value)))
    if max_decimals is not None:
        decimals = min(decimals, max_decimals)
    rounded = round(value, decimals) + 0.0  # + 0.0 turns -0.0 into 0.0
    return _KiloQuantity(rounded, unit).render(form="fixed", prec=max(decimals, 0))


def format_quantity(value, unit, digits=3, *, allow_nan=False):
    """Render an SI value with an SI prefix, e.g. ``598 µA``.

    Parameters
    ----------
    value : real number
        Value in SI units (a fraction for ``%`` and ``ppm``, 1/K for ``ppm/K``).
    unit : str
        Unit symbol; ``%``, ``ppm`` and ``ppm/K`` (alias ``1/K``) are scaled
        and shown without SI prefixes.
    digits : int
        Significant digits (trailing zeros are dropped).
    allow_nan : bool
        Show a non-finite value as ``—`` instead of raising.

    Examples
    --------
    >>> format_quantity(598e-6, "A"), format_quantity(1.28e6, "Ω")
    ('598 µA', '1.28 MΩ')
    >>> format_quantity(0.015, "%"), format_quantity(-2.4e-3, "ppm/K")
    ('1.5 %', '-2400 ppm/K')
    >>> format_quantity(0.01, "1/V")
    '0.01 1/V'
    """
    _check_digits(digits)
    if not isinstance(unit, str) or unit in ("°C", "degC", "℃"):
        raise ParameterError("unit must be a unit symbol (for °C use format_temperature)",
                             parameter="unit", value=unit, valid="text such as Ω, A, K, %")
    number = _finite_or_missing(value, "value", allow_nan)
    if number is None:
        return MISSING
    return _format_checked(number + 0.0, unit, digits)  # + 0.0: -0.0 and 0.0 print alike ("0 A")


@lru_cache(maxsize=4096)
def _format_checked(number, unit, digits):
    # Checked input only.  Cached: a panel shows the same numbers again after
    # most changes (a parameter's own value, an unchanged edge), and each
    # render by quantiphy costs about 30 µs.
    unit = OHM if _canonical(unit) == OHM else unit
    if unit in _FIXED_SCALE:
        shown = "ppm/K" if unit == "1/K" else unit
        return _render_fixed(number * _FIXED_SCALE[unit], shown, digits)
    if unit.startswith("1/"):
        # A prefix would be read as part of the 1 ("10 m1/V"): a plain number instead.
        return f"{number:.{digits}g} {unit}"
    return _KiloQuantity(number, unit).render(prec=digits - 1)


def format_temperature(kelvin, digits=4, *, allow_nan=False):
    """Render a temperature held in kelvin as degrees Celsius.

    Parameters
    ----------
    kelvin : real number
        Absolute temperature in K.
    digits : int
        Significant digits, with at most ``digits - 1`` decimals.
    allow_nan : bool
        Show a non-finite value as ``—`` instead of raising.

    Examples
    --------
    >>> format_temperature(298.15), format_temperature(233.15)
    ('25 °C', '-40 °C')
    """
    _check_digits(digits)
    number = _finite_or_missing(kelvin, "kelvin", allow_nan)
    if number is None:
        return MISSING
    return _render_fixed(kelvin_to_celsius(number), "°C", digits, max_decimals=digits - 1)


def _shift(values, parameter, offset, lowest, valid):
    """`values + offset` (scalar or array), refusing values below `lowest`."""
    try:
        array = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        array = np.array(np.nan)
    if isinstance(values, bool) or not np.all(np.isfinite(array)) or np.any(array < lowest):
        raise ParameterError("temperature not finite or below absolute zero",
                             parameter=parameter, value=values, valid=valid)
    return float(array + offset) if array.ndim == 0 else array + offset


def celsius_to_kelvin(celsius):
    """Degrees Celsius to kelvin (scalar or array), by scipy.constants.zero_Celsius.

    Examples
    --------
    >>> celsius_to_kelvin(25.0)
    298.15
    """
    return _shift(celsius, "celsius", zero_Celsius, -zero_Celsius, ">= -273.15 °C")


def kelvin_to_celsius(kelvin):
    """Kelvin to degrees Celsius (scalar or array).

    Examples
    --------
    >>> kelvin_to_celsius(273.15)
    0.0
    """
    return _shift(kelvin, "kelvin", -zero_Celsius, 0.0, ">= 0 K")


def rkm_code(value, digits=3):
    """IEC 60062 letter code of a resistance, e.g. 4700 Ω -> ``4k7``.

    Parameters
    ----------
    value : real number
        Resistance in Ω, 0 <= value < 1e15, rounded to `digits` significant digits.
    digits : int
        Significant digits kept.

    Examples
    --------
    >>> rkm_code(4700), rkm_code(0.47), rkm_code(1.5e6), rkm_code(10e3)
    ('4k7', 'R47', '1M5', '10k')
    """
    _check_digits(digits)
    number = _finite_or_missing(value, "value", allow_nan=False)
    if not 0 <= number < 1e15:
        raise ParameterError("resistance outside the letter code's range",
                             parameter="value", value=value, valid="0 <= value < 1e15 Ω")
    if number == 0:
        return "0R"
    rounded = Decimal(f"{number:.{digits - 1}e}")  # the value to `digits` significant digits
    group = min(max(rounded.adjusted() // 3, 0), 4)  # R, k, M, G, T
    head, _, tail = format(rounded.scaleb(-3 * group).normalize(), "f").partition(".")
    return f"{'' if head == '0' else head}{'RkMGT'[group]}{tail}"
