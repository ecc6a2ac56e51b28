"""Several sensors side by side in one divider.

``POST /api/compare`` (contract): 2 to 6 sensors or parts over one range,
supply, load, objective and series. Without ``circuit.fixed_ohm`` each gets
its own best series value (the solver of ``POST /api/solve``); with it, all
share that resistor and are scored on it. Rows come back in the order given.

Only sensors of one stimulus quantity compare: all temperature (°C), all
light (lux) or all potentiometers (travel). Scores, slopes and resolutions
of different quantities are in different units and do not rank.

``POST /api/view/compare`` adds what the page draws: overlaid output,
|slope| and resolution per LSB (LSB / |dVout/ds|, ideal converter of
``app/adc.py``), and each row's worst resolution.
"""

from __future__ import annotations

from typing import Any, Literal, Optional

import numpy as np
from fastapi import APIRouter, Request
from pydantic import BaseModel, Field

from app import constants as K
from app import figures, schemas, service
from app.adc import Adc
from app.api.design_views import register
from app.circuit import respond
from app.errors import InputError
from app.models.base import Sensor
from app.parts import Library
from app.solver import Limits, Problem, solve as solve_problem
from app.units import format_resistance
from app.api.errors import ERROR_RESPONSES

router = APIRouter(prefix="/api", responses=ERROR_RESPONSES, tags=["compare"])

MIN_SENSORS, MAX_SENSORS = 2, 6
VIEW_POINTS = 201
QUANTITY_WORDS = {"temperature": "a temperature sensor (°C)", "illuminance": "a light sensor (lux)",
                  "position": "a potentiometer (travel)"}
SLOPE_UNIT = {"temperature": "V/°C", "illuminance": "V/decade", "position": "V/travel"}
RESOLUTION_UNIT = {"temperature": "°C/LSB", "illuminance": "decade/LSB", "position": "travel/LSB"}
_ERRORS = {422: {"description": "Invalid input: the message names the field"}, 404: {"description": "Unknown part"}}


class CompareIn(schemas.Strict):
    sensors: list[schemas.SensorIn] = Field(min_length=MIN_SENSORS, max_length=MAX_SENSORS,
                                            description="2 to 6 sensor objects or {part: id}, all of one stimulus quantity")
    labels: Optional[list[str]] = Field(None, max_length=MAX_SENSORS,
                                        description="Names for the rows (default: the part's name or a description)")
    circuit: schemas.CircuitIn = Field(description="fixed_ohm absent: each its own best value; present: all share it")
    range: schemas.RangeIn
    objective: K.Objective = "swing"
    series: K.SeriesName = "E24"
    limits: schemas.LimitsIn = Field(default_factory=schemas.LimitsIn)


class AdcIn(schemas.Strict):
    bits: int = Field(12, description="Converter resolution, 8 to 24 bits")
    ratiometric: bool = Field(True, description="Reference is the divider supply")
    vref_v: Optional[float] = Field(None, description="Reference voltage when not ratiometric, V")


class CompareViewIn(CompareIn):
    adc: AdcIn = Field(default_factory=AdcIn)


class CompareDesignInputs(CompareViewIn):
    """What a saved comparison keeps (``POST /api/designs`` with ``view: "compare"``)."""

    view: Literal["compare"] = "compare"


class CompareRow(BaseModel):
    label: str
    sensor: dict[str, Any]
    part: Optional[str] = None
    fixed_ohm: float
    exact_ohm: Optional[float] = None
    score: Optional[float]
    metrics: dict[str, Optional[float]]
    warnings: list[str] = Field(default_factory=list)


class CompareOut(BaseModel):
    rows: list[CompareRow]
    objective: str
    series: str
    shared_fixed: bool = Field(description="True when every row uses the one circuit.fixed_ohm")
    quantity: str
    slope_unit: str
    warnings: list[str] = Field(default_factory=list, description="All rows' warnings, e.g. a fitted part used outside its fitted range")


