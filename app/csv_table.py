"""Strict reading of a stimulus-versus-resistance table (CSV text).

The format, all of it::

    # comment lines and blank lines are skipped (they still count as lines)
    temperature_c, resistance
    -40, 336.1k
    0, 32k65
    25, 10 kΩ

* The first other line is the header: two cells, in either order. One names
  the stimulus and its unit, the other the resistance.
* Stimulus: temperature in °C (``temperature_c``, ``temp_c``, ``t_c``,
  ``temperature (°C)``, ``t [degC]``, ``°C`` …) or illuminance in lux
  (``lux``, ``lx``, ``illuminance_lux``, ``E (lx)`` …). A name without a
  unit, or another unit (K, °F), is refused: the table must say what it holds.
* Resistance: ``r``, ``resistance``, ``ohm``, ``r_ohm``, ``resistance (Ω)``;
  cells take every form :func:`app.units.parse_resistance` accepts (``4700``,
  ``4.7k``, ``4k7``, ``4.7 kΩ``). A scaled header (``r (kΩ)``, ``r_kohm``,
  ``R [MΩ]``) multiplies plain-number cells, and then refuses cells that
  carry their own prefix, since the two readings would differ.
* Cells are separated by commas, semicolons or tabs: whichever the header
  uses, every row uses. Decimal commas are refused (write 25.5).
* At least :data:`MIN_ROWS` and at most :data:`MAX_ROWS` data rows, at most
  :data:`MAX_BYTES` of UTF-8; stimuli strictly rising or strictly falling
  down the file, no stimulus twice, resistance strictly monotonic.

Every refusal is an :class:`InputError` on the request field (``csv`` by
default) whose message starts with the line number: ``line 7: ...``.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.constants import KELVIN_OFFSET
from app.errors import InputError
from app.units import parse_resistance

MAX_BYTES = 1_000_000  # 1 MB (decimal) of UTF-8 text
MIN_ROWS = 3
MAX_ROWS = 10_000
DELIMITERS = (",", ";", "\t")

# Header grammar: a name, optionally followed by a unit as "(unit)", "[unit]" or "_unit".
_HEADER_RE = re.compile(r"^(?P<name>[^\s(\[]*?)\s*(?:[(\[]\s*(?P<unit>[^)\]]*?)\s*[)\]])?$")
_TEMP_NAMES = {"t", "temp", "temperature"}
_LUX_NAMES = {"e", "ev", "light", "illuminance"}
_R_NAMES = {"r", "res", "resistance"}
_CELSIUS = {"c", "°c", "degc", "celsius", "\u2103"}
_LUX = {"lux", "lx"}
_OTHER_TEMP = {"k", "kelvin", "f", "°f", "degf", "fahrenheit", "\u2109", "\u212a"}
_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_DECIMAL_COMMA = re.compile(r"[+-]?\d+,\d+")

HEADER_HELP = ("name the stimulus with its unit (temperature_c, t (°C), lux, illuminance_lux) "
               "and the resistance (resistance, r_ohm, r (kΩ))")


@dataclass(frozen=True)
class Table:
    """A checked table. Arrays are in file order, shape (n,)."""

    quantity: str            # "temperature" | "illuminance"
    unit: str                # "°C" | "lx"
    stimulus: np.ndarray     # °C or lux
    ohm: np.ndarray          # Ω
    lines: np.ndarray        # 1-based line number of each row

    @property
    def span(self) -> tuple[float, float]:
        return float(np.min(self.stimulus)), float(np.max(self.stimulus))


@dataclass(frozen=True)
class _Column:
    role: str                # "temperature" | "illuminance" | "resistance"
    scale: float = 1.0       # Ω per cell unit, for a scaled resistance header


def _fail(field: str, line: int, message: str) -> InputError:
    return InputError(field, f"line {line}: {message}")


def _split_name_unit(text: str) -> tuple[str, Optional[str]]:
    m = _HEADER_RE.match(text)
    name, unit = (m["name"], m["unit"]) if m else (text, None)
    if unit is None and "_" in name:
        head, _, tail = name.rpartition("_")
        if head and tail:
            name, unit = head, tail
    return name, unit


def _squash(unit: str) -> str:
    """Lower case without blanks or underscores: 'deg C' and 'deg_c' read 'degc'."""
    return unit.replace("\u2126", "Ω").lower().replace(" ", "").replace("_", "")


def _ohm_scale(unit: str) -> Optional[float]:
    """Ω per cell unit for a resistance header's unit (Ω, kΩ, MΩ; milli refused)."""
    u = unit.replace("\u2126", "Ω")
    for prefix, scale in (("", 1.0), ("k", 1e3), ("K", 1e3), ("M", 1e6)):
        if u.startswith(prefix):
            rest = u[len(prefix):]
            if rest == "Ω" or rest.lower() in ("ohm", "ohms"):
                return scale
    return None


