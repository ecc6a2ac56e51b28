"""Trip points with hysteresis: the circuit, its description and its evaluation.

Topology (contract): the sensor divider's output goes to the comparator's
inverting input. The reference node (``top_ohm`` from the supply,
``bottom_ohm`` to ground) goes to the non-inverting input, and
``hysteresis_ohm`` joins the comparator output to the reference node. The
feedback has to reach the non-inverting input (to the inverting one it would
be negative feedback: no hysteresis), so the sensor is always on the
inverting input and the way the output goes at the trip follows from the way
the sensor voltage moves: rising through the upper level drives the output
low, falling through the lower level drives it high (``output_at_trip``).

Nodal analysis at the reference node with the output held at Vo:
    V = (Vs/Rt + Vo/Rh) / (1/Rt + 1/Rb + 1/Rh).
Choosing the resistors is app/trip_solve.py; the spread under tolerances
app/trip_spread.py; the trimmer app/trip_adjust.py.

Shapes: functions marked "vectorised" broadcast their array arguments.
Units: Ω, V, W; stimulus in °C, lux or travel.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from typing import Callable, Optional

import numpy as np

from app import series
from app.circuit import Circuit, needs_fixed
from app.errors import InputError
from app.models.base import Sensor, check_finite, check_positive

DEFAULT_MIN_OHM = 100.0     # below this a divider wastes supply current (common practice)
DEFAULT_MAX_OHM = 10e6      # above this leakage and input bias currents matter (common practice)
@dataclass(frozen=True)
class Network:
    """The four resistors of a trip circuit, Ω."""

    fixed_ohm: float
    top_ohm: float
    bottom_ohm: float
    hysteresis_ohm: float


@dataclass(frozen=True)
class TripSpec:
    """What the engineer asks for. Validates itself, naming request fields."""

    sensor: Sensor
    supply_v: float
    trip: float
    release: float
    sensor_at: str = "bottom"
    series: str = "E24"
    output_high_v: Optional[float] = None   # None: the comparator swings to the supply
    output_low_v: float = 0.0
    min_ohm: float = DEFAULT_MIN_OHM
    max_ohm: float = DEFAULT_MAX_OHM
    reference_ohm: Optional[float] = None   # wanted resistance seen at the reference node
    max_sensor_power_w: Optional[float] = None
    output_at_trip: Optional[str] = None    # wanted direction; None: whatever the wiring gives

    def __post_init__(self):
        if not needs_fixed(self.sensor):
            raise InputError("sensor.wiring", "a pot in divider wiring has no fixed resistor; use wiring 'rheostat'")
        object.__setattr__(self, "supply_v", check_positive("supply_v", self.supply_v))
        if self.sensor_at not in ("top", "bottom"):
            raise InputError("sensor_at", f"must be 'top' or 'bottom', got {self.sensor_at!r}")
        if self.series != "exact":
            series.mantissas(self.series)
        for name in ("trip", "release"):
            value = check_finite(f"target.{name}", getattr(self, name))
            self.sensor.check_stimulus(np.array(value), field=f"target.{name}")
            object.__setattr__(self, name, value)
        if self.release == self.trip:
            raise InputError("target.release", f"must differ from target.trip ({self.trip:g}): "
                             "hysteresis needs two different thresholds")
        high = self.supply_v if self.output_high_v is None else check_finite("detector.output_high_v", self.output_high_v)
        low = check_finite("detector.output_low_v", self.output_low_v)
        if high <= low:
            raise InputError("detector.output_high_v", f"must be above detector.output_low_v ({low:g} V), got {high:g} V")
        object.__setattr__(self, "output_low_v", low)
        lo = check_positive("limits.min_ohm", self.min_ohm)
        hi = check_positive("limits.max_ohm", self.max_ohm)
        if hi <= lo:
            raise InputError("limits.max_ohm", f"must be above limits.min_ohm ({lo:g} Ω), got {hi:g} Ω")
        if self.reference_ohm is not None:
            check_positive("reference_ohm", self.reference_ohm)
        if self.max_sensor_power_w is not None:
            check_positive("limits.max_sensor_power_w", self.max_sensor_power_w)
        if self.output_at_trip not in (None, "high", "low"):
            raise InputError("output_at_trip", f"must be 'high' or 'low', got {self.output_at_trip!r}")

    @property
    def v_high(self) -> float:
        return self.supply_v if self.output_high_v is None else float(self.output_high_v)

    @property
    def circuit(self) -> Circuit:
        return Circuit(self.supply_v, self.sensor_at)


@dataclass(frozen=True)
class TripDesign:
    spec: TripSpec
    network: Network              # series values
    exact: Network                # continuous solution
    upper_v: float
    lower_v: float
    achieved_trip: float
    achieved_release: float
    rising: bool                  # the sensor voltage rises on the way to the trip
    sensor_v: dict                # sensor divider output at the target trip and release
    sensor_power_w: dict          # power in the sensor at the achieved trip and release
    warnings: list = field(default_factory=list)

    @property
    def output_at_trip(self) -> str:
        return "low" if self.rising else "high"

    @property
    def trip_level_v(self) -> float:
        return self.upper_v if self.rising else self.lower_v

    @property
    def release_level_v(self) -> float:
        return self.lower_v if self.rising else self.upper_v


def quiet(fn):
    """Run ``fn`` with numpy's overflow/invalid warnings off.

    Extreme requests (an NTC near absolute zero, a corner where the
    divider never reaches a level) make inf and NaN on the way; every
    result is checked for finiteness and refused by field instead.
    """
    @functools.wraps(fn)
    def run(*args, **kwargs):
        with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
            return fn(*args, **kwargs)
    return run


# --- the circuit, vectorised -------------------------------------------------

def levels(supply_v, top, bottom, hysteresis, v_high, v_low):
    """(upper, lower): reference node voltage with the output at v_high and v_low. Vectorised.

    Written in products of resistances so a 0 Ω arm (a pot at its end stop)
    gives the rail instead of inf/inf.
    """
    rt, rb, rh = np.asarray(top, float), np.asarray(bottom, float), np.asarray(hysteresis, float)
    den = rb * rh + rt * rh + rt * rb
    base = supply_v * rb * rh
    return (base + v_high * rt * rb) / den, (base + v_low * rt * rb) / den


def sensor_ohm_at(v, supply_v, fixed_ohm, sensor_at: str):
    """Sensor resistance that puts the divider output at ``v`` (NaN outside 0 < v < Vs). Vectorised."""
    v = np.asarray(v, float)
    inside = (v > 0) & (v < supply_v)
    with np.errstate(divide="ignore", invalid="ignore"):
        if sensor_at == "bottom":
            r = fixed_ohm * v / (supply_v - v)
        else:
            r = fixed_ohm * (supply_v - v) / v
    return np.where(inside, r, np.nan)


def crossing(sensor: Sensor, v, supply_v, fixed_ohm, sensor_at: str,
             inverse: Optional[Callable[[np.ndarray], np.ndarray]] = None):
    """Stimulus at which the sensor divider's output equals ``v`` (NaN if none). Vectorised.

    ``inverse`` maps sensor resistance to stimulus (default: the nominal
    model; the spread passes a perturbed one).
    """
    r = sensor_ohm_at(v, supply_v, fixed_ohm, sensor_at)
    with np.errstate(invalid="ignore", divide="ignore"):
        s = (inverse or sensor.stimulus_of)(r)
    return np.where(np.isfinite(r), s, np.nan)
