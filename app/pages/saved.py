"""Saved designs: the list (``/designs``) and a design's read-only page (``/d/{id}``).

``page_data`` builds a design page's data once (headline numbers, input
facts, tables and plotly figures, all recomputed from the stored inputs);
the template renders it and ``GET /api/designs/{id}/view`` is its JSON twin.
A view registered in ``app.api.design_views.VIEWS`` supplies its own ``page``
builder; the Bench's is here.
"""

from __future__ import annotations

import json
from typing import Any, Optional

import numpy as np
from fastapi import APIRouter, HTTPException, Request
from fastapi.responses import HTMLResponse

from app.api import design_views as views
from app.api import designs as api
from app.pages.routes import error_page
from app.pages.templating import templates
from app.parts import Library
from app.store import designs as store
from app.bench_view import FIELD_TEXT
from app.errors import InputError
from app.units import format_resistance, parse_resistance

router = APIRouter()


def si(value: Optional[float], unit: str, digits: int = 4) -> str:
    """Engineering notation with a prefix (0.0012 W → 1.2 mW)."""
    if value is None or not np.isfinite(value):
        return "—"
    if value == 0:
        return f"0 {unit}"
    for scale, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n")):
        if abs(value) >= scale * 0.99995:
            break
    return f"{value / scale:.{digits}g} {prefix}{unit}"


def ohm(value: Optional[float], digits: int = 3) -> str:
    return "—" if value is None else format_resistance(value, digits)


def _score(out: dict, value: Optional[float]) -> str:
    unit = out["units"]["score"]
    return "—" if value is None else (f"{value:.3g} %" if unit == "%" else si(value, unit))


def _number_rows(out: dict, rows: list[dict]) -> list[list[str]]:
    """One row per quantity, one column per resistor shown (the Bench's own numbers)."""
    sens = out["units"]["sensitivity"]
    unit = out["units"]["stimulus"]
    lo, hi = out["range"]["min"], out["range"]["max"]
    spec = [
        (f"Output at {lo:g} {unit}", lambda r: si(r["ends_v"]["min"], "V")),
        (f"Output at {hi:g} {unit}", lambda r: si(r["ends_v"]["max"], "V")),
        ("Swing", lambda r: si(r["metrics"]["swing_v"], "V")),
        ("Nonlinearity (end-point)", lambda r: "—" if r["metrics"]["nonlinearity_pct"] is None else f"{r['metrics']['nonlinearity_pct']:.3g} %"),
        ("Worst sensitivity", lambda r: si(r["metrics"]["min_sensitivity"], sens)),
        ("Largest sensor power", lambda r: si(r["metrics"]["max_sensor_power_w"], "W")),
    ]
    if any(r.get("self_heating_c") is not None for r in rows):
        spec.append(("Self-heating at that power", lambda r: "—" if r.get("self_heating_c") is None else f"{r['self_heating_c']:.2g} °C"))
    return [[label, *[fn(r) for r in rows]] for label, fn in spec]


def _resistance(value: Any) -> str:
    try:
        return format_resistance(parse_resistance(value))
    except InputError:
        return str(value)


def _parameters(sensor: dict) -> str:
    """A sensor's parameters in words, with units (labels from the Bench's form)."""
    out = []
    for key, value in sensor["parameters"].items():
        if key == "kind" or value is None:
            continue
        label, unit, _ = FIELD_TEXT.get(f"{sensor['kind']}.{key}", (key, "", ""))
        if key.endswith("_ohm"):
            text = _resistance(value)
        elif isinstance(value, float):
            text = f"{value:.6g} {unit}".strip()
        else:
            text = str(value)
        out.append(f"{label} {text}")
    return ", ".join(out)


def _facts(inputs: dict, out: dict) -> list[dict[str, str]]:
    sensor, c = out["sensor"], inputs.get("circuit") or {}
    limits = inputs.get("limits") or {}
    facts = [
        {"label": "Sensor", "value": sensor["label"] + (f" (part {sensor['part']})" if sensor.get("part") else "")},
        {"label": sensor["kind_label"], "value": _parameters(sensor)},
        {"label": "Supply", "value": si(float(c.get("supply_v", 0)), "V")},
        {"label": "Sensor position", "value": "the pot is the whole divider" if out["mode"] == "divider"
         else f"{c.get('sensor_at', 'bottom')} of the divider"},
        {"label": "Range", "value": f"{out['range']['min']:g} .. {out['range']['max']:g} {sensor['stimulus_unit']}"},
        {"label": "Objective", "value": f"{out['objective']['label']} ({inputs.get('series', 'E24')})"},
        {"label": "Load on the output", "value": _resistance(c["load_ohm"]) if c.get("load_ohm") is not None else "none"},
        {"label": "Resistor across the sensor",
         "value": _resistance(c["parallel_ohm"]) if c.get("parallel_ohm") is not None else "none"},
    ]
    if limits:
        text = f"{_resistance(limits.get('min_ohm', 1))} .. {_resistance(limits.get('max_ohm', 1e7))}"
        if limits.get("max_sensor_power_w"):
            text += f", sensor power ≤ {si(float(limits['max_sensor_power_w']), 'W')}"
        facts.append({"label": "Search limits", "value": text})
    if inputs.get("override_ohm") is not None:
        facts.append({"label": "Your resistor", "value": _resistance(inputs["override_ohm"])})
    return facts


