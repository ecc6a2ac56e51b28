"""One error shape for every endpoint, and the handlers that produce it.

Body: ``{"error": {"status", "message", "field", "problems": [{"field", "message"}]}}``.
``message`` always starts with the offending field's dotted path.
"""

from __future__ import annotations

from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from starlette.exceptions import HTTPException as StarletteHTTPException

from app.errors import InputError
from app.parts import PartNotFound

from app.schemas import ErrorOut, problems_from


# Documented on every API router: any route can refuse a body or an id this way.
ERROR_RESPONSES = {
    404: {"model": ErrorOut, "description": "Unknown id (a part, a series, a design)"},
    413: {"model": ErrorOut, "description": "The body is over the size limit"},
    422: {"model": ErrorOut, "description": "Invalid input: the message names the field"},
    429: {"model": ErrorOut, "description": "Too many saves from one client address in a minute"},
}


def error_body(status: int, problems: list[dict[str, str]]) -> dict[str, Any]:
    first = problems[0] if problems else {"field": "", "message": "invalid request"}
    message = f"{first['field']}: {first['message']}" if first["field"] else first["message"]
    return {"error": {"status": status, "message": message, "field": first["field"], "problems": problems}}


def error_response(status: int, field: str, message: str, headers: dict | None = None) -> JSONResponse:
    return JSONResponse(error_body(status, [{"field": field, "message": message}]), status_code=status, headers=headers)


def install(app: FastAPI) -> None:
    @app.exception_handler(RequestValidationError)
    async def _validation(request: Request, exc: RequestValidationError):
        problems = problems_from(exc)
        # A discriminated union reports each member's failure; the field-level ones are the useful ones.
        problems.sort(key=lambda p: -p["field"].count("."))
        return JSONResponse(error_body(422, problems[:20]), status_code=422)

    @app.exception_handler(InputError)
    async def _input(request: Request, exc: InputError):
        return error_response(422, exc.field, exc.message)

    @app.exception_handler(PartNotFound)
    async def _part(request: Request, exc: PartNotFound):
        return error_response(404, "sensor.part", f"no part with id {exc.part_id!r} in the library")

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException):
        detail = exc.detail if isinstance(exc.detail, str) else "request refused"
        if exc.status_code == 400:  # an unreadable body (e.g. not UTF-8) is bad input like any other
            return error_response(422, "body", "the request body is not valid UTF-8 JSON")
        return error_response(exc.status_code, "", detail, headers=getattr(exc, "headers", None))

    @app.exception_handler(Exception)
    async def _crash(request: Request, exc: Exception):  # last resort: never a bare 500 page
        return error_response(500, "", "internal error; the request was not processed")
