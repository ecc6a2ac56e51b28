"""Properties over random parts, circuits and stimuli (hypothesis).

* every model's inverse undoes its resistance (RTD below 0 °C through the
  Newton branch, LDR with a dark resistance, log-taper pot);
* 0 ≤ Vout ≤ supply for any divider;
* NTC, RTD and LDR curves, and the divider output, are monotonic in the stimulus;
* ``circuit.respond`` is consistent with itself and with the textbook
  divider written out here: sensitivity = a fine central difference of Vout;
  Thevenin resistance = Rt ∥ Rb ∥ RL; sensor power = V_sensor²/R_sensor,
  which with a parallel resistor counts only the sensor (design.md §2).
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from app.circuit import Circuit, divider_output, respond
from app.models import build_sensor

EPS = np.finfo(float).eps
FEW = settings(max_examples=60)


def log_uniform(lo_exp: float, hi_exp: float):
    return st.floats(lo_exp, hi_exp).map(lambda e: float(10.0**e))


@st.composite
def ntc_beta(draw):
    spec = {"kind": "ntc_beta", "r_nominal_ohm": draw(log_uniform(2, 6)), "beta_k": draw(st.floats(2000, 6000)),
            "t_nominal_c": draw(st.floats(-20, 60))}
    return spec, (-50.0, 150.0)


@st.composite
def ntc_sh(draw):
    # A beta curve turned into Steinhart–Hart form (B = 1/β, A = 1/Tn − ln Rn/β) plus a cubic term.
    beta, rn = draw(st.floats(3000, 4500)), draw(log_uniform(3, 5))
    c = draw(st.floats(0.0, 2e-7))
    spec = {"kind": "ntc_sh", "a": 1 / 298.15 - math.log(rn) / beta, "b": 1 / beta, "c": c}
    return spec, (-50.0, 150.0)


@st.composite
def rtd(draw):
    return {"kind": "rtd", "r0_ohm": draw(st.sampled_from([100.0, 500.0, 1000.0]) | st.floats(10, 5000))}, (-200.0, 850.0)


@st.composite
def ldr(draw):
    spec = {"kind": "ldr", "r_ref_ohm": draw(log_uniform(3, 6)), "gamma": draw(st.floats(0.4, 1.2)),
            "lux_ref": draw(st.sampled_from([1.0, 10.0, 100.0]))}
    if draw(st.booleans()):
        spec["r_dark_ohm"] = draw(log_uniform(5, 8))
    return spec, (1e-2, 1e5)


@st.composite
def pot(draw):
    spec = {"kind": "pot", "r_total_ohm": draw(log_uniform(2, 6)), "taper": draw(st.sampled_from(["linear", "log"])),
            "wiring": draw(st.sampled_from(["divider", "rheostat"])), "mid_fraction": draw(st.floats(0.05, 0.2))}
    return spec, (0.0, 1.0)


ANY_SENSOR = st.one_of(ntc_beta(), ntc_sh(), rtd(), ldr(), pot())
MONOTONIC = st.one_of(ntc_beta(), ntc_sh(), rtd(), ldr())


def stimulus_in(draw, sensor, rng: tuple[float, float], margin: float = 0.0) -> float:
    """A stimulus drawn evenly on the axis inside ``rng`` (shrunk by ``margin`` of the axis span)."""
    a0, a1 = (float(sensor.to_axis(v)) for v in rng)
    pad = margin * (a1 - a0)
    return float(sensor.from_axis(draw(st.floats(a0 + pad, a1 - pad))))


@st.composite
def circuits(draw):
    return Circuit(
        supply_v=draw(st.floats(0.1, 50.0)),
        sensor_at=draw(st.sampled_from(["top", "bottom"])),
        fixed_ohm=draw(log_uniform(0, 7)),
        load_ohm=draw(st.none() | log_uniform(1, 8)),
        parallel_ohm=draw(st.none() | log_uniform(1, 8)),
    )


# --- inverses -------------------------------------------------------------------

@FEW
@given(st.data(), ntc_beta())
def test_beta_inverse(data, part):
    sensor = build_sensor(part[0])
    t = stimulus_in(data.draw, sensor, part[1])
    assert abs(float(sensor.stimulus_of(sensor.resistance(np.array(t)))) - t) < 1e-8


@FEW
@given(st.data(), ntc_sh())
def test_steinhart_hart_inverse(data, part):
    sensor = build_sensor(part[0])
    t = stimulus_in(data.draw, sensor, part[1])
    assert abs(float(sensor.stimulus_of(sensor.resistance(np.array(t)))) - t) < 1e-7


@FEW
@given(st.data(), rtd(), st.booleans())
def test_rtd_inverse_including_below_zero(data, part, cold):
    sensor = build_sensor(part[0])
    t = data.draw(st.floats(-200.0, -1e-6) if cold else st.floats(0.0, 850.0))
    assert abs(float(sensor.stimulus_of(sensor.resistance(np.array(t)))) - t) < 1e-7


@FEW
@given(st.data(), ldr())
def test_ldr_inverse_with_and_without_dark_resistance(data, part):
    spec, rng = part
    sensor = build_sensor(spec)
    lux = stimulus_in(data.draw, sensor, rng)
    dark = spec.get("r_dark_ohm")
    if dark:
        # Undoing the parallel dark resistance amplifies rounding by law/dark; keep it below 1e6.
        law = spec["r_ref_ohm"] * (lux / spec["lux_ref"]) ** -spec["gamma"]
        assume(law / dark < 1e6)
    back = float(sensor.stimulus_of(sensor.resistance(np.array(lux))))
    assert abs(math.log10(back) - math.log10(lux)) < 1e-9


@FEW
@given(st.data(), pot())
def test_pot_inverse_both_tapers(data, part):
    sensor = build_sensor(part[0])
    x = data.draw(st.floats(0.0, 1.0))
    assert abs(float(sensor.stimulus_of(sensor.resistance(np.array(x)))) - x) < 1e-9


# --- output bounds and monotonicity ----------------------------------------------

@settings(max_examples=100)
@given(st.data(), ANY_SENSOR, circuits())
def test_vout_between_zero_and_supply(data, part, circuit):
    sensor = build_sensor(part[0])
    s = np.array([stimulus_in(data.draw, sensor, part[1]) for _ in range(5)] + list(part[1]))
    if part[0]["kind"] == "pot" and part[0]["wiring"] == "divider":
        s = np.clip(s, 0.0, 1.0)
    v = respond(sensor, circuit, s).vout_v
    assert np.all(v >= 0.0) and np.all(v <= circuit.supply_v)


@FEW
@given(st.data(), MONOTONIC, circuits())
def test_curves_and_output_are_monotonic(data, part, circuit):
    spec, rng = part
    sensor = build_sensor(spec)
    a, b = sorted(stimulus_in(data.draw, sensor, rng) for _ in range(2))
    assume(sensor.to_axis(b) - sensor.to_axis(a) > 1e-3)
    s = sensor.grid(a, b, 64)
    r = sensor.resistance(s)
    steps = np.diff(r)
    rising = spec["kind"] == "rtd"
    assert np.all(steps > 0) if rising else np.all(steps < 0)
    v = respond(sensor, circuit, s).vout_v
    # The output rises with R when the sensor is at the bottom; ties only where Vout saturates.
    up = rising == (circuit.sensor_at == "bottom")
    assert np.all(np.diff(v) >= 0) if up else np.all(np.diff(v) <= 0)


# --- respond against the textbook divider ----------------------------------------

def arms(spec: dict, sensor, circuit: Circuit, s: float) -> tuple[float, float, float]:
    """(Rt, Rb, R_sensor) written out from the contract's topology, without circuit.py."""
    rs = float(sensor.resistance(np.array(s)))
    if spec["kind"] == "pot" and spec.get("wiring", "divider") == "divider":
        return spec["r_total_ohm"] - rs, rs, rs
    p = circuit.parallel_ohm
    element = rs if p is None else 1.0 / (1.0 / rs + 1.0 / p)
    return (element, circuit.fixed_ohm, rs) if circuit.sensor_at == "top" else (circuit.fixed_ohm, element, rs)


