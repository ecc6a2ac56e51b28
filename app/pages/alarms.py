"""The Trip points page (/trip) and its JSON twin (``POST /api/view/trip``).

:func:`view` builds everything the page shows from one trip request: the
``POST /api/trip`` response, the resistor list, a plain-words summary and
three plotly figures (sensor voltage against the two reference levels with
the hysteresis band shaded, the Monte Carlo spread, the trimmer sweep).
The page embeds the first view as JSON and its script asks for a new one
on every change.
"""

from __future__ import annotations

from typing import Any, Optional

import numpy as np
from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from app.api.trip import TripIn, run
from app.circuit import respond
from app.figures import PALETTE, figure, trace
from app.models.base import Sensor
from app.pages.templating import templates
from app.parts import Library
from app.trip import TripDesign, quiet
from app.trip_adjust import Adjust
from app.trip_spread import Spread
from app.units import format_resistance
from app.api.errors import ERROR_RESPONSES

router = APIRouter()

PLOT_POINTS = 301
HISTOGRAM_BINS = 40
BAND_FILL = "rgba(230, 159, 0, 0.28)"      # palette orange, see-through
TRIP_FILL = "rgba(204, 121, 167, 0.18)"     # palette pink: everything about the trip
RELEASE_FILL = "rgba(86, 180, 233, 0.18)"   # palette sky blue: the release

# Presets: invented demo parts, typical comparator figures (offset ±5 mV is a
# common datasheet maximum for general-purpose comparators, from memory).
PRESETS = [
    {
        "id": "over-temperature",
        "label": "Over-temperature alarm (NTC)",
        "inputs": {
            "sensor": {"part": "demo-ntc-10k-b3950"}, "supply_v": 3.3, "sensor_at": "bottom",
            "target": {"trip": 60.0, "release": 55.0}, "series": "E24",
            "tolerances": {"resistor_pct": 1.0, "offset_v": 0.005},
            "monte_carlo": {"samples": 5000, "seed": 1, "distribution": "normal"},
            "adjust": {"min": 50.0, "max": 70.0, "pot_tolerance_pct": 20.0},
        },
    },
    {
        "id": "dusk",
        "label": "Dusk switch (LDR)",
        "inputs": {
            "sensor": {"part": "demo-ldr-dim"}, "supply_v": 5.0, "sensor_at": "top",
            "target": {"trip": 10.0, "release": 25.0}, "series": "E24",
            "tolerances": {"resistor_pct": 1.0, "offset_v": 0.005},
            "monte_carlo": {"samples": 5000, "seed": 1, "distribution": "normal"},
            "adjust": {"min": 3.0, "max": 30.0, "pot_tolerance_pct": 20.0},
        },
    },
    {
        "id": "fan",
        "label": "Fan start (NTC, 12 V comparator)",
        "inputs": {
            "sensor": {"part": "demo-ntc-100k-b4250"}, "supply_v": 12.0, "sensor_at": "bottom",
            "target": {"trip": 40.0, "release": 37.0}, "series": "E96",
            "detector": {"output_high_v": 11.0, "output_low_v": 0.2},
            "tolerances": {"resistor_pct": 1.0, "offset_v": 0.005},
            "monte_carlo": {"samples": 5000, "seed": 1, "distribution": "normal"},
        },
    },
]

UNIT_TEXT = {"°C": "°C", "lx": "lx", "travel": "of travel"}


def _fmt(sensor: Sensor, value: Optional[float]) -> str:
    """A stimulus for reading: 60.02 °C, 10.1 lx, 0.412 of travel."""
    if value is None or not np.isfinite(value):
        return "—"
    if sensor.stimulus_unit == "°C":
        return f"{value:.2f} °C"
    if sensor.stimulus_unit == "lx":
        return f"{value:.3g} lx"
    return f"{value:.3f} of travel"


def summary(d: TripDesign) -> str:
    s = d.spec.sensor
    way = "rises" if (d.spec.trip > d.spec.release) else "falls"
    return (f"The output goes {d.output_at_trip} when the {s.quantity} {way} to {_fmt(s, d.achieved_trip)} "
            f"and back when it returns to {_fmt(s, d.achieved_release)} "
            f"(asked: {_fmt(s, d.spec.trip)} and {_fmt(s, d.spec.release)}).")


