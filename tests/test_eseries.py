"""kit.analysis.eseries against IEC 60063 and the eseries package."""

import dataclasses
import itertools
import math

import eseries
import numpy as np
import pytest

from kit.analysis.eseries import (SERIES, TOLERANCE, Pair, Snap, best_pair, decade_values,
                                  nearest, neighbours, series_for_tolerance, snap,
                                  values_between)
from kit.errors import ParameterError

# --- Reference tables ------------------------------------------------------

# IEC 60063:2015, values as published; table typed from memory of the standard.
E3 = "1.0 2.2 4.7".split()
E6 = "1.0 1.5 2.2 3.3 4.7 6.8".split()
E12 = "1.0 1.2 1.5 1.8 2.2 2.7 3.3 3.9 4.7 5.6 6.8 8.2".split()
E24 = ("1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2 2.4 2.7 3.0 3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 "
       "6.8 7.5 8.2 9.1").split()
E96 = ("1.00 1.02 1.05 1.07 1.10 1.13 1.15 1.18 1.21 1.24 1.27 1.30 1.33 1.37 1.40 1.43 "
       "1.47 1.50 1.54 1.58 1.62 1.65 1.69 1.74 1.78 1.82 1.87 1.91 1.96 2.00 2.05 2.10 "
       "2.15 2.21 2.26 2.32 2.37 2.43 2.49 2.55 2.61 2.67 2.74 2.80 2.87 2.94 3.01 3.09 "
       "3.16 3.24 3.32 3.40 3.48 3.57 3.65 3.74 3.83 3.92 4.02 4.12 4.22 4.32 4.42 4.53 "
       "4.64 4.75 4.87 4.99 5.11 5.23 5.36 5.49 5.62 5.76 5.90 6.04 6.19 6.34 6.49 6.65 "
       "6.81 6.98 7.15 7.32 7.50 7.68 7.87 8.06 8.25 8.45 8.66 8.87 9.09 9.31 9.53 "
       "9.76").split()
TYPED = {"E3": E3, "E6": E6, "E12": E12, "E24": E24, "E96": E96}

# IEC 60063:2015 (from memory of the standard): the E24 values that do not
# follow round(10^(i/24), 2 s.f.), as (index, published, rule).
E24_EXCEPTIONS = [(10, "2.7", "2.6"), (11, "3.0", "2.9"), (12, "3.3", "3.2"),
                  (13, "3.6", "3.5"), (14, "3.9", "3.8"), (15, "4.3", "4.2"),
                  (16, "4.7", "4.6"), (22, "8.2", "8.3")]
SIZES = {"E3": 3, "E6": 6, "E12": 12, "E24": 24, "E48": 48, "E96": 96, "E192": 192}


def floats(strings):
    return tuple(float(s) for s in strings)


def rule(n, figures):
    """round(10^(i/n)) to `figures` significant figures, the IEC 60063 construction."""
    return tuple(float(f"{10 ** (i / n):.{figures}g}") for i in range(n))


def scaled(strings, exponent):
    """Standard values of one decade, via decimal text so they are the exact floats."""
    return [float(f"{s}e{exponent}") for s in strings]


# --- Tables ----------------------------------------------------------------

@pytest.mark.parametrize("name", sorted(TYPED))
def test_decade_matches_iec_table(name):
    # IEC 60063:2015, values as published; table typed from memory of the standard.
    assert decade_values(name) == floats(TYPED[name])


def test_e24_deviates_from_rule_exactly_where_iec_does():
    # IEC 60063:2015: the 8 published E24 values off the 2-figure rule.
    computed = rule(24, 2)
    off = [(i, f"{computed[i]:.1f}") for i in range(24) if computed[i] != float(E24[i])]
    assert off == [(i, r) for i, _, r in E24_EXCEPTIONS]
    assert [decade_values("E24")[i] for i, _, _ in E24_EXCEPTIONS] == \
        [float(p) for _, p, _ in E24_EXCEPTIONS]


@pytest.mark.parametrize("name", ["E48", "E96"])
def test_three_figure_series_follow_rule(name):
    # IEC 60063:2015: E48 and E96 are round(10^(i/n), 3 s.f.) throughout.
    assert decade_values(name) == rule(SIZES[name], 3)


