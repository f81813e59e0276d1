"""Units of derivatives (kit/report/units.py) for every unit the kit actually uses.

The unit of dI_out/dp is the ampere divided by the unit of p.  Each
expectation below was worked out by hand (dimensional analysis: a unit is a
product of symbols with integer powers, and dividing by a quotient multiplies
by its denominator), not by running the module.  The way it is written, a
centred dot between factors, one solidus, powers as superscripts, follows
the SI Brochure (BIPM, 9th ed., 2019, sec. 5.4, from memory); positive powers
before the solidus is common practice, no source.

pint, a general-purpose unit library, is the second, independent reference:
it does the same algebra on the same units and writes them its own way.
(The kit does not use pint at run time: loading it and its registry costs
about 0.4 s on the first call, which every ``biasbook evaluate`` would pay.)

The set of units is collected from the kit itself (topology values, part
kinds, the parameter vocabulary, the units the report and the spread write),
so a new unit fails here until someone writes its expectation by hand.
"""

from __future__ import annotations

from functools import lru_cache

import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st

from kit import topologies
from kit.devices import KINDS
from kit.model.vocabulary import HAND, vocabulary
from kit.report.units import format_with_unit, parse_unit, per, write_unit

# unit of p -> (unit of dI/dp by hand, where the kit uses the unit of p)
BY_HAND = {
    "": ("A", "plain numbers: β_F, emission coefficient, area ratio"),
    "A": ("", "currents: I_S, I_ref (A/A = 1; the evaluation writes A/A for a ratio)"),
    "V": ("A/V", "voltages: v_supply, v_load, V_A, V_th"),
    "Ω": ("A/Ω", "resistors: r1, r_e, a zener's r_z"),
    "K": ("A/K", "temperatures: temp, t_ref, junction rise"),
    "W": ("A/W", "powers: resistor ratings, a zener's rating"),
    "eV": ("A/eV", "band gap E_g of a BJT or diode"),
    "1/K": ("A·K", "A / (1/K) = A·K: resistor TCRs, β's temperature slope"),
    "1/V": ("A·V", "A / (1/V) = A·V: channel-length modulation λ"),
    "V/K": ("A·K/V", "A / (V/K) = A·K/V: V_BE(on) slope, threshold and pinch-off drifts"),
    "K/W": ("A·W/K", "A / (K/W) = A·W/K: thermal resistance junction to ambient"),
    "A/V²": ("V²", "A / (A/V²) = V²: a MOSFET's transconductance parameter K"),
    "ppm/K": ("A·K/ppm", "A / (ppm/K) = A·K/ppm: the report's tempco column"),
    "%/K": ("A·K/%", "A / (%/K) = A·K/%: β's linear rise with temperature in the spread"),
}

# Units written beside numbers rather than carried by a parameter.
WRITTEN_UNITS = {"ppm/K": "kit/report/evaluation.py: the tempco and its contributions",
                 "%/K": "kit/analysis/spread.py: β's linear rise with temperature"}


def _units_in_the_kit():
    """Every unit string a parameter of the kit carries, with one place it comes from."""
    found = {}
    for top in topologies.all_topologies():
        for value in top.values:
            found.setdefault(value.unit, f"{top.key}.{value.name}")
        for polarity in top.polarities:
            for entry in vocabulary(top, polarity).values():
                found.setdefault(entry.unit, f"{top.key} ({polarity}): {entry.name}")
    for key, kind in KINDS.items():
        for param in kind.params:
            found.setdefault(param.unit, f"{key}.{param.name}")
    for name, row in HAND.items():
        found.setdefault(row[3], f"hand.{name}")
    for unit, where in WRITTEN_UNITS.items():
        found.setdefault(unit, where)
    return found


KIT_UNITS = _units_in_the_kit()


def test_every_unit_of_the_kit_has_a_hand_expectation():
    missing = {u: where for u, where in KIT_UNITS.items() if u not in BY_HAND}
    assert not missing, f"work out dI/dp by hand for these units and add them to BY_HAND: {missing}"


def test_the_kit_uses_the_units_expected_here():
    # A unit listed by hand that no part of the kit uses any more is a stale row.
    assert set(BY_HAND) <= set(KIT_UNITS), set(BY_HAND) - set(KIT_UNITS)


