"""The converter (IEEE Std 1241 sense): LSB = Vref / 2^N, plus what it asks of the divider.

Code k stands for inputs in [k·LSB, (k+1)·LSB); its centre is (k + ½)·LSB.
Ratiometric: Vref is the divider's own supply, so supply error cancels.

Beyond the ideal transfer: a usable input window (many converters read
nothing useful near the rails), the input as a resistance to ground, and a
SAR sampling front end (``Sampling``) whose settling is checked in
:mod:`app.settling`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.errors import InputError
from app.models.base import check_finite, check_positive

MIN_BITS, MAX_BITS = 8, 24


@dataclass(frozen=True)
class Window:
    """Usable input range; each edge in volts or as a fraction of the reference.

    An edge given both ways takes the tighter of the two. Absent edges are the
    rails (0 and the reference).
    """

    min_v: Optional[float] = None
    max_v: Optional[float] = None
    min_fraction: Optional[float] = None
    max_fraction: Optional[float] = None

    def __post_init__(self):
        for name in ("min_v", "max_v"):
            value = getattr(self, name)
            if value is not None:
                value = check_finite(f"adc.window.{name}", value)
                if value < 0:
                    raise InputError(f"adc.window.{name}", f"must not be negative, got {value:g}")
                object.__setattr__(self, name, value)
        for name in ("min_fraction", "max_fraction"):
            value = getattr(self, name)
            if value is not None:
                value = check_finite(f"adc.window.{name}", value)
                if not 0.0 <= value <= 1.0:
                    raise InputError(f"adc.window.{name}", f"must lie within 0 .. 1 of the reference, got {value:g}")
                object.__setattr__(self, name, value)

    def limits(self, reference_v: float) -> tuple[float, float]:
        """(low, high) in volts for a converter whose reference is ``reference_v``."""
        lo = max(0.0, self.min_v or 0.0, (self.min_fraction or 0.0) * reference_v)
        hi = reference_v
        if self.max_v is not None:
            hi = min(hi, self.max_v)
        if self.max_fraction is not None:
            hi = min(hi, self.max_fraction * reference_v)
        if hi <= lo:
            field = "adc.window.max_v" if self.max_v is not None else "adc.window.max_fraction"
            raise InputError(field, f"leaves no usable input: {lo:.4g} V .. {hi:.4g} V with a {reference_v:g} V reference")
        return lo, hi

    def bounds(self, reference_v):
        """(low, high) in volts for reference voltage(s) ``reference_v`` (any shape, unchecked)."""
        ref = np.asarray(reference_v, dtype=float)
        lo = np.maximum(self.min_v or 0.0, (self.min_fraction or 0.0) * ref)
        hi = ref if self.max_v is None else np.minimum(ref, self.max_v)
        if self.max_fraction is not None:
            hi = np.minimum(hi, self.max_fraction * ref)
        return lo, hi


@dataclass(frozen=True)
class Sampling:
    """A SAR input: sampling capacitor, its switch and the acquisition time, and
    what sits on the pin (a filter capacitor) and how often it is sampled."""

    capacitance_f: Optional[float] = None
    switch_ohm: float = 0.0
    acquisition_s: Optional[float] = None
    filter_f: Optional[float] = None
    interval_s: Optional[float] = None

    def __post_init__(self):
        for name in ("capacitance_f", "acquisition_s", "filter_f", "interval_s"):
            value = getattr(self, name)
            if value is not None:
                object.__setattr__(self, name, check_positive(f"adc.sampling.{name}", value))
        switch = check_finite("adc.sampling.switch_ohm", self.switch_ohm)
        if switch < 0:
            raise InputError("adc.sampling.switch_ohm", f"must not be negative, got {switch:g}")
        object.__setattr__(self, "switch_ohm", switch)
        if self.acquisition_s is not None and self.capacitance_f is None:
            raise InputError("adc.sampling.capacitance_f", "is needed to check the acquisition time")


@dataclass(frozen=True)
class Adc:
    bits: int = 12
    ratiometric: bool = True
    vref_v: Optional[float] = None
    window: Optional[Window] = None
    input_ohm: Optional[float] = None  # the converter's input as a resistance to ground
    sampling: Optional[Sampling] = None

    def __post_init__(self):
        if isinstance(self.bits, bool) or not isinstance(self.bits, int) or not MIN_BITS <= self.bits <= MAX_BITS:
            raise InputError("adc.bits", f"must be a whole number from {MIN_BITS} to {MAX_BITS}")
        if not self.ratiometric:
            if self.vref_v is None:
                raise InputError("adc.vref_v", "is required when the converter is not ratiometric")
            object.__setattr__(self, "vref_v", check_positive("adc.vref_v", self.vref_v))
        if self.input_ohm is not None:
            object.__setattr__(self, "input_ohm", check_positive("adc.input_ohm", self.input_ohm))

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

    def usable(self, supply_v: float) -> tuple[float, float]:
        """The input window in volts (the whole reference without a window)."""
        ref = self.reference(supply_v)
        return (0.0, ref) if self.window is None else self.window.limits(ref)
