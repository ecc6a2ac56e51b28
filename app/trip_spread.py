"""Where a built trip circuit really trips: tolerance corners and Monte Carlo.

Perturbations (one column each, fractions except the offset):
  0-3  fixed, top, bottom and hysteresis resistors (``resistor_pct``, each its own draw);
  4    the sensor's resistance at its nominal point (``sensor_pct``);
  5    its exponent: β of a beta NTC (``beta_pct``) or γ of an LDR (``gamma_pct``);
  6    the supply (``supply_pct``); the comparator's high level follows it
       unless ``output_high_v`` was given;
  7    the comparator's input offset (``offset_v``, volts, either sign).

The achieved trip and release of a circuit are monotonic in each
perturbation with the others held (every level is a linear-fractional
function of one conductance, and the sensor inverse is monotonic in R,
its scale and its exponent), so the extremes over the tolerance box sit
at its corners: the worst case is exact, and every Monte Carlo sample lies
inside it. Normal draws take the tolerance as 3σ and are truncated at it
(redrawn beyond): a part outside its tolerance is out of specification.

Shapes: ``eps`` (m, 8); results (m,).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.errors import InputError
from app.models.base import Sensor
from app.montecarlo import _truncated_normal as truncated_normal
from app.trip import TripDesign, crossing, levels, quiet

COLUMNS = ("fixed", "top", "bottom", "hysteresis", "sensor", "exponent", "supply", "offset")
PERCENTILES = {"p0_135": 0.135, "p2_5": 2.5, "p50": 50.0, "p97_5": 97.5, "p99_865": 99.865}
MAX_SAMPLES = 200_000
EXPONENT_KIND = {"beta_pct": "ntc_beta", "gamma_pct": "ldr"}


@dataclass(frozen=True)
class Tolerances:
    resistor_pct: float = 0.0
    sensor_pct: float = 0.0
    beta_pct: float = 0.0
    gamma_pct: float = 0.0
    supply_pct: float = 0.0
    offset_v: float = 0.0

    def __post_init__(self):
        for name in ("resistor_pct", "sensor_pct", "beta_pct", "gamma_pct", "supply_pct", "offset_v"):
            value = getattr(self, name)
            limit = 1.0 if name == "offset_v" else 50.0
            if not (np.isfinite(value) and 0.0 <= value <= limit):
                unit = "V" if name == "offset_v" else "%"
                raise InputError(f"tolerances.{name}", f"must lie within 0 .. {limit:g} {unit}, got {value}")

    def vector(self, sensor: Sensor) -> np.ndarray:
        """Half-widths of the eight perturbations (fractions; the offset in V)."""
        for name, kind in EXPONENT_KIND.items():
            if getattr(self, name) and sensor.kind != kind:
                raise InputError(f"tolerances.{name}", f"applies to {kind} sensors only, not {sensor.kind}")
        exponent = self.beta_pct if sensor.kind == "ntc_beta" else self.gamma_pct
        pct = [self.resistor_pct] * 4 + [self.sensor_pct, exponent, self.supply_pct]
        return np.array([p / 100.0 for p in pct] + [self.offset_v])


def perturbed_inverse(sensor: Sensor, scale: np.ndarray, exponent: np.ndarray):
    """Resistance → stimulus of the sensor with R scaled by (1+scale), β or γ by (1+exponent). Vectorised.

    The perturbed sensor's R is mapped to the resistance the nominal model
    has at the same stimulus, then the nominal inverse is used. Beta NTC:
    ln(Req/Rn) = ln(R/(Rn(1+scale)))/(1+exponent); the LDR the same on its
    power law, with the dark resistance (untouched) taken off first and put back.
    """
    def inverse(ohm):
        r = np.asarray(ohm, float)
        with np.errstate(invalid="ignore", divide="ignore"):
            if sensor.kind == "ntc_beta":
                rn = sensor.r_nominal_ohm
                r_eq = rn * (r / (rn * (1 + scale))) ** (1 / (1 + exponent))
            elif sensor.kind == "ldr":
                dark = sensor.r_dark_ohm
                law = r if dark is None else np.where(r < dark, r * dark / (dark - r), np.nan)
                ref = sensor.r_ref_ohm
                law_eq = ref * (law / (ref * (1 + scale))) ** (1 / (1 + exponent))
                r_eq = law_eq if dark is None else law_eq * dark / (law_eq + dark)
            else:
                r_eq = r / (1 + scale)
            return sensor.stimulus_of(r_eq)
    return inverse


def achieved(d: TripDesign, eps: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(trip, release) stimulus of each perturbed circuit in ``eps`` (m, 8). Vectorised."""
    spec, net = d.spec, d.network
    e = np.asarray(eps, float)
    rf, rt, rb, rh = (r * (1 + e[:, i]) for i, r in enumerate(
        (net.fixed_ohm, net.top_ohm, net.bottom_ohm, net.hysteresis_ohm)))
    vs = spec.supply_v * (1 + e[:, 6])
    vh = vs if spec.output_high_v is None else np.full_like(vs, spec.v_high)
    up, low = levels(vs, rt, rb, rh, vh, spec.output_low_v)
    trip_v, release_v = (up, low) if d.rising else (low, up)
    inverse = perturbed_inverse(spec.sensor, e[:, 4], e[:, 5])
    # The comparator switches when V(−) − V(+) passes its offset: both levels move by it.
    trip = crossing(spec.sensor, trip_v + e[:, 7], vs, rf, spec.sensor_at, inverse)
    release = crossing(spec.sensor, release_v + e[:, 7], vs, rf, spec.sensor_at, inverse)
    return trip, release


