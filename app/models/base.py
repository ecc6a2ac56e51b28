"""The sensor model family: only the physics is abstract.

Every kind maps a stimulus (°C, lux or wiper travel) to the resistance of the
two-terminal element and back, and gives dR/d(axis) analytically. The
stimulus *axis* is where grids are spaced and slopes taken: °C, log10(lux),
travel. Everything else (grids, derived curves) is built once here.

Shapes: ``stimulus`` is any array shape; results have the same shape.
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from dataclasses import dataclass, fields
from typing import Any, ClassVar

import numpy as np

from app.errors import InputError


def as_array(values: Any) -> np.ndarray:
    """Cast once to float64; models never see lists."""
    return np.asarray(values, dtype=float)


def evenly_spaced(start: float, stop: float, points: int) -> np.ndarray:
    """numpy.linspace(start, stop, points): the same values (its own arithmetic: index × step
    + start, the end set exactly) at under half its cost, which a solve pays on every request."""
    if points < 2:
        return np.linspace(start, stop, points)
    out = np.arange(points, dtype=float)
    out *= (stop - start) / (points - 1)
    out += start
    out[-1] = stop
    return out


def is_finite(value: Any) -> bool:
    """A finite number: int, float or numpy scalar (an int too large for a float is not)."""
    try:
        return math.isfinite(value)
    except OverflowError:
        return False
    except TypeError:
        return bool(np.isfinite(value))


def check_positive(field: str, value: Any) -> float:
    value = check_finite(field, value)
    if value <= 0:
        raise InputError(field, f"must be positive, got {value:g}")
    return value


# Sensor resistances outside this span are typing errors, not parts (and overflow the models).
MIN_PART_OHM, MAX_PART_OHM = 1e-3, 1e12


def check_resistance(field: str, value: Any) -> float:
    value = check_positive(field, value)
    if not MIN_PART_OHM <= value <= MAX_PART_OHM:
        raise InputError(field, f"must lie within {MIN_PART_OHM:g} .. {MAX_PART_OHM:g} Ω, got {value:g}")
    return value


def check_finite(field: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(field, f"must be a number, got {value!r}")
    try:
        value = float(value)
    except OverflowError:  # an integer beyond any float
        raise InputError(field, "must be finite, got an integer too large for a float") from None
    if not math.isfinite(value):
        raise InputError(field, f"must be finite, got {value}")
    return value


@dataclass(frozen=True)
class Sensor(ABC):
    """Base of every sensor kind. Subclasses are frozen dataclasses."""

    kind: ClassVar[str]
    quantity: ClassVar[str]          # "temperature" | "illuminance" | "position"
    stimulus_unit: ClassVar[str]     # "°C", "lx", "travel"
    axis_unit: ClassVar[str]         # "°C", "decade", "travel"
    axis_title: ClassVar[str]        # plot axis title with its unit
    # Physical stimulus limits: values outside are refused, not extrapolated.
    stimulus_min: ClassVar[float]
    stimulus_max: ClassVar[float]

    @abstractmethod
    def resistance(self, stimulus: np.ndarray) -> np.ndarray:
        """R(stimulus) in Ω of the two-terminal element."""

    @abstractmethod
    def stimulus_of(self, ohm: np.ndarray) -> np.ndarray:
        """Inverse of :meth:`resistance` (NaN where no stimulus gives ``ohm``)."""

    @abstractmethod
    def dr_daxis(self, stimulus: np.ndarray) -> np.ndarray:
        """dR/d(axis) in Ω per axis unit, analytic."""

    # Axis mapping: identity except for light, judged on log10(lux).
    def to_axis(self, stimulus: np.ndarray) -> np.ndarray:
        return as_array(stimulus)

    def from_axis(self, axis: np.ndarray) -> np.ndarray:
        return as_array(axis)

    def grid(self, lo: float, hi: float, points: int) -> np.ndarray:
        """``points`` stimulus values evenly spaced on the axis, ends included."""
        axis = evenly_spaced(float(self.to_axis(lo)), float(self.to_axis(hi)), points)
        stimulus = self.from_axis(axis)
        stimulus[0], stimulus[-1] = lo, hi
        return stimulus

    def check_stimulus(self, stimulus: np.ndarray, field: str = "stimulus") -> np.ndarray:
        s = as_array(stimulus)
        if not np.all(np.isfinite(s)):
            raise InputError(field, "every value must be a finite number")
        if np.any(s < self.stimulus_min) or np.any(s > self.stimulus_max):
            raise InputError(
                field,
                f"values must lie within {self.stimulus_min:g} .. {self.stimulus_max:g}"
                f" {self.stimulus_unit} for a {self.kind} sensor",
            )
        return s

    def check_range(self, lo: float, hi: float) -> None:
        """Refuse an empty, inverted or out-of-physics stimulus range, naming the end at fault."""
        for name, value in (("range.min", lo), ("range.max", hi)):
            if not math.isfinite(value):
                raise InputError(name, "must be a finite number")
            if not self.stimulus_min <= value <= self.stimulus_max:
                raise InputError(name, f"must lie within {self.stimulus_min:g} .. {self.stimulus_max:g}"
                                       f" {self.stimulus_unit} for a {self.kind} sensor, got {value:g}")
        if hi <= lo:
            raise InputError("range.max", f"must be above range.min ({lo:g}), got {hi:g}")

    @property
    def nominal_stimulus(self) -> float:
        """Where the part's resistance tolerance is specified."""
        return 25.0

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, **{f.name: getattr(self, f.name) for f in fields(self)}}
