"""Strict CSV import of stimulus-versus-resistance tables (app/csv_table.py).

The malformed files live in tests/fixtures/csv/; each must be refused with a
message that names its line and the reason. The accepted forms follow the
module docstring; resistance cells use every text form app.units accepts
(IEC 60062 RKM codes such as 4k7 and R47 among them).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from app.csv_table import MAX_BYTES, MAX_ROWS, MIN_ROWS, read_table
from app.errors import InputError

FIXTURES = Path(__file__).parent / "fixtures" / "csv"

# file: (line the message must name, words the reason must contain)
MALFORMED = {
    "resistance_not_a_number.csv": (3, "cannot read 'abc' as a resistance"),
    "negative_resistance.csv": (3, "greater than 0"),
    "zero_resistance.csv": (4, "greater than 0"),
    "duplicate_stimulus.csv": (4, "repeats line 3"),
    "not_monotonic.csv": (5, "not monotonic"),
    "unsorted_stimulus.csv": (4, "breaks the order"),
    "too_few_rows.csv": (4, f"at least {MIN_ROWS}"),
    "header_without_unit.csv": (3, "does not state its unit"),
    "kelvin_column.csv": (1, "give temperatures in °C"),
    "extra_cell.csv": (3, "has 3 cells"),
    "decimal_comma.csv": (3, "decimal comma"),
    "ambiguous_milli.csv": (4, "ambiguous"),
    "latin1_degree_sign.csv": (1, "not UTF-8"),
    "empty_resistance.csv": (3, "resistance is empty"),
    "zero_lux.csv": (2, "must be above 0"),
    "below_absolute_zero.csv": (2, "absolute zero"),
    "wrong_separator.csv": (3, "separates with ','"),
    "prefix_under_scaled_header.csv": (3, "must be a plain number"),
    "unclosed_quote.csv": (3, "cannot read the row"),
    "nan_stimulus.csv": (3, "not a number"),
    "flat_resistance.csv": (4, "equals the row before"),
    "unknown_column.csv": (1, "neither a stimulus nor a resistance"),
}


def test_every_fixture_has_an_expectation():
    assert sorted(p.name for p in FIXTURES.glob("*.csv")) == sorted(MALFORMED)
    assert len(MALFORMED) >= 12


@pytest.mark.parametrize("name", sorted(MALFORMED))
def test_malformed_file_is_refused_with_its_line(name):
    line, reason = MALFORMED[name]
    with pytest.raises(InputError) as info:
        read_table((FIXTURES / name).read_bytes())
    err = info.value
    assert err.field == "csv"
    assert err.message.startswith(f"line {line}: "), err.message
    assert reason in err.message


@pytest.mark.parametrize("header, quantity", [
    ("temperature_c, resistance", "temperature"), ("t (°C), R (Ω)", "temperature"), ("T [degC], r_ohm", "temperature"),
    ("°C, Ω", "temperature"), ("temp_c, ohm", "temperature"), ("Temp (deg C), Resistance", "temperature"),
    ("lux, resistance", "illuminance"), ("illuminance_lux, r", "illuminance"), ("E (lx), R (Ω)", "illuminance"),
])
def test_header_forms(header, quantity):
    values = ["1", "10", "100"] if quantity == "illuminance" else ["0", "25", "50"]
    text = header + "\n" + "".join(f"{v}, {r}\n" for v, r in zip(values, ["30k", "10k", "3k"]))
    table = read_table(text)
    assert table.quantity == quantity
    assert table.unit == ("lx" if quantity == "illuminance" else "°C")
    np.testing.assert_array_equal(table.ohm, [30e3, 10e3, 3e3])


def test_every_resistance_text_form_is_read():
    # Forms from app/units.py's docstring (SI prefixes, Ω / ohm units, IEC 60062 RKM codes).
    cells = ["2.2M", "1M0", "470k", "220 kΩ", "100 k ohm", "47K", "22k", "10 kΩ", "4k7", "2K2", "1e3",
             "470R", "220 Ω", "100 ohms", "47", "10Ω", "4.7", "2R2", "R47"]
    want = [2.2e6, 1e6, 470e3, 220e3, 100e3, 47e3, 22e3, 10e3, 4.7e3, 2.2e3, 1e3,
            470, 220, 100, 47, 10, 4.7, 2.2, 0.47]
    text = "temperature_c,resistance\n" + "".join(f"{t},{c}\n" for t, c in zip(range(len(cells)), cells))
    table = read_table(text)
    np.testing.assert_allclose(table.ohm, want, rtol=1e-12)


@pytest.mark.parametrize("header, scale", [("r (kΩ)", 1e3), ("r_kohm", 1e3), ("R [MΩ]", 1e6), ("R (ohm)", 1.0)])
def test_scaled_resistance_header_multiplies_plain_cells(header, scale):
    table = read_table(f"t_c, {header}\n0, 32.65\n25, 10\n50, 3.6\n")
    np.testing.assert_allclose(table.ohm, np.array([32.65, 10, 3.6]) * scale)


def test_column_order_separators_comments_and_line_numbers():
    text = ("\ufeff# exported from the climate chamber\r\n\r\n"
            "resistance;temperature_c\r\n32.65k;0\r\n# a note between rows\r\n10k;25\r\n3.6k;50\r\n")
    table = read_table(text)
    np.testing.assert_array_equal(table.stimulus, [0, 25, 50])
    np.testing.assert_array_equal(table.lines, [4, 6, 7])  # physical lines, comments counted
    tabbed = read_table("lux\tresistance\n1\t200k\n10\t20k\n100\t4k\n")
    assert tabbed.quantity == "illuminance" and tabbed.span == (1.0, 100.0)


def test_falling_stimulus_and_rising_resistance_are_both_monotonic():
    table = read_table("temperature_c,resistance\n100,138.51\n50,119.40\n0,100\n")  # an RTD, written hot to cold
    assert table.span == (0.0, 100.0)


def test_error_line_counts_comment_lines_before_the_header():
    with pytest.raises(InputError, match=r"^csv: line 5: stimulus 'x'"):
        read_table("# a\n# b\ntemperature_c,resistance\n0,30k\nx,10k\n50,3k\n")


def test_file_over_one_megabyte_is_refused():
    row = "25.000000000,10000.000000\n"
    text = "temperature_c,resistance\n" + row * (MAX_BYTES // len(row) + 1)
    assert len(text.encode()) > MAX_BYTES
    for data in (text, text.encode()):
        with pytest.raises(InputError, match="at most 1,000,000 bytes") as info:
            read_table(data)
        assert info.value.field == "csv"


def test_too_many_rows_is_refused_at_the_first_extra_line():
    rows = "".join(f"{i * 0.01:.2f},{1e6 - i}\n" for i in range(MAX_ROWS + 1))
    with pytest.raises(InputError, match=f"^csv: line {MAX_ROWS + 2}: more than"):
        read_table("temperature_c,resistance\n" + rows)


@pytest.mark.parametrize("text, line, reason", [
    ("", 1, "empty"),
    ("# only a comment\n", 1, "empty"),
    ("temperature_c resistance\n0 30k\n", 1, "separated by a comma"),
    ("temperature_c,resistance;x\n", 1, "mixes separators"),
    ("temperature_c,lux\n0,1\n", 1, "one stimulus and one resistance"),
    ("r,resistance\n1,2\n", 1, "one stimulus and one resistance"),
    ("temperature_c,resistance,notes\n", 1, "3 cells"),
    ("t_c,r (mΩ)\n0,1\n", 1, "Ω, kΩ or MΩ"),
    ("temperature (F),r\n0,1\n", 1, "°C"),
])
def test_header_problems(text, line, reason):
    with pytest.raises(InputError) as info:
        read_table(text)
    assert info.value.message.startswith(f"line {line}: ") and reason in info.value.message
