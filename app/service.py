"""The orchestrator between the edges (API, pages, CLI) and the core.

Each function takes a validated request model and returns the response as
plain JSON-ready data. Core errors come out as :class:`InputError` with the
field path of the request; unknown parts as :class:`PartNotFound`.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any

import numpy as np
from pydantic import BaseModel

from app import objectives, schemas, series
from app.accuracy_inputs import accuracy_of
from app.circuit import Circuit, respond
from app.errors import InputError
from app.fitting import fit as fit_points
from app.models import SENSOR_CLASSES, build_sensor
from app.models.base import Sensor
from app.parts import Library
from app.solver import Limits, Problem, Solution, solve as solve_problem


def sensor_of(spec: Any, library: Library, field: str = "sensor") -> Sensor:
    """A sensor model from a request's sensor object or part reference."""
    if isinstance(spec, schemas.PartRef):
        return build_sensor(library.get(spec.part).sensor)
    try:
        if isinstance(spec, BaseModel):
            fields = tuple(vars(spec).items())
            try:
                return _sensor_of_model(type(spec), fields)
            except TypeError:  # an unhashable field: the same build, uncached
                return _sensor_of_model.__wrapped__(type(spec), fields)
        return build_sensor(spec)
    except InputError as err:
        raise err.within(field) from None


@lru_cache(maxsize=256)
def _sensor_of_model(model: type, fields: tuple) -> Sensor:
    """Cached by the validated model's type and fields (canonical types, so equal means same):
    the page recomputes on every change and keeps its sensor. The sensor models are flat, so
    their fields are the dump, less the unset (None) ones."""
    return build_sensor({name: value for name, value in fields if value is not None})


def circuit_of(spec: schemas.CircuitIn, field: str = "circuit") -> Circuit:
    try:
        return Circuit(**vars(spec))  # a flat model: its fields are the dump
    except InputError as err:
        raise err.within(field) from None


def clean(values: np.ndarray) -> list:
    """JSON-safe list: non-finite numbers become null."""
    arr = np.asarray(values, dtype=float)
    return [float(v) if np.isfinite(v) else None for v in arr.ravel()]


def evaluate(req: schemas.EvaluateIn, library: Library) -> dict[str, Any]:
    sensor = sensor_of(req.sensor, library)
    circuit = circuit_of(req.circuit)
    stimulus = sensor.check_stimulus(np.asarray(req.stimulus, dtype=float))
    resp = respond(sensor, circuit, stimulus)
    return {
        "stimulus": clean(stimulus),
        "sensor_ohm": clean(resp.sensor_ohm),
        "vout_v": clean(resp.vout_v),
        "thevenin_ohm": clean(resp.thevenin_ohm),
        "sensor_power_w": clean(resp.sensor_power_w),
        "sensitivity": clean(resp.sensitivity),
    }


def check_range(sensor: Sensor, lo: float, hi: float) -> None:
    """Refuse an empty, inverted or out-of-physics stimulus range (see Sensor.check_range)."""
    sensor.check_range(lo, hi)


def range_warnings(spec: Any, lo: float, hi: float, library: Library) -> list[str]:
    """Warn when a fitted part is used beyond the stimulus range it was fitted over."""
    if not isinstance(spec, schemas.PartRef):
        return []
    part = library.get(spec.part)
    if part.fitted is None:
        return []
    f_lo, f_hi = part.fitted
    unit = build_sensor(part.sensor).stimulus_unit
    span = f"the {f_lo:g} .. {f_hi:g} {unit} range {part.name} was fitted over"
    out = []
    if lo < f_lo:
        out.append(f"range.min {lo:g} {unit} is {f_lo - lo:g} {unit} below {span}: the curve is extrapolated")
    if hi > f_hi:
        out.append(f"range.max {hi:g} {unit} is {hi - f_hi:g} {unit} above {span}: the curve is extrapolated")
    return out


def problem_of(req: Any, library: Library) -> Problem:
    sensor = sensor_of(req.sensor, library)
    circuit = circuit_of(req.circuit)
    limits = Limits(**vars(req.limits)) if getattr(req, "limits", None) else Limits()
    accuracy = accuracy_of(req) if req.objective in objectives.BUDGET_OBJECTIVES else None
    return Problem(sensor, circuit, req.range.min, req.range.max, req.objective, limits, accuracy)


def solution_dict(sol: Solution) -> dict[str, Any]:
    return {
        "fixed_ohm": sol.fixed_ohm,
        "exact_ohm": sol.exact_ohm,
        "score": sol.score,
        "objective": sol.objective,
        "series": sol.series,
        "metrics": sol.metrics,
        "candidates": [{"fixed_ohm": r, "score": s} for r, s in sol.candidates],
    }


def solve_with_problem(req: schemas.SolveIn, library: Library) -> tuple[Problem, dict[str, Any]]:
    """The solve response and the problem it answers (for callers that score more values)."""
    if req.circuit.fixed_ohm is not None:
        raise InputError("circuit.fixed_ohm", "must be absent: the solver chooses the fixed resistor")
    problem = problem_of(req, library)
    out = solution_dict(solve_problem(problem, req.series))
    out["warnings"] = range_warnings(req.sensor, req.range.min, req.range.max, library)
    return problem, out


def solve(req: schemas.SolveIn, library: Library) -> dict[str, Any]:
    return solve_with_problem(req, library)[1]


def series_table(name: str) -> dict[str, Any]:
    return {"name": name, "tolerance_pct": series.tolerance_pct(name), "values": list(series.mantissas(name))}


def _check_fit_stimulus(kind: str, stimulus: np.ndarray) -> None:
    """Points outside the kind's physical range are refused before any model sees them."""
    cls = SENSOR_CLASSES[kind]
    bad = np.flatnonzero((stimulus < cls.stimulus_min) | (stimulus > cls.stimulus_max))
    if bad.size:
        raise InputError(f"points.{int(bad[0])}.stimulus",
                         f"must lie within {cls.stimulus_min:g} .. {cls.stimulus_max:g} {cls.stimulus_unit} "
                         f"for a {kind} sensor, got {stimulus[bad[0]]:g}")


def fit(req: schemas.FitIn) -> dict[str, Any]:
    stimulus = np.array([p.stimulus for p in req.points], dtype=float)
    _check_fit_stimulus(req.kind, stimulus)
    result = fit_points(req.kind, stimulus, [p.ohm for p in req.points])
    return {
        "sensor": result.sensor.to_dict(),
        "residuals": clean(result.residuals),
        "max_abs_error": result.max_abs_error,
    }
