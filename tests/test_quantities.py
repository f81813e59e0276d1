"""kit.quantities against the SI Brochure, IEC 60062/60063 and scipy.constants."""

import math
import unicodedata

import numpy as np
import pytest
import scipy.constants
from hypothesis import given, settings
from hypothesis import strategies as st
from quantiphy import Quantity

from kit.errors import ParameterError
from kit.quantities import (celsius_to_kelvin, format_quantity, format_temperature,
                            kelvin_to_celsius, parse_quantity, rkm_code)

deterministic = settings(derandomize=True, database=None, max_examples=300)

# SI Brochure (BIPM, 9th edition, 2019), Table 7, SI prefixes from tera to atto.
SI_PREFIXES = [("T", 1e12), ("G", 1e9), ("M", 1e6), ("k", 1e3), ("m", 1e-3),
               ("\u00b5", 1e-6), ("n", 1e-9), ("p", 1e-12), ("f", 1e-15), ("a", 1e-18)]

# IEC 60063, E24 series.
E24 = ["1.0", "1.1", "1.2", "1.3", "1.5", "1.6", "1.8", "2.0", "2.2", "2.4", "2.7", "3.0",
       "3.3", "3.6", "3.9", "4.3", "4.7", "5.1", "5.6", "6.2", "6.8", "7.5", "8.2", "9.1"]


# --- IEC 60062 letter code -------------------------------------------------

# IEC 60062 RKM code, from memory: the letter stands for the decimal point and
# the multiplier, R = 1, K = 1e3, M = 1e6, G = 1e9, T = 1e12 for resistance;
# p, n, µ (u), m for capacitance-style codes.  Lower-case k is common practice.
@pytest.mark.parametrize("code, unit, value", [
    ("4k7", "Ω", 4700.0), ("4K7", None, 4700.0), ("2R2", None, 2.2), ("R47", "Ω", 0.47),
    ("1M5", None, 1.5e6), ("0R1", "Ω", 0.1), ("10K", "Ω", 1e4), ("10k", None, 1e4),
    ("100R", "Ω", 100.0), ("2G2", "Ω", 2.2e9), ("1T", None, 1e12), ("4n7", "F", 4.7e-9),
    ("2u2", None, 2.2e-6), ("2\u00b52", "F", 2.2e-6), ("p68", None, 0.68e-12),
    ("4m7", None, 4.7e-3), ("4k7 \u03a9", "Ω", 4700.0), ("4k7Ω", None, 4700.0),
    ("4n7F", "F", 4.7e-9),
])
def test_letter_code_reads_as_iec_60062(code, unit, value):
    assert parse_quantity(code, unit) == value


@pytest.mark.parametrize("value, code", [  # IEC 60062 RKM code, from memory
    (4700, "4k7"), (2.2, "2R2"), (1e6, "1M"), (0.47, "R47"), (1.5e6, "1M5"),
    (10e3, "10k"), (100, "100R"), (2.2e9, "2G2"), (4.99e3, "4k99"), (3.3e12, "3T3"),
])
def test_rkm_code_writes_iec_60062(value, code):
    assert rkm_code(value) == code


@pytest.mark.parametrize("decade", [1e-1, 1.0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7])
@pytest.mark.parametrize("e24", E24)
def test_rkm_code_round_trips_e24_values(e24, decade):
    value = float(e24) * decade
    code = rkm_code(value)
    # IEC 60062, from memory: the digits of the code are the value's significant digits.
    digits = "".join(ch for ch in code if ch.isdigit()).strip("0")
    assert digits == e24.replace(".", "").strip("0")
    assert parse_quantity(code, "Ω") == pytest.approx(value, rel=1e-12)


def test_rkm_code_rounds_to_the_digits_asked():
    # Rounding to significant digits (arithmetic, common practice, no source):
    # 4993 Ω to 2 digits is 5.0 kΩ; 999.96 TΩ to 3 digits is 1000 TΩ, T the largest letter.
    assert rkm_code(4993, digits=2) == "5k"
    assert rkm_code(999.96e12) == "1000T"
    # Below 1 Ω the code starts with R (IEC 60062, from memory).
    assert parse_quantity(rkm_code(0.0047), "Ω") == 0.0047


@pytest.mark.parametrize("bad", [-1.0, 1e15, math.nan, math.inf, True, "4k7"])
def test_rkm_code_rejects_values_outside_the_code(bad):
    with pytest.raises(ParameterError) as err:
        rkm_code(bad)
    assert err.value.parameter == "value"


# --- SI prefixes -----------------------------------------------------------

