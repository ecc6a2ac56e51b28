"""The error budget of a sensor reading over its range (contract: POST /api/budget).

Every error is on the stimulus axis (°C, decades of lux, travel), as the
firmware would report it (the reading model of :mod:`app.reading`).

* contributors: each tolerance alone at +tol and −tol (the larger shift from
  the as-built nominal), quantisation ±½ LSB through the slope, and the
  effects the firmware does not see (load, leads, self-heating), each alone;
* bias: the as-built nominal's error (load, leads and self-heating together);
* worst case: max over every corner of the tolerance box (2^p builds, one
  broadcast) of |error|, plus quantisation; assumes the error is monotonic in
  each part over its tolerance, which holds for a divider read through its
  own inverse, and is checked against the Monte Carlo in the tests;
* RSS: |bias| + sqrt(Σ tolerance contributors² + quantisation²): systematic
  errors add, independent ones add in quadrature;
* Monte Carlo (:mod:`app.montecarlo`) bands, and the yield: the share of
  builds whose error stays within ±spec everywhere in the range.

Shapes: the grid ``stimulus`` is (n,); every per-point result is (n,).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from app import constants as K
from app import montecarlo
from app.adc import Adc
from app.circuit import Circuit, needs_fixed, respond
from app.errors import InputError
from app.models.base import Sensor
from app.reading import Design, Effects, build

# Contributor names of the response, in display order.
TOLERANCE_NAMES = ("fixed", "sensor", "beta", "gamma", "supply", "vref", "adc_gain", "adc_offset")
MAX_SAMPLES = 200_000
MAX_POINTS = 1001
MAX_CELLS = MAX_SAMPLES * K.BUDGET_POINTS  # samples × points in one request


@dataclass(frozen=True)
class Tolerances:
    """Percent of nominal (adc_offset in LSB), each a ± limit; zero for absent."""

    fixed_pct: float = 0.0
    sensor_pct: float = 0.0
    beta_pct: float = 0.0
    gamma_pct: float = 0.0
    supply_pct: float = 0.0
    vref_pct: float = 0.0
    adc_gain_pct: float = 0.0
    adc_offset_lsb: float = 0.0

    def limits(self, design: Design) -> tuple[dict[str, float], list[str]]:
        """({parameter: ± limit} for the nonzero tolerances that apply, warnings)."""
        kind = design.sensor.kind
        wanted = {
            "fixed": self.fixed_pct / 100.0, "sensor": self.sensor_pct / 100.0,
            "beta": self.beta_pct / 100.0, "gamma": self.gamma_pct / 100.0,
            "supply": self.supply_pct / 100.0, "vref": self.vref_pct / 100.0,
            "adc_gain": self.adc_gain_pct / 100.0, "adc_offset": self.adc_offset_lsb,
        }
        for name, value in wanted.items():
            if name == "adc_offset":
                if not (np.isfinite(value) and 0 <= value <= 2**20):
                    raise InputError("tolerances.adc_offset_lsb", "must be a non-negative number of LSB")
            elif not (np.isfinite(value) and 0 <= value < 1.0):
                raise InputError(f"tolerances.{name}_pct", "must be a number from 0 up to (not including) 100 %")
        if wanted["beta"] and kind != "ntc_beta":
            raise InputError("tolerances.beta_pct", f"applies to ntc_beta sensors, not {kind}")
        if wanted["gamma"] and kind != "ldr":
            raise InputError("tolerances.gamma_pct", f"applies to ldr sensors, not {kind}")
        warnings = []
        if wanted["fixed"] and not needs_fixed(design.sensor):
            warnings.append("tolerances.fixed_pct is not used: a pot wired as a divider has no fixed resistor.")
            wanted["fixed"] = 0.0
        if wanted["vref"] and design.adc.ratiometric:
            warnings.append("tolerances.vref_pct is not used: a ratiometric converter takes the supply as its reference.")
            wanted["vref"] = 0.0
        return {name: value for name, value in wanted.items() if value}, warnings


@dataclass(frozen=True)
class Accuracy:
    """Everything beyond the divider that the accuracy of a reading depends on."""

    adc: Adc = field(default_factory=Adc)
    tolerances: Tolerances = field(default_factory=Tolerances)
    dissipation_w_per_k: Optional[float] = None
    lead_ohm: float = 0.0
    duty_cycle: float = 1.0
    firmware_knows_load: bool = False

    def design(self, sensor: Sensor, circuit: Circuit) -> Design:
        return Design(sensor, circuit, self.adc, self.dissipation_w_per_k, self.lead_ohm,
                      self.duty_cycle, self.firmware_knows_load)

    def limits(self, sensor: Sensor, circuit: Circuit) -> dict[str, float]:
        self.adc.usable(circuit.supply_v)  # a window that leaves no input is refused here
        return self.tolerances.limits(self.design(sensor, circuit))[0]


@dataclass
class Budget:
    stimulus: np.ndarray
    axis_unit: str
    resolution: np.ndarray
    quantization: np.ndarray
    worst_case: np.ndarray
    worst_low: np.ndarray
    worst_high: np.ndarray
    rss: np.ndarray
    bias: np.ndarray
    self_heating: np.ndarray
    contributors: dict
    vout_v: np.ndarray
    vout_low_v: np.ndarray
    vout_high_v: np.ndarray
    mc: montecarlo.Result
    spec: Optional[float] = None
    yield_fraction: Optional[float] = None
    warnings: list = field(default_factory=list)
    window: Optional[dict] = None
    limits: dict = field(default_factory=dict)


def corners(limits: dict[str, float]) -> dict[str, np.ndarray]:
    """Every ± combination of the limits: {name: (2^p, 1)}; empty when there are none."""
    names = list(limits)
    if not names:
        return {}
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=len(names))))
    return {name: (signs[:, i] * limits[name])[:, None] for i, name in enumerate(names)}


def quantization(design: Design, stimulus, fixed_ohm=None) -> np.ndarray:
    """½ LSB referred to the stimulus axis through the as-built slope |dVout/ds|."""
    circuit = design.circuit
    loaded = type(circuit)(circuit.supply_v, circuit.sensor_at, circuit.fixed_ohm, design.load_ohm, circuit.parallel_ohm)
    slope = respond(design.sensor, loaded, stimulus, fixed_ohm).sensitivity
    with np.errstate(divide="ignore"):
        return 0.5 * design.adc.lsb(circuit.supply_v) / np.abs(slope)


def _one_at_a_time(design: Design, s: np.ndarray, limits: dict[str, float], bias: np.ndarray) -> dict[str, np.ndarray]:
    names = list(limits)
    if not names:
        return {}
    rows = 2 * len(names)
    deltas = {}
    for i, name in enumerate(names):
        column = np.zeros((rows, 1))
        column[2 * i], column[2 * i + 1] = limits[name], -limits[name]
        deltas[name] = column
    err = build(design, s, deltas).error
    shift = np.abs(err - bias).reshape(len(names), 2, -1).max(axis=1)
    return {name: shift[i] for i, name in enumerate(names)}


def _systematic(design: Design, s: np.ndarray) -> dict[str, np.ndarray]:
    out = {}
    if design.load_ohm is not None and not design.firmware_knows_load:
        out["load"] = np.abs(build(design, s, effects=Effects(load=True, leads=False, heating=False)).error)
    if design.lead_ohm:
        out["leads"] = np.abs(build(design, s, effects=Effects(load=False, leads=True, heating=False)).error)
    if design.has_heating:
        out["self_heating"] = np.abs(build(design, s, effects=Effects(load=False, leads=False, heating=True)).error)
    return out


def _window(design: Design, s: np.ndarray, limits: dict[str, float], built) -> Optional[dict]:
    adc = design.adc
    if adc.window is None:
        return None
    d = corners(limits)
    supply = design.circuit.supply_v * (1.0 + d.get("supply", 0.0))
    ref = supply if adc.ratiometric else adc.vref_v * (1.0 + d.get("vref", 0.0))
    lo, hi = adc.window.bounds(ref)
    margin = np.minimum(built.vout_v - lo, hi - built.vout_v).reshape(-1, s.size).min(axis=0)
    outside = margin < 0
    nominal_lo, nominal_hi = adc.window.limits(adc.reference(design.circuit.supply_v))
    return {
        "min_v": nominal_lo, "max_v": nominal_hi, "ok": not bool(outside.any()),
        "margin_v": float(margin.min()), "outside": s[outside],
    }


def run(design: Design, lo: float, hi: float, tolerances: Tolerances, *, samples: int = 10_000, seed: int = 1,
        distribution: str = "uniform", points: int = K.BUDGET_POINTS, spec: Optional[float] = None) -> Budget:
    """The whole budget over ``points`` values evenly spaced on the stimulus axis from lo to hi."""
    if not 2 <= points <= MAX_POINTS:
        raise InputError("points", f"must be from 2 to {MAX_POINTS}")
    if not 1 <= samples <= MAX_SAMPLES:
        raise InputError("monte_carlo.samples", f"must be from 1 to {MAX_SAMPLES}")
    if samples * points > MAX_CELLS:
        raise InputError("monte_carlo.samples", f"samples × points must not exceed {MAX_CELLS:,} (got {samples * points:,})")
    if distribution not in ("uniform", "normal"):
        raise InputError("monte_carlo.distribution", "must be 'uniform' or 'normal'")
    sensor = design.sensor
    design.adc.usable(design.circuit.supply_v)
    s = sensor.grid(lo, hi, points)
    limits, warnings = tolerances.limits(design)
    q = quantization(design, s)
    nominal = build(design, s)
    bias = nominal.error
    box = build(design, s, corners(limits))
    box_err, box_v = box.error.reshape(-1, s.size), box.vout_v.reshape(-1, s.size)
    worst_high = box_err.max(axis=0) + q
    worst_low = box_err.min(axis=0) - q
    worst = np.abs(box_err).max(axis=0) + q
    shifts = _one_at_a_time(design, s, limits, bias)
    systematic = _systematic(design, s)
    contributors = {name: shifts[name] for name in TOLERANCE_NAMES if name in shifts}
    contributors["quantization"] = q
    contributors |= systematic
    rss = np.abs(bias) + np.sqrt(sum(v**2 for v in shifts.values()) + q**2)
    mc = montecarlo.run(design, s, limits, q, samples, seed, distribution)
    result = Budget(
        stimulus=s, axis_unit=sensor.axis_unit, resolution=2.0 * q, quantization=q,
        worst_case=worst, worst_low=worst_low, worst_high=worst_high, rss=rss, bias=bias,
        self_heating=systematic.get("self_heating", np.zeros_like(s)), contributors=contributors,
        vout_v=nominal.vout_v, vout_low_v=box_v.min(axis=0), vout_high_v=box_v.max(axis=0),
        mc=mc, spec=spec, warnings=warnings, window=_window(design, s, limits, box), limits=limits,
    )
    if spec is not None:
        result.yield_fraction = float(np.mean(mc.per_build <= spec))
    if not np.all(np.isfinite(worst)):
        warnings.append("Some builds read nothing usable in part of the range (the output leaves the "
                        "converter's range or no stimulus gives that reading): the errors there are unbounded.")
    if result.window is not None and not result.window["ok"]:
        warnings.append(f"The output leaves the converter's usable window ({result.window['min_v']:.4g} V .. "
                        f"{result.window['max_v']:.4g} V) in part of the range.")
    return result


def range_worst(design: Design, lo: float, hi: float, limits: dict[str, float], fixed_ohm: np.ndarray,
                points: int = K.OBJECTIVE_POINTS, max_cells: int = 1 << 16) -> tuple[np.ndarray, np.ndarray]:
    """Worst-case error over the range and window feasibility, per candidate fixed resistor (k,).

    Candidates × corners × points in one broadcast, in blocks of candidates
    when that would exceed ``max_cells`` values.
    """
    s = design.sensor.grid(lo, hi, points)
    fixed = np.asarray(fixed_ohm, dtype=float)
    d = corners(limits)
    n_corners = next(iter(d.values())).shape[0] if d else 1
    deltas = {name: v[None, :, :] for name, v in d.items()}  # (1, c, 1)
    score = np.empty(fixed.size)
    feasible = np.ones(fixed.size, dtype=bool)
    block = max(1, max_cells // (n_corners * points))
    adc = design.adc
    for start in range(0, fixed.size, block):
        cand = fixed[start:start + block]
        q = quantization(design, s, cand[:, None])  # (b, n)
        box = build(design, s, deltas, fixed_ohm=cand[:, None, None], runaway="mark")
        worst = np.abs(box.error).max(axis=1) + q
        score[start:start + block] = worst.max(axis=1)
        if adc.window is not None:
            supply = design.circuit.supply_v * (1.0 + deltas.get("supply", 0.0))
            ref = supply if adc.ratiometric else adc.vref_v * (1.0 + deltas.get("vref", 0.0))
            w_lo, w_hi = adc.window.bounds(ref)
            inside = (box.vout_v >= w_lo) & (box.vout_v <= w_hi)
            feasible[start:start + block] = inside.reshape(inside.shape[0], -1).all(axis=1)
    return score, feasible & np.isfinite(score)
