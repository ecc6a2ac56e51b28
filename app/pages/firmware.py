"""The Firmware page: ADC code → stimulus tables, their errors and the C header.

The page's data is built once here (the form's choices, the opening design
and its view from :func:`app.table_view.view`); the script redraws from
``POST /api/table/view`` on every change and downloads from ``POST /api/table``.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from app import tables
from app.bench_view import form_meta
from app.models import SENSOR_CLASSES
from app.parts import Library
from app.table_export import DEFAULT_SCALE
from app.table_request import TableIn, compute
from app.table_view import view
from app.pages.templating import templates

router = APIRouter()

DEMO_PART = "demo-ntc-10k-b3950"
# A starting error bound per axis unit when the engineer switches kind (a tenth of a degree is common practice).
DEFAULT_BOUND = {"°C": 0.1, "decade": 0.01, "travel": 0.001}


def demo_inputs(library: Library) -> dict[str, Any]:
    """A 10 kΩ NTC under a 10 kΩ resistor into a 12-bit ratiometric converter."""
    sensor: dict[str, Any] = {"part": DEMO_PART}
    if DEMO_PART not in {p.id for p in library.all()}:
        sensor = {"kind": "ntc_beta", "r_nominal_ohm": 10_000, "beta_k": 3950, "t_nominal_c": 25}
    return {
        "sensor": sensor,
        "circuit": {"supply_v": 3.3, "sensor_at": "bottom", "fixed_ohm": "10k"},
        "adc": {"bits": 12, "ratiometric": True},
        "step": 32,
        "error_bound": 0.1,
        "poly_degree": 3,
        "table": "uniform",
    }


def kind_defaults() -> dict[str, Any]:
    """Per kind: the default working range, the error unit, a starting bound and the fixed-point scale."""
    out = {}
    for kind, cls in SENSOR_CLASSES.items():
        lo, hi = tables.default_range(cls)
        out[kind] = {"range": [lo, hi], "unit": cls.stimulus_unit, "error_unit": cls.axis_unit,
                     "scale": DEFAULT_SCALE[cls.axis_unit], "bound": DEFAULT_BOUND[cls.axis_unit]}
    return out


def page_data(library: Library) -> dict[str, Any]:
    inputs = demo_inputs(library)
    meta = form_meta(library)
    return {
        "inputs": inputs,
        "view": view(compute(TableIn.model_validate(inputs), library)),
        "kinds": meta["kinds"],
        "parts": meta["parts"],
        "defaults": kind_defaults(),
        "limits": {"min_bits": tables.MIN_TABLE_BITS, "max_bits": tables.MAX_TABLE_BITS,
                   "max_degree": tables.MAX_POLY_DEGREE, "max_entries": tables.MAX_TABLE_ENTRIES},
    }


@router.get("/firmware", response_class=HTMLResponse, include_in_schema=False)
def firmware_page(request: Request):
    return templates.TemplateResponse(request, "firmware.html", {"data": page_data(request.app.state.library)})
