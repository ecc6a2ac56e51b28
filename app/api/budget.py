"""``POST /api/budget`` (contract) and the accuracy page's view (its JSON twin).

Errors take the one shape of :mod:`app.api.errors`: 422 naming the field,
404 for an unknown part.
"""

from __future__ import annotations

from typing import Any, Literal

from fastapi import APIRouter, Query, Request
from fastapi.responses import PlainTextResponse

from app import accuracy_view, budget_service
from app.budget_models import AccuracyIn, AccuracyOut, BudgetIn, BudgetOut
from app.api.errors import ERROR_RESPONSES

router = APIRouter(prefix="/api", responses=ERROR_RESPONSES)

_ERRORS = {
    422: {"description": "Invalid input: the body's message names the field"},
    404: {"description": "Unknown part"},
}


def _library(request: Request):
    return request.app.state.library


@router.post("/budget", response_model=BudgetOut, response_model_by_alias=True, responses={
    **_ERRORS, 200: {"content": {"text/csv": {}}, "description": "The budget; with ?format=csv one row per stimulus"}},
    tags=["accuracy"], summary="Error budget over the range: contributors, worst case, RSS, Monte Carlo, yield")
def budget_endpoint(body: BudgetIn, request: Request, format: Literal["json", "csv"] = Query("json")) -> Any:
    _, _, out = budget_service.compute(body, _library(request))
    if format == "csv":
        return PlainTextResponse(budget_service.to_csv(out), media_type="text/csv",
                                 headers={"content-disposition": 'attachment; filename="budget.csv"'})
    return out


@router.post("/view/accuracy", response_model=AccuracyOut, responses=_ERRORS, tags=["pages"],
             summary="Everything the accuracy page shows for one set of inputs (its JSON twin)")
def accuracy_endpoint(body: AccuracyIn, request: Request) -> dict[str, Any]:
    return accuracy_view.build(body, _library(request))
