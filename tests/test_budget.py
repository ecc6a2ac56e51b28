"""The error budget's core (app/budget.py, app/reading.py, app/montecarlo.py) against closed forms.

Outside references, named beside each check:
* the divider equation and the beta model (../shared/design.md §1, §2) and
  their derivative, written out here independently of app/circuit.py;
* IEC 60751 (Callendar–Van Dusen, its A and B, and the quadratic inverse for
  t ≥ 0) for the lead-resistance error of a two-wire Pt100;
* ΔT = P/δ for self-heating (design.md §2: the first-order estimate);
* the uniform quantisation-error model (an ideal converter's error is
  uniform over ±½ LSB; IEEE Std 1241 transfer): |U(−q, q)| is uniform on
  [0, q], so its p-th percentile is p·q;
* first-order (linear) propagation of independent errors: the standard
  deviation of a sum is the root-sum-square of the parts' standard
  deviations; with the tolerance as 3σ that is RSS/3.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from app import budget, montecarlo, readback, reading
from app.adc import Adc, Window
from app.circuit import Circuit, respond
from app.errors import InputError
from app.models import build_sensor
from app.reading import Design

KELVIN = 273.15  # SI Brochure
NTC = {"kind": "ntc_beta", "r_nominal_ohm": 10_000.0, "beta_k": 3950.0, "t_nominal_c": 25.0}
PT100 = {"kind": "rtd", "r0_ohm": 100.0}
IEC_A, IEC_B = 3.9083e-3, -5.775e-7  # IEC 60751


def ntc_design(**kw) -> Design:
    circuit = Circuit(kw.pop("supply_v", 3.3), kw.pop("sensor_at", "bottom"), kw.pop("fixed_ohm", 10_000.0),
                      kw.pop("load_ohm", None), kw.pop("parallel_ohm", None))
    return Design(build_sensor(NTC), circuit, kw.pop("adc", Adc(12)), **kw)


def ntc_r(t_c):
    """Beta model, design.md §1."""
    return 10_000.0 * np.exp(3950.0 * (1.0 / (np.asarray(t_c) + KELVIN) - 1.0 / (25.0 + KELVIN)))


def ntc_t(r):
    """Beta model inverse, design.md §1: 1/T = 1/Tn + ln(R/Rn)/β."""
    return 1.0 / (1.0 / (25.0 + KELVIN) + np.log(np.asarray(r) / 10_000.0) / 3950.0) - KELVIN


# --- quantisation alone ------------------------------------------------------------

@pytest.mark.parametrize("bits", [8, 12, 16])
def test_zero_tolerances_leave_half_an_lsb_over_the_slope(bits):
    design = ntc_design(adc=Adc(bits))
    b = budget.run(design, 0.0, 100.0, budget.Tolerances(), samples=2000)
    t = b.stimulus
    # Closed form: Vout = Vs·R/(R + Rf), dVout/dT = Vs·Rf·(dR/dT)/(R + Rf)², dR/dT = −β·R/T².
    r, rf, vs = ntc_r(t), 10_000.0, 3.3
    slope = vs * rf * (3950.0 * r / (t + KELVIN) ** 2) / (r + rf) ** 2
    half_lsb = 0.5 * vs / 2**bits
    expected = half_lsb / slope
    assert list(b.contributors) == ["quantization"]
    np.testing.assert_allclose(b.quantization, expected, rtol=1e-9)
    np.testing.assert_allclose(b.worst_case, expected, rtol=1e-9)
    np.testing.assert_allclose(b.rss, expected, rtol=1e-9)
    np.testing.assert_allclose(b.resolution, 2 * expected, rtol=1e-9)
    np.testing.assert_allclose(b.bias, 0.0, atol=1e-9)


def test_zero_tolerance_monte_carlo_is_the_uniform_quantisation_error():
    # |U(−q, q)| is uniform on [0, q]: percentiles 0.5q, 0.95q, 0.997q (uniform quantisation model).
    design = ntc_design()
    b = budget.run(design, 0.0, 100.0, budget.Tolerances(), samples=40_000, seed=7)
    q = b.quantization
    for p in (50.0, 95.0, 99.7):
        np.testing.assert_allclose(b.mc.bands[p], p / 100.0 * q, rtol=0, atol=0.012 * q.max())
    # A build's worst reading over a continuous range meets a full ½ LSB.
    np.testing.assert_allclose(b.mc.per_build, q.max(), rtol=1e-12)


# --- supply and reference ------------------------------------------------------------

def test_ratiometric_is_immune_to_supply_tolerance_and_absolute_is_not():
    tol = budget.Tolerances(supply_pct=0.5)
    ratiometric = budget.run(ntc_design(adc=Adc(12)), 0.0, 100.0, tol, samples=2000)
    absolute = budget.run(ntc_design(adc=Adc(12, False, 3.3)), 0.0, 100.0, tol, samples=2000)
    assert np.max(ratiometric.contributors["supply"]) < 1e-9
    np.testing.assert_allclose(ratiometric.worst_case, ratiometric.quantization, rtol=1e-9)
    # Absolute reference: the output moves with the supply, the LSB does not. First order:
    # ΔT = δ·Vout/|dVout/dT| (divider equation and beta model, as above).
    t = absolute.stimulus
    r, rf, vs = ntc_r(t), 10_000.0, 3.3
    vout = vs * r / (r + rf)
    slope = vs * rf * (3950.0 * r / (t + KELVIN) ** 2) / (r + rf) ** 2
    np.testing.assert_allclose(absolute.contributors["supply"], 0.005 * vout / slope, rtol=0.02)
    assert np.all(absolute.worst_case > ratiometric.worst_case + 0.1)


def test_reference_tolerance_counts_only_without_ratiometric():
    tol = budget.Tolerances(vref_pct=1.0)
    ratiometric = budget.run(ntc_design(), 0.0, 100.0, tol, samples=1000)
    assert "vref" not in ratiometric.contributors
    assert any("vref_pct is not used" in w for w in ratiometric.warnings)
    absolute = budget.run(ntc_design(adc=Adc(12, False, 2.5)), 0.0, 100.0, tol, samples=1000)
    assert np.max(absolute.contributors["vref"]) > 0.1


# --- worst case, Monte Carlo, RSS -------------------------------------------------------

DESIGNS = {
    "ntc": (lambda: ntc_design(), budget.Tolerances(fixed_pct=1, sensor_pct=1, beta_pct=1, supply_pct=5), (0, 100)),
    "ntc_heat_load_absolute": (
        lambda: ntc_design(sensor_at="top", load_ohm=200e3, adc=Adc(12, False, 3.0), dissipation_w_per_k=0.0015),
        budget.Tolerances(fixed_pct=1, sensor_pct=2, beta_pct=1, supply_pct=2, vref_pct=0.5, adc_gain_pct=0.2,
                          adc_offset_lsb=2), (-20, 80)),
    "rtd_two_wire": (
        lambda: Design(build_sensor(PT100), Circuit(3.3, "bottom", 1000.0), Adc(16), 0.004, lead_ohm=0.4),
        budget.Tolerances(fixed_pct=0.1, sensor_pct=0.12, supply_pct=5), (0, 200)),
    "ldr": (
        lambda: Design(build_sensor({"kind": "ldr", "r_ref_ohm": 20e3, "gamma": 0.7, "r_dark_ohm": 1e6}),
                       Circuit(5.0, "top", 10e3, load_ohm=1e6), Adc(10)),
        budget.Tolerances(fixed_pct=5, sensor_pct=30, gamma_pct=5), (1, 1000)),
    "pot_rheostat": (
        lambda: Design(build_sensor({"kind": "pot", "r_total_ohm": 10e3, "wiring": "rheostat"}),
                       Circuit(3.3, "top", 10e3, parallel_ohm=100e3), Adc(12)),
        budget.Tolerances(fixed_pct=1, sensor_pct=20), (0.05, 0.95)),
}


@pytest.mark.parametrize("name", list(DESIGNS))
@pytest.mark.parametrize("distribution", ["uniform", "normal"])
def test_worst_case_bounds_every_monte_carlo_build(name, distribution):
    make, tol, (lo, hi) = DESIGNS[name]
    design = make()
    b = budget.run(design, lo, hi, tol, samples=3000, seed=11, distribution=distribution)
    assert np.all(np.isfinite(b.worst_case))
    limits, _ = tol.limits(design)
    deltas = montecarlo.draw(limits, 3000, 11, distribution)
    for k, v in deltas.items():  # every draw inside the tolerance box (normal: truncated at 3σ)
        assert np.all(np.abs(v) <= limits[k])
    err = reading.build(design, b.stimulus[:, None], {k: v[None, :] for k, v in deltas.items()}).error
    reach = np.abs(err) + b.quantization[:, None]
    slack = 1e-12 * np.max(b.worst_case)
    assert np.all(reach <= b.worst_case[:, None] + slack)
    assert np.all(err + b.quantization[:, None] <= b.worst_high[:, None] + slack)
    assert np.all(err - b.quantization[:, None] >= b.worst_low[:, None] - slack)
    assert np.all(b.mc.per_build <= np.max(b.worst_case) + slack)
    assert np.all(b.mc.bands[99.7] <= b.worst_case + slack)


def test_small_normal_tolerances_spread_as_the_first_order_rss():
    # Independent, small, normal errors: σ(sum) = sqrt(Σ σi²) with σi = tol/3, i.e. RSS/3.
    design = ntc_design(adc=Adc(24, False, 3.3))
    tol = budget.Tolerances(fixed_pct=0.1, sensor_pct=0.1, beta_pct=0.1, supply_pct=0.2, vref_pct=0.1)
    b = budget.run(design, 0.0, 100.0, tol, samples=20_000, seed=3, distribution="normal")
    limits, _ = tol.limits(design)
    deltas = montecarlo.draw(limits, 20_000, 3, "normal")
    err = reading.build(design, b.stimulus[:, None], {k: v[None, :] for k, v in deltas.items()}).error
    spread = 3.0 * err.std(axis=1)
    np.testing.assert_allclose(spread, b.rss, rtol=0.05)
    # The 95 % band of |error| of a normal sum is 1.96σ.
    np.testing.assert_allclose(b.mc.bands[95.0], 1.96 / 3.0 * b.rss, rtol=0.05)


def test_same_seed_same_bands_and_another_seed_others():
    make, tol, (lo, hi) = DESIGNS["ntc"]
    one = budget.run(make(), lo, hi, tol, samples=4000, seed=42, spec=1.0)
    two = budget.run(make(), lo, hi, tol, samples=4000, seed=42, spec=1.0)
    other = budget.run(make(), lo, hi, tol, samples=4000, seed=43, spec=1.0)
    for p in montecarlo.PERCENTILES:
        np.testing.assert_array_equal(one.mc.bands[p], two.mc.bands[p])
        assert not np.array_equal(one.mc.bands[p], other.mc.bands[p])
    assert one.yield_fraction == two.yield_fraction


def test_yield_counts_builds_within_spec_everywhere():
    make, tol, (lo, hi) = DESIGNS["ntc"]
    b = budget.run(make(), lo, hi, tol, samples=5000, seed=5, spec=0.8)
    assert b.yield_fraction == pytest.approx(np.mean(b.mc.per_build <= 0.8))
    assert 0.0 < b.yield_fraction < 1.0
    everyone = budget.run(make(), lo, hi, tol, samples=5000, seed=5, spec=float(np.max(b.worst_case)))
    assert everyone.yield_fraction == 1.0


def test_percentiles_match_numpy_linear_method():
    rng = np.random.default_rng(0)
    a = rng.normal(size=(7, 1001))
    a[3, 5] = np.inf
    expected = np.percentile(a, montecarlo.PERCENTILES, axis=1)
    got = montecarlo.percentiles(a.copy())
    for i, p in enumerate(montecarlo.PERCENTILES):
        np.testing.assert_allclose(got[p], expected[i], rtol=1e-13)


# --- systematic effects ------------------------------------------------------------------

def test_self_heating_matches_p_over_delta_when_small():
    # ΔT = P/δ (design.md §2), first order; δ = 0.5 W/K keeps P·(dP/dT)/δ² negligible.
    design = ntc_design(dissipation_w_per_k=0.5, adc=Adc(24))
    b = budget.run(design, 0.0, 100.0, budget.Tolerances(), samples=100)
    power = respond(design.sensor, design.circuit, b.stimulus).sensor_power_w
    np.testing.assert_allclose(b.self_heating, power / 0.5, rtol=1e-3)
    np.testing.assert_allclose(b.contributors["self_heating"], power / 0.5, rtol=1e-3)


def test_self_heating_is_self_consistent_for_a_realistic_bead():
    # Consistency (no outside source): the reported rise solves ΔT = P(t + ΔT)/δ.
    design = ntc_design(dissipation_w_per_k=0.0015, fixed_ohm=4700.0, adc=Adc(24))
    built = reading.build(design, np.linspace(0, 100, 11))
    rise = built.sensor_c - np.linspace(0, 100, 11)
    power = respond(design.sensor, design.circuit, built.sensor_c).sensor_power_w
    np.testing.assert_allclose(rise, power / 0.0015, rtol=1e-6)
    assert rise.max() > 0.3  # the 10 kΩ bead on 3.3 V through 4.7 kΩ warms by tenths of a kelvin


def test_duty_cycle_scales_the_self_heating():
    full = budget.run(ntc_design(dissipation_w_per_k=0.5, adc=Adc(24)), 0, 100, budget.Tolerances(), samples=10)
    tenth = budget.run(ntc_design(dissipation_w_per_k=0.5, adc=Adc(24), duty_cycle=0.1), 0, 100,
                       budget.Tolerances(), samples=10)
    np.testing.assert_allclose(tenth.self_heating, 0.1 * full.self_heating, rtol=1e-3)


def test_thermal_runaway_is_refused_naming_the_field():
    # 24 V on a 10 kΩ NTC through 1 kΩ with a tiny δ: the sensor heats faster than it cools.
    design = ntc_design(supply_v=24.0, fixed_ohm=1000.0, sensor_at="top", dissipation_w_per_k=1e-5)
    with pytest.raises(InputError) as err:
        budget.run(design, 0, 100, budget.Tolerances(), samples=10)
    assert err.value.field == "dissipation_w_per_k"


def test_two_wire_lead_error_is_the_iec60751_inverse_of_r_plus_the_leads():
    lead = 0.5
    design = Design(build_sensor(PT100), Circuit(3.3, "bottom", 1000.0), Adc(24), lead_ohm=lead)
    b = budget.run(design, 0.0, 200.0, budget.Tolerances(), samples=10)
    t = b.stimulus
    r = 100.0 * (1 + IEC_A * t + IEC_B * t**2)  # IEC 60751, t ≥ 0
    seen = r + 2 * lead
    t_read = (-IEC_A + np.sqrt(IEC_A**2 - 4 * IEC_B * (1 - seen / 100.0))) / (2 * IEC_B)
    np.testing.assert_allclose(b.contributors["leads"], t_read - t, rtol=1e-7)
    # The rule of thumb: 1 Ω of loop resistance is about 2.6 °C on a Pt100 (1 / 0.385 Ω/°C).
    assert b.contributors["leads"][0] == pytest.approx(1.0 / (100 * IEC_A), rel=1e-3)


def test_load_error_is_the_sensor_read_in_parallel_with_the_load():
    # Sensor at the bottom, load across it, firmware using the unloaded divider equation:
    # it infers R ∥ RL, and reports the beta-model temperature of that resistance.
    load = 100e3
    b = budget.run(ntc_design(load_ohm=load, adc=Adc(24)), 0, 100, budget.Tolerances(), samples=10)
    r = ntc_r(b.stimulus)
    np.testing.assert_allclose(b.contributors["load"], ntc_t(r * load / (r + load)) - b.stimulus, rtol=1e-7)
    known = budget.run(ntc_design(load_ohm=load, adc=Adc(24), firmware_knows_load=True), 0, 100,
                       budget.Tolerances(), samples=10)
    assert "load" not in known.contributors
    np.testing.assert_allclose(known.worst_case, known.quantization, rtol=1e-6)


def test_converter_input_resistance_is_a_load():
    as_load = budget.run(ntc_design(load_ohm=50e3), 0, 100, budget.Tolerances(), samples=10)
    as_input = budget.run(ntc_design(adc=Adc(12, input_ohm=50e3)), 0, 100, budget.Tolerances(), samples=10)
    np.testing.assert_allclose(as_input.contributors["load"], as_load.contributors["load"], rtol=1e-12)


def test_shape_tolerances_pivot_at_the_nominal_point():
    ldr = Design(build_sensor({"kind": "ldr", "r_ref_ohm": 20e3, "gamma": 0.7}), Circuit(3.3, "bottom", 20e3), Adc(24))
    b = budget.run(ldr, 1.0, 100.0, budget.Tolerances(gamma_pct=5), samples=10)
    mid = int(np.argmin(np.abs(b.stimulus - 10.0)))
    assert b.stimulus[mid] == pytest.approx(10.0)
    assert b.contributors["gamma"][mid] < 1e-9
    # Power law: the firmware reads log10(E'/10) = (1 + ε)·log10(E/10), an error of ε·|log10(E/10)| decades.
    np.testing.assert_allclose(b.contributors["gamma"], 0.05 * np.abs(np.log10(b.stimulus / 10.0)), rtol=1e-6, atol=1e-12)
    ntc = budget.run(ntc_design(adc=Adc(24)), 0, 50, budget.Tolerances(beta_pct=1), samples=10)
    at25 = int(np.argmin(np.abs(ntc.stimulus - 25.0)))
    assert ntc.contributors["beta"][at25] < 1e-6


def test_a_divider_pot_cancels_its_track_tolerance_unless_loaded():
    pot = {"kind": "pot", "r_total_ohm": 10e3}
    free = Design(build_sensor(pot), Circuit(3.3), Adc(24))
    b = budget.run(free, 0.0, 1.0, budget.Tolerances(sensor_pct=20, fixed_pct=1), samples=10)
    assert np.max(b.contributors["sensor"]) < 1e-9
    assert any("fixed_pct is not used" in w for w in b.warnings)
    loaded = Design(build_sensor(pot), Circuit(3.3, load_ohm=20e3), Adc(24))
    assert np.max(budget.run(loaded, 0.0, 1.0, budget.Tolerances(sensor_pct=20), samples=10).contributors["sensor"]) > 1e-3


# --- window and inputs ---------------------------------------------------------------------

def test_window_flags_outputs_outside_the_usable_input():
    design = ntc_design(adc=Adc(12, window=Window(min_fraction=0.1, max_fraction=0.9)))
    b = budget.run(design, -20.0, 100.0, budget.Tolerances(fixed_pct=1), samples=10)
    assert b.window["ok"] is False
    assert b.window["min_v"] == pytest.approx(0.33) and b.window["max_v"] == pytest.approx(2.97)
    vout = b.vout_high_v
    assert set(b.window["outside"]) == set(b.stimulus[(vout > 2.97) | (b.vout_low_v < 0.33)])
    assert any("usable window" in w for w in b.warnings)
    inside = budget.run(ntc_design(adc=Adc(12, window=Window(min_v=0.1, max_v=3.2))), 0, 100, budget.Tolerances(), samples=10)
    assert inside.window["ok"] is True and inside.window["margin_v"] > 0


@pytest.mark.parametrize("tol, field", [
    (budget.Tolerances(beta_pct=1), "tolerances.beta_pct"),
    (budget.Tolerances(gamma_pct=1), "tolerances.gamma_pct"),
    (budget.Tolerances(fixed_pct=100), "tolerances.fixed_pct"),
    (budget.Tolerances(adc_offset_lsb=-1), "tolerances.adc_offset_lsb"),
])
def test_bad_tolerances_name_their_field(tol, field):
    design = Design(build_sensor(PT100), Circuit(3.3, "bottom", 1000.0), Adc(12))
    with pytest.raises(InputError) as err:
        budget.run(design, 0, 100, tol, samples=10)
    assert err.value.field == field


def test_request_size_limits():
    design = ntc_design()
    with pytest.raises(InputError, match="monte_carlo.samples"):
        budget.run(design, 0, 100, budget.Tolerances(), samples=budget.MAX_SAMPLES + 1)
    with pytest.raises(InputError, match="points"):
        budget.run(design, 0, 100, budget.Tolerances(), points=budget.MAX_POINTS + 1)
    with pytest.raises(InputError, match="samples × points"):
        budget.run(design, 0, 100, budget.Tolerances(), samples=budget.MAX_SAMPLES, points=1001)


def test_self_heating_and_leads_are_refused_where_they_mean_nothing():
    with pytest.raises(InputError, match="dissipation_w_per_k"):
        Design(build_sensor({"kind": "ldr", "r_ref_ohm": 1e4, "gamma": 0.7}), Circuit(3.3, "top", 1e4), Adc(), 0.001)
    with pytest.raises(InputError, match="lead_ohm"):
        Design(build_sensor({"kind": "pot", "r_total_ohm": 1e4}), Circuit(3.3), Adc(), lead_ohm=1.0)
    with pytest.raises(InputError, match="adc.window"):
        budget.run(ntc_design(adc=Adc(12, window=Window(min_v=2.0, max_v=1.0))), 0, 100, budget.Tolerances(), samples=10)


def test_each_parameter_has_its_own_random_stream():
    # Adding a tolerance leaves the other parameters' draws alone (one stream per parameter).
    one = montecarlo.draw({"fixed": 0.01}, 100, 9, "uniform")
    two = montecarlo.draw({"fixed": 0.01, "supply": 0.05}, 100, 9, "uniform")
    np.testing.assert_array_equal(one["fixed"], two["fixed"])
    assert math.isclose(float(np.max(np.abs(two["supply"]))), 0.05, rel_tol=0.05)


# --- settling (design.md §4) ------------------------------------------------------------------

def _thevenin_and_vout(t):
    """Divider equation with the 10 kΩ NTC at the bottom and 10 kΩ on top, 3.3 V."""
    r = ntc_r(t)
    return r * 10e3 / (r + 10e3), 3.3 * r / (r + 10e3)


def test_acquisition_rule_of_design_notes():
    from app import settling
    from app.adc import Sampling

    t = np.linspace(0.0, 100.0, 101)
    r_th, vout = _thevenin_and_vout(t)
    source = ntc_r(0.0) * 10e3 / (ntc_r(0.0) + 10e3)  # Rf ∥ R is largest where R is: the cold end
    assert r_th.max() == pytest.approx(source, rel=1e-12)
    cs, rsw = 10e-12, 1000.0
    need = 13 * math.log(2) * (source + rsw) * cs  # t ≥ (N + 1)·ln 2·(Rsource + Rswitch)·Cs, N = 12
    slow = Adc(12, sampling=Sampling(capacitance_f=cs, switch_ohm=rsw, acquisition_s=1e-6))
    report = settling.check(slow, 3.3, r_th, vout, t)
    assert report["required_acquisition_s"] == pytest.approx(need, rel=1e-12)
    assert report["ok"] is True and report["acquisition_ok"] is True
    fast = Adc(12, sampling=Sampling(capacitance_f=cs, switch_ohm=rsw, acquisition_s=0.3e-6))
    report = settling.check(fast, 3.3, r_th, vout, t)
    assert report["ok"] is False
    assert report["max_source_ohm"] == pytest.approx(0.3e-6 / (13 * math.log(2) * cs) - rsw, rel=1e-12)
    assert report["min_filter_f"] == pytest.approx((2**13 - 1) * cs)
    assert report["suggested_filter_f"] >= 2 * report["min_filter_f"]
    assert len(report["fixes"]) == 3
    unknown = settling.check(Adc(12, sampling=Sampling(capacitance_f=cs)), 3.3, r_th, vout, t)
    assert unknown["ok"] is None and "give yours" in unknown["verdict"]


def test_power_up_time_with_a_filter_capacitor():
    from app import settling
    from app.adc import Sampling

    t = np.linspace(0.0, 100.0, 101)
    r_th, vout = _thevenin_and_vout(t)
    cf = 100e-9
    report = settling.check(Adc(12, sampling=Sampling(filter_f=cf)), 3.3, r_th, vout, t)
    # V(t) = V(1 − e^(−t/τ)), τ = R_th·C: within ½ LSB after τ·ln(V / ½ LSB).
    expected = np.max(r_th * cf * np.log(vout / (0.5 * 3.3 / 4096)))
    assert report["power_up_s"] == pytest.approx(expected, rel=1e-12)
    assert report["ok"] is None


def test_a_large_filter_capacitor_needs_only_a_sampling_interval():
    from app import settling
    from app.adc import Sampling

    t = np.linspace(0.0, 100.0, 101)
    r_th, vout = _thevenin_and_vout(t)
    cs, cf = 10e-12, 1e-6
    adc = Adc(12, sampling=Sampling(capacitance_f=cs, switch_ohm=1000.0, acquisition_s=1e-6, filter_f=cf, interval_s=1e-3))
    report = settling.check(adc, 3.3, r_th, vout, t)
    share = cs / (cs + cf)
    assert report["required_acquisition_s"] == pytest.approx(13 * math.log(2) * 1000.0 * cs * cf / (cs + cf), rel=1e-12)
    assert report["min_interval_s"] == pytest.approx(-r_th.max() * cf * math.log(1 - 2**13 * share), rel=1e-12)
    assert report["ok"] is True
    hurried = Adc(12, sampling=Sampling(capacitance_f=cs, acquisition_s=1e-6, filter_f=cf, interval_s=1e-5))
    assert settling.check(hurried, 3.3, r_th, vout, t)["ok"] is False


def test_in_place_beta_inverse_is_the_models_inverse():
    # Consistency (no outside source): the Monte Carlo's in-place inverse equals BetaNTC.stimulus_of.
    sensor = build_sensor({**NTC, "t_nominal_c": 20.0, "beta_k": 3435.0})
    ohm = 10.0 ** np.random.default_rng(1).uniform(1, 8, 1000)
    np.testing.assert_allclose(readback.beta_inverse_in_place(sensor, ohm.copy()), sensor.stimulus_of(ohm), rtol=0, atol=1e-10)