def test_e192_follows_rule_but_for_9_20():
    # IEC 60063:2015 publishes 9.20 at i = 185 where the 3-figure rule gives 9.19.
    values, computed = decade_values("E192"), rule(192, 3)
    assert [i for i in range(192) if values[i] != computed[i]] == [185]
    assert values[185] == 9.20 and computed[185] == 9.19
    assert values[184:187] == (9.09, 9.20, 9.31)


def test_subsets():
    # IEC 60063:2015 construction: coarser series take every 2nd, 4th, 8th value.
    e24, e96, e192 = decade_values("E24"), decade_values("E96"), decade_values("E192")
    assert decade_values("E12") == e24[::2]
    assert decade_values("E6") == e24[::4]
    assert decade_values("E3") == e24[::8]
    assert decade_values("E48") == e96[::2]
    assert e96 == e192[::2]


@pytest.mark.parametrize("name", SERIES)
def test_agrees_with_eseries_package(name):
    # eseries 1.2.1: its table and its range enumeration.
    key = eseries.ESeries[name]
    table = eseries.series(key)
    scale = 10 if SIZES[name] <= 24 else 100
    assert decade_values(name) == tuple(v / scale for v in table)
    got = values_between(name, 1.0, 1e7)
    assert got.tolist() == list(eseries.erange(key, 1.0, 1e7))
    assert got.size == 7 * SIZES[name] + 1  # 1 Ω … 10 MΩ, both ends standard
    assert np.all(np.diff(got) > 0)


def test_values_between_bounds_are_inclusive():
    assert values_between("E24", 4.7e3, 4.7e3).tolist() == [4.7e3]
    assert values_between("E24", 4.8e3, 5.0e3).size == 0
    assert values_between("E6", 0.9, 10.0).tolist() == scaled(E6, 0) + [10.0]


# --- Tolerance -------------------------------------------------------------

def test_tolerance_lookup():
    # Customary tolerances (common practice, no source).
    assert TOLERANCE == {"E6": 0.20, "E12": 0.10, "E24": 0.05, "E48": 0.02,
                         "E96": 0.01, "E192": 0.005}


@pytest.mark.parametrize("tol, expected", [
    (0.01, "E96"), (0.05, "E24"), (0.02, "E48"), (0.001, "E192"), (0.005, "E192"),
    (0.0025, "E192"), (0.1, "E12"), (0.2, "E6"), (0.5, "E6"), (0.03, "E48"),
    (0.015, "E96"), (0.07, "E24"), (0.1 * 0.1, "E96"), (0.019999999, "E96"),
])
def test_series_for_tolerance(tol, expected):
    assert series_for_tolerance(tol) == expected


# --- Nearest, snap, neighbours ---------------------------------------------

@pytest.mark.parametrize("exponent", range(7))  # 1 Ω … 9.1 MΩ
def test_nearest_on_and_off_standard_values(exponent):
    # IEC 60063:2015 E24, typed from memory of the standard.  The closest
    # E24 neighbours (1.5, 1.6) are 6.7 % apart, so ±2 % stays nearest.
    for standard in scaled(E24, exponent):
        for factor in (1.0, 0.98, 1.02):
            assert nearest(standard * factor, "E24") == standard
    # E96: the closest neighbours are 1.9 % apart, so ±0.5 % stays nearest.
    for standard in scaled(E96, exponent):
        for factor in (1.0, 0.995, 1.005):
            assert nearest(standard * factor, "E96") == standard
    assert nearest(1e7, "E24") == 1e7 and nearest(1.04e7, "E96") == 1.05e7


@pytest.mark.parametrize("exponent", range(7))
def test_geometric_midpoint_ties_go_up(exponent):
    # Tie rule: at sqrt(a*b) the upper neighbour wins; just below, the lower.
    # Neighbours from the IEC 60063 E24 table, including the 9.1 → 10 wrap.
    lows = scaled(E24, exponent)
    highs = lows[1:] + [10.0 ** (exponent + 1)]
    for a, b in zip(lows, highs):
        mid = math.sqrt(a * b)
        assert nearest(mid, "E24") == b
        assert nearest(mid * (1 + 1e-9), "E24") == b
        assert nearest(mid * (1 - 1e-9), "E24") == a
        assert nearest((a + b) / 2, "E24") == b  # arithmetic midpoint lies above