@settings(max_examples=80)
@given(st.data(), ANY_SENSOR, circuits())
def test_sensitivity_is_a_central_difference_of_vout(data, part, circuit):
    spec, rng = part
    sensor = build_sensor(spec)
    s = stimulus_in(data.draw, sensor, rng, margin=0.01)
    a = float(sensor.to_axis(s))
    h = 1e-5 * (float(sensor.to_axis(rng[1])) - float(sensor.to_axis(rng[0])))
    v_hi, v_lo = (float(respond(sensor, circuit, np.array([sensor.from_axis(a + d)])).vout_v[0]) for d in (h, -h))
    numeric = (v_hi - v_lo) / (2 * h)
    analytic = float(respond(sensor, circuit, np.array([s])).sensitivity[0])
    # Truncation is O(h²) (≤ 1e-8 relative here); rounding of the two Vout values is ≤ 4·eps·Vs/(2h).
    assert abs(analytic - numeric) <= 1e-6 * abs(numeric) + 4 * EPS * circuit.supply_v / h


@settings(max_examples=80)
@given(st.data(), ANY_SENSOR, circuits())
def test_thevenin_and_sensor_power_follow_the_textbook(data, part, circuit):
    spec, rng = part
    sensor = build_sensor(spec)
    s = stimulus_in(data.draw, sensor, rng, margin=0.01)
    got = respond(sensor, circuit, np.array([s]))
    rt, rb, rs = arms(spec, sensor, circuit, s)
    rl = circuit.load_ohm
    conductance = 1.0 / rt + 1.0 / rb + (0.0 if rl is None else 1.0 / rl)
    assert math.isclose(float(got.thevenin_ohm[0]), 1.0 / conductance, rel_tol=1e-12)
    rb_loaded = rb if rl is None else 1.0 / (1.0 / rb + 1.0 / rl)
    v_top = circuit.supply_v * rt / (rt + rb_loaded)  # across the top arm, no cancellation
    v_bottom = circuit.supply_v * rb_loaded / (rt + rb_loaded)
    assert math.isclose(float(got.vout_v[0]), v_bottom, rel_tol=1e-12)
    if spec["kind"] == "pot" and spec["wiring"] == "divider":
        want = v_top**2 / rt + v_bottom**2 / rb  # the whole track
    else:
        v_sensor = v_top if circuit.sensor_at == "top" else v_bottom
        want = v_sensor**2 / rs  # the sensor alone, not the resistor across it
        if circuit.parallel_ohm is not None:
            assert float(got.sensor_power_w[0]) < v_sensor**2 * (1 / rs + 1 / circuit.parallel_ohm)
    assert math.isclose(float(got.sensor_power_w[0]), want, rel_tol=1e-9)


@FEW
@given(st.data(), ANY_SENSOR, circuits(), st.lists(log_uniform(0, 7), min_size=1, max_size=4))
def test_divider_output_is_respond_without_the_extras(data, part, circuit, fixed):
    # The solver's lean path must give respond's numbers exactly, for many fixed values at once.
    sensor = build_sensor(part[0])
    s = np.array([stimulus_in(data.draw, sensor, part[1]) for _ in range(6)])
    column = np.array(fixed)[:, None]
    full = respond(sensor, circuit, s, column)
    vout, power = divider_output(sensor, circuit, s, column, with_power=True)
    np.testing.assert_array_equal(np.broadcast_to(vout, full.vout_v.shape), full.vout_v)
    np.testing.assert_array_equal(np.broadcast_to(power, full.sensor_power_w.shape), full.sensor_power_w)
    alone, none = divider_output(sensor, circuit, s, column)
    assert none is None
    np.testing.assert_array_equal(np.broadcast_to(alone, full.vout_v.shape), full.vout_v)
