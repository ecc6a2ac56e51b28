"""The solver's objectives and the metrics reported beside them (contract).

Every function takes ``vout`` (k, n) V over ``axis`` (n,) stimulus-axis
values and returns (k,) arrays, one per candidate.
"""

from __future__ import annotations

import numpy as np

# +1: larger is better; -1: smaller is better.
DIRECTION = {"swing": 1.0, "linearity": -1.0, "sensitivity": 1.0, "accuracy": -1.0}
SCORE_UNIT = {"swing": "V", "linearity": "%", "sensitivity": "V per axis unit", "accuracy": "axis unit"}
# Scored from the whole error budget, not from vout alone (app.budget.range_worst).
BUDGET_OBJECTIVES = ("accuracy",)


def swing_v(vout: np.ndarray) -> np.ndarray:
    return np.abs(vout[..., -1] - vout[..., 0])


# The metrics run once per request for the winner (and per block in the search), where
# numpy's per-call overhead outweighs the arithmetic: ufunc reductions called directly,
# axis facts as Python floats, and no errstate context.
_max, _min = np.maximum.reduce, np.minimum.reduce


def nonlinearity_pct(vout: np.ndarray, axis: np.ndarray, span: np.ndarray | None = None) -> np.ndarray:
    """End-point nonlinearity: worst distance from the chord, % of the swing.

    ``span``: :func:`swing_v` of ``vout`` when the caller has it already.
    """
    a0 = float(axis[0])
    frac = axis - a0
    frac /= float(axis[-1]) - a0
    # vout − chord in one (k, n) buffer, then its largest magnitude.
    dev = (vout[..., :1] - vout[..., -1:]) * frac
    dev += vout
    dev -= vout[..., :1]
    worst = _max(np.abs(dev, out=dev), axis=-1)
    span = swing_v(vout) if span is None else span
    if span.ndim == 0:  # one curve (numpy scalars): plain arithmetic, same numbers
        return worst / span * 100.0 if span > 0 else np.float64(np.inf)
    out = np.empty(span.shape)
    out.fill(np.inf)
    np.divide(worst, span, out=out, where=span > 0)
    out *= 100.0
    return out


def min_sensitivity(vout: np.ndarray, axis: np.ndarray, even: bool = False) -> np.ndarray:
    """Smallest |dVout/ds| on the grid, as numpy.gradient with default edges gives it.

    On an evenly spaced axis numpy.gradient's interior formula is the central
    difference (v[i+1] − v[i−1]) / 2h, here the sum of two neighbouring
    steps: one pass of steps serves the interior and both edges. ``even``:
    the caller knows the axis is evenly spaced (Sensor.grid's is), else it
    is checked; uneven axes go through numpy.gradient.
    """
    n = vout.shape[-1]
    if n < 3:
        return _min(np.abs(np.gradient(vout, axis, axis=-1)), axis=-1)
    h0, h1 = float(axis[1]) - float(axis[0]), float(axis[-1]) - float(axis[-2])
    if not even:
        step = axis[1:] - axis[:-1]
        if float(_max(step)) - float(_min(step)) > 1e-9 * abs(h0):
            return _min(np.abs(np.gradient(vout, axis, axis=-1)), axis=-1)
    # Mean of axis[i+2] − axis[i] over the interior, by telescoping.
    wide = (float(axis[-1]) + float(axis[-2]) - float(axis[1]) - float(axis[0])) / (n - 2)
    steps = vout[..., 1:] - vout[..., :-1]
    central = steps[..., 1:] + steps[..., :-1]
    inner = _min(np.abs(central, out=central), axis=-1) / wide
    edges = np.abs(steps[..., :: n - 2])  # the first and last step
    edges /= (h0, h1)
    return np.minimum(inner, _min(edges, axis=-1))


def score(objective: str, vout: np.ndarray, axis: np.ndarray) -> np.ndarray:
    if objective == "swing":
        return swing_v(vout)
    if objective == "linearity":
        return nonlinearity_pct(vout, axis)
    if objective == "sensitivity":
        return min_sensitivity(vout, axis)
    if objective in BUDGET_OBJECTIVES:
        raise ValueError(f"the {objective} objective needs the error budget: use app.budget.range_worst")
    raise KeyError(objective)


def loss(objective: str, scores: np.ndarray) -> np.ndarray:
    """Scores turned so that smaller is always better (for ranking)."""
    return -DIRECTION[objective] * scores


def metrics(vout: np.ndarray, axis: np.ndarray, power: np.ndarray, even: bool = False) -> dict[str, np.ndarray]:
    """``even``: the axis is known to be evenly spaced (see :func:`min_sensitivity`)."""
    span = swing_v(vout)
    return {
        "swing_v": span,
        "nonlinearity_pct": nonlinearity_pct(vout, axis, span),
        "min_sensitivity": min_sensitivity(vout, axis, even),
        "max_sensor_power_w": _max(power, axis=-1),
    }
