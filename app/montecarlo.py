"""Seeded Monte Carlo of the reading error: samples × points in one array.

Each build draws every toleranced part independently: uniform over ±tol, or
normal with the tolerance as 3σ. The normal is truncated at ±3σ (redrawn
beyond): a part outside its stated tolerance fails the maker's test and is
not shipped, so every build stays inside the tolerance box whose corners
give the worst case. Each parameter has its own random stream
(``default_rng([seed, index])``), so adding a tolerance leaves the others'
draws unchanged.

Quantisation enters each (point, build) as an independent uniform error of
±½ LSB referred through the slope (the stimulus falls anywhere within a
code). A build's error over the range is max over points of
|analog error| + ½ LSB/|slope|: across a continuous range every code is
crossed, so its worst position is met somewhere.

The error array is (points, samples) so that per-point percentiles run
along contiguous rows; it is filled block by block of samples to keep the
temporaries small (peak memory ≈ 2 × points × samples × 8 bytes).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app import reading
from app.reading import PARAMS, Design

BLOCK_ELEMENTS = 1 << 17  # samples per block × points: temporaries of 1 MB stay near the cache
SIGMAS = 3.0
PERCENTILES = (50.0, 95.0, 99.7)
QUANTISATION_STREAM = len(PARAMS)


@dataclass(frozen=True)
class Result:
    bands: dict            # percentile → (n,) of |error| across builds at each point
    per_build: np.ndarray  # (m,) worst |error| of each build over the range
    samples: int


def _truncated_normal(rng: np.random.Generator, size: int) -> np.ndarray:
    z = rng.standard_normal(size)
    outside = np.flatnonzero(np.abs(z) > SIGMAS)
    while outside.size:  # 0.27 % per round: a few rounds
        z[outside] = rng.standard_normal(outside.size)
        outside = outside[np.abs(z[outside]) > SIGMAS]
    return z / SIGMAS


def draw(limits: dict[str, float], samples: int, seed: int, distribution: str) -> dict[str, np.ndarray]:
    """Deltas (m,) for every toleranced parameter: within ±limit."""
    out = {}
    for index, name in enumerate(PARAMS):
        if name not in limits:
            continue
        rng = np.random.default_rng([seed, index])
        unit = rng.uniform(-1.0, 1.0, samples) if distribution == "uniform" else _truncated_normal(rng, samples)
        out[name] = unit * limits[name]
    return out


def percentiles(a: np.ndarray, qs=PERCENTILES) -> dict[float, np.ndarray]:
    """Per-row percentiles along the last axis, linear interpolation (numpy's default method).

    Partitions ``a`` in place, highest percentile first, each next one within
    the part below the last: much cheaper than one multi-rank partition.
    """
    n = a.shape[-1]
    out: dict[float, np.ndarray] = {}
    upper = n
    for q in sorted(qs, reverse=True):
        h = (n - 1) * q / 100.0
        lo = int(np.floor(h))
        frac = h - lo
        a[..., :upper].partition(lo, axis=-1)
        value = a[..., lo].copy()
        if frac > 0 and lo + 1 < n:
            nxt = a[..., lo + 1:upper].min(axis=-1) if lo + 1 < upper else a[..., lo + 1]
            with np.errstate(invalid="ignore"):  # inf − inf where a band is unreadable
                value = np.where(nxt == value, value, value + (nxt - value) * frac)
        out[q] = value
        upper = lo + 1
    return out


def run(design: Design, stimulus: np.ndarray, limits: dict[str, float], quantization: np.ndarray,
        samples: int, seed: int, distribution: str = "uniform") -> Result:
    """Monte Carlo of ``samples`` builds at every point of ``stimulus`` (n,)."""
    s = np.asarray(stimulus, dtype=float)
    n = s.size
    deltas = draw(limits, samples, seed, distribution)
    noise_rng = np.random.default_rng([seed, QUANTISATION_STREAM])
    col = s[:, None]
    q = np.asarray(quantization, dtype=float)[:, None]
    q2 = 2.0 * q
    errors = np.empty((n, samples))
    per_build = np.empty(samples)
    block = max(1, BLOCK_ELEMENTS // n)
    noise = size = None
    for start in range(0, samples, block):
        stop = min(samples, start + block)
        m = stop - start
        part = {name: d[None, start:stop] for name, d in deltas.items()}
        err = reading.build(design, col, part, keep_output=False).error
        if err.shape != (n, m):
            err = np.broadcast_to(err, (n, m))
        if noise is None or noise.shape != (n, m):
            noise, size = np.empty((n, m)), np.empty((n, m))
        np.abs(err, out=size)
        size += q
        np.max(size, axis=0, out=per_build[start:stop])
        noise_rng.random(out=noise)
        noise -= 0.5
        noise *= q2
        noise += err
        np.abs(noise, out=errors[:, start:stop])
    return Result(percentiles(errors), per_build, samples)