def bench_page(inputs: dict, result: dict, library: Library) -> dict:
    """The Bench's own numbers and plots for a saved Bench design, laid out read-only."""
    out = views.bench_page_data(inputs, library)
    figs = [
        {"id": "plot-output", "title": "Output versus stimulus", "name": "output", "figure": out["figures"]["output"]},
        {"id": "plot-sensitivity", "title": "Sensitivity versus stimulus", "name": "sensitivity",
         "figure": out["figures"]["sensitivity"]},
    ]
    if out["mode"] == "divider":
        d = out["divider"]
        rows = _number_rows(out, [{**d, "self_heating_c": None}])
        rows.append(["Largest source resistance", ohm(d["max_thevenin_ohm"])])
        if d.get("loading"):
            rows.append(["Largest drop from the load", si(d["loading"]["max_drop_v"], "V")])
        headline = [{"label": "Pot as the whole divider", "value": si(d["metrics"]["swing_v"], "V") + " swing",
                     "id": "recommended"}]
        tables = [{"title": "Numbers over the range", "columns": ["", "Divider"], "rows": rows, "picked": None}]
    else:
        solve = out["solve"]
        shown = [out["recommended"], out["exact"]] + ([out["override"]] if out.get("override") else [])
        columns = ["", "Recommended", "Exact optimum"] + (["Your resistor"] if out.get("override") else [])
        headline = [
            {"label": f"Recommended fixed resistor ({solve['series']})", "value": ohm(solve["fixed_ohm"]), "id": "recommended"},
            {"label": "Exact optimum", "value": ohm(solve["exact_ohm"], 4)},
            {"label": out["objective"]["label"], "value": _score(out, solve["score"])},
        ]
        if out.get("override"):
            o = out["override"]
            worse = "" if o["worse_pct"] is None else f" ({o['worse_pct']:.2g} % worse)" if o["worse_pct"] > 0 else " (as good or better)"
            headline.append({"label": "Your resistor", "value": o["label"] + worse})
        ranked = [out["recommended"], *out["runners_up"]]
        cand_rows = [[r["label"], _score(out, r["score"]),
                      "best" if i == 0 else ("—" if r["worse_pct"] is None else f"{r['worse_pct']:.2g} % worse")]
                     for i, r in enumerate(ranked)]
        tables = [
            {"title": "Numbers over the range", "columns": columns, "rows": _number_rows(out, shown), "picked": None},
            {"title": f"Best {solve['series']} values", "columns": ["Fixed resistor", out["objective"]["label"], "Against the best"],
             "rows": cand_rows, "picked": 0},
        ]
    notices = [n for n in out.get("notices", []) if n.get("code") != "mains"]
    return {"headline": headline, "facts": _facts(inputs, out), "tables": tables, "figures": figs,
            "notices": notices, "caution": any(n.get("code") == "mains" for n in out.get("notices", []))}


views.register("bench", page=bench_page)


def page_data(request: Request, design_id: str) -> dict[str, Any]:
    """Everything the design page shows; HTTPException 404 for an unknown id."""
    design = api.load(request, design_id)
    loaded = views.recompute(design, request.app.state.library)
    view = loaded.view
    data: dict[str, Any] = {
        "design": api.summary(request, design),
        "view_label": view.label if view else design.view,
        "copy_url": f"{view.open_path if view else '/'}?copy={design.id}",
        "export_url": f"/api/designs/{design.id}/export",
        "api_url": f"/api/designs/{design.id}",
        "inputs": design.inputs,
        "problem": loaded.problem,
        "result": loaded.result,
        "headline": [], "facts": [], "tables": [], "figures": [], "caution": False,
        "notices": [{"level": "warn", "text": w} for w in (loaded.result or {}).get("warnings", [])],
    }
    if loaded.result is not None and view is not None and view.page is not None:
        try:
            data.update(view.page(design.inputs, loaded.result, loaded.library))
        except Exception as err:  # a page bug must not hide the design: inputs and result still show
            views.log.exception("page of design %s failed", design.id)
            data["problem"] = views.problem_of(err)
    data["notices"] = [{"level": "warn", "text": n} for n in loaded.notes] + data["notices"]
    return data


def _script_data(data: dict) -> dict:
    """What the page script needs; everything else is rendered as HTML."""
    return {"id": data["design"]["id"], "name": data["design"]["name"], "api_url": data["api_url"],
            "figures": [{"id": f["id"], "figure": f["figure"]} for f in data["figures"]],
            "limits": {"name": api.MAX_NAME, "notes": api.MAX_NOTES}}


@router.get("/designs", response_class=HTMLResponse, name="saved_list_page", include_in_schema=False)
def saved_list(request: Request, name: str = ""):
    name = name.strip()[: api.MAX_NAME]
    with request.app.state.store.connection() as conn:
        found = store.list_designs(conn, name)
        total = store.count(conn)
    return templates.TemplateResponse(request, "saved_list.html", {
        "designs": [api.summary(request, d) for d in found], "name": name, "total": total,
        "data": {"name": name, "limits": {"name": api.MAX_NAME, "notes": api.MAX_NOTES}},
    })


@router.get("/d/{design_id}", response_class=HTMLResponse, name="saved_design_page", include_in_schema=False)
def saved_design(request: Request, design_id: str):
    try:
        data = page_data(request, design_id)
    except HTTPException:
        return error_page(request, 404, "No such saved design",
                          f"There is no saved design with the id “{design_id[:40]}”. Its owner may have deleted it, "
                          "or the link was cut short when it was copied.")
    return templates.TemplateResponse(request, "saved_design.html", {
        "page": data, "inputs_text": json.dumps(data["inputs"], indent=2, ensure_ascii=False),
        "result_text": json.dumps(data["result"], indent=2, ensure_ascii=False) if data["result"] else "",
        "data": _script_data(data),
    })
