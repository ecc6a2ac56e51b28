"""``POST /api/table``: ADC code → stimulus tables for firmware, and the Firmware page's view.

Thin: validate with :class:`app.table_request.TableIn`, compute once, answer
as JSON or as CSV / C99 header text.
"""

from __future__ import annotations

from typing import Any, Optional

from fastapi import APIRouter, Request
from fastapi.responses import JSONResponse, Response
from pydantic import BaseModel

from app.parts import Library
from app.table_request import MEDIA, TableIn, compute, file_name
from app.table_view import view
from app.api.errors import ERROR_RESPONSES

router = APIRouter(prefix="/api", responses=ERROR_RESPONSES)


class ValidCodesOut(BaseModel):
    min: int
    max: int
    below: str
    above: str
    below_fault: Optional[str] = None
    above_fault: Optional[str] = None
    short_code: Optional[int] = None
    open_code: Optional[int] = None


class TableOut(BaseModel):
    codes: list[int]
    stimulus: list[Optional[float]]
    max_interpolation_error: float
    valid_codes: ValidCodesOut
    layout: str
    step: Optional[int] = None
    entries: int
    worst_code: int
    quantity: str
    stimulus_unit: str
    error_unit: str
    range: dict[str, float]
    adc: dict[str, Any]
    inputs: list[str]
    uniform: dict[str, Any]
    fewest: Optional[dict[str, Any]] = None
    polynomial: Optional[dict[str, Any]] = None
    steinhart_hart: Optional[dict[str, Any]] = None
    fixed_point: dict[str, Any]
    warnings: list[str]
    axis_values: Optional[list[Optional[float]]] = None


def _library(request: Request) -> Library:
    return request.app.state.library


_ERRORS = {422: {"description": "Invalid input: the body's message names the field"}, 404: {"description": "Unknown part"}}


@router.post(
    "/table", tags=["firmware"], response_model=TableOut, responses={
        **_ERRORS,
        200: {"description": "The table: JSON, or CSV / C99 header text for format csv / c",
              "content": {"application/json": {}, "text/csv": {"schema": {"type": "string"}},
                          "text/x-c": {"schema": {"type": "string"}}}},
    },
    summary="ADC code to stimulus table, its exact interpolation error and the valid code range",
)
def table(body: TableIn, request: Request):
    """Every code (or every `step`-th) of the valid range with the stimulus its centre voltage stands for.

    The converter is ideal: LSB = Vref / 2^bits and code k stands for (k + ½)·LSB. The divider is inverted
    analytically at that voltage. `valid_codes` gives the codes a working sensor produces over `range` and
    what a code below or above means (open or shorted sensor). `max_interpolation_error` is the largest error
    of linear interpolation between entries over every valid code, in °C, decades of lux (light tables hold
    log10 lux between entries) or travel.
    """
    computed = compute(body, _library(request))
    if body.format == "json":
        return JSONResponse(computed.json())
    name = file_name(computed, body.format)
    return Response(computed.text(body.format), media_type=MEDIA[body.format],
                    headers={"content-disposition": f'attachment; filename="{name}"'})


@router.post("/table/view", tags=["firmware"], responses=_ERRORS,
             summary="The Firmware page's data: table, valid codes, alternatives and plotly figures")
def table_view(body: TableIn, request: Request) -> dict[str, Any]:
    return view(compute(body, _library(request)))
