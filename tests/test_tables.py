"""Firmware tables (app/tables.py) against the forward model, standards and ngspice.

* Every code of 12-bit designs: the table plus linear interpolation against
  the stimulus found by bisection on the *forward* model (``respond``, the
  divider equation evaluated from the stimulus), never through the table's
  own analytic inverse; the reported largest error must bound what is seen
  and be what is seen.
* Valid codes: the codes just outside stand for stimuli beyond the working
  range; the fault codes follow from the divider equation with the sensor at
  0 Ω or removed, worked by hand below.
* The fewest-entry table against an independent greedy reference (linear
  scan, first failure stops) and, on an 8-bit design, against the exact
  optimum by dynamic programming over every segment.
* Outside references: IEC 60751 table values (Pt100 at 100 °C is 138.51 Ω,
  at −100 °C 60.26 Ω), the IEC 60539-1 B-value definition, and ngspice's
  operating point of the divider built with the table's stimulus.
"""

from __future__ import annotations

import numpy as np
import pytest

from app import tables as T
from app.adc import Adc
from app.circuit import Circuit, respond
from app.constants import KELVIN_OFFSET
from app.errors import InputError
from app.models import build_sensor

NTC = {"kind": "ntc_beta", "r_nominal_ohm": 10_000, "beta_k": 3950}
NTC_SH = {"kind": "ntc_sh", "a": 1.19855538756e-3, "b": 2.21544576321e-4, "c": 1.47136378086e-7}
PT100 = {"kind": "rtd", "r0_ohm": 100}
LDR = {"kind": "ldr", "r_ref_ohm": 20_000, "gamma": 0.7, "r_dark_ohm": 1e6}
POT = {"kind": "pot", "r_total_ohm": 10_000}
POT_LOG_RHEO = {"kind": "pot", "r_total_ohm": 50_000, "taper": "log", "wiring": "rheostat"}

# (name, sensor, circuit kwargs, adc kwargs, working range or None)
DESIGNS = [
    ("ntc-bottom", NTC, dict(sensor_at="bottom", fixed_ohm=10e3), {}, None),
    ("ntc-top-loaded", NTC, dict(sensor_at="top", fixed_ohm=4.7e3, load_ohm=220e3), {}, (-20, 120)),
    ("ntc-parallel-load", NTC, dict(sensor_at="bottom", fixed_ohm=10e3, load_ohm=1e6, parallel_ohm=47e3), {}, (0, 100)),
    ("ntc-sh-vref", NTC_SH, dict(sensor_at="bottom", fixed_ohm=10e3), dict(ratiometric=False, vref_v=2.5), (-10, 90)),
    ("pt100", PT100, dict(sensor_at="bottom", fixed_ohm=1e3), {}, (-100, 400)),
    ("ldr-top", LDR, dict(sensor_at="top", fixed_ohm=10e3, load_ohm=1e6), {}, (0.1, 50_000)),
    ("pot-divider-loaded", POT, dict(load_ohm=22e3), {}, None),
    ("pot-log-rheostat", POT_LOG_RHEO, dict(sensor_at="bottom", fixed_ohm=10e3), {}, None),
]


def make(sensor, circuit, adc=None, rng=None, bits=12, supply=3.3) -> T.Design:
    s = build_sensor(sensor)
    c = Circuit(supply, **circuit)
    a = Adc(bits, **(adc or {}))
    lo, hi = rng if rng else (None, None)
    return T.design(s, c, a, lo, hi)


def forward_truth(d: T.Design, codes: np.ndarray) -> np.ndarray:
    """Axis value whose forward-model output is each code's centre, by bisection on ``respond``.

    NaN where no stimulus within the model's limits (or 20 % beyond the working range) gets there.
    """
    sensor = d.sensor
    span = d.hi - d.lo
    lo = max(sensor.stimulus_min, d.lo - 0.2 * span) if sensor.axis_unit != "decade" else sensor.stimulus_min
    hi = min(sensor.stimulus_max, d.hi + 0.2 * span) if sensor.axis_unit != "decade" else sensor.stimulus_max
    a_lo = np.full(codes.shape, float(sensor.to_axis(lo)))
    a_hi = np.full(codes.shape, float(sensor.to_axis(hi)))
    target = (codes + 0.5) * d.circuit.supply_v / 2**d.adc.bits if d.adc.ratiometric else (codes + 0.5) * d.adc.vref_v / 2**d.adc.bits

    def vout(axis):
        return np.asarray(respond(sensor, d.circuit, sensor.from_axis(axis)).vout_v)

    v_ends = vout(np.array([a_lo[0], a_hi[0]]))
    rising = v_ends[1] > v_ends[0]
    reachable = (target >= v_ends.min()) & (target <= v_ends.max())
    for _ in range(80):
        mid = 0.5 * (a_lo + a_hi)
        above = vout(mid) > target
        go_down = above if rising else ~above
        a_hi = np.where(go_down, mid, a_hi)
        a_lo = np.where(go_down, a_lo, mid)
    return np.where(reachable, 0.5 * (a_lo + a_hi), np.nan)