@pytest.mark.parametrize("unit", sorted(KIT_UNITS))
def test_derivative_unit_matches_dimensional_analysis(unit):
    expected, why = BY_HAND[unit]
    assert per("A", unit) == expected, f"{why} (used by {KIT_UNITS[unit]})"


@pytest.mark.parametrize("unit", sorted(KIT_UNITS))
def test_unit_round_trips(unit):
    # Written back, each unit reads exactly as the kit writes it ...
    assert write_unit(parse_unit(unit)) == unit
    # ... and A / (A/u) = u (pure algebra, no source needed).
    assert per("A", per("A", unit)) == unit


@pytest.mark.parametrize("unit, powers", [
    ("", {}), ("1/K", {"K": -1}), ("A/V²", {"A": 1, "V": -2}), ("V/K", {"V": 1, "K": -1}),
    ("K/W", {"K": 1, "W": -1}), ("Ω", {"Ω": 1}), ("eV", {"eV": 1}), ("A·K/V", {"A": 1, "K": 1, "V": -1}),
    ("V²", {"V": 2}), ("m³", {"m": 3}), ("A/V^4", {"A": 1, "V": -4}), ("ppm/K", {"ppm": 1, "K": -1}),
])
def test_parse_unit_gives_symbols_and_integer_powers(unit, powers):
    # Powers by hand from the notation (SI Brochure 9th ed., sec. 5.4, from memory).
    assert parse_unit(unit) == powers


def test_derivatives_read_as_an_engineer_writes_them():
    # By hand: numerator factors keep their order, the denominator's turn positive after the solidus.
    assert per("V", "A") == "V/A"
    assert per("A", "V^4") == "A/V^4"  # the kit's convention: powers above 3 with a caret
    assert per("V²", "V") == "V"


@pytest.mark.parametrize("value, unit, text", [
    # SI prefixes on a plain unit (IEC 60027-1 / SI Brochure 9th ed., Table 7, from memory) ...
    (-2.86e-8, "A/Ω", "-28.6 nA/Ω"), (1.3e-6, "A/K", "1.3 µA/K"), (5.74e-5, "A/V", "57.4 µA/V"),
    # ... none on a unit with a power (mV² reads two ways) nor on a bare number (common practice, no source).
    (-9.979e-3, "V²", "-0.009979 V²"), (0.9979, "", "0.9979"),
])
def test_format_with_unit(value, unit, text):
    assert format_with_unit(value, unit) == text


@lru_cache(maxsize=1)
def _pint():
    return pint.UnitRegistry()


def _pint_symbols(units):
    """pint's units as the kit's symbol -> power (``ampere`` -> ``A``)."""
    registry = _pint()
    return {registry.get_symbol(name): int(power) for name, power in registry.Quantity(1, units).unit_items()}


def _pint_unit(powers):
    registry = _pint()
    unit = registry.dimensionless
    for symbol, power in powers.items():
        unit = unit * registry.Unit(symbol) ** power
    return unit


@pytest.mark.parametrize("unit", sorted(KIT_UNITS))
def test_derivative_unit_agrees_with_pint(unit):
    # Every kit unit has at most one factor after its solidus, so pint reads it as the kit does.
    registry = _pint()
    reference = registry.Unit("A") / (registry.Unit(unit) if unit else registry.dimensionless)
    assert parse_unit(per("A", unit)) == _pint_symbols(reference)
    # pint's own short pretty form is the same text, "·", "/", "²", "Ω" and all.
    assert per("A", unit) == f"{reference:~P}"


SYMBOLS = ("A", "V", "K", "W", "Ω", "eV")
POWERS = st.dictionaries(st.sampled_from(SYMBOLS), st.integers(-4, 4).filter(bool), max_size=4)


@given(POWERS, POWERS)
def test_composed_units_agree_with_pint(numerator, denominator):
    # Beyond the kit's own units: any products of its symbols, built in pint from the powers
    # (not from the kit's text, whose "A/V·K" means A/(V·K) but reads as A·K/V to pint).
    kit_unit = per(write_unit(numerator), write_unit(denominator))
    assert parse_unit(kit_unit) == _pint_symbols(_pint_unit(numerator) / _pint_unit(denominator))
    assert parse_unit(write_unit(numerator)) == numerator
