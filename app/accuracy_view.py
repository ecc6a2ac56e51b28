"""The accuracy page's data: one function from the page's inputs to everything it shows.

``build(inputs, library)`` serves the first render (embedded as JSON) and
``POST /api/view/accuracy`` on every change (the page's JSON twin). The
fixed resistor is the given one, or the solver's pick (swing by default;
accuracy on request, with every setting of the page).
"""

from __future__ import annotations

from typing import Any, Optional

import numpy as np

from app import budget_service, schemas, service, solver
from app.bench_view import ELV_LIMIT_V, KIND_LABELS, form_meta
from app.budget_models import AccuracyIn
from app.circuit import needs_fixed
from app.figures import PALETTE, figure, trace
from app.models.base import Sensor
from app.parts import Library
from app.units import format_resistance

DEMO_PART = "demo-ntc-10k-b3950"
# Bands from light to dark; each drawn down to zero so the narrower sits on top.
BAND_FILL = {99.7: "rgba(0,114,178,0.16)", 95.0: "rgba(0,114,178,0.30)", 50.0: "rgba(0,114,178,0.50)"}
LEGEND_PX = 105
ERROR_WORDS = {"°C": ("°C", "Error (°C)"), "decade": ("decade", "Error (decades of lux)"),
               "travel": ("of travel", "Error (fraction of travel)")}
CONTRIBUTOR_TEXT = {
    "fixed": "Fixed resistor", "sensor": "Sensor resistance", "beta": "B value", "gamma": "Slope γ",
    "supply": "Supply", "vref": "Reference", "adc_gain": "Converter gain", "adc_offset": "Converter offset",
    "quantization": "Quantisation", "load": "Load", "leads": "Lead resistance", "self_heating": "Self-heating",
}


def demo_inputs(library: Library) -> dict[str, Any]:
    """The design the page opens with: the demo 10 kΩ NTC, its own tolerances, a 12-bit ratiometric ADC."""
    sensor: dict[str, Any] = {"part": DEMO_PART}
    tolerances: dict[str, float] = {"fixed_pct": 1.0, "supply_pct": 5.0}
    dissipation = None
    part = library.parts.get(DEMO_PART)
    if part is None:
        sensor = {"kind": "ntc_beta", "r_nominal_ohm": 10_000, "beta_k": 3950, "t_nominal_c": 25}
    else:
        tolerances |= part_tolerances(part.tolerances, part.kind)
        dissipation = part.dissipation_w_per_k
    return {
        "sensor": sensor,
        "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
        "range": {"min": 0, "max": 100},
        "adc": {"bits": 12, "ratiometric": True},
        "tolerances": tolerances,
        "dissipation_w_per_k": dissipation,
        "monte_carlo": {"samples": 10_000, "seed": 1, "distribution": "normal"},
        "spec": 1.0,
        "series": "E24",
        "fixed_from": "swing",
    }


def part_tolerances(tolerances: dict[str, float], kind: str) -> dict[str, float]:
    """A part's tolerances as budget tolerances (an RTD's R0 tolerance is its resistance tolerance)."""
    out = {k: v for k, v in tolerances.items() if k in ("sensor_pct", "beta_pct", "gamma_pct")}
    if "r0_pct" in tolerances and "sensor_pct" not in out:
        out["sensor_pct"] = tolerances["r0_pct"]
    if kind != "ntc_beta":
        out.pop("beta_pct", None)
    if kind != "ldr":
        out.pop("gamma_pct", None)
    return out


def page_meta(library: Library) -> dict[str, Any]:
    """What the form offers: kinds and their fields (as on the Bench), parts with tolerances."""
    meta = form_meta(library)
    return {
        "kinds": meta["kinds"],
        "series": meta["series"],
        "parts": [{"id": p.id, "name": p.name, "kind": p.kind, "sensor": p.sensor, "notes": p.notes,
                   "tolerances": part_tolerances(p.tolerances, p.kind), "dissipation_w_per_k": p.dissipation_w_per_k}
                  for p in library.all()],
    }