def corners(half: np.ndarray) -> np.ndarray:
    """Every ± corner of the active (non-zero) perturbations: (2^k, 8)."""
    active = np.flatnonzero(half)
    signs = ((np.arange(2 ** active.size)[:, None] >> np.arange(active.size)) & 1) * 2.0 - 1.0
    out = np.zeros((signs.shape[0], half.size))
    out[:, active] = signs * half[active]
    return out


def draw(half: np.ndarray, samples: int, seed: int, distribution: str) -> np.ndarray:
    """Seeded draws (samples, 8) within ±half: uniform, or normal with σ = half/3 truncated at ±half.

    The accuracy budget's conventions (app/montecarlo.py): its truncated
    normal, and one random stream per perturbation (``default_rng([seed, column])``)
    so that adding a tolerance leaves the other columns' draws unchanged.
    """
    if not 1 <= samples <= MAX_SAMPLES:
        raise InputError("monte_carlo.samples", f"must lie within 1 .. {MAX_SAMPLES}, got {samples}")
    if distribution not in ("uniform", "normal"):
        raise InputError("monte_carlo.distribution", f"must be 'uniform' or 'normal', got {distribution!r}")
    out = np.zeros((samples, half.size))
    for column in np.flatnonzero(half):  # at most eight columns, each a vector of samples
        rng = np.random.default_rng([seed, int(column)])
        unit = rng.uniform(-1.0, 1.0, samples) if distribution == "uniform" else truncated_normal(rng, samples)
        out[:, column] = unit * half[column]
    return out


@dataclass(frozen=True)
class Spread:
    tolerances: Tolerances
    trip_range: tuple[float, float]
    release_range: tuple[float, float]
    corners: int
    samples: int
    seed: int
    distribution: str
    mc_trip: np.ndarray
    mc_release: np.ndarray
    min_gap: float          # smallest |trip − release| seen (axis units), corners and samples

    def percentiles(self, values: np.ndarray) -> dict[str, Optional[float]]:
        finite = values[np.isfinite(values)]
        if finite.size == 0:
            return {k: None for k in PERCENTILES}
        got = np.percentile(finite, list(PERCENTILES.values()))
        return {k: float(v) for k, v in zip(PERCENTILES, got)}


@quiet
def spread(d: TripDesign, tolerances: Tolerances, samples: int = 5000, seed: int = 1,
           distribution: str = "normal") -> Spread:
    """Worst case over the tolerance corners and a seeded Monte Carlo of the achieved trip and release."""
    sensor = d.spec.sensor
    half = tolerances.vector(sensor)
    box = corners(half)
    mc = draw(half, samples, seed, distribution)
    trip, release = achieved(d, np.concatenate([box, mc]))
    n = box.shape[0]
    if not (np.all(np.isfinite(trip[:n])) and np.all(np.isfinite(release[:n]))):
        raise InputError("tolerances", "at some tolerance corner the circuit never trips or releases "
                         "within the sensor's range: the tolerances are too wide for this design")
    gap = np.abs(sensor.to_axis(trip) - sensor.to_axis(release))
    return Spread(
        tolerances=tolerances,
        trip_range=(float(np.min(trip[:n])), float(np.max(trip[:n]))),
        release_range=(float(np.min(release[:n])), float(np.max(release[:n]))),
        corners=n, samples=samples, seed=seed, distribution=distribution,
        mc_trip=trip[n:], mc_release=release[n:],
        min_gap=float(np.nanmin(gap)),
    )
