"""Firmware tables: from ADC code to the stimulus the code stands for.

Every code k of the ideal converter stands for its centre voltage
(k + ½)·LSB (app/adc.py). The divider is inverted analytically at that
voltage (Vout → sensor resistance → ``sensor.stimulus_of``), vectorised over
all codes at once. On top of that stimulus-per-code array ``f`` (shape (m,)
for the m valid codes, on the stimulus axis: °C, log10 lux or travel):

* the valid code range: the codes a working sensor produces over its working
  range; below and above it the code means a fault (open or shorted sensor)
  or a stimulus beyond the range, and :class:`CodeRange` says which;
* tables of (code, stimulus) entries and the exact error of linear
  interpolation between entries, evaluated at every valid code;
* the fewest-entry table meeting an error bound (:func:`fewest_entries`);
* a least-squares polynomial in the (scaled) code with its largest error;
* Steinhart–Hart coefficients for NTCs.

The search and the formulas live in :mod:`app.table_fit`, the exports in
:mod:`app.table_export`. Interpolation, errors and formulas work on the
stimulus *axis* (°C, log10 of lux, travel), where the project judges
linearity: a light table holds log10(lux), so its entries and errors are in
decades. Errors are absolute.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.adc import Adc
from app.circuit import Circuit, needs_fixed, respond
from app.errors import InputError
from app.models.base import Sensor
from app.table_fit import (MAX_POLY_DEGREE, MAX_TABLE_ENTRIES, Polynomial, fewest_entries, interpolate,  # noqa: F401
                           interpolation_error, polynomial, steinhart_hart, steinhart_hart_c)

# Tables are built over every code; 2^20 codes keep one float array at 8 MB.
MIN_TABLE_BITS, MAX_TABLE_BITS = 8, 20

# Working range when the request gives none. NTCs: the usual rating of epoxy
# and glass-bead thermistors (common practice, no published source); the
# others: the model's own physical limits (IEC 60751 range for the RTD).
DEFAULT_NTC_RANGE = (-55.0, 150.0)


@dataclass(frozen=True)
class Design:
    """A sensor divider read by a converter, and the stimulus range it works over."""

    sensor: Sensor
    circuit: Circuit
    adc: Adc
    lo: float
    hi: float

    @property
    def unit(self) -> str:
        return self.sensor.stimulus_unit

    @property
    def axis_unit(self) -> str:
        return self.sensor.axis_unit


def default_range(sensor: Sensor | type[Sensor]) -> tuple[float, float]:
    """The working range of a sensor (or sensor class) when the request gives none."""
    if sensor.kind in ("ntc_beta", "ntc_sh"):
        return DEFAULT_NTC_RANGE
    return float(sensor.stimulus_min), float(sensor.stimulus_max)


def check_bits(bits) -> int:
    if isinstance(bits, bool) or not isinstance(bits, (int, np.integer)) or not MIN_TABLE_BITS <= bits <= MAX_TABLE_BITS:
        wider = (f"; for a wider converter use its top {MAX_TABLE_BITS} bits (code >> {bits - MAX_TABLE_BITS})"
                 if isinstance(bits, (int, np.integer)) and MAX_TABLE_BITS < bits <= 32 else "")
        raise InputError("adc.bits", f"must be a whole number from {MIN_TABLE_BITS} to {MAX_TABLE_BITS}: "
                         f"tables cover every code{wider}")
    return int(bits)


def design(sensor: Sensor, circuit: Circuit, adc: Adc, lo: Optional[float] = None,
           hi: Optional[float] = None) -> Design:
    """Check a table design; ``lo``/``hi`` default to :func:`default_range`."""
    check_bits(adc.bits)
    if needs_fixed(sensor) and circuit.fixed_ohm is None:
        raise InputError("circuit.fixed_ohm", "is required: the table inverts the divider with its fixed resistor")
    d_lo, d_hi = default_range(sensor)
    lo = d_lo if lo is None else float(lo)
    hi = d_hi if hi is None else float(hi)
    for name, value in (("range.min", lo), ("range.max", hi)):
        if not np.isfinite(value):
            raise InputError(name, "must be a finite number")
        sensor.check_stimulus(np.array(value), field=name)
    if hi <= lo:
        raise InputError("range.max", f"must be above range.min ({lo:g}), got {hi:g}")
    return Design(sensor, circuit, adc, lo, hi)


# --- the divider, inverted ---------------------------------------------------

def _unparallel(total: np.ndarray, other: Optional[float]) -> np.ndarray:
    """r such that r ∥ other = total (NaN where total ≥ other)."""
    if other is None:
        return total
    return np.where(total < other, total * other / (other - total), np.nan)


def sensor_ohm_at(sensor: Sensor, circuit: Circuit, vout) -> np.ndarray:
    """The sensor resistance that puts ``vout`` (V, any shape) on the output.

    For a pot, the lower part of the track. NaN where no resistance can.
    """
    u = np.asarray(vout, dtype=float) / circuit.supply_v
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        inside = (u > 0.0) & (u < 1.0)
        u = np.where(inside, u, 0.5)
        if not needs_fixed(sensor):
            r_total, r_load = sensor.r_total_ohm, circuit.load_ohm
            if r_load is None:
                lower = u * r_total
            else:
                # u·x² + (RL − u·Rt)·x − u·Rt·RL = 0, positive root in its stable form.
                b = r_load - u * r_total
                root = np.sqrt(b * b + 4.0 * u * u * r_total * r_load)
                lower = np.where(b >= 0, 2.0 * u * r_total * r_load / (b + root), (root - b) / (2.0 * u))
            ohm = np.where(lower <= r_total, lower, np.nan)
        else:
            fixed = circuit.fixed_ohm
            if circuit.sensor_at == "bottom":
                element = _unparallel(fixed * u / (1.0 - u), circuit.load_ohm)
            else:
                bottom = fixed if circuit.load_ohm is None else fixed * circuit.load_ohm / (fixed + circuit.load_ohm)
                element = bottom * (1.0 - u) / u
            ohm = _unparallel(element, circuit.parallel_ohm)
        return np.where(inside & np.isfinite(ohm) & (ohm >= 0), ohm, np.nan)


def stimulus_at(d: Design, vout) -> np.ndarray:
    """Stimulus that puts ``vout`` on the output; NaN outside the model's physical limits."""
    s = d.sensor.stimulus_of(sensor_ohm_at(d.sensor, d.circuit, vout))
    with np.errstate(invalid="ignore"):
        physical = (s >= d.sensor.stimulus_min) & (s <= d.sensor.stimulus_max)
    return np.where(physical, s, np.nan)


