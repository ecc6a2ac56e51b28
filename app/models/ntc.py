"""NTC thermistors: beta model and Steinhart–Hart (Deep-Sea Research 15, 1968)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.constants import KELVIN_OFFSET
from app.errors import InputError
from app.models.base import Sensor, as_array, check_resistance, check_finite, check_positive


class _Thermistor(Sensor):
    quantity = "temperature"
    stimulus_unit = "°C"
    axis_unit = "°C"
    axis_title = "Temperature (°C)"
    # Thermistor physics is only fitted over moderate spans; refuse the absurd.
    stimulus_min = -KELVIN_OFFSET + 1.0
    stimulus_max = 1000.0


@dataclass(frozen=True)
class BetaNTC(_Thermistor):
    """R(T) = Rn · exp(β (1/T − 1/Tn)), T in kelvin."""

    kind = "ntc_beta"
    r_nominal_ohm: float
    beta_k: float
    t_nominal_c: float = 25.0

    def __post_init__(self):
        object.__setattr__(self, "r_nominal_ohm", check_resistance("r_nominal_ohm", self.r_nominal_ohm))
        beta = check_positive("beta_k", self.beta_k)
        if not 100.0 <= beta <= 20000.0:
            raise InputError("beta_k", f"{beta:g} K is not a thermistor's B value (100 .. 20000 K)")
        object.__setattr__(self, "beta_k", beta)
        t = check_finite("t_nominal_c", self.t_nominal_c)
        if t <= -KELVIN_OFFSET:
            raise InputError("t_nominal_c", "must be above absolute zero (-273.15 °C)")
        object.__setattr__(self, "t_nominal_c", t)

    @property
    def _tn(self) -> float:
        return self.t_nominal_c + KELVIN_OFFSET

    def resistance(self, stimulus):
        t = as_array(stimulus) + KELVIN_OFFSET
        if not isinstance(t, np.ndarray):  # a single stimulus
            return self.r_nominal_ohm * np.exp(self.beta_k * (1.0 / t - 1.0 / self._tn))
        # The same operations in one buffer: a solve evaluates this on every request.
        np.divide(1.0, t, out=t)
        t -= 1.0 / self._tn
        t *= self.beta_k
        np.exp(t, out=t)
        t *= self.r_nominal_ohm
        return t

    def stimulus_of(self, ohm):
        r = as_array(ohm)
        with np.errstate(divide="ignore", invalid="ignore"):
            inv_t = 1.0 / self._tn + np.log(r / self.r_nominal_ohm) / self.beta_k
            t = np.where(inv_t > 0, 1.0 / inv_t, np.nan)
        return t - KELVIN_OFFSET

    def dr_daxis(self, stimulus):
        t = as_array(stimulus) + KELVIN_OFFSET
        return -self.beta_k / t**2 * self.resistance(stimulus)

    @property
    def nominal_stimulus(self) -> float:
        return self.t_nominal_c


@dataclass(frozen=True)
class SteinhartHartNTC(_Thermistor):
    """1/T = a + b·ln R + c·(ln R)³, T in K, R in Ω."""

    kind = "ntc_sh"
    a: float
    b: float
    c: float

    def __post_init__(self):
        for name in ("a", "b", "c"):
            object.__setattr__(self, name, check_finite(name, getattr(self, name)))
        if self.b <= 0:
            raise InputError("b", "must be positive for an NTC (resistance falls as T rises)")
        if self.c < 0:
            raise InputError("c", "must be zero or positive for a monotonic NTC curve")
        with np.errstate(all="ignore"):  # absurd coefficients overflow: refused just below
            r25 = float(self.resistance(np.array(25.0)))
        if not np.isfinite(r25) or not 1e-3 < r25 < 1e12:
            raise InputError("a", "coefficients do not give a plausible resistance at 25 °C")

    def resistance(self, stimulus):
        inv_t = 1.0 / (as_array(stimulus) + KELVIN_OFFSET)
        beta_root = (inv_t - self.a) / self.b  # ln R when c = 0
        if self.c == 0:
            return np.exp(beta_root)
        # Cardano, ln R = cbrt(x − y/2) − cbrt(x + y/2), written without its
        # cancellation: the two roots multiply to s = b/(3c), so the
        # difference is −y / (L² + s + s²/L²), L the cube root of x + |y|/2.
        # For a tiny c (a fit of beta-like data) s³ overflows: the cubic term
        # is then negligible and the c = 0 root is exact.
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            s = np.float64(self.b) / (3.0 * self.c)
            y = (self.a - inv_t) / self.c
            x = np.sqrt(s**3 + (y / 2.0) ** 2)
            big = np.cbrt(x + np.abs(y) / 2.0) ** 2
            ln_r = -y / (big + s + s * s / big)
        return np.exp(np.where(np.isfinite(x), ln_r, beta_root))

    def stimulus_of(self, ohm):
        with np.errstate(divide="ignore", invalid="ignore"):
            ln_r = np.log(as_array(ohm))
            inv_t = self.a + self.b * ln_r + self.c * ln_r**3
            return np.where(inv_t > 0, 1.0 / inv_t, np.nan) - KELVIN_OFFSET

    def dr_daxis(self, stimulus):
        t = as_array(stimulus) + KELVIN_OFFSET
        r = self.resistance(stimulus)
        ln_r = np.log(r)
        # d(1/T)/d(lnR) = b + 3c ln²R, and d(1/T)/dT = -1/T².
        return -r / (t**2 * (self.b + 3.0 * self.c * ln_r**2))