@pytest.mark.parametrize("prefix, factor", SI_PREFIXES)
def test_si_prefixes_read_as_the_si_brochure(prefix, factor):
    assert parse_quantity(f"1 {prefix}A", "A") == pytest.approx(factor, rel=1e-15)
    assert parse_quantity(f"3.3 {prefix}V", "V") == pytest.approx(3.3 * factor, rel=1e-15)


@pytest.mark.parametrize("prefix, factor", SI_PREFIXES)
def test_si_prefixes_written_as_the_si_brochure(prefix, factor):
    # SI Brochure 9th ed., 5.4.3: a space between the number and the unit.
    assert format_quantity(2.5 * factor, "A") == f"2.5 {prefix}A"


def test_micro_is_written_with_the_micro_sign_and_read_in_all_spellings():
    # Unicode Character Database (via unicodedata): U+00B5 is MICRO SIGN.
    text = format_quantity(598e-6, "A")
    assert text == "598 \u00b5A" and unicodedata.name(text[4]) == "MICRO SIGN"
    # U+03BC GREEK SMALL LETTER MU and ASCII u are common spellings (common practice).
    for micro in ("\u00b5", "\u03bc", "u"):
        assert parse_quantity(f"10 {micro}A", "A") == pytest.approx(1e-5, rel=1e-15)


@pytest.mark.parametrize("value, unit, text", [
    # Rounding to 3 significant digits with SI prefixes (SI Brochure Table 7).
    (598.2e-6, "A", "598 µA"), (598.7e-6, "A", "599 µA"), (1.2804e6, "Ω", "1.28 MΩ"),
    (12.0, "V", "12 V"), (4700.0, "Ohm", "4.7 kΩ"), (-1.7749e-3, "V/K", "-1.77 mV/K"),
    (999.7, "V", "1 kV"), (0.0, "A", "0 A"),
])
def test_format_quantity_examples(value, unit, text):
    assert format_quantity(value, unit) == text


def test_format_quantity_digits():
    # 5 significant digits of 1234.5 Ω with the kilo prefix (SI Brochure Table 7).
    assert format_quantity(1234.5, "Ω", digits=5) == "1.2345 kΩ"
    assert format_quantity(1234.5, "Ω", digits=1) == "1 kΩ"


@deterministic
@given(st.floats(min_value=1e-12, max_value=1e12),
       st.sampled_from(["", "A", "V", "Ω", "F", "H", "W", "A/V", "V/K"]))
def test_parse_of_format_round_trips_to_three_digits(value, unit):
    text = format_quantity(value, unit)
    back = parse_quantity(text, unit)
    # Rounding to 3 significant digits moves a value by at most half a unit in
    # the third digit (arithmetic, common practice, no source).
    half_step = 0.5 * 10.0 ** (math.floor(math.log10(value)) - 2)
    assert abs(back - value) <= half_step * (1 + 1e-9), text


@deterministic
@given(st.floats(min_value=-0.5, max_value=0.5).filter(lambda x: abs(x) > 1e-6))
def test_percent_round_trips_to_three_digits(fraction):
    text = format_quantity(fraction, "%")
    assert text.endswith(" %")  # SI Brochure 9th ed., 5.4.7: a space before %
    half_step = 0.5 * 10.0 ** (math.floor(math.log10(abs(fraction))) - 2)
    assert abs(parse_quantity(text, "%") - fraction) <= half_step * (1 + 1e-9), text


# --- %, ppm, tempco ---------------------------------------------------------

@pytest.mark.parametrize("text, unit, value", [
    # percent = 1e-2 (SI Brochure 9th ed., 5.4.7); ppm = 1e-6 (common practice, no source)
    ("1 %", None, 0.01), ("1%", "%", 0.01), ("0.1 %", None, 1e-3), ("100 ppm", None, 1e-4),
    ("100 ppm/K", None, 1e-4), ("100 ppm/K", "1/K", 1e-4), ("100 ppm", "1/K", 1e-4),
    ("-2400 ppm/°C", "ppm/K", -2.4e-3), ("0.3 %/K", "1/K", 3e-3),
])
def test_ratios_and_tempcos_read_as_fractions(text, unit, value):
    assert parse_quantity(text, unit) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize("value, unit, text", [
    # % and ppm/K shown scaled, without SI prefixes (common practice, no source)
    (0.015, "%", "1.5 %"), (-2.4e-3, "ppm/K", "-2400 ppm/K"), (-2.4e-3, "1/K", "-2400 ppm/K"),
    (1.23456e-4, "ppm/K", "123 ppm/K"), (0.123456, "ppm/K", "123000 ppm/K"), (0.0, "%", "0 %"),
])
def test_ratios_and_tempcos_written_without_prefixes(value, unit, text):
    assert format_quantity(value, unit) == text


