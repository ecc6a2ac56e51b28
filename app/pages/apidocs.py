"""``/docs``: the HTTP API described from ``/openapi.json``, served offline."""

from __future__ import annotations

import json

from fastapi import APIRouter, Request

from app.pages.templating import templates

router = APIRouter()


def _ref_name(schema: dict | None) -> str:
    if not schema:
        return ""
    ref = schema.get("$ref") or (schema.get("items") or {}).get("$ref", "")
    return ref.rsplit("/", 1)[-1]


def docs_data(spec: dict) -> dict:
    """Endpoints and schemas of the OpenAPI document, ready to render."""
    endpoints = []
    for path, methods in sorted(spec.get("paths", {}).items()):
        for method, op in methods.items():
            body = (op.get("requestBody") or {}).get("content", {}).get("application/json", {}).get("schema")
            ok = next((r for code, r in op.get("responses", {}).items() if code.startswith("2")), {})
            out = (ok.get("content") or {}).get("application/json", {}).get("schema")
            endpoints.append({
                "method": method.upper(), "path": path, "summary": op.get("summary", ""),
                "description": op.get("description", ""), "request": _ref_name(body), "response": _ref_name(out),
                "parameters": [p.get("name") for p in op.get("parameters", [])],
            })
    schemas = {name: json.dumps(s, indent=2, ensure_ascii=False)
               for name, s in sorted(spec.get("components", {}).get("schemas", {}).items())}
    return {"title": spec["info"]["title"], "version": spec["info"]["version"], "endpoints": endpoints, "schemas": schemas}


@router.get("/docs", include_in_schema=False)
def api_docs(request: Request):
    return templates.TemplateResponse(request, "apidocs.html", {"docs": docs_data(request.app.openapi())})
