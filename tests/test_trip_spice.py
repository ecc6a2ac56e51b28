"""Trip designs against ngspice (Debian's ``ngspice``, run as a subprocess).

Reference: ngspice's operating point (``.op``) of the circuits the tool
designs. Nothing is handed over pre-computed: resistor values go in as
numbers, the comparator output is a DC voltage source held at its high or
its low level, and the sensor is an ngspice expression of the published
formula (beta model with T = t + 273.15 K; the LDR power law, common
practice) evaluated at the stimulus the tool says it trips or releases at.

Checks, for every design (NTC and LDR, sensor top and bottom, rail-to-rail
and limited output levels, E24, E96 and exact values):
* the reference node's voltage with the output held high equals the
  reported upper level, held low the lower level;
* the sensor divider at the achieved trip (release) stimulus sits on the
  reference level the comparator compares it with at that moment;
* a trimmer network (wiper as the reference node) at three positions gives
  the trip the tool reports for those positions.
"""

from __future__ import annotations

import numpy as np
import pytest

from app.models import build_sensor
from app.trip import TripSpec
from app.trip_adjust import adjust
from app.trip_solve import design
from tests.spice import number, op

pytestmark = pytest.mark.ngspice

REL = 1e-9  # ngspice prints 16 digits; its node solution is exact to round-off here

NTC = {"kind": "ntc_beta", "r_nominal_ohm": 10_000.0, "beta_k": 3950.0, "t_nominal_c": 25.0}
NTC_100K = {"kind": "ntc_beta", "r_nominal_ohm": 100_000.0, "beta_k": 4250.0, "t_nominal_c": 25.0}
LDR = {"kind": "ldr", "r_ref_ohm": 80_000.0, "gamma": 0.75, "lux_ref": 10.0}


def lit(x: float) -> str:
    return f"({number(x)})"


def sensor_expr(spec: dict, s: float) -> str:
    if spec["kind"] == "ntc_beta":
        return (f"{lit(spec['r_nominal_ohm'])}*exp({lit(spec['beta_k'])}*(1/({lit(s)}+273.15)"
                f"-1/({lit(spec['t_nominal_c'])}+273.15)))")
    return f"{lit(spec['r_ref_ohm'])}*exp(-{lit(spec['gamma'])}*ln({lit(s)}/{lit(spec['lux_ref'])}))"


CASES = {
    "ntc-bottom-e24": (NTC, dict(supply_v=3.3, trip=60.0, release=55.0)),
    "ntc-top-e24": (NTC, dict(supply_v=5.0, trip=80.0, release=72.0, sensor_at="top")),
    "ntc-levels-e96": (NTC_100K, dict(supply_v=12.0, trip=40.0, release=37.0, series="E96",
                                      output_high_v=11.0, output_low_v=0.2)),
    "ntc-exact": (NTC, dict(supply_v=3.3, trip=-10.0, release=-5.0, series="exact")),
    "ldr-top-e24": (LDR, dict(supply_v=5.0, trip=10.0, release=25.0, sensor_at="top")),
    "ldr-bottom-e12": (LDR, dict(supply_v=9.0, trip=5.0, release=12.0, series="E12", output_high_v=8.2)),
}
ADJUST = {"ntc-bottom-e24": (50.0, 70.0), "ldr-top-e24": (3.0, 30.0), "ntc-levels-e96": (30.0, 50.0)}
POSITIONS = (10, 50, 90)  # indices into the 101-point sweep: 0.1, 0.5, 0.9 of travel


def _design(name):
    sensor, kw = CASES[name]
    return design(TripSpec(sensor=build_sensor(sensor), **kw))


def _reference_copy(tag: str, vs: float, vo: float, rt: float, rb: float, rh: float) -> list[str]:
    return [
        f"Vs{tag} s{tag} 0 DC {number(vs)}",
        f"Vo{tag} o{tag} 0 DC {number(vo)}",  # the comparator output, held
        f"Rt{tag} s{tag} r{tag} {number(rt)}",
        f"Rb{tag} r{tag} 0 {number(rb)}",
        f"Rh{tag} o{tag} r{tag} {number(rh)}",
    ]


def _sensor_copy(tag: str, vs: float, sensor: dict, stimulus: float, fixed: float, at: str) -> list[str]:
    top, bottom = (f"{{{sensor_expr(sensor, stimulus)}}}", number(fixed))
    if at == "bottom":
        top, bottom = bottom, top
    return [f"Vd{tag} d{tag} 0 DC {number(vs)}", f"Rdt{tag} d{tag} m{tag} {top}", f"Rdb{tag} m{tag} 0 {bottom}"]