# --- temperature --------------------------------------------------------------

def test_zero_celsius_is_273_15_kelvin():
    # SI Brochure 9th ed., 2.3.1: t/°C = T/K - 273.15 (via scipy.constants, CODATA).
    assert scipy.constants.zero_Celsius == 273.15
    assert celsius_to_kelvin(0.0) == scipy.constants.zero_Celsius
    assert kelvin_to_celsius(scipy.constants.zero_Celsius) == 0.0


def test_temperature_conversion_of_arrays():
    celsius = np.array([-40.0, 25.0, 125.0])
    kelvin = celsius_to_kelvin(celsius)
    np.testing.assert_allclose(kelvin, celsius + scipy.constants.zero_Celsius, rtol=1e-15)
    np.testing.assert_allclose(kelvin_to_celsius(kelvin), celsius, atol=1e-12)


@deterministic
@given(st.floats(min_value=-273.15, max_value=1e4))
def test_celsius_kelvin_round_trip(celsius):
    kelvin = celsius_to_kelvin(celsius)
    assert kelvin == pytest.approx(celsius + scipy.constants.zero_Celsius, rel=1e-15)
    assert kelvin_to_celsius(kelvin) == pytest.approx(celsius, abs=1e-11)


@pytest.mark.parametrize("text, celsius", [
    ("25 degC", 25.0), ("25 °C", 25.0), ("25°C", 25.0), ("-40 degC", -40.0),
    ("125 ℃", 125.0), ("−40 °C", -40.0),
])
def test_celsius_text_reads_as_kelvin(text, celsius):
    # scipy.constants.zero_Celsius (CODATA): 0 °C = 273.15 K
    expected = celsius + scipy.constants.zero_Celsius
    assert parse_quantity(text, "K") == pytest.approx(expected, rel=1e-15)


def test_kelvin_text_and_plain_numbers_are_kelvin():
    # With unit K an upper-case K is the kelvin (SI Brochure Table 2), not kilo.
    assert parse_quantity("298.15 K", "K") == 298.15
    assert parse_quantity("300K", "K") == 300.0
    assert parse_quantity(310.0, "K") == 310.0
    assert parse_quantity("1 kK", "K") == 1000.0


@pytest.mark.parametrize("kelvin, text", [
    # 0 °C = 273.15 K (scipy.constants.zero_Celsius); SI Brochure 5.4.3: "25 °C", spaced
    (298.15, "25 °C"), (233.15, "-40 °C"), (273.15, "0 °C"), (398.15, "125 °C"),
    (310.0, "36.85 °C"), (273.15 - 1e-11, "0 °C"),
])
def test_format_temperature(kelvin, text):
    assert format_temperature(kelvin) == text


def test_coulomb_is_not_read_as_celsius():
    # C alone is the coulomb (SI Brochure 9th ed., Table 4).
    with pytest.raises(ParameterError, match="degC") as err:
        parse_quantity("25C", "K", name="temp")
    assert err.value.parameter == "temp"


@pytest.mark.parametrize("call", [
    lambda: celsius_to_kelvin(-274.0), lambda: kelvin_to_celsius(-1.0),
    lambda: celsius_to_kelvin(math.nan), lambda: kelvin_to_celsius(np.array([300.0, -1.0])),
    lambda: parse_quantity("-300 degC", "K", name="temp"), lambda: format_temperature(-1.0),
])
def test_below_absolute_zero_is_refused(call):
    # Absolute zero is 0 K = -273.15 °C (SI Brochure 9th ed., 2.3.1).
    with pytest.raises(ParameterError):
        call()


# --- unit checking and bad input --------------------------------------------------

@pytest.mark.parametrize("text", ["4.7 kΩ", "4.7 k\u2126", "4.7kOhm", "4.7 kohm", "4k7 R",
                                  "4.7K", "4.7 KΩ", 4700])
def test_ohm_spellings_are_one_unit(text):
    # Ω, Ohm, ohm and R for the ohm: common practice, no source.  U+2126 OHM SIGN
    # is canonically equivalent to U+03A9 (Unicode Character Database).
    assert unicodedata.normalize("NFC", "\u2126") == "\u03a9"
    assert parse_quantity(text, "Ω") == 4700.0


def test_ronna_is_not_read_for_a_resistor_r():
    # quantiphy reads "5 R" as 5 ronna (1e27, CGPM 2022 resolution 3, from memory);
    # on a resistor, R is the ohm (IEC 60062, from memory).
    assert float(Quantity("5 R")) == 5e27
    assert parse_quantity("5 R", "Ω") == 5.0