def describe(sensor: Sensor) -> str:
    """A short row label for a sensor given by parameters."""
    d = sensor.to_dict()
    if sensor.kind == "ntc_beta":
        return f"NTC {format_resistance(d['r_nominal_ohm'])}, B {d['beta_k']:g} K"
    if sensor.kind == "ntc_sh":
        return f"NTC (Steinhart–Hart) {format_resistance(float(sensor.resistance(np.array(25.0))))} at 25 °C"
    if sensor.kind == "rtd":
        return f"Platinum RTD, R0 {format_resistance(d['r0_ohm'])}"
    if sensor.kind == "ldr":
        return f"LDR {format_resistance(d['r_ref_ohm'])} at {d['lux_ref']:g} lx, γ {d['gamma']:g}"
    return f"Pot {format_resistance(d['r_total_ohm'])} {d['taper']} ({d['wiring']})"


def _labels(req: CompareIn, sensors: list[Sensor], library: Library) -> list[str]:
    if req.labels is not None and len(req.labels) != len(req.sensors):
        raise InputError("labels", f"gives {len(req.labels)} names for {len(req.sensors)} sensors")
    out: list[str] = []
    for i, (spec, sensor) in enumerate(zip(req.sensors, sensors)):
        if req.labels is not None and req.labels[i].strip():
            label = req.labels[i].strip()[:80]
        elif isinstance(spec, schemas.PartRef):
            label = library.get(spec.part).name
        else:
            label = describe(sensor)
        base, n = label, 2
        while label in out:  # the table and legend need distinct names
            label, n = f"{base} #{n}", n + 1
        out.append(label)
    return out


def _one_quantity(sensors: list[Sensor]) -> str:
    first = sensors[0].quantity
    for i, sensor in enumerate(sensors[1:], start=1):
        if sensor.quantity != first:
            raise InputError(
                f"sensors.{i}",
                f"is {QUANTITY_WORDS[sensor.quantity]} but sensors.0 is {QUANTITY_WORDS[first]}: "
                "a comparison needs one stimulus unit, so compare temperature sensors, light sensors "
                "or potentiometers among themselves",
            )
    return first


def _for_row(err: InputError, i: int, label: str) -> InputError:
    """A per-sensor core error, re-rooted on that sensor (range errors say which sensor)."""
    if err.field.startswith("sensor"):
        rest = err.field[len("sensor"):]
        return InputError(f"sensors.{i}{rest}", err.message)
    return InputError(err.field, f"{err.message} (sensors.{i}, {label})")


def _setup(req: CompareIn, library: Library):
    sensors = [service.sensor_of(spec, library, f"sensors.{i}") for i, spec in enumerate(req.sensors)]
    quantity = _one_quantity(sensors)
    labels = _labels(req, sensors, library)
    circuit = service.circuit_of(req.circuit)
    limits = Limits(**req.limits.model_dump())
    problems = []
    for i, (sensor, label) in enumerate(zip(sensors, labels)):
        try:
            problems.append(Problem(sensor, circuit, req.range.min, req.range.max, req.objective, limits))
        except InputError as err:
            raise _for_row(err, i, label) from None
    return sensors, labels, circuit, problems, quantity


def compare(req: CompareIn, library: Library) -> dict[str, Any]:
    return _compare(req, library)[0]


def _compare(req: CompareIn, library: Library):
    sensors, labels, circuit, problems, quantity = _setup(req, library)
    shared = circuit.fixed_ohm is not None
    rows, everything = [], []
    for i, (spec, sensor, label, problem) in enumerate(zip(req.sensors, sensors, labels, problems)):
        warnings = service.range_warnings(spec, req.range.min, req.range.max, library)
        if shared:
            found, feasible, extra = problem.score(np.array([circuit.fixed_ohm]))
            fixed, exact, score = circuit.fixed_ohm, None, float(found[0])
            metrics = {name: float(v[0]) for name, v in extra.items()}
            if not feasible[0] and problem.limits.max_sensor_power_w is not None:
                warnings.append(f"{label}: sensor power {metrics['max_sensor_power_w']:.3g} W exceeds "
                                f"limits.max_sensor_power_w with the shared {format_resistance(fixed)}")
        else:
            try:
                sol = solve_problem(problem, req.series)
            except InputError as err:
                raise _for_row(err, i, label) from None
            fixed, exact, score, metrics = sol.fixed_ohm, sol.exact_ohm, sol.score, sol.metrics
        rows.append({
            "label": label, "sensor": sensor.to_dict(),
            "part": spec.part if isinstance(spec, schemas.PartRef) else None,
            "fixed_ohm": fixed, "exact_ohm": exact, "score": _finite(score),
            "metrics": {k: _finite(v) for k, v in metrics.items()}, "warnings": warnings,
        })
        everything += warnings
    out = {"rows": rows, "objective": req.objective, "series": req.series,
           "shared_fixed": shared, "quantity": quantity, "slope_unit": SLOPE_UNIT[quantity], "warnings": everything}
    return out, sensors, labels, circuit


