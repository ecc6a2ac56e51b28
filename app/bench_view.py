"""The Bench page's data: one function from the page's inputs to everything it shows.

``build(inputs, library)`` is called by the page route for the first render
(embedded as JSON) and by ``POST /api/view/bench`` on every change (the
page's JSON twin). It solves for the fixed resistor, scores the recommended
value, the exact optimum, the runners-up and an optional override on the
objective's own 401-point grid, and builds the plotly figures.

A potentiometer wired as a divider has no fixed resistor: the view then shows
its output with and without the load instead (``mode == "divider"``).
"""

from __future__ import annotations

import json
import threading
from collections import OrderedDict

from typing import Any, Optional

import numpy as np
from pydantic import BaseModel, Field

from app import constants as K
from app import objectives, schemas, series, service
from app.circuit import Circuit, needs_fixed, respond
from app.figures import PALETTE, figure, trace
from app.models import SENSOR_CLASSES, field_spec
from app.models.base import Sensor
from app.parts import Library, Part
from app.units import format_resistance

PLOT_POINTS = 201
LEGEND_PX = 84  # fits "4.75 kΩ (yours)" at 11 px; two entries share a row even on a phone
# IEC 61140 extra-low-voltage ceiling (120 V ripple-free DC; 50 V AC): above it the
# divider itself sits at a dangerous voltage.
ELV_LIMIT_V = 50.0
DEMO_PART = "demo-ntc-10k-b3950"
OVERRIDE_INDEX = len(PALETTE) - 1  # black: the engineer's own value stands apart

KIND_LABELS = {
    "ntc_beta": "NTC thermistor (B value)",
    "ntc_sh": "NTC thermistor (Steinhart–Hart)",
    "rtd": "Platinum RTD (IEC 60751)",
    "ldr": "Light-dependent resistor",
    "pot": "Potentiometer",
}
# kind.field: (label, unit shown beside the label, hint)
FIELD_TEXT = {
    "ntc_beta.r_nominal_ohm": ("Nominal resistance", "Ω", "at the nominal temperature: 10k, 4k7, 10 kΩ"),
    "ntc_beta.beta_k": ("B value", "K", "e.g. B25/85 from the part's data"),
    "ntc_beta.t_nominal_c": ("Nominal temperature", "°C", "where the nominal resistance holds"),
    "ntc_sh.a": ("Coefficient a", "1/K", "1/T = a + b·ln R + c·(ln R)³"),
    "ntc_sh.b": ("Coefficient b", "1/K", ""),
    "ntc_sh.c": ("Coefficient c", "1/K", ""),
    "rtd.r0_ohm": ("R0 (at 0 °C)", "Ω", "100 for Pt100, 1k for Pt1000"),
    "rtd.a": ("Coefficient A", "1/°C", "IEC 60751 default"),
    "rtd.b": ("Coefficient B", "1/°C²", "IEC 60751 default"),
    "rtd.c": ("Coefficient C", "1/°C⁴", "below 0 °C only; IEC 60751 default"),
    "ldr.r_ref_ohm": ("Resistance at the reference light", "Ω", "e.g. 20k"),
    "ldr.gamma": ("Slope γ", "", "log10 R per decade of lux, typically 0.5 to 1"),
    "ldr.lux_ref": ("Reference illuminance", "lx", ""),
    "ldr.r_dark_ohm": ("Dark resistance", "Ω", "optional: in parallel with the power law"),
    "pot.r_total_ohm": ("Track resistance", "Ω", "end to end"),
    "pot.taper": ("Taper", "", ""),
    "pot.wiring": ("Wiring", "", "divider: ends across the supply, output at the wiper, no fixed resistor; rheostat: in series with one"),
    "pot.mid_fraction": ("Resistance at mid-travel", "fraction", "log taper only; 0.1 to 0.15 is usual"),
}
CHOICE_TEXT = {
    "taper": [("linear", "Linear"), ("log", "Log (audio)")],
    "wiring": [("divider", "Divider"), ("rheostat", "Rheostat")],
}
# Starting values when the engineer switches to a kind (typical, invented).
EXAMPLES = {
    "ntc_beta": {"r_nominal_ohm": "10k", "beta_k": 3950},
    "ntc_sh": {"a": 1.19855538756e-3, "b": 2.21544576321e-4, "c": 1.47136378086e-7},
    "rtd": {"r0_ohm": "100"},
    "ldr": {"r_ref_ohm": "20k", "gamma": 0.7},
    "pot": {"r_total_ohm": "10k"},
}
RANGE_DEFAULTS = {"ntc_beta": (0.0, 100.0), "ntc_sh": (0.0, 100.0), "rtd": (0.0, 200.0), "ldr": (1.0, 1000.0), "pot": (0.0, 1.0)}
OBJECTIVE_TEXT = {
    "swing": ("Largest swing", "Most volts between the two ends of the range"),
    "linearity": ("Straightest response", "Least end-point nonlinearity, % of the swing"),
    "sensitivity": ("Best worst-case slope", "Largest smallest |dVout/ds| over the range"),
    "accuracy": ("Most accurate reading", "Smallest worst-case error over the range, all tolerances and ½ LSB"),
}
SERIES_CHOICES = [*series.SERIES_NAMES, "exact"]


