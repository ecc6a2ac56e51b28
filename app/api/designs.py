"""Saved designs: save, read, list, rename, delete, export and import.

A design is the inputs of a page (the Bench by default) plus a name and
notes. Inputs are validated and recomputed before they are stored, so a
design that saves always opens; results are never stored, always
recomputed. If a later version cannot recompute an old design, it is still
returned with its stored inputs and a ``problem`` instead of a result.

Changing or deleting needs the owner token returned by the save, sent in
the ``X-Owner-Token`` header (missing: 401, wrong: 403).

Pages register how their saved inputs recompute in ``VIEWS`` (see
``app/api/design_views.py``; ``register`` is re-exported here), keyed by the
inputs' ``view`` field (default ``bench``).
"""

from __future__ import annotations

from typing import Any, Literal, Optional

from fastapi import APIRouter, Body, Header, HTTPException, Query, Request, Response
from fastapi.responses import JSONResponse
from pydantic import BaseModel, Field, ValidationError, field_validator, model_validator

from app import schemas
from app.bench_view import BenchIn
from app.api.design_views import VIEWS, Loaded, View, problem_of, recompute, register, snapshot
from app.api.errors import error_body
from app.errors import InputError
from app.parts import Library
from app.store import Store
from app.store import designs as store
from app.store import user_parts
from app.api.errors import ERROR_RESPONSES
from app.api.limits import check_save_rate

__all__ = ["router", "on_startup", "VIEWS", "View", "register"]

router = APIRouter(prefix="/api", responses=ERROR_RESPONSES, tags=["designs"])

MAX_NAME = 200  # as the Bench's own name field
MAX_NOTES = 2000
EXPORT_FORMAT = 1
OWNER_HEADER = "X-Owner-Token"


# --- request models -----------------------------------------------------------

def _text(value: str, allow_newlines: bool) -> str:
    value = value.strip()
    bad = [c for c in value if ord(c) < 32 and not (allow_newlines and c in "\n\t\r")]
    if bad:
        raise ValueError("must not contain control characters")
    return value


class DesignMeta(schemas.Strict):
    name: str = Field(min_length=1, max_length=MAX_NAME, description="Shown in the list and on the design's page")
    notes: str = Field("", max_length=MAX_NOTES)

    @field_validator("name")
    @classmethod
    def _name(cls, v: str) -> str:
        v = _text(v, allow_newlines=False)
        if not v:
            raise ValueError("must not be blank")
        return v

    @field_validator("notes")
    @classmethod
    def _notes(cls, v: str) -> str:
        return _text(v, allow_newlines=True)


class DesignPatch(schemas.Strict):
    name: Optional[str] = Field(None, min_length=1, max_length=MAX_NAME)
    notes: Optional[str] = Field(None, max_length=MAX_NOTES)

    @field_validator("name")
    @classmethod
    def _name(cls, v: Optional[str]) -> Optional[str]:
        return None if v is None else DesignMeta._name(v)

    @field_validator("notes")
    @classmethod
    def _notes(cls, v: Optional[str]) -> Optional[str]:
        return None if v is None else DesignMeta._notes(v)

    @model_validator(mode="after")
    def _something(self) -> "DesignPatch":
        if self.name is None and self.notes is None:
            raise ValueError("send a new name, new notes or both")
        return self


class BenchDesignIn(BenchIn):
    """``POST /api/designs`` body for a Bench design: its inputs, a name and notes (documentation only).

    Other pages save their own inputs with their own ``view``.
    """

    name: str = Field(min_length=1, max_length=MAX_NAME, description="Shown in the list and on the design's page")
    notes: str = Field("", max_length=MAX_NOTES)
    view: Literal["bench"] = "bench"


class Created(BaseModel):
    id: str
    url: str = Field(description="The design's page, for anyone on the LAN")
    owner_token: str = Field(description=f"Secret needed (header {OWNER_HEADER}) to rename or delete; shown once")


class DesignSummary(BaseModel):
    id: str
    name: str
    notes: str
    kind: str
    view: str
    created: str
    updated: str
    url: str


class DesignOut(DesignSummary):
    inputs: dict[str, Any]
    result: Optional[dict[str, Any]] = Field(description="The solve response, recomputed from the inputs")
    problem: Optional[dict[str, str]] = Field(None, description="Why the stored inputs no longer recompute")


class DesignList(BaseModel):
    designs: list[DesignSummary]
    total: int


class Invalid(Exception):
    def __init__(self, problems: list[dict[str, str]]):
        self.problems = problems


