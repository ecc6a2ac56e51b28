"""Fit sensor parameters to measured (stimulus, resistance) points.

Beta: the IEC 60539-1 B-value definition β = ln(R1/R2) / (1/T1 − 1/T2),
least squares on ln R against 1/T when there are more than two points.
Steinhart–Hart: exact 3×3 solve, least squares on 1/T beyond three.
LDR: least squares on log10 R against log10 E. RTD: the IEC 60751 curve
with R0 fitted. Residuals are in stimulus units (°C, decades of lux).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.constants import KELVIN_OFFSET
from app.errors import InputError
from app.models import build_sensor
from app.models.base import Sensor

MIN_POINTS = {"ntc_beta": 2, "ntc_sh": 3, "ldr": 2, "rtd": 1}


@dataclass(frozen=True)
class Fit:
    sensor: Sensor
    residuals: np.ndarray  # (n,) model stimulus − given stimulus
    max_abs_error: float


def _lstsq(design: np.ndarray, target: np.ndarray) -> np.ndarray:
    """Least squares with column scaling (ln³R columns dwarf the constant one)."""
    scale = np.max(np.abs(design), axis=0)
    coef, *_ = np.linalg.lstsq(design / scale, target, rcond=None)
    return coef / scale


def _check(kind: str, stimulus: np.ndarray, ohm: np.ndarray) -> None:
    need = MIN_POINTS[kind]
    if stimulus.size < need:
        raise InputError("points", f"a {kind} fit needs at least {need} points, got {stimulus.size}")
    if not (np.all(np.isfinite(stimulus)) and np.all(np.isfinite(ohm))):
        raise InputError("points", "every stimulus and resistance must be a finite number")
    if np.any(ohm <= 0):
        raise InputError("points", "every resistance must be positive")
    if np.unique(stimulus).size != stimulus.size:
        raise InputError("points", "two points share one stimulus value")
    if kind == "ldr" and np.any(stimulus <= 0):
        raise InputError("points", "illuminance must be positive (lux)")
    if kind != "ldr" and np.any(stimulus <= -KELVIN_OFFSET):
        raise InputError("points", "temperatures must be above absolute zero (-273.15 °C)")


def _build(spec: dict) -> Sensor:
    try:
        return build_sensor(spec)
    except InputError as err:
        raise InputError("points", f"the fitted {spec['kind']} is not physical ({err})") from None


def fit(kind: str, stimulus, ohm) -> Fit:
    s = np.asarray(stimulus, dtype=float)
    r = np.asarray(ohm, dtype=float)
    if kind not in MIN_POINTS:
        raise InputError("kind", f"must be one of {', '.join(MIN_POINTS)}, got {kind!r}")
    _check(kind, s, r)
    inv_t = 1.0 / (s + KELVIN_OFFSET)
    ln_r = np.log(r)
    if kind == "ntc_beta":
        t_nom = 25.0
        x = inv_t - 1.0 / (t_nom + KELVIN_OFFSET)
        ln_rn, beta = _lstsq(np.column_stack([np.ones_like(x), x]), ln_r)
        if beta <= 0:
            raise InputError("points", "resistance must fall as temperature rises for an NTC")
        sensor = _build({"kind": kind, "r_nominal_ohm": float(np.exp(ln_rn)), "beta_k": float(beta), "t_nominal_c": t_nom})
    elif kind == "ntc_sh":
        a, b, c = _lstsq(np.column_stack([np.ones_like(ln_r), ln_r, ln_r**3]), inv_t)
        sensor = _build({"kind": kind, "a": float(a), "b": float(b), "c": float(c)})
    elif kind == "ldr":
        lux_ref = 10.0
        x = np.log10(s / lux_ref)
        log_rref, neg_gamma = _lstsq(np.column_stack([np.ones_like(x), x]), np.log10(r))
        sensor = _build({"kind": kind, "r_ref_ohm": float(10.0**log_rref), "gamma": float(-neg_gamma), "lux_ref": lux_ref})
    else:
        shape = build_sensor({"kind": "rtd", "r0_ohm": 1.0}).resistance(s)
        sensor = _build({"kind": "rtd", "r0_ohm": float(np.dot(shape, r) / np.dot(shape, shape))})

    if kind == "ldr":
        residuals = np.log10(sensor.stimulus_of(r)) - np.log10(s)
    else:
        residuals = sensor.stimulus_of(r) - s
    return Fit(sensor, residuals, float(np.max(np.abs(residuals))))