class BenchIn(schemas.Strict):
    """The Bench page's inputs: the JSON shape of a saved design."""

    name: Optional[str] = Field(None, max_length=200, description="Design name (not used in the computation)")
    sensor: schemas.SensorIn
    circuit: schemas.CircuitIn
    range: schemas.RangeIn
    objective: K.Objective = "swing"
    series: K.SeriesName = "E24"
    limits: schemas.LimitsIn = Field(default_factory=schemas.LimitsIn)
    override_ohm: Optional[schemas.Ohm] = Field(None, description="A fixed resistor of your own to compare with the recommendation")
    adc: Optional[schemas.ConverterIn] = Field(None, description="accuracy objective only: the converter")
    tolerances: Optional[schemas.PartTolerancesIn] = Field(None, description="accuracy objective only: part tolerances")
    dissipation_w_per_k: Optional[float] = Field(None, gt=0, le=10, description="accuracy objective only: δ in W/K")


class BenchOut(BaseModel):
    mode: str = Field(description="'solve', or 'divider' for a pot wired as a divider (no fixed resistor)")
    sensor: dict[str, Any]
    units: dict[str, str]
    objective: dict[str, Any]
    range: dict[str, float]
    solve: Optional[dict[str, Any]] = Field(None, description="The POST /api/solve response for these inputs")
    recommended: Optional[dict[str, Any]] = None
    exact: Optional[dict[str, Any]] = None
    runners_up: list[dict[str, Any]] = Field(default_factory=list)
    override: Optional[dict[str, Any]] = None
    divider: Optional[dict[str, Any]] = None
    figures: dict[str, Any]
    notices: list[dict[str, str]] = Field(default_factory=list)


def _num(value: Any) -> Optional[float]:
    value = float(value)
    return value if np.isfinite(value) else None


def demo_inputs(library: Library) -> dict[str, Any]:
    """The design the page opens with: a 10 kΩ NTC from 0 to 100 °C on 3.3 V."""
    sensor: dict[str, Any] = {"part": DEMO_PART}
    if DEMO_PART not in library.parts:
        sensor = {"kind": "ntc_beta", "r_nominal_ohm": 10_000, "beta_k": 3950, "t_nominal_c": 25}
    return {
        "name": "Demo: 10 kΩ NTC into a 3.3 V ADC",
        "sensor": sensor,
        "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
        "range": {"min": 0, "max": 100},
        "objective": "swing",
        "series": "E24",
        "limits": {"min_ohm": K.DEFAULT_MIN_OHM, "max_ohm": K.DEFAULT_MAX_OHM},
    }