def test_eseries_find_nearest_is_linear_we_are_geometric():
    # eseries 1.2.1 quirk: find_nearest compares |c - v|, so 2.299, above the
    # geometric midpoint 2.2978 of 2.2 and 2.4, goes down there and up here.
    assert eseries.find_nearest(eseries.E24, 2.299) == 2.2
    assert nearest(2.299, "E24") == 2.4
    assert nearest(2.297, "E24") == 2.2


@pytest.mark.parametrize("name", SERIES)
def test_nearest_agrees_with_eseries_outside_the_disputed_band(name):
    # eseries 1.2.1 find_nearest, on values 1 Ω … 10 MΩ not lying between the
    # geometric and arithmetic midpoints (where the two rules differ).
    rng = np.random.default_rng(60063)
    grid = values_between(name, 0.5, 2e7)
    checked = 0
    for v in 10 ** rng.uniform(0, 7, 400):
        i = np.searchsorted(grid, v)
        a, b = grid[i - 1], grid[i]
        if math.sqrt(a * b) * (1 - 1e-6) <= v <= (a + b) / 2 * (1 + 1e-6):
            continue
        assert nearest(v, name) == eseries.find_nearest(eseries.ESeries[name], v)
        checked += 1
    assert checked > 300


def test_snap_record():
    s = snap(4.9e3, "e24")
    assert isinstance(s, Snap)
    assert (s.value, s.standard, s.series) == (4.9e3, 5.1e3, "E24")
    assert s.rounding_error == pytest.approx((5.1e3 - 4.9e3) / 4.9e3, rel=1e-15)
    assert s.to_dict() == {"value": 4.9e3, "standard": 5.1e3, "series": "E24",
                           "rounding_error": s.rounding_error}
    assert snap(1.0e6, "E96").rounding_error == 0.0
    assert snap(9.15, "E192").standard == 9.2  # IEC 60063: 9.20 exists in E192
    with pytest.raises(dataclasses.FrozenInstanceError):
        s.standard = 1.0


def test_series_spellings():
    assert nearest(4.9e3, eseries.E24) == nearest(4.9e3, 24) == nearest(4.9e3, " E24 ")


@pytest.mark.parametrize("value, count", [(4.9e3, 1), (1.0, 3), (9.6, 2), (333.0, 0),
                                          (1e6, 5), (0.0123, 1)])
def test_neighbours_are_consecutive_table_values(value, count):
    # Positions in the IEC 60063 E24 table, typed from memory of the standard.
    exponent = math.floor(math.log10(value))
    ladder = scaled(E24, exponent - 1) + scaled(E24, exponent) + scaled(E24, exponent + 1)
    got = neighbours(value, "E24", count)
    centre = nearest(value, "E24")
    i = ladder.index(centre)
    assert got.tolist() == ladder[i - count:i + count + 1]


def test_neighbours_across_a_decade():
    assert neighbours(10.0, "E24", count=2).tolist() == [8.2, 9.1, 10.0, 11.0, 12.0]
    assert neighbours(9.8e3, "E12").tolist() == [8.2e3, 10e3, 12e3]


# --- Pairs -----------------------------------------------------------------

def oracle(target, strings, arrangement, max_ratio, *, balance=False):
    """Smallest |error| over single parts and pairs, by plain loops over the table.

    With `balance`, also the smallest b/a among pairs that tie with it
    (None when one part already does as well).
    """
    exponent = math.floor(math.log10(target))
    parts = [v for k in range(exponent - 4, exponent + 5) for v in scaled(strings, k)]
    single = min(abs(v - target) / target for v in parts)
    pairs = []
    for a, b in itertools.combinations_with_replacement(parts, 2):
        if b <= a * max_ratio * (1 + 1e-12):
            combo = a + b if arrangement == "series" else a * b / (a + b)
            pairs.append((abs(combo - target) / target, b / a))
    best = min(single, min(e for e, _ in pairs))
    if not balance:
        return best
    if single <= best + 1e-12:
        return best, None
    return best, min(r for e, r in pairs if e <= best + 1e-12)