def validate(body: Any, library: Library) -> tuple[DesignMeta, dict, str, str]:
    """(name and notes, the inputs as given, view name, kind label); raises Invalid or InputError.

    The inputs are recomputed here, so whatever saves is known to open.
    """
    if not isinstance(body, dict):
        raise InputError("", "a design must be a JSON object")
    meta_keys = set(DesignMeta.model_fields)
    inputs = {k: v for k, v in body.items() if k not in meta_keys}
    view_name = str(inputs.get("view", "bench"))
    view = VIEWS.get(view_name)
    if view is None:
        raise InputError("view", f"must be one of {', '.join(VIEWS)}")
    problems = []
    try:
        meta = DesignMeta.model_validate({k: body[k] for k in meta_keys if k in body})
    except ValidationError as err:
        problems += schemas.problems_from(err)
    try:
        view.recompute(inputs, library)
    except (ValidationError, InputError) as err:
        problems += schemas.problems_from(err) if isinstance(err, ValidationError) else [problem_of(err)]
    if problems:
        raise Invalid(problems)
    return meta, inputs, view_name, view.kind(inputs, library)


def save_design(request: Request, body: Any, inputs_at: str = "") -> JSONResponse:
    """Validate, recompute and store; 201 with the id, the page URL and the owner token.

    ``inputs_at`` roots the inputs' error fields (``inputs.`` for an imported file).
    """
    check_save_rate(request)
    library = request.app.state.library
    try:
        meta, inputs, view_name, kind = validate(body, library)
    except Invalid as err:
        problems = [p if p["field"] in DesignMeta.model_fields else {**p, "field": (inputs_at + p["field"]).rstrip(".")}
                    for p in err.problems]
        problems.sort(key=lambda p: -p["field"].count("."))  # as the app's handler: field-level first
        return JSONResponse(error_body(422, problems[:20]), status_code=422)
    with request.app.state.store.connection() as conn:
        design, token = store.save(conn, name=meta.name, notes=meta.notes, kind=kind,
                                   view=view_name, inputs=inputs,
                                   parts=snapshot(inputs, library))
    body = Created(id=design.id, url=page_url(request, design.id), owner_token=token).model_dump()
    return JSONResponse(body, status_code=201, headers={"Location": f"/api/designs/{design.id}"})


def page_url(request: Request, design_id: str) -> str:
    return str(request.url_for("saved_design_page", design_id=design_id))


def load(request: Request, design_id: str) -> store.Design:
    with request.app.state.store.connection() as conn:
        design = store.get(conn, design_id)
    if design is None:
        raise HTTPException(404, f"no saved design with id {design_id[:40]!r}")
    return design


def summary(request: Request, design: store.Design) -> dict:
    return {**design.summary(), "url": page_url(request, design.id)}


def design_out(request: Request, loaded: Loaded) -> dict:
    return {**summary(request, loaded.design), "inputs": loaded.design.inputs,
            "result": loaded.result, "problem": loaded.problem}


def require_owner(request: Request, design_id: str, token: Optional[str]) -> None:
    load(request, design_id)
    if not token:
        raise HTTPException(401, f"send the design's owner token in the {OWNER_HEADER} header",
                            headers={"WWW-Authenticate": f'OwnerToken header="{OWNER_HEADER}"'})
    with request.app.state.store.connection() as conn:
        if not store.is_owner(conn, design_id, token):
            raise HTTPException(403, "the owner token does not match this design")


# --- start-up -----------------------------------------------------------------

def on_startup(app) -> None:
    """Open (create, migrate) the store in the data folder; add user parts to the library."""
    app.state.store = Store(app.state.settings.data_dir)
    library = app.state.library
    with app.state.store.connection() as conn:
        for record in user_parts.list_parts(conn):
            try:
                library.add(user_parts.part_of(record))
            except InputError as err:
                library.problems.append(f"user part {record.get('id')}: {err}")


# --- routes -------------------------------------------------------------------

def _inline(schema: dict) -> dict:
    """A model's JSON schema with its $defs inlined (for a hand-declared request body)."""
    defs = schema.pop("$defs", {})

    def walk(node):
        if isinstance(node, dict):
            if "$ref" in node and node["$ref"].startswith("#/$defs/"):
                return walk(dict(defs[node["$ref"].split("/")[-1]]))
            return {k: walk(v) for k, v in node.items()}
        if isinstance(node, list):
            return [walk(v) for v in node]
        return node

    return walk(schema)


_BODY = {"requestBody": {"required": True, "content": {"application/json": {
    "schema": _inline(BenchDesignIn.model_json_schema())}}}}
_EXPORT_SCHEMA = {"type": "object", "required": ["ohmpick_design", "name", "inputs"], "properties": {
    "ohmpick_design": {"const": EXPORT_FORMAT, "description": "file format version"},
    "name": {"type": "string", "maxLength": MAX_NAME}, "notes": {"type": "string", "maxLength": MAX_NOTES},
    "created": {"type": "string"}, "inputs": {"type": "object"}}}