def _finite(value: float) -> Optional[float]:
    return float(value) if np.isfinite(value) else None


def _overlay(x, ys: np.ndarray, y_title: str, log_y: bool = False) -> dict:
    """One trace per sensor (rows of ``ys``, shape (k, n)) over the shared stimulus grid."""
    s, x_title, log_x, labels = x
    fig = figures.figure([figures.trace(s, y, label, i) for i, (y, label) in enumerate(zip(ys, labels))],
                         x_title, y_title, log_x=log_x)
    if log_y:
        fig["layout"]["yaxis"]["type"] = "log"
    return fig


def compare_view(req: CompareViewIn, library: Library) -> dict[str, Any]:
    """The comparison plus the page's three overlaid figures."""
    adc = Adc(req.adc.bits, req.adc.ratiometric, req.adc.vref_v)
    out, sensors, labels, circuit = _compare(req, library)
    quantity = out["quantity"]
    s = sensors[0].grid(req.range.min, req.range.max, VIEW_POINTS)
    fixed = np.array([row["fixed_ohm"] for row in out["rows"]])
    lsb = adc.lsb(circuit.supply_v)
    vout = np.empty((len(sensors), s.size))
    slope = np.empty_like(vout)
    for i, sensor in enumerate(sensors):  # one broadcast per sensor over every point
        resp = respond(sensor, circuit, s, fixed[i])
        vout[i], slope[i] = resp.vout_v, np.abs(resp.sensitivity)
    with np.errstate(divide="ignore"):
        resolution = np.where(slope > 0, lsb / slope, np.inf)
    vref = adc.reference(circuit.supply_v)
    for i, row in enumerate(out["rows"]):
        row["worst_resolution"] = _finite(float(np.max(resolution[i])))
        if np.max(vout[i]) > vref:
            note = (f"{labels[i]}: output reaches {np.max(vout[i]):.3g} V, above the {vref:g} V reference; "
                    "the converter clips there")
            row["warnings"].append(note)
            out["warnings"].append(note)
    x = (s, sensors[0].axis_title, quantity == "illuminance", labels)
    res_unit = RESOLUTION_UNIT[quantity]
    out["figures"] = {
        "output": _overlay(x, vout, "Output (V)"),
        "sensitivity": _overlay(x, slope, f"|Slope| ({SLOPE_UNIT[quantity]})"),
        "resolution": _overlay(x, resolution, f"Resolution ({res_unit}, {req.adc.bits}-bit)", log_y=True),
    }
    out["lsb_v"] = lsb
    out["resolution_unit"] = res_unit
    out["adc"] = {"bits": adc.bits, "ratiometric": adc.ratiometric, "vref_v": vref}
    return out


# --- saved comparisons (the designs registry) -------------------------------

def design_result(inputs: dict, library: Library) -> dict[str, Any]:
    """A saved comparison recomputed: rows, warnings, worst resolution (figures on its page)."""
    view = compare_view(CompareDesignInputs.model_validate(inputs), library)
    view.pop("figures")
    return view


def design_kind(inputs: dict, library: Library) -> str:
    sensors = inputs.get("sensors") or []
    return f"comparison of {len(sensors)} parts"


