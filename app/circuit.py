"""The divider: output voltage, Thevenin resistance, sensor power and slope.

Topology (contract): supply → top element → output node → bottom element →
ground; optional ``load_ohm`` from the output to ground; optional
``parallel_ohm`` across the sensor. A pot in divider wiring is both arms.

Shapes: ``stimulus`` (n,), ``fixed_ohm`` scalar or (k, 1); every result
broadcasts to (n,) or (k, n). Units: Ω, V, W, V per axis unit.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.errors import InputError
from app.models.base import Sensor, as_array, check_positive


@dataclass(frozen=True)
class Circuit:
    supply_v: float
    sensor_at: str = "bottom"
    fixed_ohm: Optional[float] = None
    load_ohm: Optional[float] = None
    parallel_ohm: Optional[float] = None

    def __post_init__(self):
        object.__setattr__(self, "supply_v", check_positive("supply_v", self.supply_v))
        if self.sensor_at not in ("top", "bottom"):
            raise InputError("sensor_at", f"must be 'top' or 'bottom', got {self.sensor_at!r}")
        for name in ("fixed_ohm", "load_ohm", "parallel_ohm"):
            value = getattr(self, name)
            if value is not None:
                object.__setattr__(self, name, check_positive(name, value))

    def with_fixed(self, fixed_ohm: Optional[float]) -> "Circuit":
        return Circuit(self.supply_v, self.sensor_at, fixed_ohm, self.load_ohm, self.parallel_ohm)


@dataclass(frozen=True)
class Response:
    sensor_ohm: np.ndarray
    vout_v: np.ndarray
    thevenin_ohm: np.ndarray
    sensor_power_w: np.ndarray
    sensitivity: np.ndarray


def needs_fixed(sensor: Sensor) -> bool:
    return not getattr(sensor, "divider_wired", False)


def _parallel(r: np.ndarray, other: Optional[float]) -> tuple[np.ndarray, np.ndarray]:
    """r ∥ other and d(r ∥ other)/dr."""
    if other is None:
        return r, np.ones_like(r)
    return r * other / (r + other), (other / (r + other)) ** 2


def respond(sensor: Sensor, circuit: Circuit, stimulus, fixed_ohm=None) -> Response:
    """Everything the divider does at each stimulus, for one or many fixed values."""
    s = as_array(stimulus)
    rs = sensor.resistance(s)
    drs = sensor.dr_daxis(s)
    vs = circuit.supply_v

    if not needs_fixed(sensor):
        rt, rb = sensor.r_total_ohm - rs, rs
        drt, drb = -drs, drs
    else:
        fixed = circuit.fixed_ohm if fixed_ohm is None else fixed_ohm
        if fixed is None:
            raise InputError("circuit.fixed_ohm", "is required to evaluate this divider")
        fixed = as_array(fixed)
        element, delement_drs = _parallel(rs, circuit.parallel_ohm)
        delement = drs * delement_drs
        zero = np.zeros_like(element)
        if circuit.sensor_at == "top":
            rt, rb, drt, drb = element, fixed, delement, zero
        else:
            rt, rb, drt, drb = fixed, element, zero, delement
        rt, rb, drt, drb = np.broadcast_arrays(rt, rb, drt, drb)

    rb_loaded, drbl_drb = _parallel(rb, circuit.load_ohm)
    drb_loaded = drb * drbl_drb
    total = rt + rb_loaded
    vout = vs * rb_loaded / total
    sensitivity = vs * (rt * drb_loaded - rb_loaded * drt) / total**2
    thevenin = rt * rb_loaded / total

    # Branch currents by current division: finite even where an arm is 0 Ω.
    i_top = vs / total
    i_bottom = i_top if circuit.load_ohm is None else i_top * circuit.load_ohm / (rb + circuit.load_ohm)
    if not needs_fixed(sensor):
        power = i_top**2 * rt + i_bottom**2 * rb
    else:
        i_element = i_top if circuit.sensor_at == "top" else i_bottom
        share = 1.0 if circuit.parallel_ohm is None else circuit.parallel_ohm / (rs + circuit.parallel_ohm)
        power = (i_element * share) ** 2 * rs

    shape = np.broadcast_shapes(vout.shape, s.shape)
    return Response(
        sensor_ohm=np.broadcast_to(rs, shape),
        vout_v=np.broadcast_to(vout, shape),
        thevenin_ohm=np.broadcast_to(thevenin, shape),
        sensor_power_w=np.broadcast_to(power, shape),
        sensitivity=np.broadcast_to(sensitivity, shape),
    )
