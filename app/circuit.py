"""The divider: output voltage, Thevenin resistance, sensor power and slope.

Topology (contract): supply → top element → output node → bottom element →
ground; optional ``load_ohm`` from the output to ground; optional
``parallel_ohm`` across the sensor. A pot in divider wiring is both arms.

Shapes: ``stimulus`` (n,), ``fixed_ohm`` scalar or (k, 1); every result
broadcasts to (n,) or (k, n). Units: Ω, V, W, V per axis unit.
"""

from __future__ import annotations

import math
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
        supply = check_positive("supply_v", self.supply_v)
        if not 0.01 <= supply <= 1000.0:
            raise InputError("supply_v", f"must lie within 0.01 .. 1000 V, got {supply:g}")
        object.__setattr__(self, "supply_v", supply)
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


def _arms(sensor: Sensor, circuit: Circuit, rs, drs, fixed_ohm):
    """(rt, rb, drt, drb): the two arms and their slopes (None when ``drs`` is None).

    Left unbroadcast: points (n,) against fixed values (k, 1) meet only in the
    first operation that needs both, so the solver's inner loop stays lean.
    """
    if not needs_fixed(sensor):
        return sensor.r_total_ohm - rs, rs, None if drs is None else -drs, drs
    fixed = circuit.fixed_ohm if fixed_ohm is None else fixed_ohm
    if fixed is None:
        raise InputError("circuit.fixed_ohm", "is required to evaluate this divider")
    fixed = as_array(fixed)
    p = circuit.parallel_ohm
    element = rs if p is None else rs * p / (rs + p)
    delement = None if drs is None else (drs if p is None else drs * (p / (rs + p)) ** 2)
    if circuit.sensor_at == "top":
        return element, fixed, delement, None if drs is None else 0.0
    return fixed, element, None if drs is None else 0.0, delement


def _sensor_power(sensor: Sensor, circuit: Circuit, rs, rt, rb, total):
    """Power in the sensor itself (the whole track of a divider pot), W."""
    # Branch currents by current division: finite even where an arm is 0 Ω.
    i_top = circuit.supply_v / total
    i_bottom = i_top if circuit.load_ohm is None else i_top * circuit.load_ohm / (rb + circuit.load_ohm)
    if not needs_fixed(sensor):
        return i_top**2 * rt + i_bottom**2 * rb
    i_element = i_top if circuit.sensor_at == "top" else i_bottom
    if circuit.parallel_ohm is not None:
        i_element = i_element * (circuit.parallel_ohm / (rs + circuit.parallel_ohm))
    if not isinstance(i_element, np.ndarray):
        return i_element**2 * rs
    # i_element is a fresh array of this call, in the full shape: it becomes the power.
    np.square(i_element, out=i_element)
    i_element *= rs
    return i_element


def _loaded(circuit: Circuit, rb):
    return rb if circuit.load_ohm is None else rb * circuit.load_ohm / (rb + circuit.load_ohm)


def divider_output(sensor: Sensor, circuit: Circuit, stimulus, fixed_ohm=None, with_power: bool = False,
                   sensor_ohm=None):
    """(vout, sensor power or None): only what a solver scores, for one or many fixed values.

    Same numbers as :func:`respond`'s ``vout_v`` and ``sensor_power_w``
    without the slopes and Thevenin resistance: ``stimulus`` (n,), ``fixed_ohm``
    (k, 1) give (k, n) V and W. ``sensor_ohm`` (n,), when given, is
    ``sensor.resistance(stimulus)`` computed once by a caller that asks many times.
    """
    rs = sensor.resistance(as_array(stimulus)) if sensor_ohm is None else sensor_ohm
    rt, rb, _, _ = _arms(sensor, circuit, rs, None, fixed_ohm)
    rb_loaded = _loaded(circuit, rb)
    total = rt + rb_loaded
    # In place: the (k, n) temporaries dominate the solver's time.
    vout = np.divide(rb_loaded, total, out=None if with_power else total)
    vout *= circuit.supply_v
    return vout, (_sensor_power(sensor, circuit, rs, rt, rb, total) if with_power else None)


def swing_peak_ohm(circuit: Circuit, r_lo: float, r_hi: float) -> float:
    """The fixed resistor with the largest |Vout(hi) − Vout(lo)|, in closed form (may be ``inf``).

    ``r_lo``, ``r_hi``: the sensor's resistance at the two ends. With A the
    arm holding the sensor (its parallel resistor, and the load when it sits
    at the bottom) and B the other, Vout/Vs is A/(A + B) or B/(A + B), and
    the swing B·|A₁ − A₂| / ((A₁ + B)(A₂ + B)) rises then falls in B with its
    peak at B = sqrt(A₁·A₂). B grows with the fixed resistor, so the swing
    is unimodal in it too and a clamp to the limits finds the best value.
    With the load across a fixed bottom arm, B = Rf ∥ RL never reaches RL:
    a peak at or above RL means "as large as allowed" (``inf``).
    """
    a1, a2 = r_lo, r_hi
    if circuit.parallel_ohm is not None:
        a1, a2 = (a * circuit.parallel_ohm / (a + circuit.parallel_ohm) for a in (a1, a2))
    load = circuit.load_ohm
    if circuit.sensor_at == "bottom" and load is not None:
        a1, a2 = (a * load / (a + load) for a in (a1, a2))
    peak = math.sqrt(a1 * a2)
    if circuit.sensor_at == "bottom" or load is None:
        return peak
    return peak * load / (load - peak) if peak < load else math.inf


def respond(sensor: Sensor, circuit: Circuit, stimulus, fixed_ohm=None) -> Response:
    """Everything the divider does at each stimulus, for one or many fixed values."""
    s = as_array(stimulus)
    rs = sensor.resistance(s)
    drs = sensor.dr_daxis(s)
    vs = circuit.supply_v
    rt, rb, drt, drb = _arms(sensor, circuit, rs, drs, fixed_ohm)

    rb_loaded, drbl_drb = _parallel(rb, circuit.load_ohm)
    drb_loaded = drb * drbl_drb
    total = rt + rb_loaded
    vout = vs * (rb_loaded / total)  # the ratio is ≤ 1 in floating point, so Vout never exceeds Vs
    sensitivity = vs * (rt * drb_loaded - rb_loaded * drt) / total**2
    thevenin = rt * rb_loaded / total
    power = _sensor_power(sensor, circuit, rs, rt, rb, total)

    shape = np.broadcast_shapes(vout.shape, s.shape)
    return Response(
        sensor_ohm=np.broadcast_to(rs, shape),
        vout_v=np.broadcast_to(vout, shape),
        thevenin_ohm=np.broadcast_to(thevenin, shape),
        sensor_power_w=np.broadcast_to(power, shape),
        sensitivity=np.broadcast_to(sensitivity, shape),
    )
