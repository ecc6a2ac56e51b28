"""The core JSON endpoints of the contract, a trivial health check, and the
Bench page's view (its JSON twin).

Routes are thin: validate with the request model, call :mod:`app.service` or
:mod:`app.bench_view`, return plain data. Errors take the one shape of
:mod:`app.api.errors` (422 bad input, 404 unknown id).
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from starlette.concurrency import run_in_threadpool

from app import __version__, schemas, service
from app.objectives import BUDGET_OBJECTIVES
from app import series as series_tables
from app.api.errors import ERROR_RESPONSES, error_response
from app.bench_view import BenchIn, BenchOut, build as build_bench
from app.parts import Library, PartNotFound

router = APIRouter(prefix="/api", responses=ERROR_RESPONSES)

_ERRORS = ERROR_RESPONSES


def _library(request: Request) -> Library:
    return request.app.state.library


@router.get("/health", response_model=schemas.HealthOut, tags=["meta"], summary="Liveness check")
async def health() -> dict[str, Any]:
    """Answers at once with no work: the baseline for the throughput benchmark."""
    return {"status": "ok", "version": __version__}


@router.post("/echo", response_model=schemas.EchoOut, tags=["meta"], summary="Round-trip check for a JSON body")
async def echo(body: dict[str, Any]) -> dict[str, Any]:
    """Reads a JSON object and names its top-level keys, doing nothing else: a client can check
    that its requests arrive whole, and it is the POST baseline of the throughput benchmark."""
    return {"status": "ok", "keys": sorted(str(k)[:64] for k in body)[:100]}


@router.post("/evaluate", response_model=schemas.EvaluateOut, responses=_ERRORS, tags=["divider"],
             summary="Output, Thevenin resistance, sensor power and slope at given stimulus values")
async def evaluate(body: schemas.EvaluateIn, request: Request) -> dict[str, Any]:
    return service.evaluate(body, _library(request))


@router.post("/solve", response_model=schemas.SolveOut, responses=_ERRORS, tags=["divider"],
             summary="Choose the fixed resistor (series value and exact optimum)")
async def solve(body: schemas.SolveIn, request: Request) -> dict[str, Any]:
    # On the event loop, not the thread pool: a solve is well under a millisecond of numpy,
    # and the thread hand-off cost more than the work (bench/api_solve.py: 500 → 900 req/s).
    # The accuracy objective scores every tolerance corner and can take far longer: thread pool.
    if body.objective in BUDGET_OBJECTIVES:
        return await run_in_threadpool(service.solve, body, _library(request))
    return service.solve(body, _library(request))


@router.get("/series/{name}", response_model=schemas.SeriesOut, responses=_ERRORS, tags=["reference"],
            summary="IEC 60063 mantissas of one decade")
async def series(name: str) -> dict[str, Any]:
    wanted = name.strip().upper()
    if wanted not in series_tables.SERIES_NAMES:
        return error_response(404, "name", f"no series {name!r}; known: {', '.join(series_tables.SERIES_NAMES)}")
    return service.series_table(wanted)


@router.post("/fit", response_model=schemas.FitOut, responses=_ERRORS, tags=["parts"],
             summary="Fit a sensor model to measured (stimulus, resistance) points")
def fit(body: schemas.FitIn) -> dict[str, Any]:
    return service.fit(body)


@router.get("/parts", response_model=list[schemas.PartOut], tags=["parts"], summary="The parts library")
def parts(request: Request) -> list[dict[str, Any]]:
    return [part.to_dict() for part in _library(request).all()]


@router.get("/parts/{part_id}", response_model=schemas.PartOut, responses=_ERRORS, tags=["parts"],
            summary="One part of the library")
def part(part_id: str, request: Request) -> dict[str, Any]:
    try:
        return _library(request).get(part_id).to_dict()
    except PartNotFound:
        return error_response(404, "id", f"no part with id {part_id!r} in the library")


@router.post("/view/bench", response_model=BenchOut, responses=_ERRORS, tags=["pages"],
             summary="Everything the Bench page shows for one set of inputs (its JSON twin)")
def bench_view(body: BenchIn, request: Request) -> dict[str, Any]:
    return build_bench(body, _library(request))
