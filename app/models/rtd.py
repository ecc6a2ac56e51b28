"""Platinum RTD by the Callendar–Van Dusen equation (IEC 60751)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.errors import InputError
from app.models.base import Sensor, as_array, check_resistance, check_finite

# IEC 60751 coefficients for α = 0.00385 platinum.
IEC_A = 3.9083e-3
IEC_B = -5.775e-7
IEC_C = -4.183e-12

_NEWTON_STEPS = 8


@dataclass(frozen=True)
class PlatinumRTD(Sensor):
    """R(t) = R0 [1 + A t + B t² + C (t − 100) t³], C applied below 0 °C only."""

    kind = "rtd"
    quantity = "temperature"
    stimulus_unit = "°C"
    axis_unit = "°C"
    axis_title = "Temperature (°C)"
    # The standard's range of validity.
    stimulus_min = -200.0
    stimulus_max = 850.0

    r0_ohm: float
    a: float = IEC_A
    b: float = IEC_B
    c: float = IEC_C

    def __post_init__(self):
        object.__setattr__(self, "r0_ohm", check_resistance("r0_ohm", self.r0_ohm))
        for name in ("a", "b", "c"):
            object.__setattr__(self, name, check_finite(name, getattr(self, name)))
        if not 1e-3 < self.a < 1e-2:
            raise InputError("a", f"{self.a:g} /°C is not a platinum coefficient (1e-3 .. 1e-2)")
        probe = np.linspace(self.stimulus_min, self.stimulus_max, 211)
        with np.errstate(all="ignore"):  # absurd coefficients overflow: refused just below
            slope, ratio = self.dr_daxis(probe), self._poly(probe)
        if not (np.all(np.isfinite(slope)) and np.all(np.isfinite(ratio))):
            raise InputError("b", "coefficients give no finite resistance within -200 .. 850 °C")
        if np.any(slope <= 0) or np.any(ratio <= 0):
            raise InputError("b", "coefficients make R(t) non-monotonic or non-positive within -200 .. 850 °C")

    def _poly(self, t):
        cold = np.where(t < 0, self.c * (t - 100.0) * t**3, 0.0)
        return 1.0 + self.a * t + self.b * t**2 + cold

    def resistance(self, stimulus):
        return self.r0_ohm * self._poly(as_array(stimulus))

    def dr_daxis(self, stimulus):
        t = as_array(stimulus)
        cold = np.where(t < 0, self.c * (4.0 * t**3 - 300.0 * t**2), 0.0)
        return self.r0_ohm * (self.a + 2.0 * self.b * t + cold)

    def stimulus_of(self, ohm):
        ratio = as_array(ohm) / self.r0_ohm
        with np.errstate(invalid="ignore"):
            # Above 0 °C the equation is a quadratic; its root also seeds Newton below 0 °C.
            t = (-self.a + np.sqrt(self.a**2 - 4.0 * self.b * (1.0 - ratio))) / (2.0 * self.b)
            cold = ratio < 1.0
            if np.any(cold):
                tc = np.where(cold, t, 0.0)
                for _ in range(_NEWTON_STEPS):
                    tc = tc - (self._poly(tc) - ratio) * self.r0_ohm / self.dr_daxis(tc)
                t = np.where(cold, tc, t)
        return t