_IMPORT_BODY = {"requestBody": {"required": True, "content": {"application/json": {"schema": _EXPORT_SCHEMA}}}}
_E404 = {404: {"description": "No saved design with this id (unknown or malformed)"}}
_E422 = {422: {"description": "Invalid input: the message names the field"}}
_E413 = {413: {"description": "Request body over the size limit"}}
_EOWNER = {401: {"description": f"No owner token in the {OWNER_HEADER} header"},
           403: {"description": "The owner token does not match this design"}}
_Token = Header(None, alias=OWNER_HEADER, description="The owner token returned when the design was saved")


@router.post("/designs", status_code=201, response_model=Created, openapi_extra=_BODY,
             summary="Save a design", responses={**_E422, **_E413, 404: {"description": "Unknown part"}})
def create_design(request: Request, body: Any = Body(...)):
    """Save the inputs (validated and recomputed first) with a name and notes."""
    return save_design(request, body)


@router.get("/designs", response_model=DesignList, responses=_E422, summary="List saved designs, newest first")
def list_designs(request: Request, name: str = Query("", max_length=MAX_NAME, description="part of the name"),
                 limit: int = Query(200, ge=1, le=store.MAX_LIST), offset: int = Query(0, ge=0)):
    with request.app.state.store.connection() as conn:
        found = store.list_designs(conn, name, limit, offset)
        total = store.count(conn, name)
    return {"designs": [summary(request, d) for d in found], "total": total}


@router.get("/designs/{design_id}", response_model=DesignOut, responses=_E404, summary="A saved design, recomputed")
def read_design(request: Request, design_id: str):
    return design_out(request, recompute(load(request, design_id), request.app.state.library))


@router.get("/designs/{design_id}/view", responses=_E404, summary="The design page's data (figures, facts): its JSON twin")
def read_design_view(request: Request, design_id: str):
    from app.pages.saved import page_data  # the page builds it; this is its JSON twin

    return page_data(request, design_id)


@router.patch("/designs/{design_id}", response_model=DesignSummary, responses={**_E404, **_E422, **_EOWNER},
              summary="Rename or change the notes (owner only)")
def patch_design(request: Request, design_id: str, patch: DesignPatch, token: Optional[str] = _Token):
    require_owner(request, design_id, token)
    with request.app.state.store.connection() as conn:
        design = store.rename(conn, design_id, patch.name, patch.notes)
    if design is None:
        raise HTTPException(404, f"no saved design with id {design_id[:40]!r}")
    return summary(request, design)


@router.delete("/designs/{design_id}", status_code=204, responses={**_E404, **_EOWNER},
               summary="Delete a design (owner only)")
def delete_design(request: Request, design_id: str, token: Optional[str] = _Token):
    require_owner(request, design_id, token)
    with request.app.state.store.connection() as conn:
        store.delete(conn, design_id)
    return Response(status_code=204)


@router.get("/designs/{design_id}/export", responses={**_E404, 200: {"content": {"application/json": {"schema": _EXPORT_SCHEMA}},
             "description": "The design file (attachment)"}}, summary="The design as a JSON file (imports back)")
def export_design(request: Request, design_id: str):
    design = load(request, design_id)
    data = {"ohmpick_design": EXPORT_FORMAT, "name": design.name, "notes": design.notes,
            "created": design.created, "inputs": design.inputs}
    stem = user_parts.slug(design.name, 60) if design.name else "design"
    return JSONResponse(data, headers={"Content-Disposition": f'attachment; filename="{stem}.ohmpick.json"'})


@router.post("/designs/import", status_code=201, response_model=Created, openapi_extra=_IMPORT_BODY,
             responses={**_E422, **_E413, 404: {"description": "Unknown part"}}, summary="Save a design from an exported JSON file")
def import_design(request: Request, body: Any = Body(...)):
    if not isinstance(body, dict) or type(body.get("ohmpick_design")) is not int or body["ohmpick_design"] != EXPORT_FORMAT:
        raise InputError("ohmpick_design", f"must be {EXPORT_FORMAT}: this is not an ohmpick design file")
    unknown = sorted(set(body) - {"ohmpick_design", "name", "notes", "created", "inputs"})
    if unknown:
        raise InputError(unknown[0], "is not a field of a design file")
    inputs = body.get("inputs")
    if not isinstance(inputs, dict):
        raise InputError("inputs", "must be an object of design inputs")
    clash = sorted(set(inputs) & set(DesignMeta.model_fields))
    if clash:
        raise InputError(f"inputs.{clash[0]}", "belongs beside inputs, not inside")
    flat = {**inputs, **{k: body[k] for k in ("name", "notes") if k in body}}
    return save_design(request, flat, inputs_at="inputs.")

