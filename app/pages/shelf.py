"""Pages: the parts shelf (/shelf) and the side-by-side comparison (/compare).

Each page's data is built once by the same function its JSON twin uses
(``GET /api/view/shelf``, ``POST /api/view/compare``) and handed to the
template as JSON; the page scripts redraw from those endpoints.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse
from pydantic import ValidationError

from app.api.compare import MAX_SENSORS, CompareViewIn, compare_view
from app.api.shelf import shelf_view
from app.errors import InputError
from app.models import SENSOR_CLASSES
from app.pages.templating import templates
from app.parts import Library, PartNotFound
from app.schemas import problems_from

router = APIRouter()

# Starting point of the comparison page (demo parts; any missing are skipped).
DEFAULT_PARTS = ("demo-ntc-10k-b3950", "demo-ntc-100k-b4250", "demo-pt1000")
DEFAULT_RANGE = {"temperature": (0.0, 100.0), "illuminance": (1.0, 1000.0), "position": (0.05, 0.95)}


def _library(request: Request) -> Library:
    return request.app.state.library


@router.get("/shelf", response_class=HTMLResponse, include_in_schema=False)
def shelf_page(request: Request, part: str = "") -> HTMLResponse:
    data = shelf_view(_library(request))
    data["selected"] = part
    return templates.TemplateResponse(request, "shelf.html", {"data": data})


def _picked(library: Library, wanted: list[str]) -> list[str]:
    """The requested parts that exist, all of the first one's quantity (at most six)."""
    parts = [library.parts[p] for p in wanted if p in library.parts]
    if not parts:
        return []
    quantity = SENSOR_CLASSES[parts[0].kind].quantity
    return [p.id for p in parts if SENSOR_CLASSES[p.kind].quantity == quantity][:MAX_SENSORS]


def compare_inputs(library: Library, wanted: list[str]) -> dict[str, Any]:
    ids = _picked(library, wanted) or _picked(library, list(DEFAULT_PARTS))
    if len(ids) < 2:  # no demo parts: the first quantity with two parts in the library
        groups: dict[str, list[str]] = {}
        for p in library.all():
            groups.setdefault(SENSOR_CLASSES[p.kind].quantity, []).append(p.id)
        ids = next((g[:3] for g in groups.values() if len(g) >= 2), [])
    quantity = SENSOR_CLASSES[library.parts[ids[0]].kind].quantity if ids else "temperature"
    lo, hi = DEFAULT_RANGE[quantity]
    return {
        "sensors": [{"part": i} for i in ids],
        "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
        "range": {"min": lo, "max": hi},
        "objective": "swing", "series": "E24",
        "adc": {"bits": 12, "ratiometric": True},
    }


def _parts_menu(library: Library) -> list[dict[str, Any]]:
    out = []
    for p in library.all():
        cls = SENSOR_CLASSES[p.kind]
        out.append({"id": p.id, "name": p.name, "kind": p.kind, "origin": p.origin, "quantity": cls.quantity,
                    "unit": cls.stimulus_unit, "fitted": p.to_dict().get("fitted")})
    return out


@router.get("/compare", response_class=HTMLResponse, include_in_schema=False)
def compare_page(request: Request, parts: str = "", copy: str = "") -> HTMLResponse:
    """``?parts=a,b,c`` picks the parts; ``?copy=<design id>`` opens a saved comparison to change."""
    library = _library(request)
    inputs = compare_inputs(library, [p for p in parts.split(",") if p])
    data: dict[str, Any] = {"inputs": inputs, "parts": _parts_menu(library), "copy": copy[:40],
                            "default_range": DEFAULT_RANGE, "max_sensors": MAX_SENSORS, "view": None, "error": None}
    try:
        data["view"] = compare_view(CompareViewIn.model_validate(inputs), library)
    except ValidationError as exc:
        problem = problems_from(exc)[0]
        data["error"] = {"field": problem["field"], "message": f"{problem['field']}: {problem['message']}"}
    except InputError as err:
        data["error"] = {"field": err.field, "message": str(err)}
    except PartNotFound as err:
        data["error"] = {"field": "sensors", "message": f"no part with id {err.part_id!r}"}
    return templates.TemplateResponse(request, "compare.html", {"data": data})
