"""Choosing the trip circuit's four resistors (series values) for a trip and a release.

The reference node is a weighted mean of Vs, 0 V and the output Vo with
weights wt, wb, wh (sum 1; app/trip.py has the nodal equation). For the two
levels Vu (output high, Voh) and Vl (output low, Vol):
    wh = (Vu − Vl)/(Voh − Vol),  wt = (Vl − wh·Vol)/Vs,  wb = 1 − wt − wh,
and Rx = Rp/wx, Rp the resistance seen at the reference node (all three in
parallel), the one free scale. The series search then tries neighbouring
series values of all four resistors, over a few impedance scales, in one
numpy broadcast and keeps the combination whose achieved trip and release
miss the target least.
"""

from __future__ import annotations

import math
from typing import Optional

import numpy as np

from app import series
from app.circuit import respond
from app.errors import InputError
from app.trip import Network, TripDesign, TripSpec, crossing, levels, quiet

NEIGHBOURS = 3              # series values tried on each side of every exact resistor
# Impedance scales of the reference network tried by the series search: the
# wanted one first (ties go to it), then up to ±half a decade in 1/24 steps.
SCALES = 10.0 ** (np.array([0] + [s * j for j in range(1, 13) for s in (1, -1)]) / 24.0)
# Errors within this share of the hysteresis count as equal in the series search.
ACCEPT_SHARE = 0.005
# Warn when a series error eats this share of the hysteresis (rule of thumb).
ERROR_WARN_SHARE = 0.25


def around(series_name: str, ohm, count: int = NEIGHBOURS) -> np.ndarray:
    """The ``count`` series values below and above each ``ohm``: shape ohm.shape + (2·count,)."""
    below, above = series.neighbours(series_name, np.atleast_1d(np.asarray(ohm, float)))
    lower, upper = [below], [above]
    for _ in range(count - 1):
        lower.insert(0, series.neighbours(series_name, lower[0] * (1 - 1e-6))[0])
        upper.append(series.neighbours(series_name, upper[-1] * (1 + 1e-6))[1])
    out = np.stack(lower + upper, axis=-1)
    return out.reshape(np.shape(ohm) + (2 * count,))


# --- the design ---------------------------------------------------------------

def _fixed_target(spec: TripSpec, r_trip: float, r_release: float) -> float:
    """Geometric mean of the sensor's two resistances, raised if the power limit asks.

    sqrt(R_trip·R_release) maximises |V(trip) − V(release)| (the unloaded
    swing optimum, design notes §3), so the hysteresis band is as wide in
    volts as the sensor allows and comparator offset and noise matter least.
    """
    target = math.sqrt(r_trip * r_release)
    if spec.max_sensor_power_w is not None:
        # P = Vs²·Rs/(Rs + Rf)² ≤ Pmax  ⇔  Rf ≥ Vs·sqrt(Rs/Pmax) − Rs.
        need = max(spec.supply_v * math.sqrt(r / spec.max_sensor_power_w) - r for r in (r_trip, r_release))
        if need > spec.max_ohm:
            raise InputError("limits.max_sensor_power_w", f"needs a fixed resistor of at least {need:.4g} Ω, "
                             f"above limits.max_ohm ({spec.max_ohm:g} Ω)")
        target = max(target, need)
    return float(np.clip(target, spec.min_ohm, spec.max_ohm))


def _level_fields(rising: bool) -> tuple[str, str]:
    """(field of the upper level, field of the lower level)."""
    return ("target.trip", "target.release") if rising else ("target.release", "target.trip")


def reference_weights(spec: TripSpec, upper, lower, rising: bool):
    """(wt, wb, wh) of the reference node for the two levels; InputError if unreachable. Vectorised."""
    vh, vl, vs = spec.v_high, spec.output_low_v, spec.supply_v
    upper, lower = np.asarray(upper, float), np.asarray(lower, float)
    wh = (upper - lower) / (vh - vl)
    wt = (lower - wh * vl) / vs
    wb = 1.0 - wt - wh
    up_field, low_field = _level_fields(rising)
    u, lo = float(np.max(upper)), float(np.min(lower))
    if np.any(wh >= 1.0):
        raise InputError("target.release", f"the band of {float(np.max(upper - lower)):.4g} V is wider than the "
                         f"output swing ({vh - vl:g} V): bring release closer to trip or widen the detector's output swing")
    if np.any(wt <= 0):
        raise InputError(low_field, f"needs a lower level of {lo:.4g} V, which the network cannot reach with the "
                         f"output low at {vl:g} V (at least {float(np.max(wh * vl)):.4g} V): lower "
                         "detector.output_low_v or move this target")
    if np.any(wb <= 0):
        raise InputError(up_field, f"needs an upper level of {u:.4g} V, which the network cannot reach from a "
                         f"{vs:g} V supply with the output high at {vh:g} V: move this target or the sensor's position")
    return wt, wb, wh