def _si(value: Optional[float], unit: str) -> str:
    if value is None:
        return "—"
    for scale, prefix in ((1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n")):
        if abs(value) >= scale * 0.99995:
            break
    return f"{value / scale:.4g} {prefix}{unit}"


def design_page(inputs: dict, result: dict, library: Library) -> dict[str, Any]:
    """The read-only page of a saved comparison: best part, inputs, metrics, the three plots."""
    req = CompareDesignInputs.model_validate(inputs)
    view = compare_view(req, library)
    rows, q = view["rows"], view["quantity"]
    unit = {"temperature": "°C", "illuminance": "lx", "position": "of travel"}[q]
    score_unit = {"swing": "V", "linearity": "%"}.get(req.objective, view["slope_unit"])
    scored = [r for r in rows if r["score"] is not None]
    best = (min if req.objective == "linearity" else max)(scored, key=lambda r: r["score"]) if scored else None
    headline = []
    if best is not None:
        headline.append({"label": f"Best by {req.objective}", "value": best["label"], "id": "best-part"})
        headline.append({"label": "Its score", "value": _si(best["score"], score_unit) if score_unit != "%" else f"{best['score']:.3g} %"})
    c = req.circuit
    facts = [{"label": f"Part {i + 1}", "value": r["label"]} for i, r in enumerate(rows)]
    facts += [
        {"label": "Range", "value": f"{req.range.min:g} .. {req.range.max:g} {unit}"},
        {"label": "Supply", "value": f"{c.supply_v:g} V, sensor at the {c.sensor_at}"},
        {"label": "Load on the output", "value": format_resistance(c.load_ohm) if c.load_ohm else "none"},
        {"label": "Fixed resistor", "value": f"shared {format_resistance(c.fixed_ohm)}" if c.fixed_ohm
         else f"each its best {req.series} value"},
        {"label": "Objective", "value": req.objective},
        {"label": "Converter", "value": f"{view['adc']['bits']}-bit, "
         + ("ratiometric" if view["adc"]["ratiometric"] else f"{view['adc']['vref_v']:g} V reference")},
    ]
    columns = ["Part", "Fixed resistor", f"Score ({score_unit})", "Swing (V)", "Nonlinearity (%)",
               f"Worst sensitivity ({view['slope_unit']})", f"Worst resolution ({view['resolution_unit']})",
               "Max sensor power"]
    table_rows = [[r["label"], format_resistance(r["fixed_ohm"]), _num(r["score"]), _num(r["metrics"]["swing_v"]),
                   _num(r["metrics"]["nonlinearity_pct"], 3), _num(r["metrics"]["min_sensitivity"]),
                   _num(r["worst_resolution"], 3), _si(r["metrics"]["max_sensor_power_w"], "W")] for r in rows]
    figs = view["figures"]
    return {
        "headline": headline, "facts": facts,
        "tables": [{"title": "Metrics", "columns": columns, "rows": table_rows,
                    "picked": rows.index(best) if best is not None else None}],
        "figures": [
            {"id": "plot-output", "title": "Output voltage", "name": "compare-output", "figure": figs["output"]},
            {"id": "plot-sensitivity", "title": "Sensitivity (slope of the output)", "name": "compare-sensitivity",
             "figure": figs["sensitivity"]},
            {"id": "plot-resolution", "title": f"Resolution per LSB ({view['adc']['bits']}-bit)",
             "name": "compare-resolution", "figure": figs["resolution"]},
        ],
        "caution": q != "temperature",
    }


def _num(value: Optional[float], digits: int = 4) -> str:
    return "—" if value is None else f"{value:.{digits}g}"


register("compare", design_result, kind=design_kind, page=design_page, label="Compare page", open_path="/compare")


@router.post("/compare", response_model=CompareOut, responses=_ERRORS,
             summary="Compare 2 to 6 sensors in one divider (each its best resistor, or one shared)")
def compare_route(body: CompareIn, request: Request) -> dict[str, Any]:
    return compare(body, request.app.state.library)


@router.post("/view/compare", responses=_ERRORS, tags=["pages"],
             summary="The Compare page's data: rows, worst resolution and the overlaid figures")
def compare_view_route(body: CompareViewIn, request: Request) -> dict[str, Any]:
    return compare_view(body, request.app.state.library)
