"""The reading model: what the firmware reports for a perturbed build.

A build is the nominal design with its parts moved by relative deltas (and
the converter's offset in LSB). The firmware knows only the nominal design:
it takes the converter's output, assumes the nominal reference, supply,
fixed resistor (and, if told so, the nominal load) and inverts the divider
and the sensor curve (:mod:`app.readback`). The reading error is that inferred stimulus minus the
true one, on the stimulus axis (°C, decades of lux, travel).

Effects the firmware does not see, and which are therefore errors: the load
(unless ``firmware_knows_load``), the resistance of two leads in series with
the sensor, and self-heating, solved for the sensor's own temperature
t = t_ambient + P(t)/δ by fixed-point iteration.

Shapes: every delta broadcasts against ``stimulus``; pass stimulus (n,) with
deltas (c, 1) for corners, or stimulus (n, 1) with deltas (1, m) for Monte
Carlo. Quantisation is not applied here: it is added by the budget as
±½ LSB referred through the slope.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Optional

import numpy as np

from app.adc import Adc
from app.circuit import Circuit, needs_fixed
from app.constants import KELVIN_OFFSET
from app.errors import InputError
from app.models.base import Sensor
from app.readback import firmware_ratio, infer, parallel

# Relative part deltas, then the converter offset in LSB.
PARAMS = ("fixed", "sensor", "beta", "gamma", "supply", "vref", "adc_gain", "adc_offset")
HEAT_TOL_C = 1e-9       # fixed-point iteration stops when no point moves more than this
HEAT_MAX_STEPS = 200


@dataclass(frozen=True)
class Effects:
    """Which effects the firmware does not know about are present."""

    load: bool = True
    leads: bool = True
    heating: bool = True


ALL = Effects()


@dataclass(frozen=True)
class Design:
    sensor: Sensor
    circuit: Circuit
    adc: Adc
    dissipation_w_per_k: Optional[float] = None
    lead_ohm: float = 0.0           # each of the two leads
    duty_cycle: float = 1.0         # fraction of time the divider is powered (self-heating)
    firmware_knows_load: bool = False

    def __post_init__(self):
        if self.dissipation_w_per_k is not None and self.sensor.quantity != "temperature":
            raise InputError("dissipation_w_per_k", f"self-heating applies to temperature sensors, not a {self.sensor.kind}")
        if self.lead_ohm and not needs_fixed(self.sensor):
            raise InputError("lead_ohm", "a potentiometer in divider wiring has no two-wire sensor leads")

    @property
    def load_ohm(self) -> Optional[float]:
        """The load on the output: the circuit's load in parallel with the converter input."""
        loads = [r for r in (self.circuit.load_ohm, self.adc.input_ohm) if r is not None]
        if not loads:
            return None
        return 1.0 / sum(1.0 / r for r in loads)

    @property
    def has_heating(self) -> bool:
        return self.dissipation_w_per_k is not None


def element_ohm(sensor: Sensor, t, scale, shape) -> np.ndarray:
    """The sensor's resistance at stimulus ``t`` with its scale and curve-shape deltas.

    ``scale``: relative change of the resistance at every stimulus (the
    resistance tolerance at the nominal point). ``shape``: relative change of
    β (ntc_beta, pivoting at the nominal temperature) or of γ (ldr, pivoting
    at the reference illuminance); None for none.
    """
    if shape is None:
        return sensor.resistance(t) * (1.0 + scale)
    if sensor.kind == "ntc_beta":
        bend = sensor.beta_k * (1.0 / (t + KELVIN_OFFSET) - 1.0 / (sensor.t_nominal_c + KELVIN_OFFSET))
        out = bend * (1.0 + shape)
        np.exp(out, out=out)
        out *= sensor.r_nominal_ohm * (1.0 + scale)
        return out
    if sensor.kind == "ldr":
        law = np.exp(-sensor.gamma * (1.0 + shape) * np.log(t / sensor.lux_ref))
        law *= sensor.r_ref_ohm
        return parallel(law, sensor.r_dark_ohm) * (1.0 + scale)
    raise InputError("tolerances", f"a {sensor.kind} sensor has no β or γ to vary")


@dataclass
class Built:
    """One evaluation of perturbed builds: output ratio, supply and reading error."""

    ratio: np.ndarray      # Vout / Vs of each build
    supply_v: object       # each build's supply (scalar or broadcastable array)
    error: np.ndarray      # inferred − true, on the stimulus axis
    sensor_c: Optional[np.ndarray] = None  # the sensor's own temperature, with self-heating

    @property
    def vout_v(self) -> np.ndarray:
        return self.ratio * self.supply_v