def _sig(value: Optional[float], digits: int = 2) -> str:
    if value is None or not np.isfinite(value):
        return "unbounded"
    return f"{float(f'{value:.{digits}g}'):g}"


def _error_text(value: Optional[float], sensor: Sensor) -> str:
    word = ERROR_WORDS[sensor.axis_unit][0]
    text = f"±{_sig(value)} {word}"
    if sensor.axis_unit == "decade" and value is not None and np.isfinite(value):
        text += f" (+{_sig((10**value - 1) * 100)} %/−{_sig((1 - 10**-value) * 100)} % in lux)"
    return text


def _range_text(lo: float, hi: float, sensor: Sensor) -> str:
    if sensor.stimulus_unit == "travel":
        return f"over travel {lo:g} to {hi:g}"
    return f"from {lo:g} to {hi:g} {sensor.stimulus_unit}"


def summary_text(out: dict[str, Any], sensor: Sensor, lo: float, hi: float) -> tuple[str, Optional[str]]:
    s = out["summary"]
    worst = s["worst_case"]["value"]
    text = f"{_error_text(worst, sensor)} worst case {_range_text(lo, hi, sensor)}"
    p997 = s["builds"]["p997"]
    text += f"; 99.7 % of builds within {_error_text(p997, sensor)}."
    yield_text = None
    if out["yield"] is not None:
        yield_text = (f"Against a spec of {_error_text(out['spec'], sensor)}: {out['yield'] * 100:.1f} % of "
                      f"{out['monte_carlo']['samples']:,} simulated builds read within it everywhere in the range.")
    return text, yield_text


def _figures(out: dict[str, Any], sensor: Sensor) -> dict[str, Any]:
    x = out["stimulus"]
    log_x = sensor.quantity == "illuminance"
    y_title = ERROR_WORDS[sensor.axis_unit][1]
    band_traces = [trace(x, out[key], f"{q:g} % of builds", 0, width=0.5, fill="tozeroy", fillcolor=BAND_FILL[q])
                   for q, key in ((99.7, "mc_p997"), (95.0, "mc_p95"), (50.0, "mc_p50"))]
    lines = [trace(x, out["worst_case"], "worst case", 1, width=2.5),
             trace(x, out["rss"], "RSS", 6, dash="dash", width=2)]
    if out["spec"] is not None:
        lines.append(trace(x, [out["spec"]] * len(x), "spec", 3, dash="dot", width=1.5))
    errors = figure(band_traces + lines, sensor.axis_title, y_title, log_x=log_x, legend_entry_px=LEGEND_PX)
    errors["layout"]["yaxis"]["rangemode"] = "tozero"

    names = [n for n in out["contributors"]]
    stacked = [trace(x, out["contributors"][n], CONTRIBUTOR_TEXT.get(n, n), i, width=0.5, stackgroup="one")
               for i, n in enumerate(names)]
    stacked.append(trace(x, out["worst_case"], "worst case", len(PALETTE) - 1, dash="dash", width=2))
    contributors = figure(stacked, sensor.axis_title, f"{y_title}, stacked", log_x=log_x, legend_entry_px=LEGEND_PX)
    contributors["layout"]["yaxis"]["rangemode"] = "tozero"

    volts = [trace(x, out["vout_low_v"], "lowest build", 0, width=0.5),
             trace(x, out["vout_high_v"], "highest build", 0, width=0.5, fill="tonexty",
                   fillcolor="rgba(0,114,178,0.25)"),
             trace(x, out["vout_v"], "nominal", 1, width=2.5)]
    window = out["window"]
    if window is not None:
        volts += [trace(x, [window["min_v"]] * len(x), "usable window", 6, dash="dot", width=1.5),
                  trace(x, [window["max_v"]] * len(x), "window top", 6, dash="dot", width=1.5, showlegend=False)]
    output = figure(volts, sensor.axis_title, "Output (V)", log_x=log_x, legend_entry_px=LEGEND_PX)
    for fig in (errors, contributors, output):
        fig["layout"]["xaxis"] |= {"hoverformat": ".4g", "tickformat": "~g"}
        fig["layout"]["yaxis"] |= {"hoverformat": ".3g", "tickformat": "~g"}
    return {"errors": errors, "contributors": contributors, "output": output}


