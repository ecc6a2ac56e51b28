"""The Firmware page's data: the table result plus figures and the first rows.

``view(computed)`` is what ``POST /api/table/view`` returns and what the page
embeds on first render. Plots downsample long code axes to an envelope (the
minimum and maximum of each bucket), so the worst error is always drawn.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from app.figures import figure, trace
from app.table_export import lookup_fixed

SHOWN_ROWS = 256
PLOT_POINTS = 4000
FAULT_FILL = "rgba(213, 94, 0, 0.10)"
ERROR_UNIT = {"°C": "°C", "decade": "decades of lux", "travel": "travel"}


def envelope(x: np.ndarray, y: np.ndarray, points: int = PLOT_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """At most ``points`` samples of (x, y) keeping each bucket's minimum and maximum in order."""
    if x.size <= points:
        return x, y
    width = -(-x.size // (points // 2))
    padded = np.full(width * -(-x.size // width), np.nan)
    padded[: y.size] = y
    grid = padded.reshape(-1, width)
    start = np.arange(grid.shape[0]) * width
    keep = np.unique(np.concatenate([start + np.nanargmin(grid, axis=1), start + np.nanargmax(grid, axis=1)]))
    return x[keep], y[keep]


def _quiet(error: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Errors at the level of float rounding drawn as zero (an exact table shows a flat line, not noise)."""
    noise = 1e-12 * (float(np.max(np.abs(f))) + 1.0)
    return np.where(np.abs(error) <= noise, 0.0, error)


def _fault_shapes(valid: dict, n_codes: int) -> tuple[list, list]:
    shapes, notes = [], []
    for lo, hi, text in ((-0.5, valid["min"] - 0.5, "below"), (valid["max"] + 0.5, n_codes - 0.5, "above")):
        if hi - lo < 0.5:
            continue
        shapes.append({"type": "rect", "xref": "x", "yref": "paper", "x0": lo, "x1": hi, "y0": 0, "y1": 1,
                       "fillcolor": FAULT_FILL, "line": {"width": 0}, "layer": "below"})
        fault = valid[f"{text}_fault"]
        label = {"short": "shorted", "open": "open"}.get(fault, "outside")
        notes.append({"x": (lo + hi) / 2, "y": 1.0, "xref": "x", "yref": "paper", "yanchor": "bottom",
                      "text": label, "showarrow": False, "font": {"size": 11, "color": "#8a3b00"}})
    return shapes, notes


def view(computed) -> dict[str, Any]:
    t, table, fixed = computed.tables, computed.table, computed.fixed
    d = t.design
    out = computed.json()
    codes = t.codes
    unit = ERROR_UNIT[d.axis_unit]
    sensor = d.sensor
    n_codes = d.adc.codes

    # Stimulus per code, with the entries of the exported table and the fault regions.
    stim = sensor.from_axis(t.f)
    cx, cy = envelope(codes, stim)
    curve = [trace(cx, cy, "stimulus at each code's centre", 0, width=1.5)]
    entry_stim = sensor.from_axis(table.values)
    if table.codes.size <= PLOT_POINTS:
        curve.append(trace(table.codes, entry_stim, f"table entries ({table.codes.size})", 1, mode="markers",
                           marker={"size": 5, "color": "#D55E00"}))
    shapes, notes = _fault_shapes(out["valid_codes"], n_codes)
    curve_fig = figure(curve, "ADC code (LSB)", sensor.axis_title, shapes=shapes, annotations=notes)
    curve_fig["layout"]["xaxis"]["range"] = [-0.5, n_codes - 0.5]
    if d.axis_unit == "decade":
        curve_fig["layout"]["yaxis"]["type"] = "log"

    # Interpolation error at every valid code: the uniform table, the fewest-entry table, the bound.
    err = []
    ux, uy = envelope(codes, _quiet(t.uniform.error, t.f))
    err.append(trace(ux, uy, f"every {t.uniform.step} codes ({t.uniform.codes.size} entries)", 0, width=1.2))
    if t.fewest is not None:
        fx, fy = envelope(codes, _quiet(t.fewest.error, t.f))
        err.append(trace(fx, fy, f"fewest entries ({t.fewest.codes.size})", 2, width=1.2))
        for sign in (1, -1):
            err.append(trace([codes[0], codes[-1]], [sign * t.fewest.bound] * 2, "bound" if sign > 0 else "−bound", 3,
                             dash="dash", width=1, showlegend=sign > 0))
    error_fig = figure(err, "ADC code (LSB)", f"Interpolation error ({unit})")

    poly_fig = None
    if t.poly is not None:
        px, py = envelope(codes, _quiet(t.poly.error, t.f))
        poly_fig = figure([trace(px, py, f"degree {t.poly.degree} polynomial", 4, width=1.2)],
                          "ADC code (LSB)", f"Polynomial error ({unit})")

    shown = table.codes[:SHOWN_ROWS]
    got = lookup_fixed(table.codes, fixed.values, shown) / fixed.scale
    rows = [{"code": int(c), "stimulus": float(s), "centre_v": float(v), "stored": int(q), "firmware": float(sensor.from_axis(g))}
            for c, s, v, q, g in zip(shown, entry_stim[:SHOWN_ROWS], d.adc.centre_v(shown, d.circuit.supply_v),
                                     fixed.values[:SHOWN_ROWS], got)]
    summary = {k: v for k, v in out.items() if k not in ("codes", "stimulus", "axis_values")}
    summary["fixed_point"] = {k: v for k, v in out["fixed_point"].items() if k != "values"}
    return {
        **summary,
        "rows": rows,
        "rows_shown": len(rows),
        "error_unit_text": unit,
        "axis_title": sensor.axis_title,
        "c_name": computed.c_name,
        "figures": {"curve": curve_fig, "error": error_fig, "poly": poly_fig},
    }