@pytest.mark.parametrize("name, sensor, circuit, adc, rng", DESIGNS, ids=[d[0] for d in DESIGNS])
@pytest.mark.parametrize("step", [1, 16, 97])
def test_every_code_within_the_reported_bound(name, sensor, circuit, adc, rng, step):
    d = make(sensor, circuit, adc, rng)
    built = T.build(d, step)
    codes = built.codes
    truth = forward_truth(d, codes)
    # The stimulus each code stands for, from the analytic inverse, is the forward model's.
    assert np.max(np.abs(built.f - truth)) < 1e-7
    # Table plus interpolation, at every valid code, against the forward model.
    table = built.uniform
    interpolated = np.interp(codes, table.codes, table.values)
    seen = np.max(np.abs(interpolated - truth))
    assert seen <= table.max_error + 1e-7
    assert seen >= table.max_error - 1e-7  # the reported bound is the real one, not padded
    if step == 1:
        assert table.max_error < 1e-9
    assert table.codes[0] == built.valid.min and table.codes[-1] == built.valid.max
    assert np.all(np.diff(table.codes)[:-1] == step) and 1 <= np.diff(table.codes)[-1] <= step


@pytest.mark.parametrize("name, sensor, circuit, adc, rng", DESIGNS, ids=[d[0] for d in DESIGNS])
def test_codes_just_outside_the_valid_range_stand_for_stimuli_beyond_it(name, sensor, circuit, adc, rng):
    d = make(sensor, circuit, adc, rng)
    valid = T.valid_codes(d)
    outside = np.array([c for c in (valid.min - 1, valid.max + 1) if 0 <= c < d.adc.codes])
    if outside.size:
        s = d.sensor.from_axis(forward_truth(d, outside))
        assert np.all(np.isnan(s) | (s < d.lo) | (s > d.hi))
    inside = np.array([valid.min, valid.max])
    assert np.all(np.isfinite(T.stimulus_of_codes(d, inside)))


def test_fault_codes_follow_the_divider_equation():
    # Sensor at the bottom, 10 kΩ on top, 3.3 V, 12 bits ratiometric: shorted → 0 V → code 0;
    # open with 47 kΩ across the sensor → 3.3·47/(10+47) = 2.72105 V → floor(2.72105/3.3·4096) = 3377.
    d = make(NTC, dict(sensor_at="bottom", fixed_ohm=10e3, parallel_ohm=47e3))
    v = T.valid_codes(d)
    assert (v.short_code, v.open_code) == (0, 3377)
    assert (v.below_fault, v.above_fault) == ("short", "open")
    assert "shorted" in v.below and "above 150" in v.below
    assert "open" in v.above and "below -55" in v.above
    # Sensor at the top: shorted → the supply → clipped to the last code; open (no parallel) → 0 V.
    d = make(NTC, dict(sensor_at="top", fixed_ohm=10e3))
    v = T.valid_codes(d)
    assert (v.short_code, v.open_code) == (4095, 0)
    assert (v.below_fault, v.above_fault) == ("open", "short")
    # With a 100 kΩ load: open at the bottom reads 3.3·100/110 = 3.0 V → code 3723.
    d = make(NTC, dict(sensor_at="bottom", fixed_ohm=10e3, load_ohm=100e3))
    assert T.valid_codes(d).open_code == 3723


def test_a_fault_inside_the_valid_range_is_reported():
    # A rheostat pot reaches 0 Ω at the ground end: a short reads like position 0.
    d = make(POT_LOG_RHEO, dict(sensor_at="bottom", fixed_ohm=10e3))
    v = T.valid_codes(d)
    assert v.min == 0 and v.below_fault is None and v.above_fault == "open"
    assert any("cannot be told" in w for w in v.warnings)


