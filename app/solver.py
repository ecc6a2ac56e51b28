"""Choose the fixed resistor: exact optimum and best series value.

All candidates × all points are scored in one broadcast: candidate
resistances (k, 1) against the stimulus grid (n,) give vout (k, n).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from app import constants as K
from app import budget, objectives, series
from app.circuit import Circuit, divider_output, needs_fixed, respond, swing_peak_ohm
from app.errors import InputError
from app.models.base import Sensor, is_finite


# Candidate × point elements scored per broadcast in the search: 256 × 401
# doubles (0.8 MB) per temporary keeps them out of fresh-page allocation and
# near the cache; about twice as fast as one 673 × 401 block, measured by
# bench/core_solve.py. Two-point scoring (the swing) takes every candidate at once.
RANK_BLOCK_ELEMENTS = 256 * K.OBJECTIVE_POINTS


_max = np.maximum.reduce


class _once:
    """A per-instance value computed on first use (a frozen dataclass's cache).

    functools.cached_property without its lock (Python 3.11 takes one per
    first access): a Problem belongs to one request and one thread.
    """

    def __init__(self, func):
        self.func, self.name, self.__doc__ = func, func.__name__, func.__doc__

    def __get__(self, obj, owner=None):
        if obj is None:
            return self
        value = obj.__dict__[self.name] = self.func(obj)
        return value


@dataclass(frozen=True)
class Limits:
    min_ohm: float = K.DEFAULT_MIN_OHM
    max_ohm: float = K.DEFAULT_MAX_OHM
    max_sensor_power_w: Optional[float] = None

    def __post_init__(self):
        if not (is_finite(self.min_ohm) and self.min_ohm > 0):
            raise InputError("limits.min_ohm", "must be a positive resistance")
        if not (is_finite(self.max_ohm) and self.max_ohm > self.min_ohm):
            raise InputError("limits.max_ohm", "must be finite and above limits.min_ohm")
        p = self.max_sensor_power_w
        if p is not None and not (is_finite(p) and p > 0):
            raise InputError("limits.max_sensor_power_w", "must be a positive power in W")


@dataclass(frozen=True)
class Problem:
    sensor: Sensor
    circuit: Circuit
    lo: float
    hi: float
    objective: str = "swing"
    limits: Limits = field(default_factory=Limits)
    # The accuracy objective's converter, tolerances and self-heating (app.budget.Accuracy).
    accuracy: Optional[budget.Accuracy] = None

    def __post_init__(self):
        if not needs_fixed(self.sensor):
            raise InputError("sensor.wiring", "a pot in divider wiring has no fixed resistor to choose")
        if self.objective not in objectives.DIRECTION:
            raise InputError("objective", f"must be one of {', '.join(objectives.DIRECTION)}")
        self.sensor.check_range(self.lo, self.hi)
        if self.objective in objectives.BUDGET_OBJECTIVES:
            setup = self.accuracy or budget.Accuracy()
            object.__setattr__(self, "accuracy", setup)
            setup.limits(self.sensor, self.circuit)  # refuse bad tolerances before the search

    def _budget_rank(self, fixed_ohm: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Worst-case error over the range (candidates × corners × points) and window feasibility."""
        design, limits = self.accuracy.design(self.sensor, self.circuit), self.accuracy.limits(self.sensor, self.circuit)
        return budget.range_worst(design, self.lo, self.hi, limits, np.asarray(fixed_ohm, float))

    @_once
    def grid(self) -> np.ndarray:
        return self.sensor.grid(self.lo, self.hi, K.OBJECTIVE_POINTS)

    @_once
    def _full_points(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(stimulus, axis, sensor Ω) on the whole objective grid, computed once per problem."""
        s = self.grid
        return s, self.sensor.to_axis(s), self.sensor.resistance(s)

    @_once
    def _scored_points(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(stimulus, axis, sensor Ω) that :meth:`rank` scores, taken from the whole grid's.

        The swing needs only the two ends unless a power limit needs every point.
        """
        full = self._full_points
        if self.objective == "swing" and self.limits.max_sensor_power_w is None:
            return tuple(values[:: values.size - 1] for values in full)  # views of both ends
        return full

    def _outputs(self, fixed_ohm: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(vout, sensor power), each (k, n), on the whole grid for candidates (k,)."""
        s, _, rs = self._full_points
        return divider_output(self.sensor, self.circuit, s, np.asarray(fixed_ohm, float)[:, None],
                              with_power=True, sensor_ohm=rs)

    def metrics(self, fixed_ohm: float) -> dict[str, float]:
        """The reported metrics (app.objectives.metrics) of one fixed resistor.

        One value, so one-dimensional arrays and scalar results: the same
        numbers as a row of :meth:`score`'s, without the (k, n) machinery.
        """
        s, axis, rs = self._full_points
        vout, power = divider_output(self.sensor, self.circuit, s, float(fixed_ohm), with_power=True, sensor_ohm=rs)
        found = objectives.metrics(vout, axis, power, even=True)  # Sensor.grid's axis is even
        return {name: float(value) for name, value in found.items()}

    def score(self, fixed_ohm: np.ndarray) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
        """(scores, feasible mask, metrics), each (k,), for candidates (k,)."""
        vout, power = self._outputs(fixed_ohm)
        axis = self._full_points[1]
        if self.objective in objectives.BUDGET_OBJECTIVES:
            found, feasible = self._budget_rank(fixed_ohm)
        else:
            found = objectives.score(self.objective, vout, axis)
            feasible = np.isfinite(found)
        extra = objectives.metrics(vout, axis, power, even=True)
        if self.limits.max_sensor_power_w is not None:
            feasible &= extra["max_sensor_power_w"] <= self.limits.max_sensor_power_w
        return found, feasible, extra

    def rank(self, fixed_ohm: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(scores, feasible mask) as :meth:`score`, computing only what they need.

        Same numbers as :meth:`score`: Vout (and power only under a power
        limit), no slopes or Thevenin; the swing needs only the two ends;
        candidates go in blocks of :data:`RANK_BLOCK_ELEMENTS` values.
        """
        limit = self.limits.max_sensor_power_w
        if self.objective in objectives.BUDGET_OBJECTIVES:
            found, feasible = self._budget_rank(fixed_ohm)
            if limit is not None:
                power = respond(self.sensor, self.circuit, self.grid, np.asarray(fixed_ohm, float)[:, None]).sensor_power_w
                feasible &= np.max(power, axis=-1) <= limit
            return found, feasible
        s, axis, rs = self._scored_points
        fixed = np.asarray(fixed_ohm, float)
        block = max(1, RANK_BLOCK_ELEMENTS // s.size)
        parts = [self._rank_block(s, axis, rs, fixed[start : start + block, None], limit)
                 for start in range(0, max(fixed.size, 1), block)]
        if len(parts) == 1:
            return parts[0]
        return np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts])

    def _rank_block(self, s, axis, rs, fixed: np.ndarray, limit: Optional[float]) -> tuple[np.ndarray, np.ndarray]:
        vout, power = divider_output(self.sensor, self.circuit, s, fixed, with_power=limit is not None, sensor_ohm=rs)
        found = objectives.score(self.objective, vout, axis)
        feasible = np.isfinite(found)
        if limit is not None:
            feasible &= _max(power, axis=-1) <= limit
        return found, feasible


@dataclass(frozen=True)
class Solution:
    objective: str
    series: str
    fixed_ohm: float
    exact_ohm: float
    score: float
    exact_score: float
    metrics: dict
    candidates: list  # [(ohm, score)], best first


def _ranked(problem: Problem, candidates: np.ndarray):
    found, feasible = problem.rank(candidates)
    ranked = np.where(feasible, objectives.loss(problem.objective, found), np.inf)
    return found, ranked


def _no_feasible() -> InputError:
    return InputError(
        "limits.max_sensor_power_w",
        "no fixed resistor between the limits keeps the sensor power within the limit",
    )


_ZOOM_OFFSETS = np.linspace(-1.0, 1.0, K.SOLVER_ZOOM_POINTS)


def _zoom(problem: Problem, log_centre: float, half: float, best_loss: float) -> tuple[float, float]:
    """Shrink a bracket around the best point, round after round (derivative-free)."""
    lo, hi = np.log10(problem.limits.min_ohm), np.log10(problem.limits.max_ohm)
    best_log = log_centre
    for _ in range(K.SOLVER_ZOOM_ROUNDS):
        trial = np.minimum(np.maximum(best_log + half * _ZOOM_OFFSETS, lo), hi)
        _, ranked = _ranked(problem, 10.0**trial)
        i = int(ranked.argmin())
        if ranked[i] <= best_loss:
            best_log, best_loss = float(trial[i]), float(ranked[i])
        half *= 2.0 / (K.SOLVER_ZOOM_POINTS - 1)
    return float(10.0**best_log), best_loss


# Series values scored on each side of the swing's peak: the candidates plus a margin.
_SWING_NEIGHBOURS = K.SOLVER_CANDIDATES + 2


def _swing_peak(problem: Problem) -> Optional[float]:
    """The swing's exact optimum in closed form, clamped to the limits; None where a power limit
    can rule values out (then the zoom searches the feasible ones)."""
    if problem.objective != "swing" or problem.limits.max_sensor_power_w is not None:
        return None
    rs = problem._scored_points[2]
    peak = swing_peak_ohm(problem.circuit, float(rs[0]), float(rs[-1]))
    return min(max(peak, problem.limits.min_ohm), problem.limits.max_ohm)


def solve(problem: Problem, series_name: str = "E24") -> Solution:
    """Best series value (every decade between the limits) and the exact optimum.

    The swing without a power limit has its exact optimum in closed form
    (:func:`app.circuit.swing_peak_ohm`), scored beside the series values next to it.
    Otherwise the series values and a log grid are scored together in one
    broadcast; the grid's best point (or the series' own, whichever wins)
    seeds the zoom. Either way the exact optimum is never worse than any
    series value. A series at least as dense as the grid (E48 and finer) is
    its own seed grid.
    """
    limits = problem.limits
    if series_name == "exact":
        values = np.empty(0)
    else:
        values = series.values_between(series_name, limits.min_ohm, limits.max_ohm)
        if values.size == 0:
            raise InputError("limits", f"no {series_name} value lies between the limits")
    peak = _swing_peak(problem)
    if peak is not None:
        # The swing is unimodal in the fixed resistor, so its best few series values are
        # the neighbours of the peak: only those are scored.
        near = int(values.searchsorted(peak))
        values = values[max(0, near - _SWING_NEIGHBOURS) : near + _SWING_NEIGHBOURS]
        pool = np.concatenate((values, (peak,)))
    else:
        lo, hi = np.log10(limits.min_ohm), np.log10(limits.max_ohm)
        grid = 10.0 ** np.linspace(lo, hi, max(int(np.ceil((hi - lo) * K.SOLVER_GRID_PER_DECADE)), 8) + 1)
        pool = values if values.size >= grid.size else np.concatenate([values, grid])
    found, ranked = _ranked(problem, pool)
    top = int(ranked.argmin())
    if ranked[top] == np.inf:  # infeasible values rank as inf
        raise _no_feasible()
    if peak is not None:  # the peak itself, or a series value that ties it to rounding
        exact, exact_loss = float(pool[top]), float(ranked[top])
    else:
        exact, exact_loss = _zoom(problem, float(np.log10(pool[top])), 1.0 / K.SOLVER_GRID_PER_DECADE,
                                  float(ranked[top]))
    exact_score = -objectives.DIRECTION[problem.objective] * exact_loss  # loss = −direction · score

    if series_name == "exact":
        picked = np.array([exact])
        found, ranked = np.array([exact_score]), np.array([exact_loss])
    else:
        picked = values
        n = values.size
        found, ranked = found[:n], ranked[:n]
    order = ranked.argsort(kind="stable")[: K.SOLVER_CANDIDATES]
    order = order[ranked[order] < np.inf]  # sorted: the infeasible come last
    if order.size == 0:
        raise _no_feasible()
    best = int(order[0])
    # The reported metrics need slopes and powers: computed for the winner only.
    metrics = problem.metrics(picked[best])
    return Solution(
        objective=problem.objective,
        series=series_name,
        fixed_ohm=float(picked[best]),
        exact_ohm=exact,
        score=float(found[best]),
        exact_score=float(exact_score),
        metrics=metrics,
        candidates=list(zip(picked[order].tolist(), found[order].tolist())),
    )
