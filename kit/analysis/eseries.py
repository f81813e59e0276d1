"""Preferred-number (E-series) values of IEC 60063, snapping and pairs.

The `eseries` package supplies the IEC 60063 tables and enumerates values over
a range; this module adds what a designer needs on top of it:

* the nearest standard value by *geometric* distance (`eseries.find_nearest`
  compares absolute differences, which in a log-spaced series favours the
  lower neighbour for values just above the arithmetic midpoint);
* a stated tie rule: a value at the geometric midpoint ``sqrt(a*b)`` of two
  neighbours (within 1e-12 relative) goes to the upper one, as in round-half-up;
* the customary tolerance of each series and the series to use for a tolerance;
* the best series or parallel pair of standard values for a computed value.

All values are SI floats.  eseries 1.2.1 agrees with IEC 60063:2015 in every
series, including E192's published 9.20 (the 3-figure rule would give 9.19);
``tests/test_eseries.py`` checks that, so a release that differs is caught.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import eseries
import numpy as np

from kit.errors import ParameterError

__all__ = ["SERIES", "TOLERANCE", "series_for_tolerance", "decade_values",
           "values_between", "nearest", "neighbours", "snap", "Snap", "best_pair",
           "Pair"]

SERIES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")

# Customary resistor tolerance per series (common practice, no standard ties
# them).  E3 has none: it is used for parts looser than ±20 %.
TOLERANCE = {"E6": 0.20, "E12": 0.10, "E24": 0.05, "E48": 0.02, "E96": 0.01,
             "E192": 0.005}

ARRANGEMENTS = ("series", "parallel", "either")

# Values the kit snaps: wide enough for any part, narrow enough that the
# search windows below stay inside eseries' range (>= 1e-200) and finite.
VALUE_RANGE = (1e-100, 1e100)
MAX_RATIO_RANGE = (1.0, 1000.0)
MAX_COUNT = 200
_TIE = 1e-12  # relative slack for "exactly" at a midpoint or equal errors


def _series(series):
    """(name, eseries key) for "E24", "e24", 24 or eseries.E24."""
    if isinstance(series, str):
        name = series.strip().upper()
    elif isinstance(series, numbers.Integral) and not isinstance(series, bool):
        name = f"E{int(series)}"  # eseries.ESeries is an IntEnum
    else:
        name = None
    if name not in SERIES:
        raise ParameterError("unknown E-series", parameter="series", value=series,
                             valid="one of " + ", ".join(SERIES))
    return name, eseries.ESeries[name]


def _positive(value, parameter="value", low=VALUE_RANGE[0], high=VALUE_RANGE[1]):
    """`value` as a float, or a ParameterError naming `parameter`."""
    valid = f"a finite number from {low:g} to {high:g}"
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise ParameterError("must be a number", parameter=parameter, value=value,
                             valid=valid)
    number = float(value)
    if not (math.isfinite(number) and low <= number <= high):
        raise ParameterError("out of range", parameter=parameter, value=value,
                             valid=valid)
    return number


def _max_step(name):
    """Largest ratio between neighbouring values, across the decade wrap too."""
    m = decade_values(name)
    return max(b / a for a, b in zip(m, m[1:] + (10 * m[0],)))


def series_for_tolerance(tol):
    """The coarsest series whose customary tolerance is within `tol`.

    Parts tighter than ±0.5 % are sold in E192 values, so any `tol` below
    0.005 gives E192; anything looser than ±20 % gives E6.

    Parameters
    ----------
    tol : float
        Part tolerance as a fraction (0.01 for ±1 %), 0 < tol < 1.

    Returns
    -------
    str
        Series name.

    Examples
    --------
    >>> series_for_tolerance(0.01), series_for_tolerance(0.05)
    ('E96', 'E24')
    >>> series_for_tolerance(0.001)
    'E192'
    """
    if isinstance(tol, bool) or not isinstance(tol, numbers.Real) \
            or not (math.isfinite(tol) and 0 < tol < 1):
        raise ParameterError("tolerance must be a fraction", parameter="tol",
                             value=tol, valid="0 < tol < 1 (0.01 for ±1 %)")
    # Coarsest first; the slack absorbs float noise such as 0.1 * 0.1.
    for name in ("E6", "E12", "E24", "E48", "E96", "E192"):
        if TOLERANCE[name] <= tol * (1 + 1e-9):
            return name
    return "E192"


def decade_values(series):
    """The series' mantissas m, 1.0 <= m < 10, ascending.

    Examples
    --------
    >>> decade_values("E6")
    (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
    >>> decade_values("E192")[-8:-4]  # IEC 60063 publishes 9.20, not 9.19
    (9.09, 9.2, 9.31, 9.42)
    """
    _, key = _series(series)
    table = eseries.series(key)  # integers, 2 or 3 significant figures
    scale = 10 ** (len(str(table[0])) - 1)
    return tuple(v / scale for v in table)


def values_between(series, low, high):
    """All standard values v with low <= v <= high, ascending.

    Bounds are compared exactly, so ``values_between("E24", 4.7e3, 4.7e3)``
    holds 4700.0 but a computed 4700.000000000001 as `low` would not.

    Examples
    --------
    >>> values_between("E12", 1e3, 4.7e3).tolist()
    [1000.0, 1200.0, 1500.0, 1800.0, 2200.0, 2700.0, 3300.0, 3900.0, 4700.0]
    """
    _, key = _series(series)
    low = _positive(low, "low")
    high = _positive(high, "high")
    if high < low:
        raise ParameterError("upper bound below lower bound", parameter="high",
                             value=high, valid=f">= low ({low:g})")
    return np.array(list(eseries.erange(key, low, high)), dtype=float)


def _bracket(value, name):
    """Standard values (below, above) with below <= value <= above."""
    step = _max_step(name) * 1.01
    window = values_between(name, value / step, value * step)
    return window[window <= value][-1], window[window >= value][0]


def nearest(value, series):
    """The standard value nearest to `value` on a log scale.

    A value at the geometric midpoint of two neighbours (within 1e-12
    relative) goes to the upper neighbour.

    Examples
    --------
    >>> nearest(4.9e3, "E24")
    5100.0
    >>> nearest(2.299, "E24")  # above sqrt(2.2 * 2.4) = 2.2978
    2.4
    >>> nearest(math.sqrt(2.2 * 2.4), "E24")  # the tie goes up
    2.4
    """
    name, _ = _series(series)
    value = _positive(value)
    below, above = _bracket(value, name)
    if below == above:
        return float(below)
    midpoint = math.sqrt(below * above)
    return float(above if value >= midpoint * (1 - _TIE) else below)


def neighbours(value, series, count=1):
    """The standard value nearest to `value` with `count` values each side.

    Parameters
    ----------
    value : float
        Computed value, > 0.
    series : str
        Series name.
    count : int
        Number of standard values to take below and above the nearest.

    Returns
    -------
    numpy.ndarray
        ``2 * count + 1`` values, ascending, the nearest in the middle.

    Examples
    --------
    >>> neighbours(4.9e3, "E24").tolist()
    [4700.0, 5100.0, 5600.0]
    >>> neighbours(10.0, "E12", count=2).tolist()
    [6.8, 8.2, 10.0, 12.0, 15.0]
    """
    name, _ = _series(series)
    if isinstance(count, bool) or not isinstance(count, numbers.Integral) \
            or not 0 <= count <= MAX_COUNT:
        raise ParameterError("count must be a whole number", parameter="count",
                             value=count, valid=f"integer 0 to {MAX_COUNT}")
    centre = nearest(value, name)
    reach = (_max_step(name) * 1.01) ** (count + 1)
    window = values_between(name, centre / reach, centre * reach)
    i = int(np.flatnonzero(window == centre)[0])
    return window[i - count:i + count + 1].copy()


@dataclass(frozen=True)
class Snap:
    """A computed value and the standard value it snaps to.

    ``rounding_error`` is (standard - value) / value.
    """

    value: float
    standard: float
    series: str
    rounding_error: float

    def to_dict(self):
        return dict(self.__dict__)


def snap(value, series):
    """Snap `value` to its nearest standard value (see :func:`nearest`).

    Examples
    --------
    >>> s = snap(4.9e3, "E24")
    >>> s.standard, round(s.rounding_error, 4)
    (5100.0, 0.0408)
    """
    name, _ = _series(series)
    standard = nearest(value, name)
    value = float(value)
    return Snap(value, standard, name, (standard - value) / value)


@dataclass(frozen=True)
class Pair:
    """Standard parts whose series or parallel combination realises a value.

    ``parts`` holds one value (``arrangement == "single"``) when one standard
    part is already as close as any pair, else two, ascending.  ``value`` is
    the combination, ``target`` the value asked for, and ``error`` is
    (value - target) / target.
    """

    target: float
    parts: tuple
    arrangement: str
    value: float
    error: float
    series: str

    def to_dict(self):
        out = dict(self.__dict__)
        out["parts"] = list(self.parts)
        return out


def _pairs(target, name, arrangement, max_ratio):
    """Every pair a <= b <= max_ratio * a that could beat one part: (a, b, value)."""
    step = _max_step(name) * 1.01
    # Series: both parts <= target, and a < target/((1+max_ratio)*step) would
    # leave a + b below target/step, worse than the nearest single part.
    # Parallel mirrors that: both parts >= target, b <= (1+max_ratio)*step*target.
    if arrangement == "series":
        window = values_between(name, target / ((1 + max_ratio) * step), target)
    else:
        window = values_between(name, target, target * (1 + max_ratio) * step)
    i, j = np.triu_indices(window.size)
    a, b = window[i], window[j]
    keep = b <= a * max_ratio * (1 + _TIE)
    a, b = a[keep], b[keep]
    value = a + b if arrangement == "series" else a * b / (a + b)
    return a, b, value


def best_pair(value, series, *, arrangement="series", max_ratio=10.0):
    """The pair of standard values whose combination comes closest to `value`.

    Brute force over every pair that could beat the nearest single value.
    Among equally close choices (within 1e-12 relative) one part wins over
    two, then the pair with the smaller ratio of parts, then series over
    parallel.

    Parameters
    ----------
    value : float
        Computed value, > 0.
    series : str
        Series name.
    arrangement : {"series", "parallel", "either"}
        How the two parts combine; "either" takes the better of the two.
    max_ratio : float
        Largest ratio of the larger part to the smaller, 1 to 1000.  The
        default 10 keeps both parts carrying a useful share of the value.

    Returns
    -------
    Pair

    Examples
    --------
    >>> p = best_pair(2.3e3, "E24")  # between E24 2.2k and 2.4k
    >>> p.parts, p.arrangement, p.value
    ((1100.0, 1200.0), 'series', 2300.0)
    >>> best_pair(4.7e3, "E24").parts  # already standard
    (4700.0,)
    >>> best_pair(1.1e3, "E12", arrangement="parallel").parts
    (2200.0, 2200.0)
    """
    name, _ = _series(series)
    target = _positive(value)
    if arrangement not in ARRANGEMENTS:
        raise ParameterError("unknown arrangement", parameter="arrangement",
                             value=arrangement, valid="one of " + ", ".join(ARRANGEMENTS))
    max_ratio = _positive(max_ratio, "max_ratio", *MAX_RATIO_RANGE)
    kinds = ("series", "parallel") if arrangement == "either" else (arrangement,)

    single = nearest(target, name)
    rows = [(abs(single - target) / target, 0, 0.0, 0, single, None, single)]
    for rank, kind in enumerate(kinds):
        a, b, combo = _pairs(target, name, kind, max_ratio)
        if combo.size == 0:
            continue
        err = np.abs(combo - target) / target
        # The closest, then the most balanced among those tied with it.
        tied = np.flatnonzero(err <= err.min() + _TIE)
        k = tied[np.argmin(b[tied] / a[tied])]
        rows.append((err[k], 1, b[k] / a[k], rank, a[k], b[k], combo[k]))
    best_err = min(row[0] for row in rows)
    err, _, _, rank, a, b, combo = min(
        (row for row in rows if row[0] <= best_err + _TIE), key=lambda r: r[1:4])
    if b is None:
        return Pair(target, (float(a),), "single", float(a), (a - target) / target, name)
    return Pair(target, (float(a), float(b)), kinds[rank], float(combo),
                float((combo - target) / target), name)