def test_pot_divider_covers_every_code():
    d = make(POT, dict())
    v = T.valid_codes(d)
    assert (v.min, v.max) == (0, 4095)
    assert v.short_code is None and "working position" in v.below


# --- the fewest-entry table -------------------------------------------------

def chord_ok(f: np.ndarray, i: int, j: int, bound: float) -> bool:
    """The test's own check: straight line from (i, f[i]) to (j, f[j]) against every point between."""
    t = np.arange(i, j + 1)
    line = f[i] + (f[j] - f[i]) * (t - i) / (j - i)
    return bool(np.max(np.abs(line - f[i:j + 1])) <= bound)


def greedy_reference(f: np.ndarray, bound: float) -> int:
    """Entries a plain linear-scan greedy needs: extend each segment until it first fails."""
    n, i, entries = f.size, 0, 1
    while i < n - 1:
        j = i + 1
        while j + 1 < n and chord_ok(f, i, j + 1, bound):
            j += 1
        i, entries = j, entries + 1
    return entries


def optimum(f: np.ndarray, bound: float) -> int:
    """Fewest entries over all choices: shortest path over every feasible segment."""
    n = f.size
    best = np.full(n, np.inf)
    best[0] = 1
    for j in range(1, n):
        for i in range(j):
            if best[i] + 1 < best[j] and (j == i + 1 or chord_ok(f, i, j, bound)):
                best[j] = best[i] + 1
    return int(best[-1])


FEWEST_CASES = [
    ("ntc", NTC, dict(sensor_at="bottom", fixed_ohm=10e3), None, 0.1),
    ("ntc-tight", NTC, dict(sensor_at="top", fixed_ohm=10e3, load_ohm=100e3), (0, 100), 0.01),
    ("pt100", PT100, dict(sensor_at="bottom", fixed_ohm=1e3), None, 0.05),
    ("ldr", LDR, dict(sensor_at="bottom", fixed_ohm=20e3), (0.1, 50_000), 0.005),
    ("pot-log", POT_LOG_RHEO, dict(sensor_at="bottom", fixed_ohm=10e3), None, 0.002),
]


@pytest.mark.parametrize("name, sensor, circuit, rng, bound", FEWEST_CASES, ids=[c[0] for c in FEWEST_CASES])
def test_fewest_entry_table_meets_its_bound_and_is_not_beaten_by_greedy(name, sensor, circuit, rng, bound):
    d = make(sensor, circuit, rng=rng)
    built = T.build(d, 1, bound)
    few = built.fewest
    # The bound holds at every valid code, recomputed here with numpy.interp.
    got = np.interp(built.codes, few.codes, few.values)
    assert np.max(np.abs(got - built.f)) <= bound
    assert few.max_error <= bound
    reference = greedy_reference(built.f, bound)
    assert few.codes.size >= reference - 1  # no impossible claim
    assert few.codes.size <= reference      # and no worse than the plain greedy
    assert few.codes[0] == built.valid.min and few.codes[-1] == built.valid.max


def test_fewest_entry_table_is_optimal_on_a_small_design():
    d = make(NTC, dict(sensor_at="bottom", fixed_ohm=10e3), bits=8)
    for bound in (0.2, 0.5, 2.0):
        built = T.build(d, 1, bound)
        best = optimum(built.f, bound)
        assert best <= built.fewest.codes.size <= best + 1


def test_a_bound_below_float_noise_gives_every_code():
    d = make(NTC, dict(sensor_at="bottom", fixed_ohm=10e3), bits=8)
    built = T.build(d, 1, 1e-300)
    # Two neighbours need no interpolation at all; anything longer bends.
    assert built.fewest.codes.size == built.valid.size


# --- polynomial and Steinhart–Hart ------------------------------------------

def test_polynomial_is_the_least_squares_fit():
    d = make(NTC, dict(sensor_at="bottom", fixed_ohm=10e3), rng=(0, 100))
    built = T.build(d, 1, degree=5)
    p = built.poly
    codes = built.codes.astype(float)
    # Independent fit: Chebyshev basis on the raw codes (another basis, same least-squares values).
    ref = np.polynomial.Chebyshev.fit(codes, built.f, 5)
    assert np.max(np.abs(p(codes) - ref(codes))) < 1e-8
    assert float(np.max(np.abs(p.error))) == pytest.approx(float(np.max(np.abs(ref(codes) - built.f))), rel=1e-6)
    # The scaled variable runs -1 .. 1 over the valid codes.
    assert (codes[0] - p.mid) / p.half == pytest.approx(-1) and (codes[-1] - p.mid) / p.half == pytest.approx(1)


