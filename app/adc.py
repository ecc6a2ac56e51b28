"""The ideal converter (IEEE Std 1241 sense): LSB = Vref / 2^N.

Code k stands for inputs in [k·LSB, (k+1)·LSB); its centre is (k + ½)·LSB.
Ratiometric: Vref is the divider's own supply, so supply error cancels.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.errors import InputError
from app.models.base import check_positive

MIN_BITS, MAX_BITS = 8, 24


@dataclass(frozen=True)
class Adc:
    bits: int = 12
    ratiometric: bool = True
    vref_v: Optional[float] = None

    def __post_init__(self):
        if isinstance(self.bits, bool) or not isinstance(self.bits, int) or not MIN_BITS <= self.bits <= MAX_BITS:
            raise InputError("adc.bits", f"must be a whole number from {MIN_BITS} to {MAX_BITS}")
        if not self.ratiometric:
            if self.vref_v is None:
                raise InputError("adc.vref_v", "is required when the converter is not ratiometric")
            object.__setattr__(self, "vref_v", check_positive("adc.vref_v", self.vref_v))

    @property
    def codes(self) -> int:
        return 2**self.bits

    def reference(self, supply_v: float) -> float:
        return supply_v if self.ratiometric else float(self.vref_v)

    def lsb(self, supply_v: float) -> float:
        return self.reference(supply_v) / self.codes

    def code(self, vin, supply_v: float) -> np.ndarray:
        """Output code for input voltage(s): floor(Vin / LSB), clipped to the code range."""
        k = np.floor(np.asarray(vin, dtype=float) / self.lsb(supply_v))
        return np.clip(k, 0, self.codes - 1).astype(np.int64)

    def centre_v(self, code, supply_v: float) -> np.ndarray:
        """The input voltage each code stands for: (k + ½)·LSB."""
        return (np.asarray(code, dtype=float) + 0.5) * self.lsb(supply_v)