def _picks(req: AccuracyIn, sensor: Sensor, library: Library, setup) -> dict[str, Any]:
    circuit_in = req.circuit.model_copy(update={"fixed_ohm": None})
    solve_req = schemas.SolveIn(sensor=req.sensor, circuit=circuit_in, range=req.range, objective="swing", series=req.series)
    picks: dict[str, Any] = {"swing": service.solve(solve_req, library)["fixed_ohm"]}  # about a millisecond
    if req.fixed_from == "accuracy":
        problem = solver.Problem(sensor, service.circuit_of(circuit_in), req.range.min, req.range.max, "accuracy",
                                 accuracy=setup)
        sol = solver.solve(problem, req.series)
        picks["accuracy"] = sol.fixed_ohm
        picks["accuracy_candidates"] = [{"fixed_ohm": r, "worst_case": s} for r, s in sol.candidates]
    return picks


def build(req: AccuracyIn, library: Library) -> dict[str, Any]:
    """Everything the accuracy page shows for ``req`` (JSON-ready; non-finite numbers become null)."""
    with np.errstate(**budget_service.QUIET):
        return _build(req, library)


def _build(req: AccuracyIn, library: Library) -> dict[str, Any]:
    sensor = service.sensor_of(req.sensor, library)
    part = library.get(req.sensor.part) if isinstance(req.sensor, schemas.PartRef) else None
    service.check_range(sensor, req.range.min, req.range.max)
    circuit = service.circuit_of(req.circuit)
    notices: list[dict[str, str]] = []
    picks: dict[str, Any] = {}
    fixed, source = circuit.fixed_ohm, None
    if needs_fixed(sensor):
        source = "given" if req.fixed_from == "given" and fixed is not None else (
            "accuracy" if req.fixed_from == "accuracy" else "swing")
        picks = _picks(req, sensor, library, budget_service.setup_of(req))
        if source != "given":
            fixed = picks[source]
            circuit = circuit.with_fixed(fixed)
    result, design, out = budget_service.compute(req, library, sensor, circuit)
    text, yield_text = summary_text(out, sensor, req.range.min, req.range.max)
    for warning in out["warnings"]:
        notices.append({"level": "warn", "code": "budget", "text": warning})
    if out["settling"] is not None and out["settling"]["ok"] is False:
        notices.append({"level": "warn", "code": "settling", "text": "The converter input does not settle: see Settling."})
    if circuit.supply_v > ELV_LIMIT_V:
        notices.append({"level": "caution", "code": "mains",
                        "text": f"A {circuit.supply_v:g} V supply is above extra-low voltage (50 V): this divider is hazardous to touch."})
    inputs = req.model_dump(mode="json", exclude_none=True)
    if fixed is not None:
        inputs["circuit"]["fixed_ohm"] = fixed
    summary = out["summary"]
    return {
        "inputs": inputs,
        "sensor": {
            "kind": sensor.kind, "kind_label": KIND_LABELS.get(sensor.kind, sensor.kind), "quantity": sensor.quantity,
            "stimulus_unit": sensor.stimulus_unit, "axis_unit": sensor.axis_unit, "axis_title": sensor.axis_title,
            "label": part.name if part else KIND_LABELS.get(sensor.kind, sensor.kind), "part": part.id if part else None,
            "error_word": ERROR_WORDS[sensor.axis_unit][0],
        },
        "budget": out,
        "picks": picks,
        "headline": {
            "fixed_ohm": fixed, "fixed_label": format_resistance(fixed) if fixed else None,
            "fixed_from": source,
            "worst_case": summary["worst_case"], "rss": summary["rss"], "builds": summary["builds"],
            "resolution": summary["resolution"], "self_heating": summary["self_heating"],
            "yield": out["yield"], "spec": out["spec"],
        },
        "summary_text": text,
        "yield_text": yield_text,
        "figures": _figures(out, sensor),
        "notices": notices,
    }
