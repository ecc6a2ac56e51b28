"""``POST /api/trip``: comparator trip points with hysteresis (contract), plus spread and trim.

The request and response models live here; :func:`solve_trip` turns a
validated request into the response dict and is shared by the route, the
page (app/pages/alarms.py) and the CLI (``ohmpick trip``).
"""

from __future__ import annotations

from typing import Any, Literal, Optional

from fastapi import APIRouter, Request
from pydantic import BaseModel, Field

from app import constants as K
from app import schemas, service
from app.parts import Library
from app.units import format_resistance
from app.trip import DEFAULT_MAX_OHM, DEFAULT_MIN_OHM, TripDesign, TripSpec, quiet
from app.trip_adjust import Adjust, adjust
from app.trip_solve import design
from app.trip_spread import MAX_SAMPLES, PERCENTILES, Spread, Tolerances, spread
from app.api.errors import ERROR_RESPONSES

router = APIRouter(prefix="/api", responses=ERROR_RESPONSES)


# --- request -----------------------------------------------------------------

class TargetIn(schemas.Strict):
    trip: float = Field(description="Stimulus at which the output changes as it moves away from normal (°C, lux, travel)")
    release: float = Field(description="Stimulus at which it changes back: below trip for an over-temperature "
                                       "alarm, above it for a dusk switch")


class DetectorIn(schemas.Strict):
    output_high_v: Optional[float] = Field(None, ge=-1000, le=1000, description="Comparator output high level, V (default: supply_v)")
    output_low_v: float = Field(0.0, ge=-1000, le=1000, description="Comparator output low level, V")


class TripLimitsIn(schemas.Strict):
    min_ohm: schemas.Ohm = Field(DEFAULT_MIN_OHM, description="Smallest resistor to use")
    max_ohm: schemas.Ohm = Field(DEFAULT_MAX_OHM, description="Largest resistor to use")
    max_sensor_power_w: Optional[float] = Field(None, gt=0, description="Most power allowed in the sensor, W (self-heating)")


class TolerancesIn(schemas.Strict):
    resistor_pct: float = Field(0.0, ge=0, le=50, description="Each of the four resistors, ± %")
    sensor_pct: Optional[float] = Field(None, ge=0, le=50, description="Sensor resistance at its nominal point, ± % "
                                        "(default: the library part's, else 0)")
    beta_pct: Optional[float] = Field(None, ge=0, le=50, description="β of an ntc_beta sensor, ± % (default: the part's)")
    gamma_pct: Optional[float] = Field(None, ge=0, le=50, description="γ of an ldr sensor, ± % (default: the part's)")
    supply_pct: float = Field(0.0, ge=0, le=50, description="Supply, ± % (cancels when the output swings to the supply)")
    offset_v: float = Field(0.0, ge=0, le=1, description="Comparator input offset, ± V")


class MonteCarloIn(schemas.Strict):
    samples: int = Field(5000, ge=100, le=MAX_SAMPLES)
    seed: int = Field(1, ge=0, le=2**32 - 1)
    distribution: Literal["uniform", "normal"] = Field("normal", description="normal: tolerance = 3σ, truncated at it")


class AdjustIn(schemas.Strict):
    min: float = Field(description="Lowest trip stimulus the trimmer must reach")
    max: float = Field(description="Highest trip stimulus the trimmer must reach")
    pot_tolerance_pct: float = Field(20.0, ge=0, le=50, description="Trimmer track tolerance, ± % (covered at both ends)")


class TripIn(schemas.Strict):
    sensor: schemas.SensorIn
    supply_v: float = Field(ge=0.1, le=1000, description="Supply of the sensor divider and the reference network, V")
    sensor_at: K.SensorAt = Field("bottom", description="Sensor position in its divider")
    target: TargetIn
    series: K.SeriesName = "E24"
    detector: DetectorIn = Field(default_factory=DetectorIn)
    limits: TripLimitsIn = Field(default_factory=TripLimitsIn)
    reference_ohm: Optional[schemas.Ohm] = Field(None, description="Wanted resistance seen at the reference node "
                                                 "(default: the sensor divider's own at the trip)")
    output_at_trip: Optional[Literal["high", "low"]] = Field(None, description="Refuse a design whose output goes the other way")
    dissipation_w_per_k: Optional[float] = Field(None, gt=0, le=10, description="Sensor dissipation constant, W/K "
                                                 "(default: the library part's): reports self-heating at the trip")
    tolerances: Optional[TolerancesIn] = None
    monte_carlo: Optional[MonteCarloIn] = None
    adjust: Optional[AdjustIn] = None