def resistors(d: TripDesign, a: Optional[Adjust]) -> list[dict[str, str]]:
    net, ex = d.network, d.exact
    position = "top" if d.spec.sensor_at == "bottom" else "bottom"
    rows = [
        ("Fixed resistor", f"sensor divider, {position} arm", net.fixed_ohm, ex.fixed_ohm),
        ("Reference top", "supply to the + input", net.top_ohm, ex.top_ohm),
        ("Reference bottom", "+ input to ground", net.bottom_ohm, ex.bottom_ohm),
        ("Hysteresis", "output to the + input", net.hysteresis_ohm, ex.hysteresis_ohm),
    ]
    out = [{"role": r, "where": w, "value": format_resistance(v), "exact": format_resistance(e, 4)} for r, w, v, e in rows]
    if a is not None:
        for role, where, value, exact in (
            ("Trim: top", "supply to the trimmer", a.top_ohm, a.exact["top_ohm"]),
            ("Trim: trimmer", "wiper is the + input", a.pot_ohm, a.exact["pot_ohm"]),
            ("Trim: bottom", "trimmer to ground", a.bottom_ohm, a.exact["bottom_ohm"]),
        ):
            out.append({"role": role, "where": where,
                        "value": format_resistance(value) if value > 0 else "0 Ω (link)",
                        "exact": format_resistance(exact, 4) if exact > 0 else "0 Ω"})
    return out


def _window(d: TripDesign, extra: list[float]) -> tuple[float, float]:
    """Stimulus span of the band plot: the targets, what was achieved and any spread, with margins."""
    s = d.spec.sensor
    values = [d.spec.trip, d.spec.release, d.achieved_trip, d.achieved_release, *extra]
    axis = s.to_axis(np.array([v for v in values if v is not None and np.isfinite(v)]))
    gap = abs(float(s.to_axis(d.spec.trip) - s.to_axis(d.spec.release)))
    pad = 0.5 * max(float(np.ptp(axis)), gap)
    lo = float(s.from_axis(float(np.min(axis)) - pad))
    hi = float(s.from_axis(float(np.max(axis)) + pad))
    return max(lo, s.stimulus_min), min(hi, s.stimulus_max)


def _rect(x0: float, x1: float, y0: float, y1: float, name: str, colour: str, index: int) -> dict[str, Any]:
    """A filled rectangle as a trace (so it has a legend entry and a CSV row), drawn beneath the lines."""
    t = trace([x0, x1, x1, x0, x0], [y0, y0, y1, y1, y0], name, index, width=0, fill="toself", fillcolor=colour)
    t["hoverinfo"] = "skip"
    return t


def _finish(fig: dict[str, Any], log_y: bool = False) -> dict[str, Any]:
    layout = fig["layout"]
    layout["hovermode"] = "closest"
    layout["legend"]["traceorder"] = "normal"  # a filled trace would reverse it
    if log_y:
        layout["yaxis"].update(type="log", dtick="D2")
    return fig


def _x_title(s: Sensor) -> str:
    return "Illuminance (lux)" if s.stimulus_unit == "lx" else s.axis_title


def band_figure(d: TripDesign, sp: Optional[Spread]) -> dict[str, Any]:
    spec, s = d.spec, d.spec.sensor
    extra = list(sp.trip_range + sp.release_range) if sp is not None else []
    lo, hi = _window(d, extra)
    grid = s.grid(lo, hi, PLOT_POINTS)
    v = respond(s, spec.circuit, grid, d.network.fixed_ohm).vout_v
    ends = [grid[0], grid[-1]]
    traces = []
    if sp is not None:
        v_lo, v_hi = float(np.min(v)), float(np.max(v))
        traces += [_rect(*sp.trip_range, v_lo, v_hi, "Trip spread", TRIP_FILL, 3),
                   _rect(*sp.release_range, v_lo, v_hi, "Release spread", RELEASE_FILL, 5)]
    traces += [
        trace(ends, [d.lower_v] * 2, "Lower level", 2, dash="dash"),
        trace(ends, [d.upper_v] * 2, "Upper level", 1, dash="dash",
              fill="tonexty", fillcolor=BAND_FILL),
        trace(grid, v, "Sensor output", 0, width=2.5),
        trace([d.achieved_trip], [d.trip_level_v], "Trip", 3, mode="markers",
              marker={"size": 11, "symbol": "circle", "color": PALETTE[3]}),
        trace([d.achieved_release], [d.release_level_v], "Release", 5, mode="markers",
              marker={"size": 11, "symbol": "diamond", "color": PALETTE[5]}),
    ]
    band = {"xref": "paper", "x": 0.01, "xanchor": "left", "yref": "y", "y": (d.upper_v + d.lower_v) / 2,
            "text": "hysteresis band", "showarrow": False, "font": {"size": 11, "color": "#6b4a00"}}
    fig = figure(traces, _x_title(s), "Sensor divider output (V)", log_x=s.stimulus_unit == "lx", annotations=[band])
    return _finish(fig)


