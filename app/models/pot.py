"""Potentiometer: position x of travel from the ground end, linear or log taper."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.errors import InputError
from app.models.base import Sensor, as_array, check_resistance, check_finite


@dataclass(frozen=True)
class Potentiometer(Sensor):
    """Lower part of the track (wiper to ground end) as a function of travel.

    Log taper: R·(aˣ − 1)/(a − 1), a = ((1 − m)/m)², m the fraction of the
    track resistance at mid-travel (10 % to 15 % is common practice).
    """

    kind = "pot"
    quantity = "position"
    stimulus_unit = "travel"
    axis_unit = "travel"
    axis_title = "Wiper position (fraction of travel)"
    stimulus_min = 0.0
    stimulus_max = 1.0

    r_total_ohm: float
    taper: str = "linear"
    wiring: str = "divider"
    mid_fraction: float = 0.1

    def __post_init__(self):
        object.__setattr__(self, "r_total_ohm", check_resistance("r_total_ohm", self.r_total_ohm))
        if self.taper not in ("linear", "log"):
            raise InputError("taper", f"must be 'linear' or 'log', got {self.taper!r}")
        if self.wiring not in ("divider", "rheostat"):
            raise InputError("wiring", f"must be 'divider' or 'rheostat', got {self.wiring!r}")
        m = check_finite("mid_fraction", self.mid_fraction)
        if not 0.0 < m < 0.5:
            raise InputError("mid_fraction", f"must lie between 0 and 0.5 for a log taper, got {m:g}")
        object.__setattr__(self, "mid_fraction", m)

    @property
    def divider_wired(self) -> bool:
        return self.wiring == "divider"

    @property
    def nominal_stimulus(self) -> float:
        return 1.0  # the track's end-to-end resistance is what the tolerance states

    @property
    def _base(self) -> float:
        return ((1.0 - self.mid_fraction) / self.mid_fraction) ** 2

    def resistance(self, stimulus):
        x = as_array(stimulus)
        if self.taper == "linear":
            return x * self.r_total_ohm
        a = self._base
        return self.r_total_ohm * ((a**x - 1.0) / (a - 1.0))  # exactly R at x = 1, never above

    def dr_daxis(self, stimulus):
        x = as_array(stimulus)
        if self.taper == "linear":
            return np.full_like(x, self.r_total_ohm)
        a = self._base
        return self.r_total_ohm * np.log(a) * a**x / (a - 1.0)

    def stimulus_of(self, ohm):
        frac = as_array(ohm) / self.r_total_ohm
        if self.taper == "linear":
            x = frac
        else:
            a = self._base
            with np.errstate(invalid="ignore", divide="ignore"):
                x = np.log1p(frac * (a - 1.0)) / np.log(a)
        return np.where((frac >= 0) & (frac <= 1), x, np.nan)