# --- response ----------------------------------------------------------------

class ReferenceOut(BaseModel):
    top_ohm: float
    bottom_ohm: float


class LevelsOut(BaseModel):
    upper: float
    lower: float


class PairOut(BaseModel):
    trip: Optional[float]
    release: Optional[float]


class ExactOut(BaseModel):
    fixed_ohm: float
    top_ohm: float
    bottom_ohm: float
    hysteresis_ohm: float


class RangeOut(BaseModel):
    min: float
    max: float


class SpreadOut(BaseModel):
    tolerances: dict[str, float]
    corners: int
    worst_case: dict[str, RangeOut] = Field(description="trip and release over every tolerance corner")
    monte_carlo: dict[str, Any] = Field(description="samples, seed, distribution and trip/release percentiles "
                                        + ", ".join(PERCENTILES))
    min_hysteresis: float = Field(description="smallest |trip − release| seen, stimulus axis units")


class AdjustOut(BaseModel):
    arrangement: str
    top_ohm: float
    pot_ohm: float
    bottom_ohm: float
    hysteresis_ohm: float
    exact: dict[str, float]
    pot_tolerance_pct: float
    position: list[float] = Field(description="wiper travel from the ground end, 0..1")
    trip: list[Optional[float]]
    release: list[Optional[float]]
    covered: dict[str, float] = Field(description="trip at the ground-end and supply-end stops (nominal trimmer)")
    guaranteed: RangeOut = Field(description="trip range reachable whatever the trimmer's value within tolerance")
    position_for_target: Optional[float]


class TripOut(BaseModel):
    fixed_ohm: float
    reference: ReferenceOut
    hysteresis_ohm: float
    thresholds_v: LevelsOut
    achieved: PairOut
    output_at_trip: Literal["high", "low"]
    target: PairOut
    error: PairOut = Field(description="achieved − target (stimulus units)")
    series: str
    sensor_at: str
    supply_v: float
    output_v: LevelsOut = Field(description="comparator output levels used (upper: high, lower: low)")
    comparator: dict[str, str] = Field(description="which input each divider feeds")
    exact: ExactOut
    sensor_v: PairOut = Field(description="sensor divider output at the target trip and release")
    hysteresis_v: float
    reference_thevenin_ohm: float
    sensor_power_w: PairOut
    stimulus_unit: str
    warnings: list[str]
    self_heating_c: Optional[PairOut] = Field(description="first-order self-heating P/δ when the dissipation constant is known")
    spread: Optional[SpreadOut] = Field(description="with tolerances or monte_carlo in the request")
    adjust: Optional[AdjustOut] = Field(description="with adjust in the request")


# --- service -----------------------------------------------------------------

def _part(req: TripIn, library: Library):
    return library.get(req.sensor.part) if isinstance(req.sensor, schemas.PartRef) else None


def spec_of(req: TripIn, library: Library) -> TripSpec:
    sensor = service.sensor_of(req.sensor, library)
    return TripSpec(
        sensor=sensor, supply_v=req.supply_v, trip=req.target.trip, release=req.target.release,
        sensor_at=req.sensor_at, series=req.series,
        output_high_v=req.detector.output_high_v, output_low_v=req.detector.output_low_v,
        min_ohm=req.limits.min_ohm, max_ohm=req.limits.max_ohm, max_sensor_power_w=req.limits.max_sensor_power_w,
        reference_ohm=req.reference_ohm, output_at_trip=req.output_at_trip,
    )