def _column(cell: str, field: str, line: int) -> _Column:
    raw = cell.strip()
    whole = _squash(raw)
    if whole in _CELSIUS:              # the cell is only a unit: "°C", "lux", "Ω"
        return _Column("temperature")
    if whole in _LUX:
        return _Column("illuminance")
    if whole in {"ω", "ohm", "ohms"}:
        return _Column("resistance")
    name, unit = _split_name_unit(raw)
    key, squashed = name.lower(), _squash(unit or "")
    if key in _TEMP_NAMES | _LUX_NAMES:
        if key in _TEMP_NAMES and squashed in _CELSIUS:
            return _Column("temperature")
        if key in _LUX_NAMES and squashed in _LUX:
            return _Column("illuminance")
        if squashed in _OTHER_TEMP:
            raise _fail(field, line, f"column '{raw}' is in {unit}: give temperatures in °C")
        if not unit:
            example = "temperature_c or t (°C)" if key in _TEMP_NAMES else "illuminance_lux or E (lx)"
            raise _fail(field, line, f"column '{raw}' does not state its unit: write e.g. {example}")
        raise _fail(field, line, f"column '{raw}' has unit '{unit}'; temperature must be in °C, illuminance in lux")
    if key in _R_NAMES:
        scale = 1.0 if not unit else _ohm_scale(unit.strip())
        if scale is None:
            raise _fail(field, line, f"column '{raw}' has unit '{unit}'; resistance must be in Ω, kΩ or MΩ")
        return _Column("resistance", scale)
    raise _fail(field, line, f"header cell '{raw}' is neither a stimulus nor a resistance column: {HEADER_HELP}")


def _cells(text: str, delimiter: str) -> list[str]:
    row = next(csv.reader([text], delimiter=delimiter, skipinitialspace=True, strict=True), [])
    return [c.strip() for c in row]


def _number(cell: str, field: str, line: int, what: str) -> float:
    if _DECIMAL_COMMA.fullmatch(cell):
        raise _fail(field, line, f"{what} '{cell}' has a decimal comma; write {cell.replace(',', '.')}")
    if not _PLAIN_NUMBER.fullmatch(cell):
        shown = cell if cell else "(empty)"
        raise _fail(field, line, f"{what} '{shown}' is not a number")
    value = float(cell)
    if not math.isfinite(value):
        raise _fail(field, line, f"{what} '{cell}' is not a finite number")
    return value


def _resistance(cell: str, column: _Column, field: str, line: int) -> float:
    if column.scale != 1.0:
        if not _PLAIN_NUMBER.fullmatch(cell):
            raise _fail(field, line, f"resistance '{cell}' must be a plain number: the header already "
                                     f"gives the unit (×{column.scale:g} Ω)")
        value = float(cell) * column.scale
        if not math.isfinite(value) or value <= 0:
            raise _fail(field, line, f"resistance '{cell}' must be greater than 0")
        return value
    if _DECIMAL_COMMA.fullmatch(cell.split(" ")[0] if cell else cell):
        raise _fail(field, line, f"resistance '{cell}' has a decimal comma; use a point")
    if not cell:
        raise _fail(field, line, "resistance is empty")
    try:
        return parse_resistance(cell, field="resistance")
    except InputError as err:
        raise _fail(field, line, err.message) from None


def _decode(data: str | bytes, field: str) -> str:
    size = len(data.encode("utf-8")) if isinstance(data, str) else len(data)
    if size > MAX_BYTES:
        raise InputError(field, f"the table is {size:,} bytes; at most {MAX_BYTES:,} bytes (1 MB) are accepted")
    if isinstance(data, str):
        return data
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as err:
        line = data[: err.start].count(b"\n") + 1
        raise _fail(field, line, "is not UTF-8 text (save the table as UTF-8 CSV)") from None


def _delimiter(header: str, field: str, line: int) -> str:
    found = [d for d in DELIMITERS if d in header]
    if not found:
        raise _fail(field, line, "the header needs two cells separated by a comma, semicolon or tab")
    if len(found) > 1:
        raise _fail(field, line, "the header mixes separators; use one of comma, semicolon or tab")
    return found[0]


