"""Plotly figures as plain dicts, one style for every page.

Pages get figures from the server (``{{ fig | tojson }}`` or a view
endpoint) and draw them with ``draw()`` in ``static/js/common.js``; the same
dict is the plot's JSON twin, and its traces are its CSV twin.
"""

from __future__ import annotations

from typing import Any, Iterable, Optional

import numpy as np
import plotly.graph_objects as go

# A colour-blind-safe qualitative palette (Okabe–Ito, 2008).
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")
DASHES = ("solid", "dash", "dot", "dashdot", "longdash", "longdashdot")


def _list(values: Any) -> list:
    arr = np.asarray(values, dtype=float).ravel()
    return [float(v) if np.isfinite(v) else None for v in arr]


def trace(x, y, name: str, index: int = 0, *, dash: Optional[str] = None, width: float = 2.0,
          fill: Optional[str] = None, mode: str = "lines", **extra) -> dict:
    """One line trace; ``index`` picks its colour and, past the palette, its dash."""
    colour = PALETTE[index % len(PALETTE)]
    line = {"color": colour, "width": width, "dash": dash or DASHES[(index // len(PALETTE)) % len(DASHES)]}
    out = {"type": "scatter", "mode": mode, "name": name, "x": _list(x), "y": _list(y), "line": line}
    if fill:
        out["fill"] = fill
    out.update(extra)
    return out


def figure(traces: Iterable[dict], x_title: str, y_title: str, *, title: str = "", log_x: bool = False,
           shapes: Optional[list] = None, annotations: Optional[list] = None,
           legend_entry_px: Optional[int] = None) -> dict:
    """A figure dict with titled axes (units in the titles).

    ``legend_entry_px``: fixed width of a legend entry's text, so several short
    entries share a row (plotly otherwise gives each its own row).
    """
    layout = go.Layout(
        title={"text": title, "font": {"size": 14}} if title else None,
        xaxis={"title": {"text": x_title}, "type": "log" if log_x else "linear", "gridcolor": "#e3e7eb", "zeroline": False},
        yaxis={"title": {"text": y_title}, "gridcolor": "#e3e7eb", "zeroline": False},
        paper_bgcolor="#ffffff", plot_bgcolor="#ffffff", hovermode="x unified",
        # Above the plot: below it, a wrapped legend runs into the x-axis title.
        legend={"orientation": "h", "x": 0, "xanchor": "left", "y": 1.02, "yanchor": "bottom"},
        font={"family": "system-ui, sans-serif", "size": 12, "color": "#1d2329"},
        shapes=shapes or [], annotations=annotations or [],
    ).to_plotly_json()
    if legend_entry_px:
        layout["legend"].update(entrywidth=legend_entry_px, entrywidthmode="pixels")
    return {"data": list(traces), "layout": layout}