def form_meta(library: Library) -> dict[str, Any]:
    """What the form offers: kinds and their fields, objectives, series, parts."""
    kinds = []
    for kind in SENSOR_CLASSES:
        cls = SENSOR_CLASSES[kind]
        required, optional = field_spec(kind)
        fields = []
        for name in (*required, *optional):
            label, unit, hint = FIELD_TEXT.get(f"{kind}.{name}", (name, "", ""))
            fields.append({
                "name": name, "label": label, "unit": unit, "hint": hint,
                "required": name in required, "default": optional.get(name),
                "example": EXAMPLES.get(kind, {}).get(name, optional.get(name)),
                "choices": [{"value": v, "label": t} for v, t in CHOICE_TEXT.get(name, [])],
                "resistance": name.endswith("_ohm"),
            })
        lo, hi = RANGE_DEFAULTS.get(kind, (0.0, 1.0))
        kinds.append({"kind": kind, "label": KIND_LABELS.get(kind, kind), "fields": fields,
                      "stimulus_unit": cls.stimulus_unit, "quantity": cls.quantity, "range": {"min": lo, "max": hi}})
    return {
        "kinds": kinds,
        "objectives": [objective_info(name) for name in K.OBJECTIVES],
        "series": SERIES_CHOICES,
        "parts": [{"id": p.id, "name": p.name, "kind": p.kind, "sensor": p.sensor, "notes": p.notes}
                  for p in library.all()],
    }


def objective_info(name: str) -> dict[str, Any]:
    label, hint = OBJECTIVE_TEXT.get(name, (name.replace("_", " ").capitalize(), ""))
    return {"value": name, "label": label, "hint": hint,
            "better": "higher" if objectives.DIRECTION.get(name, 1.0) > 0 else "lower"}


def sensitivity_unit(sensor: Sensor) -> str:
    return f"V/{sensor.axis_unit}"


def _score_unit(objective: str, sensor: Sensor) -> str:
    return {"swing": "V", "linearity": "%", "sensitivity": sensitivity_unit(sensor), "accuracy": sensor.axis_unit}.get(
        objective, objectives.SCORE_UNIT.get(objective, ""))


def _sensor_info(sensor: Sensor, part: Optional[Part]) -> dict[str, Any]:
    return {
        "kind": sensor.kind, "kind_label": KIND_LABELS.get(sensor.kind, sensor.kind),
        "quantity": sensor.quantity, "stimulus_unit": sensor.stimulus_unit, "axis_unit": sensor.axis_unit,
        "axis_title": sensor.axis_title, "label": part.name if part else KIND_LABELS.get(sensor.kind, sensor.kind),
        "part": part.id if part else None, "notes": part.notes if part else "",
        "parameters": sensor.to_dict(),
        "dissipation_w_per_k": part.dissipation_w_per_k if part else None,
    }


def _sensitivity_title(sensor: Sensor) -> str:
    symbol = {"temperature": "dT", "illuminance": "d(log₁₀ E)", "position": "dx"}.get(sensor.quantity, "ds")
    return f"Sensitivity |dVout/{symbol}| ({sensitivity_unit(sensor)})"


def _figure(sensor: Sensor, traces: list[dict], y_title: str, y_format: str) -> dict:
    fig = figure(traces, sensor.axis_title, y_title, log_x=sensor.quantity == "illuminance", legend_entry_px=LEGEND_PX)
    fig["layout"]["yaxis"]["hoverformat"] = y_format
    fig["layout"]["legend"]["font"] = {"size": 11}
    fig["layout"]["xaxis"]["hoverformat"] = ".4g"
    if sensor.quantity == "illuminance":  # plain 1, 10, 100 lux ticks rather than 1.000, 10.00
        fig["layout"]["xaxis"]["tickformat"] = "~g"
    return fig


_BUILT: "OrderedDict[tuple, str]" = OrderedDict()
_BUILT_MAX = 256
_BUILT_LOCK = threading.Lock()


def build(req: BenchIn, library: Library) -> dict[str, Any]:
    """Everything the Bench page shows for ``req`` (JSON-ready; non-finite numbers become null).

    The result depends only on the inputs and the library, so it is kept (as JSON text, so no
    caller can change a cached copy) for the home page's demo and saved designs read again and
    again on a shared server. Errors are not kept.
    """
    key = (req.model_dump_json(), library.cache_key)
    with _BUILT_LOCK:
        text = _BUILT.get(key)
        if text is not None:
            _BUILT.move_to_end(key)
    if text is None:
        text = json.dumps(_build(req, library))
        with _BUILT_LOCK:
            _BUILT[key] = text
            while len(_BUILT) > _BUILT_MAX:
                _BUILT.popitem(last=False)
    return json.loads(text)


