"""The accuracy page: the error budget of one design over its range.

Its data is built once by :func:`app.accuracy_view.build` and embedded as
JSON; the page's script redraws from ``POST /api/view/accuracy`` on change.
"""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from app.accuracy_view import build, demo_inputs, page_meta
from app.budget_models import AccuracyIn
from app.pages.templating import templates

router = APIRouter()


@router.get("/accuracy", response_class=HTMLResponse, include_in_schema=False)
def accuracy_page(request: Request):
    library = request.app.state.library
    inputs = demo_inputs(library)
    data = {"inputs": inputs, "result": build(AccuracyIn.model_validate(inputs), library), **page_meta(library)}
    return templates.TemplateResponse(request, "accuracy.html", {"data": data})