@pytest.mark.parametrize("text, unit", [
    # A, V, Ω, K are distinct SI units (SI Brochure 9th ed., Tables 2 and 4).
    ("10 mA", "V"), ("4.7 kΩ", "A"), ("12 V", "K"), ("25 degC", "Ω"), ("1 %", "V"),
    ("100 ppm/K", "A"), ("4k7 F", "Ω"), ("3 kK", "V"),
])
def test_unit_mismatch_names_the_parameter(text, unit):
    with pytest.raises(ParameterError) as err:
        parse_quantity(text, unit, name="i_out")
    assert err.value.parameter == "i_out"
    assert err.value.value == text
    assert unit in err.value.message


@pytest.mark.parametrize("text", [
    "", "   ", "abc", "%", "nan", "4 k7", "1,5k", "1,000", "0x1F",
    "k", "c",  # quantiphy reads these as Boltzmann's constant and the speed of light
    "x = 10 V", "10 V # note", "10 V -- note",  # quantiphy's name and comment syntax
    "10 m%", "25 m°C",
])
def test_garbage_names_the_parameter_and_the_accepted_forms(text):
    with pytest.raises(ParameterError) as err:
        parse_quantity(text, name="r_e")
    assert err.value.parameter == "r_e"
    assert "4k7" in err.value.valid


@pytest.mark.parametrize("text, unit", [("298.15 K", None), ("4.7K", None), ("10K", None),
                                        ("300 K", "V/K")])
def test_bare_k_is_ambiguous_unless_the_unit_says(text, unit):
    # K is both the kelvin (SI Brochure Table 2) and kilo on drawings (common practice).
    with pytest.raises(ParameterError, match="kelvin or kilo") as err:
        parse_quantity(text, unit, name="temp")
    assert err.value.parameter == "temp"
    assert parse_quantity(text.replace(" ", ""), "K") == float(text[:-1])
    assert parse_quantity(text, "Ω") == 1e3 * float(text[:-1])


@pytest.mark.parametrize("bad", [math.nan, np.nan, float("nan"), "NaN", math.inf, "inf",
                                 "1e999", -math.inf, True, None, [1.0]])
def test_nan_inf_and_non_numbers_are_refused(bad):
    with pytest.raises(ParameterError) as err:
        parse_quantity(bad, name="beta")
    assert err.value.parameter == "beta"


def test_infinity_only_when_allowed():
    assert parse_quantity("inf", allow_inf=True) == math.inf
    assert parse_quantity(-math.inf, allow_inf=True) == -math.inf
    with pytest.raises(ParameterError):
        parse_quantity("nan", allow_inf=True)


def test_numbers_pass_through_as_floats():
    for number in (3, 2.5, np.float64(1e-3), np.int64(7)):
        value = parse_quantity(number, "A")
        assert type(value) is float and value == float(number)


@pytest.mark.parametrize("value", [math.nan, math.inf, -math.inf])
def test_non_finite_is_not_formatted(value):
    with pytest.raises(ParameterError) as err:
        format_quantity(value, "A")
    assert err.value.parameter == "value"
    assert format_quantity(value, "A", allow_nan=True) == "\u2014"
    assert format_temperature(value, allow_nan=True) == "\u2014"


@pytest.mark.parametrize("kwargs, parameter", [
    ({"digits": 0}, "digits"), ({"digits": 2.5}, "digits"), ({"digits": True}, "digits"),
    ({"unit": 3}, "unit"), ({"unit": "°C"}, "unit"), ({"value": "1 A"}, "value"),
])
def test_format_quantity_bad_arguments(kwargs, parameter):
    arguments = {"value": 1.0, "unit": "A", **kwargs}
    with pytest.raises(ParameterError) as err:
        format_quantity(**arguments)
    assert err.value.parameter == parameter


def test_unknown_keywords_raise():
    with pytest.raises(TypeError):
        parse_quantity("1 V", units="V")
    with pytest.raises(TypeError):
        format_quantity(1.0, "V", precision=3)


def test_global_quantiphy_preferences_are_left_alone():
    # quantiphy's default renders micro as ASCII u with no preferences set
    # (quantiphy documentation, set_prefs map_sf).
    assert str(Quantity(1e-6, "A")) == "1 uA"


def test_property_tests_run_derandomized():
    # tests/conftest.py loads the "biasbook" profile: every @given draws the same
    # examples on every machine (the project's rule), with or without its own settings.
    assert settings.default.derandomize is True
    assert settings.get_profile("biasbook").derandomize is True
    assert deterministic.derandomize is True