def _build(req: BenchIn, library: Library) -> dict[str, Any]:
    sensor = service.sensor_of(req.sensor, library)
    part = library.get(req.sensor.part) if isinstance(req.sensor, schemas.PartRef) else None
    circuit_in = req.circuit.model_copy(update={"fixed_ohm": None})
    circuit = service.circuit_of(circuit_in)
    service.check_range(sensor, req.range.min, req.range.max)
    # A saved design from another page may carry its resistor in the circuit.
    override = req.override_ohm if req.override_ohm is not None else req.circuit.fixed_ohm
    notices: list[dict[str, str]] = []
    if circuit.supply_v > ELV_LIMIT_V:
        notices.append({"level": "caution", "code": "mains",
                        "text": f"A {circuit.supply_v:g} V supply is above extra-low voltage (50 V): this divider is hazardous to touch."})
    base = {
        "sensor": _sensor_info(sensor, part),
        "units": {"stimulus": sensor.stimulus_unit, "axis": sensor.axis_unit,
                  "score": _score_unit(req.objective, sensor), "sensitivity": sensitivity_unit(sensor)},
        "objective": objective_info(req.objective),
        "range": {"min": req.range.min, "max": req.range.max},
        "notices": notices,
    }
    if needs_fixed(sensor):
        return base | _solved(req, circuit_in, sensor, circuit, override, part, library, notices)
    return base | _divider(req, sensor, circuit, override, notices)


def _solved(req: BenchIn, circuit_in, sensor: Sensor, circuit: Circuit, override: Optional[float],
            part: Optional[Part], library: Library, notices: list) -> dict[str, Any]:
    solve_req = schemas.SolveIn(sensor=req.sensor, circuit=circuit_in, range=req.range,
                                objective=req.objective, series=req.series, limits=req.limits,
                                adc=req.adc, tolerances=req.tolerances, dissipation_w_per_k=req.dissipation_w_per_k)
    problem, solved = service.solve_with_problem(solve_req, library)
    runner_ohm = [c["fixed_ohm"] for c in solved["candidates"][1:]]
    values = np.array([solved["fixed_ohm"], solved["exact_ohm"], *runner_ohm]
                      + ([override] if override is not None else []), dtype=float)
    scores, feasible, metrics = problem.score(values)
    ends = respond(sensor, circuit, np.array([req.range.min, req.range.max]), values[:, None]).vout_v
    heat = part.dissipation_w_per_k if part is not None and sensor.quantity == "temperature" else None
    direction = objectives.DIRECTION.get(req.objective, 1.0)
    best = float(scores[0])

    def row(i: int, label: str) -> dict[str, Any]:
        worse = (best - float(scores[i])) * direction  # > 0: worse than the recommendation
        power = float(metrics["max_sensor_power_w"][i])
        return {
            "fixed_ohm": float(values[i]), "label": label, "score": _num(scores[i]),
            "worse_abs": _num(worse), "worse_pct": _num(worse / abs(best) * 100.0) if best else None,
            "feasible": bool(feasible[i]),
            "ends_v": {"min": _num(ends[i, 0]), "max": _num(ends[i, 1])},
            "metrics": {name: _num(v[i]) for name, v in metrics.items()},
            "self_heating_c": _num(power / heat) if heat else None,
        }

    n_run = len(runner_ohm)
    recommended = row(0, format_resistance(values[0]))
    exact = row(1, format_resistance(values[1], 4))
    runners = [row(2 + j, format_resistance(values[2 + j])) for j in range(n_run)]
    mine = row(2 + n_run, format_resistance(override, 4)) if override is not None else None

    notices.extend({"level": "warn", "code": "fitted", "text": text} for text in solved["warnings"])
    limits = problem.limits
    for edge, name in ((limits.min_ohm, "limits.min_ohm"), (limits.max_ohm, "limits.max_ohm")):
        if abs(np.log10(solved["exact_ohm"] / edge)) < 1e-3:
            notices.append({"level": "warn", "code": "limit",
                            "text": f"The exact optimum sits on {name} ({format_resistance(edge)}): the best value may lie beyond your limits."})
    if mine is not None:
        if not limits.min_ohm <= override <= limits.max_ohm:
            notices.append({"level": "info", "code": "override-limits",
                            "text": f"Your resistor {mine['label']} lies outside the limits {format_resistance(limits.min_ohm)} .. {format_resistance(limits.max_ohm)}."})
        if limits.max_sensor_power_w is not None and not mine["feasible"]:
            notices.append({"level": "warn", "code": "override-power",
                            "text": f"Your resistor {mine['label']} puts more than the allowed {limits.max_sensor_power_w * 1e3:g} mW into the sensor."})

    grid = sensor.grid(req.range.min, req.range.max, PLOT_POINTS)
    plotted = np.array([values[0], *values[2:]], dtype=float)
    resp = respond(sensor, circuit, grid, plotted[:, None])
    names = [f"{recommended['label']} (best)"] + [f"{r['label']}" for r in runners]
    out_traces = [trace(grid, resp.vout_v[0], names[0], 0, width=3)]
    out_traces += [trace(grid, resp.vout_v[1 + j], names[1 + j], 1 + j, width=1.5, dash="dot") for j in range(n_run)]
    sens_traces = [trace(grid, np.abs(resp.sensitivity[0]), names[0], 0, width=3)]
    if mine is not None:
        yours = f"{mine['label']} (yours)"
        out_traces.append(trace(grid, resp.vout_v[-1], yours, OVERRIDE_INDEX, dash="dash", width=2.5))
        sens_traces.append(trace(grid, np.abs(resp.sensitivity[-1]), yours, OVERRIDE_INDEX, dash="dash", width=2.5))
    return {
        "mode": "solve",
        "solve": solved,
        "recommended": recommended,
        "exact": exact,
        "runners_up": runners,
        "override": mine,
        "figures": {
            "output": _figure(sensor, out_traces, "Output (V)", ".4f"),
            "sensitivity": _figure(sensor, sens_traces, _sensitivity_title(sensor), ".4g"),
        },
    }


