"""The trip-point core (app/trip.py, app/trip_spread.py, app/trip_adjust.py).

Outside references used here, each written out in the test rather than
taken from the code under test:
* nodal analysis (Kirchhoff's current law) at the reference node, derived
  below, for the two levels and the hysteresis width;
* the beta model R(T) = Rn·exp(β(1/T − 1/Tn)) with T = t + 273.15 K
  (IEC 60539-1 B-value definition; SI Brochure kelvin offset) and the LDR
  power law R = Rref·(E/Eref)^−γ (common practice, no published source);
* the divider equation V = Vs·Rb/(Rt + Rb);
* IEC 60063 E24 and E96 values (E24 typed from the standard's table, E96
  by its three-figure rule round(10^(i/96), 2)).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from app.errors import InputError
from app.models import build_sensor
from app.trip import TripSpec, levels
from app.trip_adjust import adjust, trimmer_values
from app.trip_solve import design
from app.trip_spread import Tolerances, achieved, corners, spread

KELVIN = 273.15  # SI Brochure, 9th ed.
E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]  # IEC 60063 table
E96 = [round(10 ** (i / 96), 2) for i in range(96)]  # IEC 60063 three-figure rule

NTC = {"kind": "ntc_beta", "r_nominal_ohm": 10_000.0, "beta_k": 3950.0}
LDR = {"kind": "ldr", "r_ref_ohm": 80_000.0, "gamma": 0.75, "lux_ref": 10.0}


def beta_ohm(t_c: float, rn=10_000.0, beta=3950.0, tn_c=25.0) -> float:
    return rn * math.exp(beta * (1 / (t_c + KELVIN) - 1 / (tn_c + KELVIN)))


def ldr_ohm(lux: float, r_ref=80_000.0, gamma=0.75, lux_ref=10.0) -> float:
    return r_ref * (lux / lux_ref) ** (-gamma)


def divider(vs: float, r_sensor: float, r_fixed: float, sensor_at: str) -> float:
    top, bottom = (r_sensor, r_fixed) if sensor_at == "top" else (r_fixed, r_sensor)
    return vs * bottom / (top + bottom)


def nodal_levels(vs, rt, rb, rh, voh, vol):
    """KCL at the reference node with the output held at Vo:
    (Vs − V)/Rt + (Vo − V)/Rh = V/Rb  ⇒  V = (Vs/Rt + Vo/Rh)/(1/Rt + 1/Rb + 1/Rh)."""
    g = 1 / rt + 1 / rb + 1 / rh
    return (vs / rt + voh / rh) / g, (vs / rt + vol / rh) / g


def on_series(ohm: float, mantissas) -> bool:
    exponent = math.floor(math.log10(ohm) + 1e-12)
    m = ohm / 10 ** exponent
    return any(abs(m - v) < 1e-9 * 10 for v in mantissas)


def alarm(**kw) -> TripSpec:
    args = dict(sensor=build_sensor(NTC), supply_v=3.3, trip=60.0, release=55.0)
    args.update(kw)
    return TripSpec(**args)


def dusk(**kw) -> TripSpec:
    args = dict(sensor=build_sensor(LDR), supply_v=5.0, trip=10.0, release=25.0, sensor_at="top")
    args.update(kw)
    return TripSpec(**args)


# --- the reference network ----------------------------------------------------

@pytest.mark.parametrize("vs,voh,vol", [(3.3, 3.3, 0.0), (5.0, 4.6, 0.3), (12.0, 11.0, 0.2)])
def test_levels_match_nodal_analysis(vs, voh, vol):
    rng = np.random.default_rng(8)
    rt, rb, rh = (10 ** rng.uniform(3, 6, 20) for _ in range(3))
    upper, lower = levels(vs, rt, rb, rh, voh, vol)
    want_u, want_l = nodal_levels(vs, rt, rb, rh, voh, vol)
    np.testing.assert_allclose(upper, want_u, rtol=1e-13)
    np.testing.assert_allclose(lower, want_l, rtol=1e-13)
    # Width of the band, from subtracting the two nodal equations: ΔV = (Voh − Vol)·(Rt∥Rb∥Rh)/Rh.
    rp = 1 / (1 / rt + 1 / rb + 1 / rh)
    np.testing.assert_allclose(upper - lower, (voh - vol) * rp / rh, rtol=1e-12)


def test_levels_at_an_end_stop_are_the_rails():
    # A trimmer at its end stop leaves one arm at 0 Ω: the node sits on that rail.
    up, low = levels(5.0, 0.0, 1e4, 1e5, 5.0, 0.0)
    assert up == pytest.approx(5.0) and low == pytest.approx(5.0)
    up, low = levels(5.0, 1e4, 0.0, 1e5, 5.0, 0.0)
    assert up == 0.0 and low == 0.0


@pytest.mark.parametrize("spec", [alarm(), alarm(sensor_at="top"), dusk(), dusk(sensor_at="bottom"),
                                  alarm(output_high_v=2.9, output_low_v=0.2, series="E96"), dusk(series="exact")],
                         ids=["ntc-bottom", "ntc-top", "ldr-top", "ldr-bottom", "ntc-levels-e96", "ldr-exact"])
def test_reported_thresholds_obey_the_closed_form(spec):
    d = design(spec)
    n = d.network
    up, low = nodal_levels(spec.supply_v, n.top_ohm, n.bottom_ohm, n.hysteresis_ohm, spec.v_high, spec.output_low_v)
    assert d.upper_v == pytest.approx(up, rel=1e-12)
    assert d.lower_v == pytest.approx(low, rel=1e-12)
    assert d.upper_v > d.lower_v


# --- achieved trip and release against the sensor model ------------------------

@pytest.mark.parametrize("spec,ohm", [(alarm(), beta_ohm), (alarm(sensor_at="top"), beta_ohm),
                                      (dusk(), ldr_ohm), (dusk(sensor_at="bottom"), ldr_ohm)],
                         ids=["ntc-bottom", "ntc-top", "ldr-top", "ldr-bottom"])
def test_achieved_points_put_the_divider_on_the_levels(spec, ohm):
    d = design(spec)
    rf, vs = d.network.fixed_ohm, spec.supply_v
    v_trip = divider(vs, ohm(d.achieved_trip), rf, spec.sensor_at)
    v_release = divider(vs, ohm(d.achieved_release), rf, spec.sensor_at)
    assert v_trip == pytest.approx(d.trip_level_v, rel=1e-9)
    assert v_release == pytest.approx(d.release_level_v, rel=1e-9)
    assert sorted([v_trip, v_release]) == pytest.approx([d.lower_v, d.upper_v], rel=1e-9)


def test_exact_series_hits_the_target():
    for spec in (alarm(series="exact"), dusk(series="exact")):
        d = design(spec)
        assert d.achieved_trip == pytest.approx(spec.trip, rel=1e-9)
        assert d.achieved_release == pytest.approx(spec.release, rel=1e-9)
        # Exact fixed resistor: the geometric mean of the sensor's two resistances (max swing).
        ohm = beta_ohm if spec.sensor.kind == "ntc_beta" else ldr_ohm
        assert d.network.fixed_ohm == pytest.approx(math.sqrt(ohm(spec.trip) * ohm(spec.release)), rel=1e-9)


@pytest.mark.parametrize("series,table", [("E24", E24), ("E96", E96)])
def test_all_four_resistors_are_series_values(series, table):
    for spec in (alarm(series=series), dusk(series=series)):
        d = design(spec)
        for ohm in vars(d.network).values():
            assert on_series(ohm, table), (series, ohm)
        assert abs(d.achieved_trip - spec.trip) < 0.1 * abs(spec.trip - spec.release)


def test_series_choice_is_the_best_of_its_neighbourhood():
    # Independent brute force: every E24 combination within ±2 steps of the chosen
    # values (the fixed resistor held) does no better on the worst of the two errors.
    spec = alarm()
    d = design(spec)
    n = d.network
    idx = lambda r: round(math.log10(r) * 24)  # E24 steps are ~10^(1/24)
    err = max(abs(d.achieved_trip - 60), abs(d.achieved_release - 55))
    values = sorted({m * 10 ** e for m in E24 for e in range(1, 7)})
    near = lambda r: [v for v in values if abs(idx(v) - idx(r)) <= 2]
    best = math.inf
    for rt in near(n.top_ohm):
        for rb in near(n.bottom_ohm):
            for rh in near(n.hysteresis_ohm):
                up, low = nodal_levels(3.3, rt, rb, rh, 3.3, 0.0)
                # NTC at the bottom: V = Vs·R/(Rf + R) ⇒ R = Rf·V/(Vs − V); invert the beta model.
                t = [1 / (1 / (25 + KELVIN) + math.log(n.fixed_ohm * v / (3.3 - v) / 1e4) / 3950) - KELVIN
                     for v in (low, up)]
                best = min(best, max(abs(t[0] - 60), abs(t[1] - 55)))
    # The search may trade a few thousandths of a degree for its preferred impedance (ACCEPT_SHARE).
    assert err <= best + 0.005 * 5 + 1e-9


# --- which way the output goes --------------------------------------------------

def test_output_direction_follows_the_sensor_voltage():
    # Sensor on the − input, reference with positive feedback on the + input:
    # a sensor voltage falling through the lower level drives the output high.
    cases = {("ntc", "bottom"): "high", ("ntc", "top"): "low", ("ldr", "top"): "high", ("ldr", "bottom"): "low"}
    for (kind, at), want in cases.items():
        spec = alarm(sensor_at=at) if kind == "ntc" else dusk(sensor_at=at)
        d = design(spec)
        v_trip = divider(spec.supply_v, (beta_ohm if kind == "ntc" else ldr_ohm)(spec.trip), d.network.fixed_ohm, at)
        v_release = divider(spec.supply_v, (beta_ohm if kind == "ntc" else ldr_ohm)(spec.release), d.network.fixed_ohm, at)
        assert d.output_at_trip == want
        assert d.output_at_trip == ("low" if v_trip > v_release else "high")


def test_a_wanted_direction_the_wiring_cannot_give_is_refused():
    with pytest.raises(InputError) as err:
        design(alarm(sensor_at="top", output_at_trip="high"))
    assert err.value.field == "output_at_trip"
    assert "bottom" in err.value.message
    assert design(alarm(sensor_at="bottom", output_at_trip="high")).output_at_trip == "high"


# --- refusals ---------------------------------------------------------------------

@pytest.mark.parametrize("kw,field", [
    ({"release": 60.0}, "target.release"),                       # no hysteresis
    ({"trip": 2000.0}, "target.trip"),                           # outside the sensor's range
    ({"release": float("nan")}, "target.release"),
    ({"output_high_v": 0.1}, "target.release"),                  # band wider than the output swing
    ({"output_high_v": 3.3, "output_low_v": 3.0}, "target.trip"),  # lower level below what the network reaches
    ({"output_high_v": 1.0, "output_low_v": 1.0}, "detector.output_high_v"),
    ({"release": 59.99999999}, "target.release"),                # needs resistors beyond the limits
    ({"supply_v": 0.0}, "supply_v"),
    ({"series": "E7"}, "series"),
    ({"min_ohm": 1e6, "max_ohm": 1e5}, "limits.max_ohm"),
    ({"max_sensor_power_w": 1e-11}, "limits.max_sensor_power_w"),  # needs Rf above 10 MΩ
])
def test_impossible_targets_name_the_field(kw, field):
    with pytest.raises(InputError) as err:
        design(alarm(**kw))
    assert err.value.field == field


def test_a_dusk_trip_outside_the_range_is_refused():
    with pytest.raises(InputError) as err:
        design(dusk(trip=1e6))
    assert err.value.field == "target.trip"


def test_divider_pot_is_refused():
    pot = build_sensor({"kind": "pot", "r_total_ohm": 1e4})
    with pytest.raises(InputError) as err:
        TripSpec(pot, 5.0, 0.6, 0.5)
    assert err.value.field == "sensor.wiring"


def test_rheostat_pot_and_rtd_solve():
    pot = build_sensor({"kind": "pot", "r_total_ohm": 1e4, "wiring": "rheostat"})
    d = design(TripSpec(pot, 5.0, 0.6, 0.5, series="E96"))
    assert abs(d.achieved_trip - 0.6) < 0.01 and abs(d.achieved_release - 0.5) < 0.01
    rtd = build_sensor({"kind": "rtd", "r0_ohm": 1000.0})
    d = design(TripSpec(rtd, 3.3, 150.0, 140.0, series="E96", max_sensor_power_w=2e-4))
    assert abs(d.achieved_trip - 150) < 1.0
    assert max(d.sensor_power_w.values()) <= 2e-4 * (1 + 1e-9)


# --- spread -----------------------------------------------------------------------

def test_zero_tolerances_give_the_nominal_point():
    d = design(alarm())
    s = spread(d, Tolerances(), samples=200, seed=3)
    assert s.corners == 1
    assert s.trip_range == pytest.approx((d.achieved_trip, d.achieved_trip), rel=1e-12)
    np.testing.assert_allclose(s.mc_trip, d.achieved_trip, rtol=1e-12)


@pytest.mark.parametrize("distribution", ["uniform", "normal"])
@pytest.mark.parametrize("spec", [alarm(), dusk()], ids=["ntc", "ldr"])
def test_worst_case_bounds_every_sample(spec, distribution):
    d = design(spec)
    tol = Tolerances(resistor_pct=1, sensor_pct=5, beta_pct=1 if spec.sensor.kind == "ntc_beta" else 0,
                     gamma_pct=3 if spec.sensor.kind == "ldr" else 0, supply_pct=2, offset_v=0.005)
    s = spread(d, tol, samples=20_000, seed=11, distribution=distribution)
    assert s.corners == 2 ** 8
    slack = 1e-9
    assert np.all(s.mc_trip >= s.trip_range[0] - slack) and np.all(s.mc_trip <= s.trip_range[1] + slack)
    assert np.all(s.mc_release >= s.release_range[0] - slack) and np.all(s.mc_release <= s.release_range[1] + slack)
    assert s.trip_range[0] < d.achieved_trip < s.trip_range[1]


def test_same_seed_same_samples():
    d = design(alarm())
    a = spread(d, Tolerances(resistor_pct=1, sensor_pct=1), samples=500, seed=42)
    b = spread(d, Tolerances(resistor_pct=1, sensor_pct=1), samples=500, seed=42)
    c = spread(d, Tolerances(resistor_pct=1, sensor_pct=1), samples=500, seed=43)
    np.testing.assert_array_equal(a.mc_trip, b.mc_trip)
    assert not np.array_equal(a.mc_trip, c.mc_trip)


def test_corner_by_hand():
    # One corner worked through independently: sensor +5 % in R, everything else nominal.
    spec = alarm()
    d = design(spec)
    eps = np.zeros((1, 8))
    eps[0, 4] = 0.05
    trip, _ = achieved(d, eps)
    n = d.network
    # Trip level (output low beforehand: the lower level), then the sensor R there and the beta inverse with Rn·1.05.
    _, low = nodal_levels(3.3, n.top_ohm, n.bottom_ohm, n.hysteresis_ohm, 3.3, 0.0)
    r = n.fixed_ohm * low / (3.3 - low)
    t = 1 / (1 / (25 + KELVIN) + math.log(r / 10_500.0) / 3950.0) - KELVIN
    assert float(trip[0]) == pytest.approx(t, rel=1e-10)


def test_supply_cancels_when_the_output_swings_to_the_supply():
    # Every node is a ratio of the same supply: a ±5 % supply moves nothing.
    d = design(alarm())
    s = spread(d, Tolerances(supply_pct=5), samples=200)
    assert s.trip_range[1] - s.trip_range[0] < 1e-9
    d2 = design(alarm(output_high_v=3.3))  # a fixed output level no longer tracks the supply
    s2 = spread(d2, Tolerances(supply_pct=5), samples=200)
    assert s2.release_range[1] - s2.release_range[0] > 0.1


def test_exponent_tolerance_must_fit_the_kind():
    with pytest.raises(InputError) as err:
        spread(design(alarm()), Tolerances(gamma_pct=5))
    assert err.value.field == "tolerances.gamma_pct"


def test_corner_table():
    got = corners(np.array([0.01, 0, 0.02, 0, 0, 0, 0, 0.005]))
    assert got.shape == (8, 8)
    assert {tuple(r) for r in got[:, [0, 2, 7]]} == {(a, b, c) for a in (-.01, .01) for b in (-.02, .02) for c in (-.005, .005)}


# --- adjustable trip ------------------------------------------------------------------

@pytest.mark.parametrize("spec,lo,hi", [(alarm(), 50.0, 70.0), (dusk(), 3.0, 30.0), (alarm(series="E96"), 40.0, 80.0),
                                        (dusk(series="exact"), 5.0, 20.0)], ids=["ntc", "ldr", "ntc-e96", "ldr-exact"])
def test_trimmer_travel_covers_the_range(spec, lo, hi):
    d = design(spec)
    a = adjust(d, lo, hi, pot_tolerance_pct=20.0)
    assert min(a.covered) <= lo and max(a.covered) >= hi
    assert a.guaranteed[0] <= lo and a.guaranteed[1] >= hi
    assert a.pot_ohm in trimmer_values()
    # The sweep, recomputed by nodal analysis and the sensor model at a few positions.
    ohm = beta_ohm if spec.sensor.kind == "ntc_beta" else ldr_ohm
    for i in (0, 25, 50, 75, 100):
        x = a.position[i]
        top, bottom = a.top_ohm + (1 - x) * a.pot_ohm, a.bottom_ohm + x * a.pot_ohm
        up, low = nodal_levels(spec.supply_v, top, bottom, d.network.hysteresis_ohm, spec.v_high, spec.output_low_v)
        v = divider(spec.supply_v, ohm(a.trip[i]), d.network.fixed_ohm, spec.sensor_at)
        assert v == pytest.approx(up if d.rising else low, rel=1e-9)
    # Where the asked trip sits on the travel.
    assert 0 < a.position_for_target < 1


def test_trimmer_at_a_pot_tolerance_end_still_covers():
    spec = alarm()
    d = design(spec)
    a = adjust(d, 50.0, 70.0, pot_tolerance_pct=20.0)
    for k in (0.8, 1.2):
        p = a.pot_ohm * k
        ends = []
        for x in (0.0, 1.0):
            _, low = nodal_levels(3.3, a.top_ohm + (1 - x) * p, a.bottom_ohm + x * p, d.network.hysteresis_ohm, 3.3, 0)
            r = d.network.fixed_ohm * low / (3.3 - low)
            ends.append(1 / (1 / (25 + KELVIN) + math.log(r / 1e4) / 3950) - KELVIN)
        assert min(ends) <= 50.0 and max(ends) >= 70.0


@pytest.mark.parametrize("lo,hi,field", [(70.0, 50.0, "adjust.max"), (-300.0, 50.0, "adjust.min"), (50.0, 5000.0, "adjust.max")])
def test_adjust_refusals(lo, hi, field):
    with pytest.raises(InputError) as err:
        adjust(design(alarm()), lo, hi)
    assert err.value.field == field


def test_adding_a_tolerance_leaves_the_other_draws_alone():
    from app.trip_spread import draw

    one = draw(np.array([0.01, 0, 0, 0, 0, 0, 0, 0]), 300, 7, "normal")
    two = draw(np.array([0.01, 0, 0, 0, 0.05, 0, 0, 0]), 300, 7, "normal")
    np.testing.assert_array_equal(one[:, 0], two[:, 0])
    assert np.all(np.abs(two[:, 4]) <= 0.05) and np.std(two[:, 4]) == pytest.approx(0.05 / 3, rel=0.15)


def test_reference_impedance_is_the_free_scale():
    # Exact values: Rt ∥ Rb ∥ Rh is whatever was asked; default: the sensor divider's own
    # source resistance at the trip (R(trip) ∥ Rf), so bias currents see matched inputs.
    for wanted in (1e4, 2.2e5):
        n = design(alarm(series="exact", reference_ohm=wanted)).network
        assert 1 / (1 / n.top_ohm + 1 / n.bottom_ohm + 1 / n.hysteresis_ohm) == pytest.approx(wanted, rel=1e-12)
    n = design(alarm(series="exact")).network
    r_trip = beta_ohm(60.0)
    assert 1 / (1 / n.top_ohm + 1 / n.bottom_ohm + 1 / n.hysteresis_ohm) == pytest.approx(
        r_trip * n.fixed_ohm / (r_trip + n.fixed_ohm), rel=1e-12)