def _scale(spec: TripSpec, weights, wanted, rising: bool):
    """Rp for each candidate: the wanted one, clipped so every resistor stays within the limits."""
    w = np.stack(weights)
    lo = spec.min_ohm * np.max(w, axis=0)
    hi = spec.max_ohm * np.min(w, axis=0)
    if np.any(lo > hi):
        # The smallest weight makes the largest resistor: name what it comes from.
        up_field, low_field = _level_fields(rising)
        smallest = int(np.argmin(np.min(w, axis=1)))
        name = (low_field, up_field, "target.release")[smallest]
        raise InputError(name, f"needs resistor ratios beyond {spec.min_ohm:g} Ω .. {spec.max_ohm:g} Ω "
                         "(limits): widen the hysteresis, move the threshold away from the rail or widen the limits")
    return np.clip(wanted, lo, hi)


def _reference(spec: TripSpec, fixed: np.ndarray, r_trip: float, rising: Optional[bool] = None,
               scales: Optional[np.ndarray] = None):
    """Exact reference network for each fixed candidate (k,): (rising, top, bottom, hysteresis).

    With ``scales`` (J,), each of the three is (k, J): the same levels at
    impedances scaled by each factor (within the limits).
    """
    targets = np.array([spec.trip, spec.release])
    v = respond(spec.sensor, spec.circuit, targets, fixed[:, None]).vout_v
    v_trip, v_release = v[:, 0], v[:, 1]
    if rising is None:
        rising = bool(v_trip[0] > v_release[0])
    upper, lower = np.maximum(v_trip, v_release), np.minimum(v_trip, v_release)
    weights = reference_weights(spec, upper, lower, rising)
    if spec.reference_ohm is not None:
        wanted = np.full_like(fixed, spec.reference_ohm)
    else:
        # Match the sensor divider's own source resistance at the trip: the
        # comparator's input bias currents then shift both inputs alike.
        wanted = r_trip * fixed / (r_trip + fixed)
    rp = _scale(spec, weights, wanted, rising)
    wt, wb, wh = weights
    if scales is not None:
        # Other impedance levels of the same ratios, for the series search: (k, J).
        lo = spec.min_ohm * np.max(np.stack(weights), axis=0)
        hi = spec.max_ohm * np.min(np.stack(weights), axis=0)
        rp = np.clip(rp[:, None] * scales, lo[:, None], hi[:, None])
        wt, wb, wh = wt[:, None], wb[:, None], wh[:, None]
    return rising, rp / wt, rp / wb, rp / wh


def _check_direction(spec: TripSpec, rising: bool) -> None:
    actual = "low" if rising else "high"
    if spec.output_at_trip is not None and spec.output_at_trip != actual:
        other = "top" if spec.sensor_at == "bottom" else "bottom"
        raise InputError("output_at_trip", f"with the sensor at the {spec.sensor_at} the output goes {actual} at "
                         f"the trip; put the sensor at the {other} (sensor_at) for '{spec.output_at_trip}', "
                         "or invert the output after the comparator")


