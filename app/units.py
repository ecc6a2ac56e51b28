"""Reading and writing resistances (Ω, float), and temperature scales (°C inside).

Accepted resistance text (surrounding blanks ignored):
* plain numbers: ``4700``, ``1e3``, ``0.47``;
* SI prefix, optional blank, optional unit: ``4.7k``, ``4.7K``, ``4.7 kΩ``,
  ``4.7 k ohm``, ``2.2M``, ``1G``, ``10 µΩ``; the unit is Ω (U+03A9 or U+2126),
  ``ohm`` or ``ohms`` in any case;
* IEC 60062 RKM codes, the letter (R or r, K or k, M, G, T) in place of the
  decimal point: ``4K7``, ``4k7``, ``R47``, ``470R``, ``2M2``, ``1G0``.

Milli: lowercase ``m`` is milli (SI), accepted only before an explicit unit
(``1.5 mΩ``, ``1.5 mohm``). A bare ``2.2m`` or an RKM-like ``4m7`` is refused:
people write those for mega too, and the readings differ by a factor of 10^9.
Mega is always ``M``.
"""

import math
import re
from numbers import Real

import numpy as np

from app.constants import KELVIN_OFFSET
from app.errors import InputError

_EXAMPLES = "examples: 4700, 4.7k, 4k7, 4.7 kΩ"
_MAX_TEXT = 64
_SI_EXP = {"": 0, "u": -6, "\u00b5": -6, "\u03bc": -6, "m": -3}  # µ and Greek mu
_SI_EXP |= {"k": 3, "K": 3, "M": 6, "G": 9, "T": 12}
_RKM_EXP = {"R": 0, "r": 0, "k": 3, "K": 3, "M": 6, "G": 9, "T": 12}
_NUMBER = r"(?P<num>[+-]?(?:\d+(?:\.\d*)?|\.\d+))"
_SI_RE = re.compile(
    _NUMBER + r"(?:(?P<exp>[eE][+-]?\d+)|\s*(?P<prefix>[u\u00b5\u03bcmkKMGT]))?"
    r"\s*(?P<unit>[\u03a9\u2126]|[oO][hH][mM][sS]?)?"
)
_RKM_RE = re.compile(r"(?P<sign>[+-]?)(?P<int>\d*)(?P<letter>[RrkKMGT])(?P<frac>\d*)")
_MILLI_RKM_RE = re.compile(r"[+-]?\d*m\d+")
_ENG_PREFIX = {-6: "\u03bc", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}
_RKM_LETTER = {0: "R", 3: "K", 6: "M", 9: "G", 12: "T"}


def _quote(text: str) -> str:  # long text is cut so messages stay one line
    return f"'{text}'" if len(text) <= _MAX_TEXT else f"'{text[:_MAX_TEXT]}…'"


def _read_text(text: str, field: str) -> float:
    clean, shown = text.strip(), _quote(text)
    unreadable = InputError(field, f"cannot read {shown} as a resistance ({_EXAMPLES})")
    if len(clean) > _MAX_TEXT:
        raise unreadable
    si = _SI_RE.fullmatch(clean)
    if si and not (si["prefix"] == "m" and not si["unit"]):
        exponent = si["exp"] or f"e{_SI_EXP[si['prefix'] or '']}"
        return _check_value(float(si["num"] + exponent), field, shown)
    if si or _MILLI_RKM_RE.fullmatch(clean):
        raise InputError(field, f"{shown} is ambiguous: write 'M' for mega or 'mΩ' for milli")
    rkm = _RKM_RE.fullmatch(clean)
    if not rkm or not (rkm["int"] or rkm["frac"]):
        raise unreadable
    number = f"{rkm['sign']}{rkm['int'] or '0'}.{rkm['frac'] or '0'}e{_RKM_EXP[rkm['letter']]}"
    return _check_value(float(number), field, shown)


def _check_value(value: float, field: str, shown: str | None = None) -> float:
    """``shown``: the text the value came from (its repr when None, made only for a message)."""
    if value > 0 and value != math.inf:  # the common case; NaN fails the first test
        return value
    shown = repr(value) if shown is None else shown
    if not math.isfinite(value):
        raise InputError(field, f"resistance must be a finite number of ohms, got {shown}")
    if value <= 0:
        raise InputError(field, f"resistance must be greater than 0 Ω, got {shown}")
    return value


def _check_number(value: Real, field: str) -> float:
    try:
        number = float(value)
    except OverflowError:  # an integer beyond any float (JSON allows 400 digits)
        raise InputError(field, "resistance must be a finite number of ohms, got an integer too large for a float") from None
    return _check_value(number, field)


def parse_resistance(value: object, field: str = "value") -> float:
    """Resistance in Ω from a number (Ω) or a string (see module docstring).

    Raises :class:`InputError` on ``field`` for anything else: zero, negatives,
    NaN, inf, empty text, booleans, lists, ``None``, stray or repeated letters.
    """
    if type(value) is float or type(value) is int:  # the common case, before the ABC checks
        return _check_number(value, field)
    if isinstance(value, (bool, np.bool_)):
        raise InputError(field, f"expected a resistance in ohms, got a boolean ({value})")
    if isinstance(value, str):
        return _read_text(value, field)
    if isinstance(value, Real):
        return _check_number(value, field)
    kind = type(value).__name__
    raise InputError(field, f"expected a number of ohms or a string such as '4k7', got {kind}")