def _arms(design: Design, t, d: Mapping, effects: Effects, fixed_ohm):
    """(r_top, r_bottom_loaded, r_element, r_branch, supply) of the perturbed divider."""
    sensor, circuit = design.sensor, design.circuit
    shape = d.get("beta") if sensor.kind == "ntc_beta" else d.get("gamma") if sensor.kind == "ldr" else None
    r_el = element_ohm(sensor, t, d.get("sensor", 0.0), shape)
    vs = circuit.supply_v * (1.0 + d.get("supply", 0.0))
    # The firmware's own load is always there; an unknown one only when asked.
    load = design.load_ohm if effects.load or design.firmware_knows_load else None
    if not needs_fixed(sensor):
        total = sensor.r_total_ohm * (1.0 + d.get("sensor", 0.0))
        return total - r_el, parallel(r_el, load), r_el, r_el, vs
    r_branch = r_el + 2.0 * design.lead_ohm if effects.leads and design.lead_ohm else r_el
    arm = parallel(r_branch, circuit.parallel_ohm)
    fixed = (circuit.fixed_ohm if fixed_ohm is None else fixed_ohm) * (1.0 + d.get("fixed", 0.0))
    if circuit.sensor_at == "top":
        return arm, parallel(fixed, load), r_el, r_branch, vs
    return fixed, parallel(arm, load), r_el, r_branch, vs


def _ratio(r_top, r_bottom) -> np.ndarray:
    """Vout/Vs; a ratio ≤ 1 in floating point."""
    total = r_top + r_bottom
    return np.divide(r_bottom, total, out=total) if isinstance(total, np.ndarray) else r_bottom / total


def _power(design: Design, ratio, arms) -> np.ndarray:
    """Power in the sensor element itself (not its leads or a resistor across it)."""
    _, _, r_el, r_branch, vs = arms
    across = ratio * vs if design.circuit.sensor_at == "bottom" else (1.0 - ratio) * vs
    current = across / r_branch
    return current * current * r_el


def build(design: Design, stimulus, deltas: Mapping[str, np.ndarray] | None = None,
          effects: Effects = ALL, fixed_ohm=None, runaway: str = "raise", keep_output: bool = True) -> Built:
    """Perturbed builds at true ``stimulus``: their output and reading error.

    ``fixed_ohm`` overrides the nominal fixed resistor (the solver's
    candidates, shaped to broadcast); the firmware then assumes that value.
    ``runaway``: a self-heating that does not settle raises ("raise"), or
    makes those builds' errors infinite ("mark": the solver's candidates).
    ``keep_output=False`` lets the error reuse the output's buffer (then
    ``vout_v`` is not available): the Monte Carlo's inner loop.
    """
    d = deltas or {}
    sensor = design.sensor
    s = np.asarray(stimulus, dtype=float)
    t = s
    arms = _arms(design, t, d, effects, fixed_ohm)
    ratio = _ratio(arms[0], arms[1])
    heated = effects.heating and design.has_heating
    stuck = None
    if heated:
        t, arms, ratio, stuck = _heat(design, s, d, effects, fixed_ohm, arms, ratio, runaway == "raise")
    inferred = infer(design, firmware_ratio(design, ratio, d, in_place=not keep_output), fixed_ohm)
    error = sensor.to_axis(inferred)
    error -= sensor.to_axis(s)
    if stuck is not None or not np.isfinite(np.sum(error)):  # one cheap pass in the usual, all-finite case
        bad = np.isnan(error)
        if stuck is not None:
            bad |= stuck
        error[bad] = np.inf  # unreadable there: no stimulus gives that reading, or the sensor runs away
    return Built(ratio if keep_output else None, arms[4], error, t if heated else None)


def _heat(design: Design, s, d, effects, fixed_ohm, arms, ratio, strict: bool):
    """Solve t = s + P(t)·duty/δ by fixed-point iteration (all builds and points at once).

    Returns (t, arms, ratio, stuck): ``stuck`` marks the elements that did
    not settle (None when all did); with ``strict`` those raise instead.
    """
    gain = design.duty_cycle / design.dissipation_w_per_k
    ceiling = design.sensor.stimulus_max  # a runaway is held here instead of overflowing
    t = s
    moved = None
    for _ in range(HEAT_MAX_STEPS):
        t_next = np.minimum(s + _power(design, ratio, arms) * gain, ceiling)
        moved = np.abs(t_next - t)
        t = t_next
        arms = _arms(design, t, d, effects, fixed_ohm)
        ratio = _ratio(arms[0], arms[1])
        worst = float(np.max(moved)) if moved.size else 0.0
        if worst <= HEAT_TOL_C:
            return t, arms, ratio, None
        if strict and (not np.isfinite(worst) or worst > 1e3):
            break
    if strict:
        raise InputError("dissipation_w_per_k", "self-heating does not settle (thermal runaway): the sensor heats "
                         "itself faster than it sheds heat; raise the dissipation constant or lower the sensor current")
    return t, arms, ratio, ~(moved <= HEAT_TOL_C)
