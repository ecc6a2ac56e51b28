"""Table search and formulas over the stimulus-per-code array ``f`` (shape (m,), axis units).

* :func:`interpolation_error`: the exact error of linear interpolation
  between entries, at every valid code;
* :func:`fewest_entries`: the fewest-entry table meeting an error bound;
* :func:`polynomial`: least squares in the scaled code, with its error;
* :func:`steinhart_hart`: NTC coefficients ready for firmware.

Pure numpy; :mod:`app.tables` builds ``f`` and calls these.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.constants import KELVIN_OFFSET
from app.errors import InputError
from app.models.base import Sensor

# The most entries an exported table may have (a 16-bit converter's every code, plus one).
MAX_TABLE_ENTRIES = 65_537
MAX_POLY_DEGREE = 12


def interpolate(entry_codes: np.ndarray, entry_values: np.ndarray, codes: np.ndarray) -> np.ndarray:
    """Linear interpolation between entries (the rule the firmware applies)."""
    return np.interp(codes, entry_codes, entry_values)


def interpolation_error(f: np.ndarray, c_min: int, entry_codes: np.ndarray) -> np.ndarray:
    """Signed error (table − exact) at every valid code: (m,) for ``f`` of shape (m,)."""
    codes = np.arange(c_min, c_min + f.size)
    return interpolate(entry_codes, f[entry_codes - c_min], codes) - f


def _chord_error(f: np.ndarray, i: int, j: int) -> float:
    """Largest |chord − f| over f[i..j], with the arithmetic of :func:`numpy.interp`."""
    seg = f[i:j + 1]
    slope = (seg[-1] - seg[0]) / (j - i)
    return float(np.max(np.abs(slope * np.arange(j - i + 1) + seg[0] - seg)))


def fewest_entries(f: np.ndarray, bound: float) -> np.ndarray:
    """Indices into ``f`` of a table whose interpolation error stays within ``bound``.

    Greedy farthest reach: from each entry, the next is the farthest code the
    chord can reach with every code in between within the bound, found by
    doubling then bisection, each candidate checked exactly at every code.
    Where a segment that meets the bound has every sub-segment meeting it
    too (any curve without an inflection point) this is optimal; around an
    inflection it can need more than the optimum (the tests compare it with
    the exact optimum and find at most one more). Always includes both ends.
    """
    n = f.size
    # A chord over L codes bends about L²·|f''|/8 away, so about Σ sqrt(|f''|/8·bound) entries are
    # needed (within a few % where segments are long): refuse hopeless bounds before searching.
    if n > MAX_TABLE_ENTRIES:
        estimate = float(np.sum(np.sqrt(np.abs(np.diff(f, 2)) / (8.0 * bound))))
        if estimate > 1.5 * MAX_TABLE_ENTRIES:
            raise _too_many(f"about {estimate:.0f}, more")
    out = [0]
    i = 0
    while i < n - 1:
        room = n - 1 - i
        good, bad = 1, None
        length = 2
        while length <= room:
            if _chord_error(f, i, i + length) <= bound:
                good, length = length, length * 2
            else:
                bad = length
                break
        if bad is None and good < room:
            if _chord_error(f, i, n - 1) <= bound:
                good = room
            else:
                bad = room
        while bad is not None and bad - good > 1:
            mid = (good + bad) // 2
            if _chord_error(f, i, i + mid) <= bound:
                good = mid
            else:
                bad = mid
        i += good
        out.append(i)
        if len(out) > MAX_TABLE_ENTRIES:
            raise _too_many("more")
    return np.asarray(out, dtype=np.int64)


def _too_many(how: str) -> InputError:
    return InputError("error_bound", f"needs {how} than {MAX_TABLE_ENTRIES} entries: loosen it")


@dataclass(frozen=True)
class Polynomial:
    """stimulus ≈ Σ coef[i]·xⁱ with x = (code − mid) / half, x in −1 .. 1 over the valid codes."""

    coef: np.ndarray
    mid: float
    half: float
    error: np.ndarray  # (m,) signed error (polynomial − exact) at every valid code

    @property
    def degree(self) -> int:
        return self.coef.size - 1

    def __call__(self, codes) -> np.ndarray:
        return np.polynomial.polynomial.polyval((np.asarray(codes, dtype=float) - self.mid) / self.half, self.coef)


def polynomial(f: np.ndarray, c_min: int, degree: int) -> Polynomial:
    """Least squares over every valid code; the code is scaled to −1 .. 1 first."""
    if isinstance(degree, bool) or not isinstance(degree, (int, np.integer)) or not 1 <= degree <= MAX_POLY_DEGREE:
        raise InputError("poly_degree", f"must be a whole number from 1 to {MAX_POLY_DEGREE}, got {degree!r}")
    if degree >= f.size:
        raise InputError("poly_degree", f"must be below the number of valid codes ({f.size})")
    codes = np.arange(c_min, c_min + f.size, dtype=float)
    mid, half = c_min + (f.size - 1) / 2.0, (f.size - 1) / 2.0
    coef = np.polynomial.legendre.leg2poly(_legendre_lstsq((codes - mid) / half, f, degree))
    fitted = Polynomial(coef, mid, half, np.zeros(0))
    return Polynomial(coef, mid, half, fitted(codes) - f)


def _legendre_lstsq(x: np.ndarray, y: np.ndarray, degree: int, chunk: int = 65_536) -> np.ndarray:
    """Least-squares Legendre coefficients by normal equations, accumulated in chunks.

    On evenly spaced points in −1 .. 1 the Legendre columns are nearly
    orthogonal, so the (degree+1)² Gram matrix is well conditioned and a
    million codes cost one pass instead of an SVD of the full design matrix.
    """
    gram = np.zeros((degree + 1, degree + 1))
    rhs = np.zeros(degree + 1)
    for start in range(0, x.size, chunk):
        v = np.polynomial.legendre.legvander(x[start:start + chunk], degree)
        gram += v.T @ v
        rhs += v.T @ y[start:start + chunk]
    return np.linalg.solve(gram, rhs)


def steinhart_hart(sensor: Sensor) -> Optional[tuple[float, float, float]]:
    """(a, b, c) with 1/T = a + b·ln R + c·(ln R)³ (T in K, R in Ω) for an NTC, else None.

    A beta NTC is exactly Steinhart–Hart with c = 0: b = 1/β, a = 1/Tn − ln(Rn)/β.
    """
    if sensor.kind == "ntc_sh":
        return float(sensor.a), float(sensor.b), float(sensor.c)
    if sensor.kind == "ntc_beta":
        tn = sensor.t_nominal_c + KELVIN_OFFSET
        return float(1.0 / tn - np.log(sensor.r_nominal_ohm) / sensor.beta_k), 1.0 / sensor.beta_k, 0.0
    return None


def steinhart_hart_c(coef: tuple[float, float, float], ohm) -> np.ndarray:
    a, b, c = coef
    ln_r = np.log(np.asarray(ohm, dtype=float))
    return 1.0 / (a + b * ln_r + c * ln_r**3) - KELVIN_OFFSET
