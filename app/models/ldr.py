"""Light-dependent resistor: power law with an optional dark resistance in parallel."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.errors import InputError
from app.models.base import Sensor, as_array, check_resistance, check_positive

_LN10 = np.log(10.0)


@dataclass(frozen=True)
class PowerLawLDR(Sensor):
    """R(E) = Rref · (E/Eref)^(−γ), judged on log10(lux)."""

    kind = "ldr"
    quantity = "illuminance"
    stimulus_unit = "lx"
    axis_unit = "decade"
    axis_title = "Illuminance (lux, log scale)"
    stimulus_min = 1e-4
    stimulus_max = 2e5  # above full sunlight

    r_ref_ohm: float
    gamma: float
    lux_ref: float = 10.0
    r_dark_ohm: Optional[float] = None

    def __post_init__(self):
        object.__setattr__(self, "r_ref_ohm", check_resistance("r_ref_ohm", self.r_ref_ohm))
        gamma = check_positive("gamma", self.gamma)
        if gamma > 3.0:
            raise InputError("gamma", f"{gamma:g} is not a photoresistor slope (0 .. 3)")
        object.__setattr__(self, "gamma", gamma)
        object.__setattr__(self, "lux_ref", check_positive("lux_ref", self.lux_ref))
        if self.r_dark_ohm is not None:
            object.__setattr__(self, "r_dark_ohm", check_resistance("r_dark_ohm", self.r_dark_ohm))

    def to_axis(self, stimulus):
        return np.log10(as_array(stimulus))

    def from_axis(self, axis):
        return 10.0 ** as_array(axis)

    @property
    def nominal_stimulus(self) -> float:
        return self.lux_ref

    def _law(self, lux):
        return self.r_ref_ohm * (as_array(lux) / self.lux_ref) ** (-self.gamma)

    def resistance(self, stimulus):
        r = self._law(stimulus)
        if self.r_dark_ohm is None:
            return r
        return r * self.r_dark_ohm / (r + self.r_dark_ohm)

    def dr_daxis(self, stimulus):
        r = self._law(stimulus)
        d = -self.gamma * _LN10 * r
        if self.r_dark_ohm is None:
            return d
        return d * (self.r_dark_ohm / (r + self.r_dark_ohm)) ** 2

    def stimulus_of(self, ohm):
        r = as_array(ohm)
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.r_dark_ohm is not None:
                r = np.where(r < self.r_dark_ohm, r * self.r_dark_ohm / (self.r_dark_ohm - r), np.nan)
            return self.lux_ref * (r / self.r_ref_ohm) ** (-1.0 / self.gamma)
