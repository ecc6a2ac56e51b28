"""The parts shelf: create, import (CSV table + fit), delete and export parts.

Routes (all under ``/api``):

* ``POST /parts``: a user part from parameters (tolerances, dissipation, fitted range).
* ``POST /parts/import``: a CSV table fitted with a chosen model; ``save`` keeps it.
* ``DELETE /parts/{id}``: user parts only; library files are not touched.
* ``GET /parts/{id}/toml``: the part in the library's own TOML schema.
* ``GET /view/shelf``: the shelf page's data (every part with its curve as a figure).

All part validation is :func:`app.parts.part_from_mapping`; user parts go to
the SQLite store (``app/store/user_parts.py``) and into ``app.state.library``.
"""

from __future__ import annotations

from typing import Any, Literal, Optional

import numpy as np
from fastapi import APIRouter, HTTPException, Request
from fastapi.responses import Response
from pydantic import Field

from app import figures
from app.csv_table import MAX_BYTES, read_table
from app.errors import InputError
from app.fitting import fit as fit_points
from app.models import SENSOR_CLASSES, build_sensor, field_spec
from app.models.base import Sensor
from app.part_toml import part_to_toml
from app.api.errors import error_response
from app.parts import TOLERANCE_KEYS, Library, Part, part_from_mapping
from app.schemas import Strict
from app.service import clean
from app.api.errors import ERROR_RESPONSES
from app.api.limits import check_save_rate

router = APIRouter(prefix="/api", responses=ERROR_RESPONSES, tags=["parts shelf"])

DEFAULT_NOTES = "Your own part, entered on the parts shelf."
CURVE_POINTS = 161
# Span each kind's curve is drawn over when the part has no fitted range (common practice ranges).
CURVE_SPAN = {"ntc_beta": (-40.0, 125.0), "ntc_sh": (-40.0, 125.0), "rtd": (-200.0, 850.0),
              "ldr": (0.1, 10_000.0), "pot": (0.0, 1.0)}
MODEL_QUANTITY = {"ntc_beta": "temperature", "ntc_sh": "temperature", "rtd": "temperature", "ldr": "illuminance"}
MODEL_TITLES = {"ntc_beta": "NTC, beta model", "ntc_sh": "NTC, Steinhart–Hart",
                "rtd": "Platinum RTD (IEC 60751 curve, fitted R0)", "ldr": "LDR, power law"}


class PartIn(Strict):
    """A user part. Values are checked by the library's part rules (same as TOML files)."""

    name: str = Field(description="Shown in lists and plots", examples=["My bead NTC"])
    notes: Optional[str] = Field(None, description="Where the values come from (default: a note that you entered it)")
    sensor: dict[str, Any] = Field(description="A sensor object of any kind (see the contract)",
                                   examples=[{"kind": "ntc_beta", "r_nominal_ohm": "10k", "beta_k": 3950}])
    tolerances: dict[str, float] = Field(default_factory=dict,
                                         description="Percent: " + ", ".join(TOLERANCE_KEYS))
    dissipation_w_per_k: Optional[float] = Field(None, description="Dissipation constant δ for self-heating, W/K")
    fitted: Optional[dict[str, float]] = Field(None, description="{min, max}: stimulus range a fitted curve is valid over")


class ImportIn(Strict):
    csv: str = Field(description=f"The table as text: header row, °C or lux column, resistance column; at most {MAX_BYTES:,} bytes",
                     examples=["temperature_c, resistance\n0, 32.6k\n25, 10k\n50, 3.6k\n"])
    model: Literal["ntc_beta", "ntc_sh", "ldr", "rtd"] = Field(
        description="ntc_beta, ntc_sh (Steinhart–Hart), ldr (power law) or rtd (IEC 60751 curve with R0 fitted)")
    save: bool = Field(False, description="Also keep the fitted part on the shelf (needs name)")
    name: Optional[str] = None
    notes: Optional[str] = None
    tolerances: dict[str, float] = Field(default_factory=dict)
    dissipation_w_per_k: Optional[float] = None


# --- figures -------------------------------------------------------------

def _log_y(fig: dict) -> dict:
    fig["layout"]["yaxis"]["type"] = "log"
    return fig


def curve_span(part: Part) -> tuple[float, float]:
    lo, hi = CURVE_SPAN[part.kind]
    if part.fitted is not None:
        lo, hi = min(lo, part.fitted[0]), max(hi, part.fitted[1])
    return lo, hi