def parse_resistance_or_none(value: object, field: str = "value") -> float | None:
    """As :func:`parse_resistance`, but ``None`` (an optional field left out) gives ``None``."""
    return None if value is None else parse_resistance(value, field)


def _sig_digits(ohm: float, digits: int) -> tuple[str, int]:
    """Significant digits (as text) and decimal exponent of ``ohm`` rounded to ``digits``."""
    if not isinstance(digits, int) or not 1 <= digits <= 15:
        raise InputError("digits", f"must be an integer from 1 to 15, got {digits!r}")
    ohm = parse_resistance(ohm)
    mantissa, exponent = f"{ohm:.{digits - 1}e}".split("e")
    return mantissa.replace(".", ""), int(exponent)


def _place_point(sig: str, shift: int) -> tuple[str, str]:
    """Split digit string ``sig`` (first digit = 10^shift) into integer and fraction text."""
    if shift < 0:
        return "0", ("0" * (-shift - 1) + sig).rstrip("0")
    sig = sig.ljust(shift + 1, "0")
    return sig[: shift + 1], sig[shift + 1 :].rstrip("0")


def format_resistance(ohm: float, digits: int = 3) -> str:
    """Engineering display of a resistance in Ω: ``4700`` → ``"4.7 kΩ"``.

    Rounded to ``digits`` significant figures before the prefix is chosen, so
    999.96 Ω reads ``"1 kΩ"``; trailing zeros are dropped. Prefixes from μ to T.
    """
    sig, exponent = _sig_digits(ohm, digits)
    exp3 = min(max(exponent - exponent % 3, -6), 12)
    whole, frac = _place_point(sig, exponent - exp3)
    number = f"{whole}.{frac}" if frac else whole
    return f"{number} {_ENG_PREFIX[exp3]}Ω"


def format_rkm(ohm: float, digits: int = 3) -> str:
    """IEC 60062 RKM code of a resistance in Ω: ``4700`` → ``"4K7"``, ``0.47`` → ``"R47"``.

    Rounded to ``digits`` significant figures, trailing zeros dropped; a single
    digit before the letter gets one ``0`` after it (``1K0``, ``1R0``), as is
    usual in marking. Below 1 Ω the leading zero is left out (``R47``, ``R005``).
    """
    sig, exponent = _sig_digits(ohm, digits)
    exp3 = min(max(exponent - exponent % 3, 0), 12)
    whole, frac = _place_point(sig, exponent - exp3)
    if whole == "0":
        whole = ""
    elif len(whole) == 1 and not frac:
        frac = "0"
    return f"{whole}{_RKM_LETTER[exp3]}{frac}"


# --- temperature: °C inside the core ----------------------------------------

_UNIT_ALIASES = {"\u2103": "C", "\u2109": "F", "\u212a": "K"}  # ℃ ℉ and the kelvin sign
_ZERO = {"°C": -KELVIN_OFFSET, "K": 0.0, "°F": -KELVIN_OFFSET * 9.0 / 5.0 + 32.0}


def _convert(value, field: str, unit: str, to: str, change):
    """``change(value)``; scalar in, float out; array-like in, float array out.

    Refuses non-numbers, NaN, inf and values below absolute zero (within a
    relative 1e-9, so that exactly absolute zero survives a round trip).
    """
    if isinstance(value, (bool, np.bool_, str)) or value is None:
        raise InputError(field, f"expected a temperature in {unit}, got {value!r:.40}")
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(field, f"expected a temperature in {unit}, got {value!r:.40}") from None
    if not np.all(np.isfinite(arr)):
        raise InputError(field, "temperatures must be finite numbers")
    floor = _ZERO[unit]
    if np.any(arr < floor - 1e-9 * max(1.0, abs(floor))):
        raise InputError(field, f"temperature below absolute zero ({floor:g} {unit})")
    out = np.maximum(change(arr), _ZERO[to])
    return out if out.ndim else float(out)


def c_to_k(t_c, field: str = "value"):
    """°C → K: T = t + 273.15 (SI Brochure, 9th ed.)."""
    return _convert(t_c, field, "°C", "K", lambda t: t + KELVIN_OFFSET)


def k_to_c(t_k, field: str = "value"):
    """K → °C."""
    return _convert(t_k, field, "K", "°C", lambda t: t - KELVIN_OFFSET)


def c_to_f(t_c, field: str = "value"):
    """°C → °F: t_F = 9/5 · t_C + 32 (exact by definition)."""
    return _convert(t_c, field, "°C", "°F", lambda t: t * 9.0 / 5.0 + 32.0)


def f_to_c(t_f, field: str = "value"):
    """°F → °C."""
    return _convert(t_f, field, "°F", "°C", lambda t: (t - 32.0) * 5.0 / 9.0)


def to_celsius(value, unit: str, field: str = "value"):
    """Temperature in °C from ``value`` in ``unit``: "C", "K", "F" (or "°C", "degF", "℃")."""
    key = unit.strip() if isinstance(unit, str) else ""
    key = _UNIT_ALIASES.get(key, key).removeprefix("°").removeprefix("deg").strip().upper()
    if key == "K":
        return k_to_c(value, field)
    if key == "F":
        return f_to_c(value, field)
    if key == "C":
        return _convert(value, field, "°C", "°C", lambda t: t)
    raise InputError("unit", f"must be one of C, K, F, got {unit!r}")