def tolerances_of(req: TripIn, library: Library, kind: str) -> Tolerances:
    """The request's tolerances; sensor ones left out come from the library part."""
    given = req.tolerances or TolerancesIn()
    part = _part(req, library)
    stated = dict(part.tolerances) if part else {}
    if "sensor_pct" not in stated and "r0_pct" in stated:  # an RTD's R0 spread is its resistance spread
        stated["sensor_pct"] = stated["r0_pct"]
    values = given.model_dump()
    for name, applies in (("sensor_pct", True), ("beta_pct", kind == "ntc_beta"), ("gamma_pct", kind == "ldr")):
        if values[name] is None:
            values[name] = float(stated.get(name, 0.0)) if applies else 0.0
    return Tolerances(**values)


def _clean(value: float) -> Optional[float]:
    return value if value == value and abs(value) != float("inf") else None


def _pair(trip: float, release: float) -> dict[str, Optional[float]]:
    return {"trip": _clean(float(trip)), "release": _clean(float(release))}


def design_dict(d: TripDesign) -> dict[str, Any]:
    spec, net, sensor = d.spec, d.network, d.spec.sensor
    rp = 1.0 / (1.0 / net.top_ohm + 1.0 / net.bottom_ohm + 1.0 / net.hysteresis_ohm)
    return {
        "fixed_ohm": net.fixed_ohm,
        "reference": {"top_ohm": net.top_ohm, "bottom_ohm": net.bottom_ohm},
        "hysteresis_ohm": net.hysteresis_ohm,
        "thresholds_v": {"upper": d.upper_v, "lower": d.lower_v},
        "achieved": _pair(d.achieved_trip, d.achieved_release),
        "output_at_trip": d.output_at_trip,
        "target": _pair(spec.trip, spec.release),
        "error": _pair(d.achieved_trip - spec.trip, d.achieved_release - spec.release),
        "series": spec.series,
        "sensor_at": spec.sensor_at,
        "supply_v": spec.supply_v,
        "output_v": {"upper": spec.v_high, "lower": spec.output_low_v},
        "comparator": {"inverting": "sensor divider output", "non_inverting": "reference node (with the feedback)"},
        "exact": vars(d.exact).copy(),
        "sensor_v": _pair(d.sensor_v["trip"], d.sensor_v["release"]),
        "hysteresis_v": d.upper_v - d.lower_v,
        "reference_thevenin_ohm": rp,
        "sensor_power_w": _pair(d.sensor_power_w["trip"], d.sensor_power_w["release"]),
        "stimulus_unit": sensor.stimulus_unit,
        "warnings": list(d.warnings),
        "self_heating_c": None,
        "spread": None,
        "adjust": None,
    }


def spread_dict(s: Spread) -> dict[str, Any]:
    return {
        "tolerances": vars(s.tolerances).copy(),
        "corners": s.corners,
        "worst_case": {"trip": {"min": s.trip_range[0], "max": s.trip_range[1]},
                       "release": {"min": s.release_range[0], "max": s.release_range[1]}},
        "monte_carlo": {"samples": s.samples, "seed": s.seed, "distribution": s.distribution,
                        "trip": s.percentiles(s.mc_trip), "release": s.percentiles(s.mc_release)},
        "min_hysteresis": s.min_gap,
    }


def adjust_dict(a: Adjust, d: TripDesign) -> dict[str, Any]:
    return {
        "arrangement": "trimmer between top_ohm and bottom_ohm, wiper as the reference node",
        "top_ohm": a.top_ohm, "pot_ohm": a.pot_ohm, "bottom_ohm": a.bottom_ohm,
        "hysteresis_ohm": d.network.hysteresis_ohm, "exact": dict(a.exact),
        "pot_tolerance_pct": a.pot_tolerance_pct,
        "position": [float(x) for x in a.position],
        "trip": service.clean(a.trip), "release": service.clean(a.release),
        "covered": {"ground_end": a.covered[0], "supply_end": a.covered[1]},
        "guaranteed": {"min": a.guaranteed[0], "max": a.guaranteed[1]},
        "position_for_target": _clean(a.position_for_target),
    }