def part_figure(part: Part) -> dict:
    """Resistance against stimulus (log resistance axis except for pots), fitted range shaded."""
    sensor = build_sensor(part.sensor)
    lo, hi = curve_span(part)
    s = sensor.grid(lo, hi, CURVE_POINTS)
    log_x = part.kind == "ldr"
    shapes, notes = [], []
    if part.fitted is not None:
        shapes.append({"type": "rect", "xref": "x", "yref": "paper", "x0": part.fitted[0], "x1": part.fitted[1],
                       "y0": 0, "y1": 1, "fillcolor": "#0b6e69", "opacity": 0.08, "line": {"width": 0}})
        notes.append({"x": float(np.sqrt(part.fitted[0] * part.fitted[1])) if log_x else sum(part.fitted) / 2,
                      "y": 1.0, "xref": "x", "yref": "paper", "text": "fitted range", "showarrow": False,
                      "yanchor": "bottom", "font": {"size": 11, "color": "#0b6e69"}})
    fig = figures.figure([figures.trace(s, sensor.resistance(s), part.name, 0)], sensor.axis_title,
                         "Resistance (Ω)", log_x=log_x, shapes=shapes, annotations=notes)
    return fig if part.kind == "pot" else _log_y(fig)


def fit_figures(sensor: Sensor, stimulus: np.ndarray, ohm: np.ndarray, residuals: np.ndarray) -> dict[str, dict]:
    log_x = sensor.kind == "ldr"
    s = sensor.grid(float(np.min(stimulus)), float(np.max(stimulus)), CURVE_POINTS)
    table = figures.trace(stimulus, ohm, "table", 1, mode="markers", marker={"size": 7, "color": figures.PALETTE[1]})
    curve = figures.trace(s, sensor.resistance(s), "fitted model", 0)
    fit_fig = _log_y(figures.figure([curve, table], sensor.axis_title, "Resistance (Ω)", log_x=log_x))
    unit = "decades of lux" if sensor.kind == "ldr" else "°C"
    zero = [{"type": "line", "xref": "paper", "x0": 0, "x1": 1, "yref": "y", "y0": 0, "y1": 0,
             "line": {"color": "#5b6670", "width": 1}}]
    res_fig = figures.figure(
        [figures.trace(stimulus, residuals, "model − table", 1, mode="lines+markers", marker={"size": 6})],
        sensor.axis_title, f"Residual ({unit})", log_x=log_x, shapes=zero)
    return {"fit": fit_fig, "residuals": res_fig}


# --- orchestration (plain functions: the page builds its data with them) ---

def shelf_view(library: Library) -> dict[str, Any]:
    """Every part with its curve, the parameter fields of each kind, and library load problems."""
    kinds = {}
    for kind in SENSOR_CLASSES:
        required, optional = field_spec(kind)
        kinds[kind] = {"fields": [*required, *optional], "required": required, "optional": optional,
                       "quantity": SENSOR_CLASSES[kind].quantity}
    parts = [{**p.to_dict(), "figure": part_figure(p), "axis_title": SENSOR_CLASSES[p.kind].axis_title}
             for p in library.all()]
    return {"parts": parts, "kinds": kinds, "tolerance_keys": list(TOLERANCE_KEYS),
            "models": MODEL_TITLES, "max_table_bytes": MAX_BYTES, "problems": list(library.problems)}


def fit_table(req: ImportIn) -> dict[str, Any]:
    """Read the table, check it suits the model, fit, and describe the fit."""
    table = read_table(req.csv, field="csv")
    want = MODEL_QUANTITY[req.model]
    if table.quantity != want:
        need = "a lux column" if want == "illuminance" else "a temperature (°C) column"
        raise InputError("model", f"the {MODEL_TITLES[req.model]} fit needs {need}; the table's stimulus is {table.quantity} ({table.unit})")
    cls = SENSOR_CLASSES[req.model]
    outside = np.flatnonzero((table.stimulus < cls.stimulus_min) | (table.stimulus > cls.stimulus_max))
    if outside.size:
        k = int(outside[0])
        raise InputError("csv", f"line {int(table.lines[k])}: {table.stimulus[k]:g} {table.unit} is outside the "
                                f"{cls.stimulus_min:g} .. {cls.stimulus_max:g} {table.unit} that the {MODEL_TITLES[req.model]} model covers")
    try:
        result = fit_points(req.model, table.stimulus, table.ohm)
    except InputError as err:
        raise InputError("csv", err.message) from None
    sensor = result.sensor
    if not np.isfinite(result.max_abs_error):
        raise InputError("csv", f"the {MODEL_TITLES[req.model]} model cannot reproduce every row of this table; "
                                "check the model and the table")
    ohm_err = (sensor.resistance(table.stimulus) - table.ohm) / table.ohm * 100.0
    lo, hi = table.span
    return {
        "model": req.model, "quantity": table.quantity, "unit": table.unit, "rows": int(table.stimulus.size),
        "lines": [int(n) for n in table.lines], "stimulus": clean(table.stimulus), "ohm": clean(table.ohm),
        "sensor": sensor.to_dict(), "residuals": clean(result.residuals),
        "residual_unit": "decade" if req.model == "ldr" else "°C",
        "max_abs_error": result.max_abs_error, "max_ohm_error_pct": float(np.max(np.abs(ohm_err))),
        "fitted": {"min": lo, "max": hi},
        "figures": fit_figures(sensor, table.stimulus, table.ohm, result.residuals),
    }


