"""IEC 60063 preferred-number series (E3 … E192) for resistances in Ω.

E3, E6, E12 and E24 are tabulated in the standard and are not rounded
powers of ten (E24 has 2.7, 3.0, 3.3 … 8.2, 9.1); E12, E6 and E3 take every
2nd, 4th and 8th E24 value. E48, E96 and E192 have three significant figures,
round(10^(i/n), 2), except E192's tabulated 9.20 where the rule gives 9.19.

Series values m·10^d are built from integer mantissas (47 for 4.7) and exact
powers of ten, so 4.7 kΩ is exactly ``4700.0`` and 0.47 Ω is ``float("0.47")``.
"""

from functools import lru_cache

import numpy as np

from app.errors import InputError

_E24 = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)


def _three_figure(n: int) -> tuple[float, ...]:
    values = [round(10 ** (i / n), 2) for i in range(n)]
    if n == 192:
        values[185] = 9.20  # IEC 60063 tabulates 9.20; 10^(185/192) = 9.1948 rounds to 9.19
    return tuple(values)


SERIES_NAMES: tuple[str, ...] = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")
_MANTISSAS: dict[str, tuple[float, ...]] = {
    "E3": _E24[::8],
    "E6": _E24[::4],
    "E12": _E24[::2],
    "E24": _E24,
    "E48": _three_figure(48),
    "E96": _three_figure(96),
    "E192": _three_figure(192),
}
# Usual tolerance per series, in percent. IEC 60063 gives E3 only as "> 20 %";
# 40 % is taken because it is the round figure at which neighbouring E3 bands
# meet (step 10^(1/3): (s - 1)/(s + 1) = 36.6 %), the same relation that ties
# E6..E24 to 20/10/5 % (19.0, 9.6, 4.8 %).
TOLERANCE_PCT: dict[str, float] = {
    "E3": 40.0, "E6": 20.0, "E12": 10.0, "E24": 5.0, "E48": 2.0, "E96": 1.0, "E192": 0.5,
}
_FIGURES = {name: 2 if len(m) <= 24 else 3 for name, m in _MANTISSAS.items()}
# Integer mantissas per decade plus the next decade's first value (10 → 100 or 1000).
_INT_EXT = {
    name: np.append(np.rint(np.array(m) * 10 ** (_FIGURES[name] - 1)), 10 ** _FIGURES[name])
    for name, m in _MANTISSAS.items()
}
_LOG_EXT = {name: np.log10(ints) - (_FIGURES[name] - 1) for name, ints in _INT_EXT.items()}
# Exact powers of ten (every 10^k with k <= 22 is a double); decades beyond are refused.
_POW10 = np.array([float(f"1e{k}") for k in range(23)])
_MIN_OHM, _MAX_OHM = 1e-6, 1e15
_REL_EPS = 1e-9  # relative slack on range ends and on "is a series value"


def _check_name(name: str) -> str:
    if not isinstance(name, str) or name not in _MANTISSAS:
        raise InputError("series", f"unknown series {name!r}; valid: {', '.join(SERIES_NAMES)}")
    return name


def mantissas(name: str) -> tuple[float, ...]:
    """The IEC 60063 values of series ``name`` in one decade, 1.0 ≤ m < 10."""
    return _MANTISSAS[_check_name(name)]


def tolerance_pct(name: str) -> float:
    """The usual resistor tolerance of series ``name``, in percent."""
    return TOLERANCE_PCT[_check_name(name)]


def _scaled(name: str, index: np.ndarray, decade: np.ndarray) -> np.ndarray:
    """Series value in Ω for mantissa ``index`` (into the extended table) in ``decade``."""
    shift = decade - (_FIGURES[name] - 1)
    ints = _INT_EXT[name][index]
    up = ints * _POW10[np.clip(shift, 0, 22)]
    down = ints / _POW10[np.clip(-shift, 0, 22)]
    return np.where(shift >= 0, up, down)