@quiet
def design(spec: TripSpec) -> TripDesign:
    """Choose the fixed, reference and hysteresis resistors (series values) for the target."""
    sensor = spec.sensor
    targets = np.array([spec.trip, spec.release])
    r_trip, r_release = (float(r) for r in sensor.resistance(targets))
    if not (np.isfinite(r_trip) and np.isfinite(r_release) and r_trip > 0 and r_release > 0):
        raise InputError("target.trip", "the sensor has no finite resistance at this stimulus")
    geo = _fixed_target(spec, r_trip, r_release)
    rising, *exact_ref = _reference(spec, np.array([geo]), r_trip)
    _check_direction(spec, rising)
    exact = Network(geo, *(float(x[0]) for x in exact_ref))
    if spec.series == "exact":
        rf, rt, rb, rh = (np.array([x]) for x in (exact.fixed_ohm, exact.top_ohm, exact.bottom_ohm, exact.hysteresis_ohm))
        shape = (1,)
    else:
        fixed = around(spec.series, geo)
        fixed = fixed[(fixed >= spec.min_ohm * (1 - 1e-9)) & (fixed <= spec.max_ohm * (1 + 1e-9))]
        if spec.max_sensor_power_w is not None:
            power = respond(sensor, spec.circuit, targets, fixed[:, None]).sensor_power_w
            fixed = fixed[np.all(power <= spec.max_sensor_power_w * (1 + 1e-9), axis=1)]
        if fixed.size == 0:
            raise InputError("limits", f"no {spec.series} value near {geo:.4g} Ω lies within the limits")
        fixed = np.unique(fixed)
        _, top, bottom, hyst = _reference(spec, fixed, r_trip, rising, SCALES)
        # Every combination of neighbours, per fixed candidate and impedance
        # scale: (k, J, n, n, n), one broadcast.
        rf = fixed[:, None, None, None, None]
        rt = around(spec.series, top)[:, :, :, None, None]
        rb = around(spec.series, bottom)[:, :, None, :, None]
        rh = around(spec.series, hyst)[:, :, None, None, :]
        shape = np.broadcast_shapes(rf.shape, rt.shape, rb.shape, rh.shape)
    up, low = levels(spec.supply_v, rt, rb, rh, spec.v_high, spec.output_low_v)
    trip_level, release_level = (up, low) if rising else (low, up)
    s_trip = crossing(sensor, trip_level, spec.supply_v, rf, spec.sensor_at)
    s_release = crossing(sensor, release_level, spec.supply_v, rf, spec.sensor_at)
    e_trip = np.abs(sensor.to_axis(s_trip) - sensor.to_axis(spec.trip))
    e_release = np.abs(sensor.to_axis(s_release) - sensor.to_axis(spec.release))
    score = np.maximum(e_trip, e_release) + 1e-3 * (e_trip + e_release)
    inside = np.ones(shape, bool)
    for r in (rt, rb, rh):
        inside &= (r >= spec.min_ohm * (1 - 1e-9)) & (r <= spec.max_ohm * (1 + 1e-9))
    score = np.where(inside & np.isfinite(score), np.broadcast_to(score, shape), np.inf)
    if not np.isfinite(score).any():
        raise InputError("series", f"no combination of {spec.series} values reaches the target within the limits")
    best = _pick(score, rf, geo, spec)
    pick = [float(np.broadcast_to(a, shape)[best]) for a in (rf, rt, rb, rh)]
    network = Network(*pick)
    upper_v, lower_v = (float(x) for x in levels(spec.supply_v, *pick[1:], spec.v_high, spec.output_low_v))
    trip_v, release_v = (upper_v, lower_v) if rising else (lower_v, upper_v)
    got = crossing(sensor, np.array([trip_v, release_v]), spec.supply_v, network.fixed_ohm, spec.sensor_at)
    resp = respond(sensor, spec.circuit, targets, network.fixed_ohm)
    powered = respond(sensor, spec.circuit, np.where(np.isfinite(got), got, targets), network.fixed_ohm)
    design_ = TripDesign(
        spec=spec, network=network, exact=exact, upper_v=upper_v, lower_v=lower_v,
        achieved_trip=float(got[0]), achieved_release=float(got[1]), rising=rising,
        sensor_v={"trip": float(resp.vout_v[0]), "release": float(resp.vout_v[1])},
        sensor_power_w={"trip": float(powered.sensor_power_w[0]), "release": float(powered.sensor_power_w[1])},
    )
    return _with_warnings(design_)


def _pick(score: np.ndarray, rf: np.ndarray, geo: float, spec: TripSpec) -> tuple:
    """Index of the chosen combination.

    Within ACCEPT_SHARE of the hysteresis of the best error, the wanted
    impedance scale and the geometric-mean fixed resistor are worth more
    than a last hundredth of a degree.
    """
    sensor = spec.sensor
    gap = abs(float(sensor.to_axis(spec.trip) - sensor.to_axis(spec.release)))
    good = score <= np.min(score) + ACCEPT_SHARE * gap
    if score.ndim == 5:
        penalty = np.abs(np.log10(SCALES))[None, :, None, None, None] + np.abs(np.log10(rf / geo))
    else:
        penalty = np.zeros(score.shape)
    ranked = np.where(good, np.broadcast_to(penalty, score.shape), np.inf)
    ties = ranked <= np.min(ranked) + 1e-12
    return np.unravel_index(int(np.argmin(np.where(ties, score, np.inf))), score.shape)


def _with_warnings(d: TripDesign) -> TripDesign:
    sensor, spec = d.spec.sensor, d.spec
    gap = abs(float(sensor.to_axis(spec.trip) - sensor.to_axis(spec.release)))
    err = max(abs(float(sensor.to_axis(d.achieved_trip) - sensor.to_axis(spec.trip))),
              abs(float(sensor.to_axis(d.achieved_release) - sensor.to_axis(spec.release))))
    notes = []
    if err > ERROR_WARN_SHARE * gap:
        notes.append(f"{spec.series} values miss the target by up to {err:.3g} {sensor.axis_unit}, "
                     f"a large share of the {gap:.3g} {sensor.axis_unit} hysteresis: try a finer series")
    band = d.upper_v - d.lower_v
    if band < 0.01:
        notes.append(f"the hysteresis band is only {band * 1e3:.3g} mV: comparator offset and noise are "
                     "of that order; compare with the comparator's offset voltage")
    return TripDesign(**{**d.__dict__, "warnings": notes})