# --- store ------------------------------------------------------------------

def _store(request: Request):
    store = getattr(request.app.state, "store", None)
    if store is None:
        raise HTTPException(503, "the data store is not open; user parts cannot be saved")
    return store


def _keep(request: Request, data: dict[str, Any]) -> Part:
    """Validate (part rules), store and add to the library in one step."""
    from app.store import user_parts

    store = _store(request)
    check_save_rate(request)
    with store.connection() as conn:
        part_id = user_parts.new_id(conn, str(data.get("name") or "part"))
        part = part_from_mapping(part_id, data, origin="user")
        user_parts.save(conn, part.to_dict())
    request.app.state.library.add(part)
    return part


def _part_data(body: Any) -> dict[str, Any]:
    data = body.model_dump(exclude_none=True, include={"name", "notes", "sensor", "tolerances", "dissipation_w_per_k", "fitted"})
    data.setdefault("notes", DEFAULT_NOTES)
    if not data.get("tolerances"):
        data.pop("tolerances", None)
    return data


# --- routes -----------------------------------------------------------------

def _unknown(part_id: str) -> Response:
    return error_response(404, "id", f"no part with id {part_id[:64]!r} in the library")


@router.post("/parts", status_code=201, summary="Create a user part from parameters")
def create_part(body: PartIn, request: Request) -> dict[str, Any]:
    part = _keep(request, _part_data(body))
    return part.to_dict()


@router.post("/parts/import", summary="Fit a part to a CSV table (and optionally keep it)")
def import_part(body: ImportIn, request: Request) -> dict[str, Any]:
    out = fit_table(body)
    if body.save:
        if not (body.name and body.name.strip()):
            raise InputError("name", "is required to save the fitted part")
        data = _part_data(body)
        data["sensor"] = out["sensor"]
        data["fitted"] = out["fitted"]
        if body.notes is None:
            data["notes"] = (f"Fitted by ohmpick ({MODEL_TITLES[body.model]}) to an imported table of {out['rows']} rows "
                             f"over {out['fitted']['min']:g} .. {out['fitted']['max']:g} {out['unit']}; "
                             f"largest error {out['max_abs_error']:.3g} {out['residual_unit']}.")
        out["part"] = _keep(request, data).to_dict()
    return out


@router.delete("/parts/{part_id}", summary="Delete a user part")
def delete_part(part_id: str, request: Request) -> Any:
    from app.store import user_parts

    library: Library = request.app.state.library
    part = library.parts.get(part_id)
    if part is None:
        return _unknown(part_id)
    if part.origin != "user":
        raise HTTPException(409, f"{part_id!r} is a library part (a file in the parts folder); only your own parts can be deleted")
    with _store(request).connection() as conn:
        user_parts.delete(conn, part_id)
    library.remove(part_id)
    return {"deleted": part_id}


@router.get("/parts/{part_id}/toml", summary="A part as TOML in the library's schema",
            response_class=Response, responses={200: {"content": {"application/toml": {}}}})
def part_toml(part_id: str, request: Request) -> Response:
    part = request.app.state.library.parts.get(part_id)
    if part is None:
        return _unknown(part_id)
    return Response(part_to_toml(part), media_type="application/toml; charset=utf-8",
                    headers={"Content-Disposition": f'attachment; filename="{part.id}.toml"'})


@router.get("/view/shelf", tags=["pages"], summary="The parts shelf page's data: every part with its curve")
def shelf_data(request: Request) -> dict[str, Any]:
    return shelf_view(request.app.state.library)