def _as_ohms(ohm, field: str) -> np.ndarray:
    if type(ohm) is float and _MIN_OHM <= ohm <= _MAX_OHM:  # the common case, without numpy's overhead
        return np.float64(ohm)
    try:
        arr = np.asarray(ohm, dtype=float)
    except (TypeError, ValueError):
        raise InputError(field, "expected resistances as numbers of ohms") from None
    if arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise InputError(field, "resistances must be finite and greater than 0 Ω")
    if np.any(arr < _MIN_OHM) or np.any(arr > _MAX_OHM):
        raise InputError(field, f"resistances must lie between {_MIN_OHM:g} Ω and {_MAX_OHM:g} Ω")
    return arr


def values_between(name: str, lo_ohm: float, hi_ohm: float) -> np.ndarray:
    """All values of series ``name`` (Ω, sorted) with lo_ohm ≤ v ≤ hi_ohm, every decade.

    Both ends are inclusive within a relative 1e-9, so E96 from 1 Ω to 10 MΩ
    gives 673 values: 1.00 Ω … 9.76 MΩ and 10.0 MΩ. Errors name ``min_ohm``
    and ``max_ohm``; the range may be empty of series values (empty array).
    """
    _check_name(name)
    lo, hi = _as_ohms(lo_ohm, "min_ohm"), _as_ohms(hi_ohm, "max_ohm")
    if lo.ndim or hi.ndim:
        raise InputError("min_ohm" if lo.ndim else "max_ohm", "expected a single resistance")
    lo, hi = float(lo), float(hi)
    if lo > hi:
        raise InputError("max_ohm", f"must not be below min_ohm ({lo:g} Ω), got {hi:g} Ω")
    return _between(name, lo, hi).copy()


@lru_cache(maxsize=256)
def _between(name: str, lo: float, hi: float) -> np.ndarray:
    """Cached: every solve asks for the same few ranges."""
    decades = np.arange(int(np.floor(np.log10(lo))) - 1, int(np.ceil(np.log10(hi))) + 1)
    count = len(_MANTISSAS[name])
    grid = _scaled(name, np.arange(count)[None, :], decades[:, None]).ravel()
    keep = (grid >= lo * (1 - _REL_EPS)) & (grid <= hi * (1 + _REL_EPS))
    values = grid[keep]
    values.flags.writeable = False
    return values


def _position(name: str, ohm, field: str):
    """Decade and fractional log10 position of each resistance, as arrays."""
    logs = np.log10(_as_ohms(ohm, field))
    decade = np.floor(logs).astype(int)
    return decade, logs - decade


def nearest(name: str, ohm, field: str = "value"):
    """The series value nearest to ``ohm`` in log ratio (Ω); float for a scalar, else array.

    A value exactly between two series values goes to the lower one.
    """
    _check_name(name)
    decade, frac = _position(name, ohm, field)
    table = _LOG_EXT[name]
    upper = np.clip(np.searchsorted(table, frac, side="left"), 1, len(table) - 1)
    lower = upper - 1
    pick = np.where(frac - table[lower] <= table[upper] - frac, lower, upper)
    result = _scaled(name, pick, decade)
    return result if np.ndim(ohm) else float(result)


def neighbours(name: str, ohm, field: str = "value"):
    """(below, above): the series values (Ω) with below ≤ ohm ≤ above.

    Both equal ``ohm``'s series value when ``ohm`` is on the series (within a
    relative 1e-9). Floats for a scalar ``ohm``, else two arrays.
    """
    _check_name(name)
    decade, frac = _position(name, ohm, field)
    table, eps = _LOG_EXT[name], _REL_EPS / np.log(10)
    below = _scaled(name, np.searchsorted(table, frac + eps, side="right") - 1, decade)
    above = _scaled(name, np.searchsorted(table, frac - eps, side="left"), decade)
    if np.ndim(ohm):
        return below, above
    return float(below), float(above)
