"""The solver's objectives and the metrics reported beside them (contract).

Every function takes ``vout`` (k, n) V over ``axis`` (n,) stimulus-axis
values and returns (k,) arrays, one per candidate.
"""

from __future__ import annotations

import numpy as np

# +1: larger is better; -1: smaller is better.
DIRECTION = {"swing": 1.0, "linearity": -1.0, "sensitivity": 1.0}
SCORE_UNIT = {"swing": "V", "linearity": "%", "sensitivity": "V per axis unit"}


def swing_v(vout: np.ndarray) -> np.ndarray:
    return np.abs(vout[..., -1] - vout[..., 0])


def nonlinearity_pct(vout: np.ndarray, axis: np.ndarray) -> np.ndarray:
    """End-point nonlinearity: worst distance from the chord, % of the swing."""
    frac = (axis - axis[0]) / (axis[-1] - axis[0])
    chord = vout[..., :1] + (vout[..., -1:] - vout[..., :1]) * frac
    span = swing_v(vout)
    worst = np.max(np.abs(vout - chord), axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(span > 0, worst / span * 100.0, np.inf)


def min_sensitivity(vout: np.ndarray, axis: np.ndarray) -> np.ndarray:
    """Smallest |dVout/ds| on the grid, by numpy.gradient with default edges."""
    return np.min(np.abs(np.gradient(vout, axis, axis=-1)), axis=-1)


def score(objective: str, vout: np.ndarray, axis: np.ndarray) -> np.ndarray:
    if objective == "swing":
        return swing_v(vout)
    if objective == "linearity":
        return nonlinearity_pct(vout, axis)
    if objective == "sensitivity":
        return min_sensitivity(vout, axis)
    raise KeyError(objective)


def loss(objective: str, scores: np.ndarray) -> np.ndarray:
    """Scores turned so that smaller is always better (for ranking)."""
    return -DIRECTION[objective] * scores


def metrics(vout: np.ndarray, axis: np.ndarray, power: np.ndarray) -> dict[str, np.ndarray]:
    return {
        "swing_v": swing_v(vout),
        "nonlinearity_pct": nonlinearity_pct(vout, axis),
        "min_sensitivity": min_sensitivity(vout, axis),
        "max_sensor_power_w": np.max(power, axis=-1),
    }