def stimulus_of_codes(d: Design, codes) -> np.ndarray:
    """Stimulus each code stands for (at its centre voltage), NaN where none."""
    return stimulus_at(d, d.adc.centre_v(codes, d.circuit.supply_v))


# --- valid codes and what lies outside them ---------------------------------

@dataclass(frozen=True)
class CodeRange:
    """Codes ``min`` .. ``max`` (inclusive) are what a working sensor produces.

    ``below``/``above`` say what a code outside means; ``below_fault`` and
    ``above_fault`` are "short", "open" or None; ``short_code``/``open_code``
    the code a shorted or open sensor reads (None for a pot in divider wiring).
    """

    min: int
    max: int
    below: str
    above: str
    below_fault: Optional[str]
    above_fault: Optional[str]
    short_code: Optional[int]
    open_code: Optional[int]
    warnings: tuple[str, ...] = ()

    @property
    def size(self) -> int:
        return self.max - self.min + 1

    def to_dict(self) -> dict:
        return {"min": self.min, "max": self.max, "below": self.below, "above": self.above,
                "below_fault": self.below_fault, "above_fault": self.above_fault,
                "short_code": self.short_code, "open_code": self.open_code}


def _fault_voltages(circuit: Circuit) -> tuple[float, float]:
    """Output voltage with the sensor shorted (0 Ω) and open (its parallel resistor alone)."""
    vs, fixed, load = circuit.supply_v, circuit.fixed_ohm, circuit.load_ohm

    def out(top: float, bottom: float) -> float:
        if load is not None:
            bottom = load if np.isinf(bottom) else bottom * load / (bottom + load)
        if np.isinf(bottom):
            return vs
        return vs * bottom / (top + bottom) if np.isfinite(top) else 0.0

    opened = np.inf if circuit.parallel_ohm is None else circuit.parallel_ohm
    if circuit.sensor_at == "bottom":
        return out(fixed, 0.0), out(fixed, opened)
    return out(0.0, fixed), out(opened, fixed)


