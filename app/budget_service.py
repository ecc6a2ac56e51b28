"""The error budget between the edges and the core: request in, JSON-ready dict out.

Used by ``POST /api/budget`` (JSON and CSV), the accuracy page and its view
endpoint. Field names in errors are the request's (``adc.bits``,
``tolerances.beta_pct``, ``monte_carlo.samples``).
"""

from __future__ import annotations

import csv
import io
from typing import Any, Optional

import numpy as np

from app import budget, montecarlo, service, settling
from app import constants as K
from app.accuracy_inputs import accuracy_of
from app.circuit import Circuit, needs_fixed, respond
from app.errors import InputError
from app.models.base import Sensor
from app.parts import Library

clean = service.clean
PCT_NAMES = {"adc_offset": "adc_offset_lsb"}


def setup_of(req: Any) -> budget.Accuracy:
    """Converter, tolerances, self-heating, leads and load knowledge of a budget request."""
    return accuracy_of(
        req,
        lead_ohm=req.lead_ohm or 0.0,
        duty_cycle=1.0 if req.duty_cycle is None else req.duty_cycle,
        firmware_knows_load=req.firmware_knows_load,
    )


def _max_at(values: np.ndarray, s: np.ndarray) -> dict[str, Optional[float]]:
    v = np.asarray(values, dtype=float)
    if not v.size or np.all(np.isnan(v)):
        return {"value": None, "at": None}
    i = int(np.nanargmax(v))
    return {"value": float(v[i]) if np.isfinite(v[i]) else None, "at": float(s[i])}


# Extreme but valid inputs (R0 = 1e300 Ω, b = 1e-50) overflow on the way; the budget
# turns what comes out non-finite into "unbounded" (null), so numpy need not shout.
QUIET = dict(over="ignore", invalid="ignore", divide="ignore", under="ignore")


def compute(req: Any, library: Library, sensor: Optional[Sensor] = None,
            circuit: Optional[Circuit] = None) -> tuple[budget.Budget, budget.Design, dict[str, Any]]:
    """(the core budget, its design, the JSON response) for a budget request."""
    with np.errstate(**QUIET):
        return _compute(req, library, sensor, circuit)


def _compute(req, library, sensor, circuit):
    sensor = sensor or service.sensor_of(req.sensor, library)
    circuit = circuit or service.circuit_of(req.circuit)
    if needs_fixed(sensor) and circuit.fixed_ohm is None:
        raise InputError("circuit.fixed_ohm", "is required: the budget is for a built divider (POST /api/solve picks one)")
    service.check_range(sensor, req.range.min, req.range.max)
    setup = setup_of(req)
    design = setup.design(sensor, circuit)
    mc = req.monte_carlo
    points = req.points or K.BUDGET_POINTS
    result = budget.run(design, req.range.min, req.range.max, setup.tolerances, samples=mc.samples, seed=mc.seed,
                        distribution=mc.distribution, points=points, spec=req.spec)
    return result, design, response(result, design, req)


def response(result: budget.Budget, design: budget.Design, req: Any) -> dict[str, Any]:
    s = result.stimulus
    bands = result.mc.bands
    builds = montecarlo.percentiles(result.mc.per_build.copy()[None, :])
    loaded = Circuit(design.circuit.supply_v, design.circuit.sensor_at, design.circuit.fixed_ohm,
                     design.load_ohm, design.circuit.parallel_ohm)
    resp = respond(design.sensor, loaded, s)
    sett = settling.check(design.adc, design.circuit.supply_v, resp.thevenin_ohm, result.vout_v, s)
    if sett is not None:
        sett = {k: _num(v) if isinstance(v, float) else v for k, v in sett.items()}
    window = result.window
    if window is not None:
        window = {**window, "outside": clean(window["outside"])}
    summary = {
        "worst_case": _max_at(result.worst_case, s),
        "rss": _max_at(result.rss, s),
        "mc_p997": _max_at(bands[99.7], s),
        "resolution": _max_at(result.resolution, s),
        "self_heating": _max_at(result.self_heating, s),
        "builds": {"p50": _num(builds[50.0][0]), "p95": _num(builds[95.0][0]), "p997": _num(builds[99.7][0])},
        "yield": result.yield_fraction,
        "spec": result.spec,
    }
    out = {
        "stimulus": clean(s),
        "resolution": clean(result.resolution),
        "quantization": clean(result.quantization),
        "worst_case": clean(result.worst_case),
        "rss": clean(result.rss),
        "mc_p50": clean(bands[50.0]),
        "mc_p95": clean(bands[95.0]),
        "mc_p997": clean(bands[99.7]),
        "self_heating": clean(result.self_heating),
        "contributors": {name: clean(v) for name, v in result.contributors.items()},
        "bias": clean(result.bias),
        "worst_low": clean(result.worst_low),
        "worst_high": clean(result.worst_high),
        "vout_v": clean(result.vout_v),
        "vout_low_v": clean(result.vout_low_v),
        "vout_high_v": clean(result.vout_high_v),
        "thevenin_ohm": clean(resp.thevenin_ohm),
        "units": {"stimulus": design.sensor.stimulus_unit, "error": design.sensor.axis_unit},
        "fixed_ohm": design.circuit.fixed_ohm,
        "load_ohm": design.load_ohm,
        "tolerances_applied": {_limit_name(k): v * (1.0 if k == "adc_offset" else 100.0) for k, v in result.limits.items()},
        "monte_carlo": {"samples": req.monte_carlo.samples, "seed": req.monte_carlo.seed,
                        "distribution": req.monte_carlo.distribution},
        "summary": summary,
        "yield": result.yield_fraction,
        "spec": result.spec,
        "window": window,
        "settling": sett,
        "warnings": list(result.warnings),
    }
    return out


def _limit_name(name: str) -> str:
    return PCT_NAMES.get(name, f"{name}_pct")


def _num(value: Any) -> Optional[float]:
    value = float(value)
    return value if np.isfinite(value) else None


CSV_COLUMNS = ("stimulus", "resolution", "quantization", "worst_case", "rss", "mc_p50", "mc_p95", "mc_p997",
               "self_heating", "bias", "worst_low", "worst_high", "vout_v")


def to_csv(out: dict[str, Any]) -> str:
    """The per-point arrays of a budget response as CSV, one row per stimulus value."""
    names = list(CSV_COLUMNS) + [f"contributor_{k}" for k in out["contributors"]]
    columns = [out[c] for c in CSV_COLUMNS] + list(out["contributors"].values())
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    unit, err = out["units"]["stimulus"], out["units"]["error"]
    writer.writerow([f"# error budget; stimulus in {unit}, errors in {err}, voltages in V"])
    writer.writerow(names)
    for row in zip(*columns):
        writer.writerow(["" if v is None else repr(v) for v in row])
    return buf.getvalue()
