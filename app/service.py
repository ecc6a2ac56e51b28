"""The orchestrator between the edges (API, pages, CLI) and the core.

Each function takes a validated request model and returns the response as
plain JSON-ready data. Core errors come out as :class:`InputError` with the
field path of the request; unknown parts as :class:`PartNotFound`.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from app import schemas, series
from app.circuit import Circuit, respond
from app.errors import InputError
from app.fitting import fit as fit_points
from app.models import build_sensor
from app.models.base import Sensor
from app.parts import Library
from app.solver import Limits, Problem, Solution, solve as solve_problem


def sensor_of(spec: Any, library: Library, field: str = "sensor") -> Sensor:
    """A sensor model from a request's sensor object or part reference."""
    if isinstance(spec, schemas.PartRef):
        return build_sensor(library.get(spec.part).sensor)
    data = spec.model_dump(exclude_none=True) if hasattr(spec, "model_dump") else spec
    try:
        return build_sensor(data)
    except InputError as err:
        raise err.within(field) from None


def circuit_of(spec: schemas.CircuitIn, field: str = "circuit") -> Circuit:
    try:
        return Circuit(**spec.model_dump())
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


def range_warnings(spec: Any, lo: float, hi: float, library: Library) -> list[str]:
    """Warn when a fitted part is used beyond the stimulus range it was fitted over."""
    if not isinstance(spec, schemas.PartRef):
        return []
    part = library.get(spec.part)
    if part.fitted is None:
        return []
    f_lo, f_hi = part.fitted
    out = []
    if lo < f_lo:
        out.append(f"range.min {lo:g} is {f_lo - lo:g} below the {f_lo:g} .. {f_hi:g} range {part.name} was fitted over: extrapolated")
    if hi > f_hi:
        out.append(f"range.max {hi:g} is {hi - f_hi:g} above the {f_lo:g} .. {f_hi:g} range {part.name} was fitted over: extrapolated")
    return out


def problem_of(req: Any, library: Library) -> Problem:
    sensor = sensor_of(req.sensor, library)
    circuit = circuit_of(req.circuit)
    limits = Limits(**req.limits.model_dump()) if getattr(req, "limits", None) else Limits()
    return Problem(sensor, circuit, req.range.min, req.range.max, req.objective, limits)


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


def solve(req: schemas.SolveIn, library: Library) -> dict[str, Any]:
    if req.circuit.fixed_ohm is not None:
        raise InputError("circuit.fixed_ohm", "must be absent: the solver chooses the fixed resistor")
    out = solution_dict(solve_problem(problem_of(req, library), req.series))
    out["warnings"] = range_warnings(req.sensor, req.range.min, req.range.max, library)
    return out


def series_table(name: str) -> dict[str, Any]:
    return {"name": name, "tolerance_pct": series.tolerance_pct(name), "values": list(series.mantissas(name))}


def fit(req: schemas.FitIn) -> dict[str, Any]:
    result = fit_points(req.kind, [p.stimulus for p in req.points], [p.ohm for p in req.points])
    return {
        "sensor": result.sensor.to_dict(),
        "residuals": clean(result.residuals),
        "max_abs_error": result.max_abs_error,
    }