def test_steinhart_hart_of_a_beta_ntc_is_the_b_value_definition():
    # IEC 60539-1: β = ln(R1/R2) / (1/T1 − 1/T2). With c = 0, 1/T = a + b ln R must give that β back.
    sensor = build_sensor({**NTC, "t_nominal_c": 25})
    a, b, c = T.steinhart_hart(sensor)
    assert c == 0.0
    t1, t2 = 25 + KELVIN_OFFSET, 85 + KELVIN_OFFSET
    r1 = np.exp((1 / t1 - a) / b)
    r2 = np.exp((1 / t2 - a) / b)
    assert np.log(r1 / r2) / (1 / t1 - 1 / t2) == pytest.approx(3950, rel=1e-12)
    assert r1 == pytest.approx(10_000, rel=1e-12)


def test_steinhart_hart_reproduces_the_table():
    d = make(NTC_SH, dict(sensor_at="top", fixed_ohm=10e3, load_ohm=1e6, parallel_ohm=1e5), rng=(-20, 100))
    built = T.build(d, 4)
    assert built.sh == (NTC_SH["a"], NTC_SH["b"], NTC_SH["c"])
    ohm = T.sensor_ohm_at(d.sensor, d.circuit, d.adc.centre_v(built.codes, 3.3))
    assert np.max(np.abs(T.steinhart_hart_c(built.sh, ohm) - built.f)) < 1e-9
    assert T.steinhart_hart(build_sensor(PT100)) is None


# --- outside references -------------------------------------------------------

@pytest.mark.parametrize("t_c, ohm", [(100.0, 138.51), (-100.0, 60.26), (200.0, 175.86)])
def test_pt100_table_reads_the_iec_60751_table(t_c, ohm):
    """IEC 60751 table: Pt100 is 138.51 Ω at 100 °C, 60.26 Ω at −100 °C, 175.86 Ω at 200 °C (two decimals)."""
    code, bits = 1500, 12
    u = (code + 0.5) / 2**bits
    fixed = ohm * (1 - u) / u  # puts exactly `ohm` on the sensor at the centre of `code`
    d = make(PT100, dict(sensor_at="bottom", fixed_ohm=fixed), rng=(-200, 850))
    built = T.build(d, 1)
    got = built.f[code - built.valid.min]
    # 0.005 Ω of table rounding is about 0.013 °C at a slope of 0.38 Ω/°C.
    assert got == pytest.approx(t_c, abs=0.015)


def _spice_sensor(sensor: dict, s: float) -> list[str]:
    """The sensor's resistance(s) as ngspice expressions of the published formulas."""
    lit = lambda x: f"({float(x)!r})"  # noqa: E731
    kind = sensor["kind"]
    if kind == "ntc_beta":
        return [f"{lit(sensor['r_nominal_ohm'])}*exp({lit(sensor['beta_k'])}*(1/({lit(s)}+273.15)-1/(25+273.15)))"]
    if kind == "rtd":  # Callendar–Van Dusen, IEC 60751 coefficients
        cold = f"+(-4.183e-12)*({lit(s)}-100)*{lit(s)}*{lit(s)}*{lit(s)}" if s < 0 else ""
        return [f"{lit(sensor['r0_ohm'])}*(1+(3.9083e-3)*{lit(s)}+(-5.775e-7)*{lit(s)}*{lit(s)}{cold})"]
    if kind == "ldr":
        law = f"{lit(sensor['r_ref_ohm'])}*exp(-{lit(sensor['gamma'])}*ln({lit(s)}/10))"
        return [law] + ([lit(sensor["r_dark_ohm"])] if sensor.get("r_dark_ohm") else [])
    raise AssertionError(kind)