def _fmt(value: float, unit: str) -> str:
    return f"{value:.6g} {unit}" if unit != "travel" else f"position {value:.6g}"


def valid_codes(d: Design) -> CodeRange:
    """The codes a working sensor produces over ``d.lo .. d.hi`` and the meaning of the rest.

    A code counts when the sensor can produce it within the working range
    and its centre stands for a physically possible stimulus.
    """
    adc, vs, n = d.adc, d.circuit.supply_v, d.adc.codes
    v_ends = np.asarray(respond(d.sensor, d.circuit, np.array([d.lo, d.hi])).vout_v, dtype=float)
    rising = bool(v_ends[1] > v_ends[0])  # codes grow with the stimulus
    c_lo, c_hi = (int(c) for c in adc.code(np.sort(v_ends), vs))
    codes = np.arange(c_lo, c_hi + 1)
    ok = np.flatnonzero(np.isfinite(stimulus_of_codes(d, codes)))
    if ok.size < 2 or ok[-1] - ok[0] < 1:
        raise InputError("range", f"the working range {_fmt(d.lo, d.unit)} .. {_fmt(d.hi, d.unit)} spans fewer than "
                         "two codes: the divider output moves less than an LSB (more bits, another fixed "
                         "resistor or a wider range)")
    if ok.size != ok[-1] - ok[0] + 1:  # the divider is monotonic, so this means a model outside its limits
        raise InputError("range", "some codes inside the working range stand for no physical stimulus; narrow the range")
    c_min, c_max = int(codes[ok[0]]), int(codes[ok[-1]])

    warnings = []
    full_scale = adc.lsb(vs) * n
    if v_ends.max() > full_scale * (1.0 + 1e-12):
        warnings.append(f"the output reaches the converter's full scale ({full_scale:g} V): codes near "
                        f"{n - 1} are clipped and stand for every voltage above")

    low_stim = f"below {_fmt(d.lo, d.unit)}" if rising else f"above {_fmt(d.hi, d.unit)}"
    high_stim = f"above {_fmt(d.hi, d.unit)}" if rising else f"below {_fmt(d.lo, d.unit)}"
    if not needs_fixed(d.sensor):
        short_code = open_code = None
        below_fault = above_fault = None
        below = (f"wiper {low_stim}" if c_min > 0 else "none: code 0 is a working position")
        above = (f"wiper {high_stim}" if c_max < n - 1 else f"none: code {n - 1} is a working position")
        return CodeRange(c_min, c_max, below, above, None, None, None, None, tuple(warnings))

    v_short, v_open = _fault_voltages(d.circuit)
    short_code, open_code = (int(c) for c in adc.code(np.array([v_short, v_open]), vs))
    faults = {"short": short_code, "open": open_code}
    below_fault = next((name for name, c in faults.items() if c < c_min), None)
    above_fault = next((name for name, c in faults.items() if c > c_max), None)

    def meaning(fault: Optional[str], stim: str, none_left: bool, edge: int) -> str:
        if fault:
            what = "shorted" if fault == "short" else "open"
            return f"sensor {what} (reads code {faults[fault]}) or {stim}"
        if none_left:
            return f"none: code {edge} is a working reading"
        return stim

    below = meaning(below_fault, low_stim, c_min == 0, 0)
    above = meaning(above_fault, high_stim, c_max == n - 1, n - 1)
    for name, code in faults.items():
        if c_min <= code <= c_max:
            warnings.append(f"a {'shorted' if name == 'short' else 'open'} sensor reads code {code}, inside the "
                            "valid range: this fault cannot be told from a reading")
    return CodeRange(c_min, c_max, below, above, below_fault, above_fault, short_code, open_code, tuple(warnings))