@pytest.mark.parametrize("target", [2.3e3, 1234.5, 3.14159e5, 0.07, 6.04e6, 47.0])
@pytest.mark.parametrize("arrangement", ["series", "parallel"])
def test_best_pair_matches_brute_force_over_iec_table(target, arrangement):
    # Oracle: every pair from the IEC 60063 E24 table (typed from memory).
    pair = best_pair(target, "E24", arrangement=arrangement)
    error, ratio = oracle(target, E24, arrangement, 10.0, balance=True)
    assert abs(pair.error) == pytest.approx(error, rel=1e-9, abs=1e-14)
    # Tie rule: among equally close pairs the most balanced one.
    if ratio is None:
        assert len(pair.parts) == 1 and pair.arrangement == "single"
    else:
        assert pair.parts[1] / pair.parts[0] == pytest.approx(ratio, rel=1e-12)
    e24 = set(floats(E24))
    for part in pair.parts:
        assert round(part / 10 ** math.floor(math.log10(part)), 6) in e24
    if len(pair.parts) == 2:
        a, b = pair.parts
        assert a <= b <= 10 * a
        assert pair.arrangement == arrangement
        assert pair.value == pytest.approx(a + b if arrangement == "series"
                                           else a * b / (a + b), rel=1e-15)
    assert pair.error == pytest.approx((pair.value - target) / target, rel=1e-12,
                                       abs=1e-15)


def test_best_pair_beats_nearest_between_e24_steps():
    # 2.3 kΩ falls between E24 2.2k and 2.4k (IEC 60063).
    single = snap(2.3e3, "E24")
    pair = best_pair(2.3e3, "E24")
    assert abs(single.rounding_error) > 0.04
    assert pair.parts == (1.1e3, 1.2e3) and pair.value == 2.3e3 and pair.error == 0.0
    assert pair.to_dict() == {"target": 2.3e3, "parts": [1.1e3, 1.2e3],
                              "arrangement": "series", "value": 2.3e3, "error": 0.0,
                              "series": "E24"}
    par = best_pair(2.3e3, "E24", arrangement="parallel")
    assert abs(par.error) < abs(single.rounding_error)


def test_best_pair_e96_wide_ratio():
    # E96 (IEC 60063): a wider ratio allows finer trimming, never worse.
    narrow = best_pair(1234.5, "E96", max_ratio=2)
    wide = best_pair(1234.5, "E96", max_ratio=100)
    assert abs(wide.error) <= abs(narrow.error)
    assert abs(wide.error) == pytest.approx(oracle(1234.5, E96, "series", 100), abs=1e-14)
    a, b = narrow.parts
    assert b <= 2 * a


def test_best_pair_single_and_either():
    p = best_pair(4.7e3, "E24", arrangement="either")
    assert p.parts == (4.7e3,) and p.arrangement == "single" and p.error == 0.0
    for target in (1234.5, 3.14159e5, 2.3e3):
        either = best_pair(target, "E24", arrangement="either")
        assert abs(either.error) <= min(abs(best_pair(target, "E24").error),
                                        abs(best_pair(target, "E24",
                                                      arrangement="parallel").error))
    assert best_pair(1.1e3, "E12", arrangement="parallel").parts == (2.2e3, 2.2e3)
    assert isinstance(p, Pair)


# --- Errors ----------------------------------------------------------------

def raised(call, *args, **kwargs):
    with pytest.raises(ParameterError) as info:
        call(*args, **kwargs)
    return info.value


@pytest.mark.parametrize("bad", ["E25", "", "X", None, 25, 24.0, True])
def test_unknown_series(bad):
    err = raised(nearest, 1e3, bad)
    assert err.parameter == "series" and "E192" in err.valid


@pytest.mark.parametrize("bad", [0.0, -1.0, math.nan, math.inf, -math.inf, "4k7", True,
                                 1e-300, 1e300])
def test_bad_value(bad):
    for call in (nearest, snap, neighbours, best_pair):
        err = raised(call, bad, "E24")
        assert err.parameter == "value" and "finite" in err.valid


def test_other_bad_arguments():
    assert raised(values_between, "E24", 10.0, 1.0).parameter == "high"
    assert raised(values_between, "E24", -1.0, 1.0).parameter == "low"
    assert raised(values_between, "E24", 1.0, math.nan).parameter == "high"
    for count in (-1, 1.5, 10_000, True):
        assert raised(neighbours, 1e3, "E24", count).parameter == "count"
    assert raised(best_pair, 1e3, "E24", arrangement="star").parameter == "arrangement"
    for ratio in (0.5, math.nan, 1e6):
        assert raised(best_pair, 1e3, "E24", max_ratio=ratio).parameter == "max_ratio"
    for tol in (0, -0.01, 1.0, math.nan, "1 %", None):
        err = raised(series_for_tolerance, tol)
        assert err.parameter == "tol" and "0 < tol < 1" in err.valid