SPICE_CASES = [
    ("ntc-bottom-loaded", NTC, dict(sensor_at="bottom", fixed_ohm=10e3, load_ohm=1e5, parallel_ohm=47e3), None),
    ("ntc-top", NTC, dict(sensor_at="top", fixed_ohm=4.7e3), None),
    ("pt100-cold-and-hot", PT100, dict(sensor_at="bottom", fixed_ohm=1e3, load_ohm=1e6), (-150, 600)),
    ("ldr-dark", LDR, dict(sensor_at="top", fixed_ohm=22e3, load_ohm=470e3), (0.01, 10_000)),
    ("pot-divider-log", {"kind": "pot", "r_total_ohm": 10e3, "taper": "log"}, dict(load_ohm=4.7e3), None),
]


@pytest.mark.ngspice
@pytest.mark.parametrize("name, sensor, circuit, rng", SPICE_CASES, ids=[c[0] for c in SPICE_CASES])
def test_table_stimulus_puts_the_code_centre_on_the_output_in_ngspice(name, sensor, circuit, rng, ngspice):
    from tests.spice import number, op

    d = make(sensor, circuit, rng=rng)
    built = T.build(d, 1)
    pick = np.linspace(0, built.codes.size - 1, 7).round().astype(int)
    lines = []
    for n, i in enumerate(pick):
        s = float(d.sensor.from_axis(built.f[i]))
        top, out = f"t{n}", f"o{n}"
        lines.append(f"V{n} {top} 0 DC 3.3")
        if sensor["kind"] == "pot":
            r, m = float(sensor["r_total_ohm"]), 0.1
            a = ((1 - m) / m) ** 2
            lower = f"({r!r}*(pwr({a!r},{s!r})-1)/({a!r}-1))"
            lines += [f"Ru{n} {top} {out} {{{r!r}-{lower}}}", f"Rl{n} {out} 0 {{{lower}}}"]
        else:
            a_, b_ = (top, out) if circuit["sensor_at"] == "top" else (out, "0")
            fa, fb = (out, "0") if circuit["sensor_at"] == "top" else (top, out)
            for k, expr in enumerate(_spice_sensor(sensor, s)):
                lines.append(f"Rs{n}_{k} {a_} {b_} {{{expr}}}")
            lines.append(f"Rf{n} {fa} {fb} {number(circuit['fixed_ohm'])}")
            if circuit.get("parallel_ohm"):
                lines.append(f"Rp{n} {a_} {b_} {number(circuit['parallel_ohm'])}")
        if circuit.get("load_ohm"):
            lines.append(f"Rload{n} {out} 0 {number(circuit['load_ohm'])}")
    result = op(lines)
    for n, i in enumerate(pick):
        centre = (built.codes[i] + 0.5) * 3.3 / 4096
        assert result[f"o{n}"] == pytest.approx(centre, rel=1e-9, abs=1e-12)


# --- bad input ----------------------------------------------------------------

@pytest.mark.parametrize("change, field", [
    (dict(bits=7), "adc.bits"),
    (dict(bits=21), "adc.bits"),
    (dict(step=0), "step"),
    (dict(step=4096), "step"),
    (dict(rng=(100, 0)), "range.max"),
    (dict(rng=(-300, 0)), "range.min"),
    (dict(rng=(30.0, 30.0001)), "range"),
    (dict(bound=-1.0), "error_bound"),
    (dict(degree=0), "poly_degree"),
    (dict(degree=13), "poly_degree"),
])
def test_bad_input_names_the_field(change, field):
    bits = change.get("bits", 12)
    with pytest.raises(InputError) as err:
        if bits != 12:
            T.check_bits(bits)
        d = make(NTC, dict(sensor_at="bottom", fixed_ohm=10e3), rng=change.get("rng"))
        T.build(d, change.get("step", 1), change.get("bound"), change.get("degree"))
    assert err.value.field == field


def test_rheostat_without_fixed_resistor_names_it():
    with pytest.raises(InputError) as err:
        make(POT_LOG_RHEO, dict(sensor_at="bottom"))
    assert err.value.field == "circuit.fixed_ohm"


def test_too_many_entries_is_refused_with_the_step_to_use():
    d = make(POT, dict(), bits=20)
    with pytest.raises(InputError) as err:
        T.build(d, 1)
    assert err.value.field == "step" and "use a step of 16" in err.value.message


def test_a_hopeless_bound_is_refused_quickly():
    d = make(NTC, dict(sensor_at="bottom", fixed_ohm=10e3), bits=20)
    with pytest.raises(InputError) as err:
        T.build(d, 64, 1e-9)
    assert err.value.field == "error_bound" and "65537" in err.value.message