def read_table(data: str | bytes, field: str = "csv") -> Table:
    """Parse and check a table; see the module docstring for the rules."""
    text = _decode(data, field).removeprefix("\ufeff")
    lines = text.splitlines()
    rows = [(i + 1, ln) for i, ln in enumerate(lines) if ln.strip() and not ln.lstrip().startswith("#")]
    if not rows:
        raise InputError(field, "line 1: the table is empty; it needs a header row and data rows")
    head_line, head = rows[0]
    delimiter = _delimiter(head, field, head_line)
    try:
        names = _cells(head, delimiter)
    except csv.Error as err:
        raise _fail(field, head_line, f"cannot read the header ({err})") from None
    if len(names) != 2:
        raise _fail(field, head_line, f"the header has {len(names)} cells; it needs exactly two: {HEADER_HELP}")
    columns = [_column(c, field, head_line) for c in names]
    roles = [c.role for c in columns]
    if "resistance" not in roles or roles[0] == roles[1] or roles.count("resistance") != 1:
        raise _fail(field, head_line, f"the header needs one stimulus and one resistance column: {HEADER_HELP}")
    r_at = roles.index("resistance")
    s_col = columns[1 - r_at]
    data_rows = rows[1:]
    if len(data_rows) > MAX_ROWS:
        raise _fail(field, data_rows[MAX_ROWS][0], f"more than {MAX_ROWS:,} data rows")
    if len(data_rows) < MIN_ROWS:
        last = data_rows[-1][0] if data_rows else head_line
        raise _fail(field, last, f"the table has {len(data_rows)} data row(s); at least {MIN_ROWS} are needed")

    stimulus = np.empty(len(data_rows))
    ohm = np.empty(len(data_rows))
    numbers = np.empty(len(data_rows), dtype=np.int64)
    for k, (line, raw) in enumerate(data_rows):
        try:
            cells = _cells(raw, delimiter)
        except csv.Error as err:
            raise _fail(field, line, f"cannot read the row ({err})") from None
        if len(cells) != 2:
            other = [d for d in DELIMITERS if d != delimiter and d in raw]
            hint = f" (the header separates with {delimiter!r})" if other and len(cells) == 1 else ""
            raise _fail(field, line, f"has {len(cells)} cell{'' if len(cells) == 1 else 's'}, the header has 2{hint}")
        s_text, r_text = cells[1 - r_at], cells[r_at]
        stimulus[k] = _number(s_text, field, line, "stimulus")
        ohm[k] = _resistance(r_text, columns[r_at], field, line)
        numbers[k] = line

    _check_stimulus(stimulus, numbers, s_col.role, field)
    _check_order(stimulus, ohm, numbers, field)
    unit = "°C" if s_col.role == "temperature" else "lx"
    return Table(s_col.role, unit, stimulus, ohm, numbers)


def _check_stimulus(stimulus: np.ndarray, lines: np.ndarray, role: str, field: str) -> None:
    if role == "illuminance":
        bad = np.flatnonzero(stimulus <= 0)
        if bad.size:
            raise _fail(field, int(lines[bad[0]]), f"illuminance {stimulus[bad[0]]:g} lux must be above 0")
    else:
        bad = np.flatnonzero(stimulus <= -KELVIN_OFFSET)
        if bad.size:
            raise _fail(field, int(lines[bad[0]]), f"temperature {stimulus[bad[0]]:g} °C is at or below absolute zero")


def _check_order(stimulus: np.ndarray, ohm: np.ndarray, lines: np.ndarray, field: str) -> None:
    """Duplicates, then stimulus order down the file, then resistance monotonic."""
    order = np.argsort(stimulus, kind="stable")
    same = np.flatnonzero(np.diff(stimulus[order]) == 0)
    if same.size:
        first, again = sorted((int(order[same[0]]), int(order[same[0] + 1])))
        raise _fail(field, int(lines[again]), f"stimulus {stimulus[again]:g} repeats line {int(lines[first])}")
    step = np.sign(np.diff(stimulus))
    turn = np.flatnonzero(step != step[0])
    if turn.size:
        k = int(turn[0]) + 1
        direction = "rises" if step[0] > 0 else "falls"
        raise _fail(field, int(lines[k]), f"stimulus {stimulus[k]:g} breaks the order: the column {direction} "
                                          f"until line {int(lines[k - 1])}; sort the table")
    r_step = np.sign(np.diff(ohm))
    flat = np.flatnonzero(r_step == 0)
    if flat.size:
        k = int(flat[0]) + 1
        raise _fail(field, int(lines[k]), f"resistance {ohm[k]:g} Ω equals the row before; "
                                          "the table must be strictly monotonic")
    turn = np.flatnonzero(r_step != r_step[0])
    if turn.size:
        k = int(turn[0]) + 1
        trend = "falling" if r_step[0] < 0 else "rising"
        raise _fail(field, int(lines[k]), f"resistance {ohm[k]:g} Ω turns back: the table is not monotonic "
                                          f"(it was {trend} until line {int(lines[k - 1])})")