# --- tables and their exact interpolation error -------------------------------

def uniform_codes(cr: CodeRange, step: int) -> np.ndarray:
    """Entry codes ``min, min + step, ...`` and always ``max``: (k,) int64."""
    if isinstance(step, bool) or not isinstance(step, (int, np.integer)) or step < 1:
        raise InputError("step", f"must be a whole number of codes, 1 or more, got {step!r}")
    codes = np.arange(cr.min, cr.max, step, dtype=np.int64)
    return np.append(codes, cr.max)


def check_step(adc: Adc, cr: CodeRange, step: int) -> None:
    if step > adc.codes - 1:
        raise InputError("step", f"must be at most {adc.codes - 1} (the converter has {adc.codes} codes), got {step}")
    entries = -(-(cr.max - cr.min) // step) + 1
    if entries > MAX_TABLE_ENTRIES:
        least = -(-(cr.max - cr.min) // (MAX_TABLE_ENTRIES - 1))
        raise InputError("step", f"gives {entries} entries, more than {MAX_TABLE_ENTRIES}; use a step of {least} or more")


# --- everything for one request ---------------------------------------------

@dataclass(frozen=True)
class Table:
    """A table over the valid codes and the exact error of interpolating it."""

    codes: np.ndarray   # (k,) int64 entry codes, first = valid min, last = valid max
    values: np.ndarray  # (k,) stimulus axis value at each entry code (°C, log10 lux, travel)
    error: np.ndarray   # (m,) signed interpolation error at every valid code, axis units
    layout: str         # "uniform" | "fewest"
    step: Optional[int] = None
    bound: Optional[float] = None

    @property
    def max_error(self) -> float:
        return float(np.max(np.abs(self.error)))

    @property
    def worst_code(self) -> int:
        return int(self.codes[0] + np.argmax(np.abs(self.error)))


@dataclass(frozen=True)
class Tables:
    design: Design
    valid: CodeRange
    f: np.ndarray                       # (m,) stimulus axis value at every valid code
    uniform: Table
    fewest: Optional[Table]
    poly: Optional[Polynomial]
    sh: Optional[tuple[float, float, float]]

    @property
    def codes(self) -> np.ndarray:
        return np.arange(self.valid.min, self.valid.max + 1)


def build(d: Design, step: int = 1, bound: Optional[float] = None, degree: Optional[int] = None) -> Tables:
    """The uniform table at ``step``, and when asked the fewest-entry table and the polynomial."""
    valid = valid_codes(d)
    uniform = uniform_codes(valid, step)
    check_step(d.adc, valid, step)
    f = d.sensor.to_axis(stimulus_of_codes(d, np.arange(valid.min, valid.max + 1)))
    uni = Table(uniform, f[uniform - valid.min], interpolation_error(f, valid.min, uniform), "uniform", step=step)
    few = None
    if bound is not None:
        if not (np.isfinite(bound) and bound > 0):
            raise InputError("error_bound", f"must be a positive number of {d.axis_unit}, got {bound!r}")
        picked = fewest_entries(f, float(bound)) + valid.min
        few = Table(picked, f[picked - valid.min], interpolation_error(f, valid.min, picked), "fewest", bound=float(bound))
    poly = polynomial(f, valid.min, degree) if degree is not None else None
    return Tables(d, valid, f, uni, few, poly, steinhart_hart(d.sensor))
