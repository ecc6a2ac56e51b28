"""Resistance text in and out, and temperature scales, against published rules."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from app.errors import InputError
from app.units import (
    c_to_f,
    c_to_k,
    f_to_c,
    format_resistance,
    format_rkm,
    k_to_c,
    parse_resistance,
    parse_resistance_or_none,
    to_celsius,
)

# IEC 60062 RKM code: the letter R, K, M, G (T) stands for the decimal point and the
# multiplier 1, 10^3, 10^6, 10^9 (10^12). Code rule from IEC 60062; the individual
# example codes are typed from memory, their values follow from the rule.
RKM_CODES = [
    ("R47", 0.47), ("R15", 0.15), ("R1", 0.1), ("0R1", 0.1), ("R005", 0.005),
    ("1R0", 1.0), ("1R5", 1.5), ("4R7", 4.7), ("4r7", 4.7), ("47R", 47.0),
    ("100R", 100.0), ("470R", 470.0), ("1K0", 1e3), ("1K5", 1.5e3), ("4K7", 4.7e3),
    ("4k7", 4.7e3), ("10K", 10e3), ("15K", 15e3), ("100K", 100e3), ("332K", 332e3),
    ("1M0", 1e6), ("2M2", 2.2e6), ("10M", 10e6), ("1G0", 1e9), ("2G2", 2.2e9),
    ("1T0", 1e12), ("9K53", 9.53e3), ("4K99", 4.99e3), ("1R02", 1.02),
]


@pytest.mark.parametrize("text, ohm", RKM_CODES)
def test_rkm_codes(text, ohm):
    assert parse_resistance(text) == ohm


@pytest.mark.parametrize(
    "text, ohm",
    # SI prefixes (SI Brochure, 9th ed.: m 10^-3, µ 10^-6, k 10^3, M 10^6, G 10^9);
    # "K" for kilo and the word "ohm" are common practice, not SI.
    [("4700", 4700.0), ("1e3", 1000.0), (" 470 ", 470.0), ("470", 470.0), ("0.47", 0.47),
     (".5k", 500.0), ("4.7k", 4700.0), ("4.7K", 4700.0), ("4.7 kΩ", 4700.0),
     ("4.7 k\u2126", 4700.0), ("4.7kohm", 4700.0), ("4.7 k ohm", 4700.0),
     ("4.7 kOhms", 4700.0), ("10 kΩ", 10e3), ("2.2M", 2.2e6), ("2.2 MΩ", 2.2e6),
     ("2.2 Mohm", 2.2e6), ("1G", 1e9), ("470 Ω", 470.0), ("470ohm", 470.0),
     ("1.5 mΩ", 1.5e-3), ("1.5mohm", 1.5e-3), ("10 µΩ", 10e-6), ("10 \u03bcΩ", 10e-6),
     ("10 uΩ", 10e-6), ("1e3 Ω", 1e3), ("\t22k\n", 22e3)],
)
def test_si_forms(text, ohm):
    assert parse_resistance(text) == ohm


@pytest.mark.parametrize("value", [4700, 4700.0, np.float64(4700), np.int64(4700)])
def test_numbers_pass_through(value):
    result = parse_resistance(value)
    assert result == 4700.0 and type(result) is float


GARBAGE = [
    "4k7k", "", "   ", "abc", "4.7.1k", "1,5k", "4 7k", "4K7Ω", "R", "k", "Ω",
    "4.7R", "1e3k", "4g7", "4M7M", "10 kΩΩ", "0x10", "1/2k", "½k", "kk47", "4k7 ohm",
    "nan", "inf", "4.7 kV", "10%", "2,2k", "4K7-", "x" * 200,
]


@pytest.mark.parametrize("text", GARBAGE)
def test_garbage_is_refused_quoting_the_text(text):
    with pytest.raises(InputError) as err:
        parse_resistance(text, field="fixed_ohm")
    assert err.value.field == "fixed_ohm"
    shown = text if len(text) <= 64 else text[:64]
    assert f"'{shown}" in err.value.message
    if text.strip() and len(text) <= 64:
        assert f"cannot read '{text}' as a resistance (examples: " in err.value.message


@pytest.mark.parametrize("text", ["2.2m", "4m7", "470m", "m47"])
def test_bare_milli_is_refused_as_ambiguous(text):
    with pytest.raises(InputError, match="ambiguous") as err:
        parse_resistance(text)
    assert f"'{text}'" in err.value.message


@pytest.mark.parametrize("text", ["0", "0.0", "-4k7", "-470", "0R0", "0k", "-1.5 mΩ", "1e400"])
def test_non_positive_or_overflowing_text_is_refused(text):
    with pytest.raises(InputError) as err:
        parse_resistance(text)
    assert f"'{text}'" in err.value.message


@pytest.mark.parametrize(
    "value", [0, 0.0, -1, -4.7e3, float("nan"), float("inf"), -float("inf"), None, True, False,
              np.bool_(True), [4700], (4700,), {"ohm": 1}, 1 + 2j, b"4k7"],
)
def test_non_resistances_are_refused(value):
    with pytest.raises(InputError) as err:
        parse_resistance(value, field="load_ohm")
    assert err.value.field == "load_ohm"


def test_optional_resistance():
    assert parse_resistance_or_none(None) is None
    assert parse_resistance_or_none("4k7") == 4700.0
    with pytest.raises(InputError):
        parse_resistance_or_none("")


@pytest.mark.parametrize(
    "ohm, text",
    # Engineering notation with SI prefixes (SI Brochure, 9th ed.); 3 figures, common practice.
    [(4700, "4.7 kΩ"), (10000, "10 kΩ"), (1.2e6, "1.2 MΩ"), (470, "470 Ω"), (0.47, "470 mΩ"),
     (1, "1 Ω"), (9.53e3, "9.53 kΩ"), (100e3, "100 kΩ"), (999.96, "1 kΩ"), (999.4, "999 Ω"),
     (12345.678, "12.3 kΩ"), (1.5e-3, "1.5 mΩ"), (2.2e9, "2.2 GΩ"), (1e-7, "0.1 \u03bcΩ"),
     (4.7e12, "4.7 TΩ"), (4.7e13, "47 TΩ"), (99.95e3, "100 kΩ")],
)
def test_format_resistance(ohm, text):
    assert format_resistance(ohm) == text


def test_format_resistance_digits():
    assert format_resistance(4712, digits=2) == "4.7 kΩ"
    assert format_resistance(4712, digits=4) == "4.712 kΩ"
    assert format_resistance(4712, digits=1) == "5 kΩ"
    with pytest.raises(InputError):
        format_resistance(4712, digits=0)
    with pytest.raises(InputError):
        format_resistance(0)


@pytest.mark.parametrize(
    "ohm, code",
    # IEC 60062 RKM rule; "1K0"/"1R0" (a 0 after a lone digit) is common marking practice.
    [(4700, "4K7"), (470, "470R"), (0.47, "R47"), (2.2e6, "2M2"), (1000, "1K0"), (10e3, "10K"),
     (1, "1R0"), (1.5, "1R5"), (47, "47R"), (100e3, "100K"), (1e9, "1G0"), (9.53e3, "9K53"),
     (0.005, "R005"), (0.1, "R1"), (999.96, "1K0"), (3.3e12, "3T3")],
)
def test_format_rkm(ohm, code):
    assert format_rkm(ohm) == code


E24_INTS = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
            33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91]  # IEC 60063 E24, as in test_series


@settings(max_examples=300, deadline=None)
@given(st.sampled_from(E24_INTS), st.integers(min_value=-4, max_value=11))
def test_rkm_round_trip_over_decades(mantissa, exponent):
    value = float(f"{mantissa}e{exponent}")
    assert parse_resistance(format_rkm(value)) == value


@settings(max_examples=300, deadline=None)
@given(st.floats(min_value=1e-6, max_value=1e14, allow_nan=False, allow_infinity=False))
def test_display_round_trip_keeps_three_figures(value):
    back = parse_resistance(format_resistance(value))
    assert back == float(f"{value:.2e}")
    assert math.isclose(back, value, rel_tol=5e-3)


# --- temperature: SI Brochure, 9th ed. (2019): T/K = t/°C + 273.15; the triple point
# of water is 273.16 K = 0.01 °C. Fahrenheit: t/°F = 9/5 · t/°C + 32 (exact definition).

def test_kelvin_offset():
    assert c_to_k(25.0) == pytest.approx(298.15, abs=1e-12)
    assert k_to_c(273.16) == pytest.approx(0.01, abs=1e-12)
    assert c_to_k(-273.15) == 0.0
    assert k_to_c(0) == -273.15


@pytest.mark.parametrize("t_c, t_f", [(0, 32), (100, 212), (-40, -40), (37, 98.6),
                                      (-273.15, -459.67)])
def test_fahrenheit(t_c, t_f):
    assert c_to_f(t_c) == pytest.approx(t_f, abs=1e-9)
    assert f_to_c(t_f) == pytest.approx(t_c, abs=1e-9)


def test_vectorised_conversions():
    t_c = np.array([-40.0, 0.0, 25.0, 85.0])
    np.testing.assert_allclose(c_to_k(t_c), t_c + 273.15, rtol=0, atol=1e-12)
    np.testing.assert_allclose(f_to_c(c_to_f(t_c)), t_c, rtol=0, atol=1e-12)
    np.testing.assert_allclose(to_celsius([0, 300], "K"), [-273.15, 26.85], atol=1e-12)
    assert isinstance(c_to_k(t_c), np.ndarray) and isinstance(c_to_k(25), float)


@pytest.mark.parametrize(
    "value, unit, t_c",
    [(25, "C", 25), (25, "°C", 25), (25, "degC", 25), (25, "\u2103", 25), (298.15, "K", 25),
     (298.15, "\u212a", 25), (77, "F", 25), (77, "°F", 25), (77, "\u2109", 25), (77, "f", 25)],
)
def test_to_celsius_units(value, unit, t_c):
    assert to_celsius(value, unit) == pytest.approx(t_c, abs=1e-9)


@pytest.mark.parametrize(
    "value, unit",
    [(-273.2, "C"), (-1, "K"), (-460, "F"), ([20, -300], "C"), (float("nan"), "C"),
     (float("inf"), "K"), ("20", "C"), (None, "C"), (True, "C"), (["a"], "C")],
)
def test_impossible_temperatures_are_refused(value, unit):
    with pytest.raises(InputError) as err:
        to_celsius(value, unit, field="range.min")
    assert err.value.field == "range.min"


@pytest.mark.parametrize("unit", ["X", "", "celsius", "R", None])
def test_unknown_temperature_unit(unit):
    with pytest.raises(InputError) as err:
        to_celsius(20, unit)
    assert err.value.field == "unit"
