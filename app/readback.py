"""The firmware's side of a reading: converter output back to stimulus, assuming the nominal design.

The converter gives x = Vin/LSB of the real build (its gain and offset
errors included); the firmware knows only the nominal reference, supply,
fixed resistor, resistor across the sensor and (if told so) load, and
inverts the divider and the sensor curve with those.
"""

from __future__ import annotations

from typing import Mapping, Optional

import numpy as np

from app.circuit import needs_fixed
from app.constants import KELVIN_OFFSET
from app.models.base import Sensor


def parallel(a, b):
    return a if b is None else a * b / (a + b)


def unparallel(total, b):
    """The resistor that in parallel with ``b`` gives ``total`` (NaN when impossible)."""
    if b is None:
        return total
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(total < b, total * b / (b - total), np.nan)


def firmware_ratio(design, ratio, d: Mapping, in_place: bool = False) -> np.ndarray:
    """What the firmware takes Vout/Vs to be: the converter's output read with the nominal reference.

    The converter gives x = Vin/LSB (gain and offset errors included),
    clipped to the centres of its first and last codes; the firmware turns
    x back into volts with the nominal LSB and divides by the nominal supply.
    """
    adc, vs = design.adc, design.circuit.supply_v
    ref = vs * (1.0 + d.get("supply", 0.0)) if adc.ratiometric else adc.vref_v * (1.0 + d.get("vref", 0.0))
    supply = vs * (1.0 + d.get("supply", 0.0))
    back = adc.reference(vs) / adc.codes / vs  # code → nominal Vout/Vs
    factor = np.asarray(supply / ref * adc.codes * (1.0 + d.get("adc_gain", 0.0)) * back)
    if in_place and isinstance(ratio, np.ndarray) and ratio.shape == np.broadcast_shapes(ratio.shape, factor.shape):
        out = ratio
        out *= factor
    else:
        out = ratio * factor
    if d.get("adc_offset") is not None:
        out += d["adc_offset"] * back
    lo, hi = 0.5 * back, (adc.codes - 0.5) * back
    if out.size and (out.min() < lo or out.max() > hi):
        np.clip(out, lo, hi, out=out)
    return out


def infer(design, ratio, fixed_ohm=None) -> np.ndarray:
    """The stimulus the firmware reports for an output ratio Vout/Vs, assuming the nominal design.

    Overwrites ``ratio``.
    """
    sensor, circuit = design.sensor, design.circuit
    load = design.load_ohm if design.firmware_knows_load else None
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if not needs_fixed(sensor):
            return sensor.stimulus_of(_within_track(sensor, _pot_lower(sensor.r_total_ohm, ratio, load)))
        fixed = circuit.fixed_ohm if fixed_ohm is None else fixed_ohm
        if circuit.sensor_at == "top":
            other = 1.0 - ratio
            other /= ratio
            other *= parallel(fixed, load)
            arm = other
        else:
            other = 1.0 - ratio
            np.divide(ratio, other, out=other)
            other *= fixed
            arm = unparallel(other, load)
        element = unparallel(arm, circuit.parallel_ohm)
        if sensor.kind == "pot":
            return sensor.stimulus_of(_within_track(sensor, element))
        if sensor.kind == "ntc_beta" and element is other:
            return beta_inverse_in_place(sensor, element)
        return sensor.stimulus_of(element)


def beta_inverse_in_place(sensor: Sensor, ohm: np.ndarray) -> np.ndarray:
    """The beta model's inverse, 1/T = 1/Tn + ln(R/Rn)/β, computed in ``ohm``'s own buffer.

    The same formula as the model's ``stimulus_of`` (a test holds them
    equal), without its temporaries: it runs on every build × point of a
    Monte Carlo.
    """
    np.log(ohm, out=ohm)
    ohm *= 1.0 / sensor.beta_k
    ohm += 1.0 / (sensor.t_nominal_c + KELVIN_OFFSET) - np.log(sensor.r_nominal_ohm) / sensor.beta_k
    if ohm.size and ohm.min() <= 0:
        ohm[ohm <= 0] = np.nan  # no temperature has that resistance
    np.reciprocal(ohm, out=ohm)
    ohm -= KELVIN_OFFSET
    return ohm


def _within_track(sensor: Sensor, ohm):
    """A pot's firmware cannot report travel beyond its ends: the reading stops at 0 and full travel."""
    return np.clip(ohm, 0.0, sensor.r_total_ohm)


def _pot_lower(total: float, ratio, load: Optional[float]):
    """Lower part of a divider-wired pot from its output ratio, with a known load on the wiper."""
    if load is None:
        return total * ratio
    # r·x² − (r·R − L)·x − r·R·L = 0 for x the lower part; the root written without cancellation.
    b = ratio * total - load
    root = np.sqrt(b * b + 4.0 * ratio * ratio * total * load)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(b > 0, (b + root) / (2.0 * ratio), 2.0 * ratio * total * load / (root - b))