def _trim_copy(tag: str, vs: float, vo: float, top: float, pot: float, bottom: float, rh: float, x: float) -> list[str]:
    """Supply → top → track (upper part) → wiper → track (lower part) → bottom → ground; 0 Ω parts are wires."""
    lines = [f"Vs{tag} s{tag} 0 DC {number(vs)}", f"Vo{tag} o{tag} 0 DC {number(vo)}",
             f"Rh{tag} o{tag} w{tag} {number(rh)}",
             f"Ru{tag} a{tag} w{tag} {number((1 - x) * pot)}", f"Rl{tag} w{tag} b{tag} {number(x * pot)}"]
    lines.append(f"Rt{tag} s{tag} a{tag} {number(top)}" if top > 0 else f"Vt{tag} s{tag} a{tag} DC 0")
    lines.append(f"Rb{tag} b{tag} 0 {number(bottom)}" if bottom > 0 else f"Vb{tag} b{tag} 0 DC 0")
    return lines


@pytest.fixture(scope="module")
def solved():
    """Every case and copy in one netlist, one ngspice run."""
    lines: list[str] = []
    designs, trims = {}, {}
    for i, name in enumerate(CASES):
        d = designs[name] = _design(name)
        spec, n = d.spec, d.network
        for level, vo in (("h", spec.v_high), ("l", spec.output_low_v)):
            lines += _reference_copy(f"c{i}{level}", spec.supply_v, vo, n.top_ohm, n.bottom_ohm, n.hysteresis_ohm)
        for point, s in (("t", d.achieved_trip), ("r", d.achieved_release)):
            lines += _sensor_copy(f"c{i}{point}", spec.supply_v, CASES[name][0], s, n.fixed_ohm, spec.sensor_at)
        if name in ADJUST:
            a = trims[name] = adjust(d, *ADJUST[name])
            vo = spec.v_high if d.rising else spec.output_low_v  # the output before the trip
            for j in POSITIONS:
                lines += _trim_copy(f"c{i}p{j}", spec.supply_v, vo, a.top_ohm, a.pot_ohm, a.bottom_ohm,
                                    n.hysteresis_ohm, float(a.position[j]))
                lines += _sensor_copy(f"c{i}q{j}", spec.supply_v, CASES[name][0], float(a.trip[j]),
                                      n.fixed_ohm, spec.sensor_at)
    return designs, trims, op(lines)


@pytest.mark.parametrize("name", list(CASES))
def test_reference_levels_match_ngspice(solved, name):
    designs, _, v = solved
    i = list(CASES).index(name)
    d = designs[name]
    assert d.upper_v == pytest.approx(v[f"rc{i}h"], rel=REL)
    assert d.lower_v == pytest.approx(v[f"rc{i}l"], rel=REL)


@pytest.mark.parametrize("name", list(CASES))
def test_sensor_divider_at_achieved_points_sits_on_the_levels(solved, name):
    designs, _, v = solved
    i = list(CASES).index(name)
    d = designs[name]
    # Before the trip the output is in its normal state: the level it is compared with is
    # the upper one if the sensor voltage rises toward the trip, else the lower one.
    trip_level, release_level = (v[f"rc{i}h"], v[f"rc{i}l"]) if d.rising else (v[f"rc{i}l"], v[f"rc{i}h"])
    assert v[f"mc{i}t"] == pytest.approx(trip_level, rel=1e-8)
    assert v[f"mc{i}r"] == pytest.approx(release_level, rel=1e-8)


def test_the_cases_cover_both_directions_and_kinds():
    ways = {(_design(n).spec.sensor.kind, _design(n).output_at_trip) for n in CASES}
    assert {("ntc_beta", "high"), ("ntc_beta", "low"), ("ldr", "high"), ("ldr", "low")} <= ways


@pytest.mark.parametrize("name", list(ADJUST))
def test_trimmer_network_matches_ngspice(solved, name):
    designs, trims, v = solved
    i = list(CASES).index(name)
    for j in POSITIONS:
        # ngspice: the wiper's voltage with the output held; the sensor divider at the tool's trip for that position.
        assert v[f"mc{i}q{j}"] == pytest.approx(v[f"wc{i}p{j}"], rel=1e-8)
    a = trims[name]
    assert np.all(np.isfinite(a.trip))
