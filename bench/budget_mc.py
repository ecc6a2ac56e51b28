"""Monte Carlo of the error budget: 100,000 builds × 101 points.

Design: a 10 kΩ, B 3950 K NTC at the bottom of a 10 kΩ divider on 3.3 V
read by a 12-bit converter with its own 3.0 V reference; five toleranced
parts (fixed 1 %, sensor 1 %, β 1 %, supply 5 %, reference 0.5 %), normal
with the tolerance as 3σ, quantisation noise at every point.

Contenders, side by side in one run:
* ``app.montecarlo.run``: draws, the reading model of every build at every
  point, the quantisation noise, the per-build range errors and the
  50/95/99.7 % bands;
* the same per build and point in plain Python (math and random modules),
  bands by sorting each point's errors: timed on 1,000 builds and scaled to
  100,000 (linear scaling; the sort grows a little faster, so this flatters
  the loop);
* for context, the whole budget (``app.budget.run``: corners, contributors,
  Monte Carlo).
Peak memory of the Monte Carlo by tracemalloc (numpy reports its buffers to
it). Targets: median under 300 ms, peak under 500 MB.
"""

from __future__ import annotations

import math
import random
import tracemalloc

import numpy as np

from app import budget, montecarlo, reading
from app.adc import Adc
from app.circuit import Circuit
from app.models import build_sensor
from app.reading import Design
from bench import median_seconds

SAMPLES, POINTS, SUBSAMPLE = 100_000, 101, 1_000
TARGET_S, TARGET_MB = 0.300, 500.0
R25, BETA, RF, VS, VREF, BITS = 10_000.0, 3950.0, 10_000.0, 3.3, 3.0, 12
TOL = budget.Tolerances(fixed_pct=1, sensor_pct=1, beta_pct=1, supply_pct=5, vref_pct=0.5)


def _design() -> Design:
    sensor = build_sensor({"kind": "ntc_beta", "r_nominal_ohm": R25, "beta_k": BETA})
    return Design(sensor, Circuit(VS, "bottom", RF), Adc(BITS, False, VREF))


def _python_errors(grid: list[float], q: list[float], deltas: list[dict], rng: random.Random) -> list[list[float]]:
    """|reading error| per point (rows) and build (columns), scalar code."""
    tn = 25.0 + 273.15
    codes = 2**BITS
    rows = [[0.0] * len(deltas) for _ in grid]
    for j, d in enumerate(deltas):
        fixed, vs = RF * (1 + d["fixed"]), VS * (1 + d["supply"])
        ref = VREF * (1 + d["vref"])
        for i, t in enumerate(grid):
            r = R25 * (1 + d["sensor"]) * math.exp(BETA * (1 + d["beta"]) * (1 / (t + 273.15) - 1 / tn))
            x = vs * r / (fixed + r) / ref * codes
            x = min(max(x, 0.5), codes - 0.5)
            ratio = x * VREF / codes / VS
            r_read = RF * ratio / (1 - ratio)
            t_read = 1 / (1 / tn + math.log(r_read / R25) / BETA) - 273.15
            rows[i][j] = abs(t_read - t + (2 * rng.random() - 1) * q[i])
    return rows


def _python_bands(rows: list[list[float]]) -> list[tuple[float, float, float]]:
    out = []
    for row in rows:
        ordered = sorted(row)
        picks = []
        for p in montecarlo.PERCENTILES:
            h = (len(ordered) - 1) * p / 100
            lo = int(h)
            hi = min(lo + 1, len(ordered) - 1)
            picks.append(ordered[lo] + (ordered[hi] - ordered[lo]) * (h - lo))
        out.append(tuple(picks))
    return out


def run() -> list[str]:
    design = _design()
    limits, _ = TOL.limits(design)
    grid = design.sensor.grid(0.0, 100.0, POINTS)
    q = budget.quantization(design, grid)

    def mc():
        return montecarlo.run(design, grid, limits, q, SAMPLES, 1, "normal")

    t_mc = median_seconds(mc, repeat=7)
    tracemalloc.start()
    mc()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    peak_mb = peak / 2**20
    t_budget = median_seconds(lambda: budget.run(design, 0.0, 100.0, TOL, samples=SAMPLES, distribution="normal"),
                              repeat=3)

    drawn = montecarlo.draw(limits, SUBSAMPLE, 1, "normal")
    deltas = [{k: float(v[j]) for k, v in drawn.items()} for j in range(SUBSAMPLE)]
    grid_list, q_list = [float(v) for v in grid], [float(v) for v in q]
    t_loop = median_seconds(lambda: _python_bands(_python_errors(grid_list, q_list, deltas, random.Random(1))),
                            repeat=3, warmup=0) * (SAMPLES / SUBSAMPLE)

    # The loop computes the same reading model: compare without the noise.
    noiseless = _python_errors(grid_list, [0.0] * POINTS, deltas, random.Random(1))
    ours = np.abs(reading.build(design, grid[:, None], {k: v[None, :] for k, v in drawn.items()}).error)
    agree = float(np.max(np.abs(np.array(noiseless) - ours)))

    ok_t, ok_m = t_mc < TARGET_S, peak_mb < TARGET_MB
    return [
        f"{SAMPLES:,} builds × {POINTS} points, 5 toleranced parts (normal, tolerance = 3σ), quantisation noise;"
        f" beta NTC {R25:g} Ω / {RF:g} Ω on {VS} V, {BITS}-bit, {VREF} V reference",
        f"{'contender':<34}{'median':>12}{'vs numpy':>10}",
        f"{'numpy Monte Carlo (montecarlo.run)':<34}{t_mc * 1e3:>9.0f} ms{1.0:>9.1f}×",
        f"{'plain-Python loop*':<34}{t_loop * 1e3:>9.0f} ms{t_loop / t_mc:>9.0f}×",
        f"{'whole budget (budget.run)':<34}{t_budget * 1e3:>9.0f} ms{t_budget / t_mc:>9.1f}×",
        f"peak memory of the numpy Monte Carlo: {peak_mb:.0f} MB (tracemalloc)",
        f"target: median < {TARGET_S * 1e3:.0f} ms {'ok' if ok_t else 'MISSED'}; peak < {TARGET_MB:.0f} MB {'ok' if ok_m else 'MISSED'}",
        f"* timed on {SUBSAMPLE:,} builds and scaled by {SAMPLES // SUBSAMPLE}; medians of 7 (numpy), 3 (loop, budget)."
        f" Same reading model: the loop's noiseless errors match numpy's within {agree:.1e} °C.",
    ]