def _divider(req: BenchIn, sensor: Sensor, circuit: Circuit, override: Optional[float], notices: list) -> dict[str, Any]:
    """A pot across the supply: nothing to choose; its output, loaded and unloaded."""
    notices.append({"level": "info", "code": "divider",
                    "text": "A potentiometer wired as a divider forms both arms itself: there is no fixed resistor "
                            "to choose. Shown: its output over the travel and, with a load, how the load bends it."})
    if override is not None:
        notices.append({"level": "info", "code": "override-unused",
                        "text": "Your resistor is not used: switch the wiring to rheostat to put a fixed resistor in series."})
    lo, hi = req.range.min, req.range.max
    fine = sensor.grid(lo, hi, K.OBJECTIVE_POINTS)
    loaded = respond(sensor, circuit, fine)
    found = objectives.metrics(loaded.vout_v[None, :], sensor.to_axis(fine), loaded.sensor_power_w[None, :])
    grid = sensor.grid(lo, hi, PLOT_POINTS)
    shown = respond(sensor, circuit, grid)
    label = "output" if circuit.load_ohm is None else f"with {format_resistance(circuit.load_ohm)} load"
    out_traces = [trace(grid, shown.vout_v, label, 0, width=3)]
    sens_traces = [trace(grid, np.abs(shown.sensitivity), label, 0, width=3)]
    loading = None
    if circuit.load_ohm is not None:
        free = respond(sensor, Circuit(circuit.supply_v, circuit.sensor_at), grid)
        out_traces.append(trace(grid, free.vout_v, "unloaded", 1, width=1.5, dash="dot"))
        sens_traces.append(trace(grid, np.abs(free.sensitivity), "unloaded", 1, width=1.5, dash="dot"))
        free_fine = respond(sensor, Circuit(circuit.supply_v, circuit.sensor_at), fine)
        drop = free_fine.vout_v - loaded.vout_v
        at = int(np.argmax(np.abs(drop)))
        loading = {"max_drop_v": _num(drop[at]), "at": _num(fine[at]),
                   "max_drop_pct_of_supply": _num(drop[at] / circuit.supply_v * 100.0)}
    return {
        "mode": "divider",
        "divider": {
            "ends_v": {"min": _num(loaded.vout_v[0]), "max": _num(loaded.vout_v[-1])},
            "metrics": {name: _num(v[0]) for name, v in found.items()},
            "max_thevenin_ohm": _num(np.max(loaded.thevenin_ohm)),
            "loading": loading,
        },
        "figures": {
            "output": _figure(sensor, out_traces, "Output (V)", ".4f"),
            "sensitivity": _figure(sensor, sens_traces, _sensitivity_title(sensor), ".4g"),
        },
    }