def spread_figure(d: TripDesign, sp: Spread) -> dict[str, Any]:
    s = d.spec.sensor
    traces, peak = [], 1
    for i, (name, values) in enumerate((("Trip", sp.mc_trip), ("Release", sp.mc_release))):
        axis = s.to_axis(values[np.isfinite(values)])
        counts, edges = np.histogram(axis, bins=HISTOGRAM_BINS)
        x = s.from_axis(np.concatenate([[edges[0]], (edges[:-1] + edges[1:]) / 2, [edges[-1]]]))
        t = trace(x, np.concatenate([[0], counts, [0]]), f"{name} builds", 3 if i == 0 else 5, fill="tozeroy")
        t["line"]["shape"] = "hvh"
        traces.append(t)
        peak = max(peak, int(counts.max()))
    for i, (name, worst) in enumerate((("Trip", sp.trip_range), ("Release", sp.release_range))):
        a, b = worst
        traces.append(trace([a, a, None, b, b], [0, peak, None, 0, peak], f"{name} limits", 3 if i == 0 else 5,
                            dash="dot", width=1.5))
    fig = figure(traces, _x_title(s), "Builds (count)", log_x=s.stimulus_unit == "lx")
    return _finish(fig)


def adjust_figure(d: TripDesign, a: Adjust) -> dict[str, Any]:
    s = d.spec.sensor
    traces = [
        _rect(0.0, 1.0, a.lo, a.hi, "Range asked", TRIP_FILL, 3),
        trace(a.position, a.trip, "Trip", 3, width=2.5),
        trace(a.position, a.release, "Release", 5, dash="dash"),
    ]
    if np.isfinite(a.position_for_target):
        traces.append(trace([a.position_for_target], [d.spec.trip], "Asked trip", 6, mode="markers",
                            marker={"size": 10, "symbol": "x", "color": PALETTE[6]}))
    fig = figure(traces, "Wiper position (fraction of travel from ground)", _x_title(s))
    return _finish(fig, log_y=s.stimulus_unit == "lx")


@quiet
def view(req: TripIn, library: Library) -> dict[str, Any]:
    """Everything the page shows for one request (the page's JSON twin)."""
    d, sp, a, result = run(req, library)
    s = d.spec.sensor
    figures = {"band": band_figure(d, sp)}
    if sp is not None:
        figures["spread"] = spread_figure(d, sp)
    if a is not None:
        figures["adjust"] = adjust_figure(d, a)
    text = {
        "trip": _fmt(s, d.achieved_trip), "release": _fmt(s, d.achieved_release),
        "target_trip": _fmt(s, d.spec.trip), "target_release": _fmt(s, d.spec.release),
    }
    if sp is not None:
        mc = result["spread"]["monte_carlo"]
        text["spread"] = (f"Worst case: trips between {_fmt(s, sp.trip_range[0])} and {_fmt(s, sp.trip_range[1])}, "
                          f"releases between {_fmt(s, sp.release_range[0])} and {_fmt(s, sp.release_range[1])}. "
                          f"99.73 % of {sp.samples} simulated builds trip between {_fmt(s, mc['trip']['p0_135'])} "
                          f"and {_fmt(s, mc['trip']['p99_865'])}.")
    if a is not None:
        text["adjust"] = (f"The trimmer sets the trip from {_fmt(s, min(a.covered))} to {_fmt(s, max(a.covered))}; "
                          f"whatever its value within ±{a.pot_tolerance_pct:g} % it reaches "
                          f"{_fmt(s, a.guaranteed[0])} to {_fmt(s, a.guaranteed[1])}.")
    return {
        "result": result,
        "summary": summary(d),
        "text": text,
        "resistors": resistors(d, a),
        "unit": s.stimulus_unit,
        "quantity": s.quantity,
        "figures": figures,
    }


def _parts(library: Library) -> list[dict[str, Any]]:
    out = []
    for p in library.all():
        if p.kind == "pot" and p.sensor.get("wiring", "divider") == "divider":
            continue  # a divider-wired pot has no fixed resistor to choose
        unit = "°C" if p.kind in ("ntc_beta", "ntc_sh", "rtd") else ("lx" if p.kind == "ldr" else "travel")
        out.append({"id": p.id, "name": p.name, "kind": p.kind, "unit": unit, "tolerances": p.tolerances})
    return out


def page_data(library: Library) -> dict[str, Any]:
    parts = _parts(library)
    known = {p["id"] for p in parts}
    presets = [p for p in PRESETS if p["inputs"]["sensor"]["part"] in known]
    first = presets[0]["inputs"] if presets else None
    return {
        "parts": parts,
        "presets": presets,
        "inputs": first,
        "view": view(TripIn.model_validate(first), library) if first else None,
    }


@router.get("/trip", response_class=HTMLResponse, include_in_schema=False)
def trip_page(request: Request):
    data = page_data(request.app.state.library)
    return templates.TemplateResponse(request, "trip.html", {"data": data})


@router.post("/api/view/trip", tags=["pages"], summary="Everything the Trip points page shows for one request (its JSON twin)",
             responses=ERROR_RESPONSES)
def trip_view(body: TripIn, request: Request) -> dict[str, Any]:
    return view(body, request.app.state.library)
