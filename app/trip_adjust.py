"""Adjustable trip: a trimmer in the reference divider.

Arrangement: supply → ``top_ohm`` → trimmer track → ``bottom_ohm`` →
ground, the wiper is the reference node (comparator + input) and
``hysteresis_ohm`` runs from the output to the wiper. At position x (from
the ground end) the reference sees top' = Rt + (1 − x)·P and
bottom' = Rb + x·P, so the levels of app/trip.py apply unchanged. The
sensor divider and the hysteresis resistor are those of the fixed design.

The trimmer value and the two end resistors are chosen together, in one
broadcast over trimmer values (1-2-5 sequence) × top values × bottom values
(the design's series, 0 Ω allowed: an end stop straight to a rail), so that
the trip covers the range the user gives at the trimmer's nominal value and
at both ends of its tolerance, with the least extra span (the finest
setting). Shapes: ``position`` (n,); results (n,).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app import series
from app.circuit import respond
from app.errors import InputError
from app.trip import TripDesign, crossing, levels, quiet

# Trimmers are sold in a 1-2-5 sequence (common practice, no published source).
TRIMMER_MANTISSAS = (1.0, 2.0, 5.0)
TRIMMER_DECADES = range(1, 8)        # 10 Ω .. 50 MΩ
POSITIONS = 101
SPAN_FACTORS = (1 / 5, 1.5)          # end resistors searched from exact/5 to 1.5·exact
STRING_FACTOR = 1.5                  # end resistors + trimmer within this factor of the design's top + bottom
FALLBACK_SERIES = "E96"              # for "exact" designs: fixed resistors still have to be bought


@dataclass(frozen=True)
class Adjust:
    lo: float
    hi: float
    pot_tolerance_pct: float
    top_ohm: float
    pot_ohm: float
    bottom_ohm: float
    exact: dict                     # continuous top, pot, bottom
    position: np.ndarray            # (n,) travel from the ground end
    trip: np.ndarray                # (n,) achieved trip at each position
    release: np.ndarray             # (n,) achieved release at each position
    covered: tuple[float, float]    # trip at the two end stops (ground end, supply end), nominal trimmer
    guaranteed: tuple[float, float] # range covered whatever the trimmer's value within tolerance
    position_for_target: float      # where the design's own trip is (NaN if outside the travel)


def trimmer_values() -> np.ndarray:
    return np.array([m * 10.0**d for d in TRIMMER_DECADES for m in TRIMMER_MANTISSAS])


def _bottom_fraction(d: TripDesign, v, total: float) -> np.ndarray:
    """Share f of the string ``total`` below the wiper that puts the trip level at ``v`` (closed form).

    With top = (1−f)S, bottom = fS and Vo the output before the trip, the
    nodal equation is −(v − Vo)q·f² + ((v − Vo)q − Vs)·f + v = 0, q = S/Rh.
    """
    spec = d.spec
    vo = spec.v_high if d.rising else spec.output_low_v
    q = total / d.network.hysteresis_ohm
    a = -(np.asarray(v) - vo) * q
    b = (np.asarray(v) - vo) * q - spec.supply_v
    c = np.asarray(v, float)
    with np.errstate(invalid="ignore", divide="ignore"):
        disc = np.sqrt(b * b - 4 * a * c)
        roots = np.stack([(-b - disc) / (2 * a), (-b + disc) / (2 * a)])
        linear = -c / b
    roots = np.where(np.abs(a) < 1e-15, linear, roots)
    ok = (roots > 0) & (roots < 1)
    return np.where(ok[1], roots[1], np.where(ok[0], roots[0], np.nan))


def _candidates(name: str, exact: float, min_ohm: float) -> np.ndarray:
    lo, hi = exact * SPAN_FACTORS[0], exact * SPAN_FACTORS[1]
    values = series.values_between(name, max(lo, min_ohm), max(hi, min_ohm)) if hi >= min_ohm else np.empty(0)
    return np.concatenate([[0.0], values])


@quiet
def adjust(d: TripDesign, lo: float, hi: float, pot_tolerance_pct: float = 20.0) -> Adjust:
    """Trimmer and end resistors whose travel covers trip stimulus ``lo`` .. ``hi``."""
    spec, sensor, net = d.spec, d.spec.sensor, d.network
    for name, value in (("adjust.min", lo), ("adjust.max", hi)):
        sensor.check_stimulus(np.array(value), field=name)
    if hi <= lo:
        raise InputError("adjust.max", f"must be above adjust.min ({lo:g}), got {hi:g}")
    if not 0.0 <= pot_tolerance_pct <= 50.0:
        raise InputError("adjust.pot_tolerance_pct", f"must lie within 0 .. 50 %, got {pot_tolerance_pct:g}")

    v_ends = respond(sensor, spec.circuit, np.array([lo, hi]), net.fixed_ohm).vout_v
    v_lo, v_hi = float(np.min(v_ends)), float(np.max(v_ends))
    total = net.top_ohm + net.bottom_ohm
    f = _bottom_fraction(d, np.array([v_lo, v_hi]), total)
    if not np.all(np.isfinite(f)):
        raise InputError("adjust", "puts the trip level where the reference network cannot reach")
    exact = {"top_ohm": float((1 - f[1]) * total), "pot_ohm": float((f[1] - f[0]) * total),
             "bottom_ohm": float(f[0] * total)}

    name = FALLBACK_SERIES if spec.series == "exact" else spec.series
    pots = trimmer_values()
    pots = pots[(pots >= exact["pot_ohm"] * 0.5) & (pots <= exact["pot_ohm"] * 10)]
    if pots.size == 0:
        raise InputError("adjust", f"needs a trimmer of about {exact['pot_ohm']:.3g} Ω, outside 10 Ω .. 50 MΩ")
    tops = _candidates(name, exact["top_ohm"], spec.min_ohm)
    bottoms = _candidates(name, exact["bottom_ohm"], spec.min_ohm)
    tol = np.array([1 - pot_tolerance_pct / 100, 1.0, 1 + pot_tolerance_pct / 100])
    # (tolerance 3, pot p, top t, bottom b, end 2): level of the trip at both end stops.
    p = (pots[None, :, None, None] * tol[:, None, None, None])[..., None]
    rt, rb = tops[None, None, :, None, None], bottoms[None, None, None, :, None]
    x = np.array([0.0, 1.0])
    trip_level = _trip_level(d, rt + (1 - x) * p, rb + x * p)
    covers = np.all((trip_level[..., 0] <= v_lo) & (trip_level[..., 1] >= v_hi), axis=0)
    ends = crossing(sensor, trip_level[1], spec.supply_v, net.fixed_ohm, spec.sensor_at)
    span = np.abs(sensor.to_axis(ends[..., 1]) - sensor.to_axis(ends[..., 0]))
    # The string's total sets the hysteresis (design notes: Vu − Vl = ΔVo·Rp/Rh):
    # keep it near the design's so the band stays what was asked for.
    string = (rt + rb + pots[None, :, None, None, None])[0, ..., 0]
    near = np.abs(np.log(string / total)) <= np.log(STRING_FACTOR)
    score = np.where(covers & np.isfinite(span), span, np.inf)
    if np.isfinite(np.where(near, score, np.inf)).any():
        score = np.where(near, score, np.inf)
    if not np.isfinite(score).any():
        raise InputError("adjust", f"no trimmer and {name} end resistors cover {lo:g} .. {hi:g} "
                         f"{sensor.stimulus_unit} with this design: narrow the range or move the trip")
    ip, it, ib = np.unravel_index(int(np.argmin(score)), score.shape)
    pot, top, bottom = float(pots[ip]), float(tops[it]), float(bottoms[ib])

    position = np.linspace(0.0, 1.0, POSITIONS)
    trip, release = _sweep(d, top + (1 - position) * pot, bottom + position * pot)
    guaranteed = crossing(sensor, np.array([np.max(trip_level[:, ip, it, ib, 0]), np.min(trip_level[:, ip, it, ib, 1])]),
                          spec.supply_v, net.fixed_ohm, spec.sensor_at)
    axis = sensor.to_axis(trip)
    order = np.argsort(axis)
    target = float(np.interp(sensor.to_axis(spec.trip), axis[order], position[order], left=np.nan, right=np.nan))
    return Adjust(
        lo=lo, hi=hi, pot_tolerance_pct=pot_tolerance_pct, top_ohm=top, pot_ohm=pot, bottom_ohm=bottom,
        exact=exact, position=position, trip=trip, release=release,
        covered=(float(trip[0]), float(trip[-1])),
        guaranteed=(float(np.min(guaranteed)), float(np.max(guaranteed))),
        position_for_target=target,
    )


def _trip_level(d: TripDesign, top, bottom):
    up, low = levels(d.spec.supply_v, top, bottom, d.network.hysteresis_ohm, d.spec.v_high, d.spec.output_low_v)
    return up if d.rising else low


def _sweep(d: TripDesign, top, bottom):
    """(trip, release) stimulus for reference arms ``top`` and ``bottom`` (n,)."""
    spec = d.spec
    up, low = levels(spec.supply_v, top, bottom, d.network.hysteresis_ohm, spec.v_high, spec.output_low_v)
    trip_v, release_v = (up, low) if d.rising else (low, up)
    args = (spec.supply_v, d.network.fixed_ohm, spec.sensor_at)
    return crossing(spec.sensor, trip_v, *args), crossing(spec.sensor, release_v, *args)