@quiet
def run(req: TripIn, library: Library) -> tuple[TripDesign, Optional[Spread], Optional[Adjust], dict[str, Any]]:
    """Design, spread and trim for one request: (design, spread, adjust, response dict)."""
    d = design(spec_of(req, library))
    out = design_dict(d)
    part = _part(req, library)
    out["warnings"] += service.range_warnings(req.sensor, min(req.target.trip, req.target.release),
                                              max(req.target.trip, req.target.release), library)
    delta = req.dissipation_w_per_k or (part.dissipation_w_per_k if part else None)
    if delta and d.spec.sensor.quantity == "temperature":
        # First-order self-heating ΔT = P/δ (design notes §2): the sensor reads warm by this much.
        out["self_heating_c"] = _pair(d.sensor_power_w["trip"] / delta, d.sensor_power_w["release"] / delta)
    s = a = None
    if req.tolerances is not None or req.monte_carlo is not None:
        mc = req.monte_carlo or MonteCarloIn()
        s = spread(d, tolerances_of(req, library, d.spec.sensor.kind), mc.samples, mc.seed, mc.distribution)
        out["spread"] = spread_dict(s)
    if req.adjust is not None:
        a = adjust(d, req.adjust.min, req.adjust.max, req.adjust.pot_tolerance_pct)
        out["adjust"] = adjust_dict(a, d)
    return d, s, a, out


def solve_trip(req: TripIn, library: Library) -> dict[str, Any]:
    return run(req, library)[3]


def describe(out: dict[str, Any]) -> str:
    """The response as a few readable lines (``ohmpick trip`` without ``--json``)."""
    unit = out["stimulus_unit"]
    got, want = out["achieved"], out["target"]
    num = lambda v: "—" if v is None else f"{v:.4g}"
    lines = [
        f"trip {num(got['trip'])} {unit} (asked {num(want['trip'])}), release {num(got['release'])} {unit} "
        f"(asked {num(want['release'])}); the output goes {out['output_at_trip']} at the trip",
        f"levels: upper {out['thresholds_v']['upper']:.4f} V, lower {out['thresholds_v']['lower']:.4f} V "
        f"(band {out['hysteresis_v'] * 1e3:.3g} mV)",
        f"resistors ({out['series']}):",
        f"  fixed (sensor divider)       {format_resistance(out['fixed_ohm']):>10}",
        f"  reference top (supply to +)  {format_resistance(out['reference']['top_ohm']):>10}",
        f"  reference bottom (+ to 0 V)  {format_resistance(out['reference']['bottom_ohm']):>10}",
        f"  hysteresis (output to +)     {format_resistance(out['hysteresis_ohm']):>10}",
        "sensor divider → comparator − input; reference node → + input",
    ]
    if out.get("spread"):
        wc, mc = out["spread"]["worst_case"], out["spread"]["monte_carlo"]
        lines.append(f"worst case: trip {wc['trip']['min']:.4g} .. {wc['trip']['max']:.4g} {unit}, "
                     f"release {wc['release']['min']:.4g} .. {wc['release']['max']:.4g} {unit}")
        lines.append(f"Monte Carlo ({mc['samples']} builds, 99.73 %): trip {num(mc['trip']['p0_135'])} .. "
                     f"{num(mc['trip']['p99_865'])} {unit}, release {num(mc['release']['p0_135'])} .. "
                     f"{num(mc['release']['p99_865'])} {unit}")
    if out.get("adjust"):
        a = out["adjust"]
        lines.append(f"trimmer {format_resistance(a['pot_ohm'])} between {format_resistance(a['top_ohm']) if a['top_ohm'] else '0 Ω'}"
                     f" (top) and {format_resistance(a['bottom_ohm']) if a['bottom_ohm'] else '0 Ω'} (bottom): trip "
                     f"{a['covered']['ground_end']:.4g} {unit} at the ground end to {a['covered']['supply_end']:.4g} {unit} "
                     f"at the supply end")
    lines += [f"warning: {w}" for w in out["warnings"]]
    return "\n".join(lines)


@router.post("/trip", response_model=TripOut, tags=["trip"],
             summary="Comparator trip and release with hysteresis: fixed, reference and feedback resistors")
def trip(body: TripIn, request: Request) -> dict[str, Any]:
    """Sensor divider → comparator inverting input; reference divider + feedback resistor → non-inverting input.

    Optional: ``tolerances``/``monte_carlo`` add the spread of the achieved
    trip and release; ``adjust`` adds a trimmer in the reference divider
    whose travel covers a trip range.
    """
    return solve_trip(body, request.app.state.library)
