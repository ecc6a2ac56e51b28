"""The solver against an independent brute force and against closed forms.

Brute force: a plain-Python loop (math module only) that, for every series
value between the limits, rebuilds the 401-point grid, the sensor
resistance, the divider output and the objective from the definitions in
../shared/contract.md, without calling app.objectives, app.circuit or the
sensor models. Series values are typed from IEC 60063 (E6, E12, E24) or made
by its three-figure rule (E96: round(10^(i/96), 2), no exceptions in E96).

Closed forms from the literature (../shared/design.md §3): the unloaded
swing optimum sqrt(R(min)·R(max)), and the beta-NTC inflection resistor
R(Tm)·(β − 2Tm)/(β + 2Tm).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pytest

from app.circuit import Circuit, respond
from app.errors import InputError
from app.models import build_sensor
from app.solver import Limits, Problem, solve

POINTS = 401
# IEC 60063 mantissas typed from the standard's table.
E6 = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8]
E12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2]
E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]
MANTISSAS = {"E6": E6, "E12": E12, "E24": E24, "E96": [round(10 ** (i / 96), 2) for i in range(96)]}


def series_between(name: str, lo: float, hi: float) -> list[float]:
    values = []
    for decade in range(-2, 10):
        for m in MANTISSAS[name]:
            v = m * 10.0**decade
            if lo * (1 - 1e-9) <= v <= hi * (1 + 1e-9):
                values.append(v)
    return sorted(values)


# --- the sensor curves, scalar, from the published formulas ---------------

def r_sensor(spec: dict, s: float) -> float:
    kind = spec["kind"]
    if kind == "ntc_beta":
        t, tn = s + 273.15, spec.get("t_nominal_c", 25.0) + 273.15
        return spec["r_nominal_ohm"] * math.exp(spec["beta_k"] * (1 / t - 1 / tn))
    if kind == "ntc_sh":
        a, b, c = spec["a"], spec["b"], spec["c"]
        y = (a - 1 / (s + 273.15)) / c
        x = math.sqrt((b / (3 * c)) ** 3 + (y / 2) ** 2)
        return math.exp((x - y / 2) ** (1 / 3) - (x + y / 2) ** (1 / 3))
    if kind == "rtd":
        cold = -4.183e-12 * (s - 100) * s**3 if s < 0 else 0.0
        return spec["r0_ohm"] * (1 + 3.9083e-3 * s - 5.775e-7 * s * s + cold)
    if kind == "ldr":
        law = spec["r_ref_ohm"] * (s / spec.get("lux_ref", 10.0)) ** (-spec["gamma"])
        dark = spec.get("r_dark_ohm")
        return law if dark is None else law * dark / (law + dark)
    raise ValueError(kind)


def axis_grid(spec: dict, lo: float, hi: float) -> tuple[list[float], list[float]]:
    """(stimulus, axis) on 401 points evenly spaced on the stimulus axis, ends exact."""
    log = spec["kind"] == "ldr"
    a0, a1 = (math.log10(lo), math.log10(hi)) if log else (lo, hi)
    axis = [a0 + (a1 - a0) * i / (POINTS - 1) for i in range(POINTS)]
    stim = [10.0**a if log else a for a in axis]
    stim[0], stim[-1] = lo, hi
    return stim, axis


def par(a: float, b: float | None) -> float:
    return a if b is None else a * b / (a + b)


def gradient(f: list[float], x: list[float]) -> list[float]:
    """numpy.gradient(f, x) with its default edge order, written out from its documentation."""
    n = len(f)
    g = [(f[1] - f[0]) / (x[1] - x[0])]
    for i in range(1, n - 1):
        hs, hd = x[i] - x[i - 1], x[i + 1] - x[i]
        g.append((hs**2 * f[i + 1] + (hd**2 - hs**2) * f[i] - hd**2 * f[i - 1]) / (hs * hd * (hd + hs)))
    g.append((f[-1] - f[-2]) / (x[-1] - x[-2]))
    return g


@dataclass(frozen=True)
class Setup:
    name: str
    sensor: dict
    supply_v: float
    sensor_at: str
    lo: float
    hi: float
    objective: str
    series: str
    load_ohm: float | None = None
    parallel_ohm: float | None = None
    min_ohm: float = 1.0
    max_ohm: float = 1e7
    max_power_w: float | None = None

    def problem(self) -> Problem:
        circuit = Circuit(self.supply_v, self.sensor_at, None, self.load_ohm, self.parallel_ohm)
        limits = Limits(self.min_ohm, self.max_ohm, self.max_power_w)
        return Problem(build_sensor(self.sensor), circuit, self.lo, self.hi, self.objective, limits)


def brute_score(setup: Setup, fixed: float) -> tuple[float, float]:
    """(objective score, max sensor power) of one fixed resistor, from scratch."""
    stim, axis = axis_grid(setup.sensor, setup.lo, setup.hi)
    vout, power = [], []
    for s in stim:
        rs = r_sensor(setup.sensor, s)
        element = par(rs, setup.parallel_ohm)
        rt, rb = (element, fixed) if setup.sensor_at == "top" else (fixed, element)
        rb_loaded = par(rb, setup.load_ohm)
        v = setup.supply_v * rb_loaded / (rt + rb_loaded)
        v_sensor = setup.supply_v - v if setup.sensor_at == "top" else v
        vout.append(v)
        power.append(v_sensor**2 / rs)  # only the sensor: the parallel resistor's share is not counted
    swing = abs(vout[-1] - vout[0])
    if setup.objective == "swing":
        score = swing
    elif setup.objective == "linearity":
        chord = [vout[0] + (vout[-1] - vout[0]) * (a - axis[0]) / (axis[-1] - axis[0]) for a in axis]
        score = max(abs(v - c) for v, c in zip(vout, chord)) / swing * 100.0
    else:
        score = min(abs(g) for g in gradient(vout, axis))
    return score, max(power)


def better(objective: str, a: float, b: float) -> bool:
    return a < b if objective == "linearity" else a > b


NTC10K = {"kind": "ntc_beta", "r_nominal_ohm": 10000.0, "beta_k": 3950.0}
SETUPS = [
    Setup("ntc-bottom-swing", NTC10K, 3.3, "bottom", 0.0, 100.0, "swing", "E24"),
    Setup("ntc-top-linearity-load", NTC10K, 3.3, "top", -20.0, 60.0, "linearity", "E12", load_ohm=50e3),
    Setup("ntc-bottom-sensitivity-load-par", {"kind": "ntc_beta", "r_nominal_ohm": 1e5, "beta_k": 4250.0, "t_nominal_c": 25.0},
          5.0, "bottom", 20.0, 120.0, "sensitivity", "E24", load_ohm=1e6, parallel_ohm=470e3, min_ohm=470.0, max_ohm=2.2e5),
    Setup("ntc-top-sensitivity-power", NTC10K, 5.0, "top", 0.0, 50.0, "sensitivity", "E24", max_power_w=2e-4),
    Setup("rtd-bottom-swing-power", {"kind": "rtd", "r0_ohm": 100.0}, 3.3, "bottom", 0.0, 200.0, "swing", "E24", max_power_w=1e-3),
    Setup("rtd-top-sensitivity-power-load-e96", {"kind": "rtd", "r0_ohm": 1000.0}, 3.3, "top", -100.0, 300.0, "sensitivity",
          "E96", load_ohm=1e5, min_ohm=100.0, max_ohm=1e6, max_power_w=5e-4),
    Setup("rtd-bottom-linearity-load-e96", {"kind": "rtd", "r0_ohm": 100.0}, 3.3, "bottom", -200.0, 600.0, "linearity",
          "E96", load_ohm=2e3, min_ohm=100.0, max_ohm=1e6),
    Setup("sh-bottom-linearity-power", {"kind": "ntc_sh", "a": 1.129148e-3, "b": 2.34125e-4, "c": 8.76741e-8},
          3.3, "bottom", 0.0, 80.0, "linearity", "E6", max_power_w=1e-4),
    Setup("ldr-top-sensitivity-load", {"kind": "ldr", "r_ref_ohm": 20e3, "gamma": 0.7, "r_dark_ohm": 2e6},
          5.0, "top", 1.0, 1000.0, "sensitivity", "E24", load_ohm=2e5),
    Setup("ldr-bottom-swing-par", {"kind": "ldr", "r_ref_ohm": 50e3, "gamma": 0.8}, 12.0, "bottom", 10.0, 1e4, "swing", "E12",
          parallel_ohm=1e6),
]


@pytest.fixture(scope="module", params=SETUPS, ids=[s.name for s in SETUPS])
def case(request):
    setup = request.param
    solution = solve(setup.problem(), setup.series)
    table = []
    for fixed in series_between(setup.series, setup.min_ohm, setup.max_ohm):
        score, power = brute_score(setup, fixed)
        feasible = setup.max_power_w is None or power <= setup.max_power_w
        table.append((fixed, score, power, feasible))
    return setup, solution, table


def test_coverage_of_the_setups():
    assert {s.objective for s in SETUPS} == {"swing", "linearity", "sensitivity"}
    assert {s.sensor_at for s in SETUPS} == {"top", "bottom"}
    for objective in ("swing", "linearity", "sensitivity"):
        assert any(s.objective == objective and s.max_power_w for s in SETUPS)
        assert any(s.objective == objective and (s.load_ohm or s.parallel_ohm) for s in SETUPS)


def test_candidate_set_is_every_series_value_between_the_limits(case):
    setup, solution, table = case
    values = [row[0] for row in table]
    assert values[0] >= setup.min_ohm * (1 - 1e-12) and values[-1] <= setup.max_ohm * (1 + 1e-12)
    assert any(math.isclose(solution.fixed_ohm, v, rel_tol=1e-12) for v in values)
    if setup.series == "E96" and (setup.min_ohm, setup.max_ohm) == (100.0, 1e6):
        assert len(values) == 4 * 96 + 1


def test_series_value_is_the_brute_force_best(case):
    setup, solution, table = case
    feasible = [row for row in table if row[3]]
    assert feasible, "the setup must leave some series value feasible"
    best = feasible[0]
    for row in feasible[1:]:
        if better(setup.objective, row[1], best[1]):
            best = row
    assert solution.score == pytest.approx(best[1], rel=1e-9)
    mine, power = brute_score(setup, solution.fixed_ohm)
    assert mine == pytest.approx(best[1], rel=1e-9)  # a tie may pick either value, never a worse one
    if setup.max_power_w is not None:
        assert power <= setup.max_power_w
        assert solution.metrics["max_sensor_power_w"] == pytest.approx(power, rel=1e-9)


def test_candidates_are_the_best_few_in_order(case):
    setup, solution, table = case
    feasible = sorted((row[1] for row in table if row[3]), reverse=setup.objective != "linearity")
    scores = [score for _, score in solution.candidates]
    assert 1 <= len(scores) <= 5 and solution.candidates[0][0] == solution.fixed_ohm
    np.testing.assert_allclose(scores, feasible[: len(scores)], rtol=1e-9)


LIMITED = [s for s in SETUPS if s.max_power_w is not None]


@pytest.mark.parametrize("setup", LIMITED, ids=[s.name for s in LIMITED])
def test_power_limit_is_binding_where_set(setup):
    # Otherwise the power-limit setups would not test the limit at all.
    solution = solve(setup.problem(), setup.series)
    unlimited = solve(Setup(**{**setup.__dict__, "max_power_w": None}).problem(), setup.series)
    assert brute_score(setup, unlimited.fixed_ohm)[1] > setup.max_power_w
    assert better(setup.objective, unlimited.score, solution.score)


def test_exact_optimum_is_at_least_as_good_as_every_series_value(case):
    setup, solution, table = case
    exact, power = brute_score(setup, solution.exact_ohm)
    assert setup.min_ohm <= solution.exact_ohm <= setup.max_ohm
    if setup.max_power_w is not None:
        assert power <= setup.max_power_w * (1 + 1e-12)
    assert solution.exact_score == pytest.approx(exact, rel=1e-9)
    # Strictly better than the exact optimum by more than rounding: never.
    beaten = exact * (1 - 1e-12) if setup.objective == "linearity" else exact * (1 + 1e-12)
    for fixed, score, _, feasible in table:
        if feasible:
            assert not better(setup.objective, score, beaten), fixed
    # Nor is any point of an independent log scan between the limits (not only series values).
    lo, hi = math.log10(setup.min_ohm), math.log10(setup.max_ohm)
    for i in range(121):
        fixed = 10.0 ** (lo + (hi - lo) * i / 120)
        score, power = brute_score(setup, fixed)
        if setup.max_power_w is None or power <= setup.max_power_w:
            assert not better(setup.objective, score, beaten), fixed


@pytest.mark.parametrize("setup", SETUPS, ids=[s.name for s in SETUPS])
def test_fast_ranking_agrees_with_full_scoring(setup):
    # solve() ranks with Problem.rank (Vout and power only); Problem.score is the full path.
    problem = setup.problem()
    fixed = np.geomspace(setup.min_ohm, setup.max_ohm, 37)
    found, feasible, extra = problem.score(fixed)
    fast, fast_feasible = problem.rank(fixed)
    np.testing.assert_array_equal(fast, found)
    np.testing.assert_array_equal(fast_feasible, feasible)


@pytest.mark.parametrize("setup", SETUPS, ids=[s.name for s in SETUPS])
def test_one_value_metrics_are_a_row_of_full_scoring(setup):
    # solve() reports the winner's metrics through Problem.metrics (1-D arrays, one value).
    problem = setup.problem()
    fixed = np.geomspace(setup.min_ohm, setup.max_ohm, 5)
    _, _, extra = problem.score(fixed)
    for i, value in enumerate(fixed):
        assert problem.metrics(value) == {name: float(v[i]) for name, v in extra.items()}


def test_exact_series_returns_the_exact_optimum():
    setup = SETUPS[1]
    sol = solve(setup.problem(), "exact")
    assert sol.fixed_ohm == sol.exact_ohm and sol.score == sol.exact_score


def test_infeasible_power_limit_names_the_field():
    setup = Setup("x", NTC10K, 24.0, "bottom", 0.0, 50.0, "swing", "E24", min_ohm=1.0, max_ohm=10.0, max_power_w=1e-6)
    with pytest.raises(InputError) as caught:
        solve(setup.problem(), "E24")
    assert caught.value.field == "limits.max_sensor_power_w"


# --- closed forms ------------------------------------------------------------

SWING_PARTS = [
    (NTC10K, 0.0, 100.0, None),
    ({"kind": "ntc_beta", "r_nominal_ohm": 4700.0, "beta_k": 3435.0}, -40.0, 40.0, None),
    ({"kind": "rtd", "r0_ohm": 100.0}, -200.0, 850.0, None),
    ({"kind": "ldr", "r_ref_ohm": 20e3, "gamma": 0.7}, 0.5, 5000.0, None),
    # With a resistor across the sensor the same algebra holds for the combined element.
    (NTC10K, 0.0, 100.0, 22e3),
]


@pytest.mark.parametrize("sensor_at", ["top", "bottom"])
@pytest.mark.parametrize(("spec", "lo", "hi", "parallel"), SWING_PARTS)
def test_unloaded_swing_optimum_is_the_geometric_mean(spec, lo, hi, parallel, sensor_at):
    # d/dRf [Rf/(Rf + R1) − Rf/(Rf + R2)] = 0 gives Rf = sqrt(R1·R2) (closed form, design.md §3).
    sensor = build_sensor(spec)
    problem = Problem(sensor, Circuit(5.0, sensor_at, None, None, parallel), lo, hi, "swing")
    r1, r2 = (par(r_sensor(spec, s), parallel) for s in (lo, hi))
    assert solve(problem, "exact").exact_ohm == pytest.approx(math.sqrt(r1 * r2), rel=1e-3)
    assert solve(problem, "exact").exact_ohm == pytest.approx(math.sqrt(r1 * r2), rel=1e-6)



def swing_from_scratch(spec, lo, hi, sensor_at, load, parallel, fixed: float) -> float:
    """|Vout(hi) − Vout(lo)| / Vs from the divider's definition (contract topology), math only."""
    out = []
    for s in (lo, hi):
        element = par(r_sensor(spec, s), parallel)
        top, bottom = (element, fixed) if sensor_at == "top" else (fixed, element)
        bottom = par(bottom, load)
        out.append(bottom / (top + bottom))
    return abs(out[1] - out[0])


LOADED_SWING = [
    # (sensor_at, load, parallel, min_ohm, max_ohm): the load moves the peak; a 3 kΩ load under a
    # fixed bottom arm sits below sqrt(A1·A2) ≈ 4.8 kΩ, so the best value is the upper limit.
    ("bottom", 47e3, None, 10.0, 1e6),
    ("bottom", 5e3, 22e3, 10.0, 1e6),
    ("top", 100e3, None, 10.0, 1e6),
    ("top", 20e3, 47e3, 10.0, 1e6),
    ("top", 3e3, None, 10.0, 1e6),
    ("bottom", None, None, 20e3, 1e6),  # the peak (≈ 4.8 kΩ) lies below the lower limit
]


@pytest.mark.parametrize(("sensor_at", "load", "parallel", "min_ohm", "max_ohm"), LOADED_SWING)
def test_swing_optimum_beats_an_independent_dense_scan(sensor_at, load, parallel, min_ohm, max_ohm):
    # The solver's closed form (app.circuit.swing_peak_ohm) against 4001 log-spaced values scored
    # from the definition: at least as good as each, and where the scan's best lies.
    problem = Problem(build_sensor(NTC10K), Circuit(3.3, sensor_at, None, load, parallel), 0.0, 100.0, "swing",
                      Limits(min_ohm, max_ohm))
    sol = solve(problem, "exact")
    args = (NTC10K, 0.0, 100.0, sensor_at, load, parallel)
    scan = np.geomspace(min_ohm, max_ohm, 4001)
    swings = [swing_from_scratch(*args, float(r)) for r in scan]
    best = int(np.argmax(swings))
    assert swing_from_scratch(*args, sol.exact_ohm) >= swings[best] * (1 - 1e-12)
    step = (max_ohm / min_ohm) ** (1 / 4000)
    assert scan[best] / step <= sol.exact_ohm * (1 + 1e-12) and sol.exact_ohm <= scan[best] * step * (1 + 1e-12)
    assert sol.exact_score == pytest.approx(3.3 * swing_from_scratch(*args, sol.exact_ohm), rel=1e-9)


@pytest.mark.parametrize(("sensor_at", "load", "parallel", "min_ohm", "max_ohm"), LOADED_SWING)
def test_generic_search_finds_the_closed_form_swing_optimum(sensor_at, load, parallel, min_ohm, max_ohm):
    # A power limit no value reaches (1 kW) sends the swing through the derivative-free zoom
    # instead of the closed form: both must land on the same resistor.
    circuit = Circuit(3.3, sensor_at, None, load, parallel)
    closed = solve(Problem(build_sensor(NTC10K), circuit, 0.0, 100.0, "swing", Limits(min_ohm, max_ohm)), "exact")
    searched = solve(Problem(build_sensor(NTC10K), circuit, 0.0, 100.0, "swing",
                             Limits(min_ohm, max_ohm, 1e3)), "exact")
    assert searched.exact_ohm == pytest.approx(closed.exact_ohm, rel=1e-6)
    assert searched.exact_score == pytest.approx(closed.exact_score, rel=1e-12)



@pytest.mark.parametrize(("series_name", "min_ohm", "max_ohm"), [
    ("E96", 1.0, 1e7),      # the peak (≈ 4.8 kΩ) well inside
    ("E24", 20e3, 1e6),     # the peak below the lower limit: the best values are the lowest
    ("E12", 10.0, 1e3),     # the peak above the upper limit: the best values are the highest
    ("E6", 4.0e3, 5.0e3),   # one value only (4.7 kΩ)
])
def test_swing_candidates_are_the_best_of_every_series_value(series_name, min_ohm, max_ohm):
    # The solver scores only the series values next to the swing's peak; every value between
    # the limits, scored from the definition, must rank the same best few in the same order.
    setup = Setup("window", NTC10K, 3.3, "bottom", 0.0, 100.0, "swing", series_name, min_ohm=min_ohm, max_ohm=max_ohm)
    sol = solve(setup.problem(), series_name)
    values = series_between(series_name, min_ohm, max_ohm)
    scored = sorted(((brute_score(setup, v)[0], -i, v) for i, v in enumerate(values)), reverse=True)
    want = [v for _, _, v in scored[: len(sol.candidates)]]
    assert len(sol.candidates) == min(5, len(values))
    np.testing.assert_allclose([ohm for ohm, _ in sol.candidates], want, rtol=1e-12)


def inflection_ohm(spec: dict, tm_c: float) -> float:
    """R(Tm)·(β − 2Tm)/(β + 2Tm), Tm in kelvin (design.md §3)."""
    tm, beta = tm_c + 273.15, spec["beta_k"]
    return r_sensor(spec, tm_c) * (beta - 2 * tm) / (beta + 2 * tm)


@pytest.mark.parametrize("sensor_at", ["top", "bottom"])
@pytest.mark.parametrize("tm_c", [25.0, 60.0])
def test_inflection_resistor_puts_the_slope_peak_at_tm(tm_c, sensor_at):
    # Circuit model against the closed form: with Rf from the formula, d²Vout/dT² = 0 at Tm,
    # i.e. |dVout/dT| (the analytic sensitivity of circuit.respond) peaks at Tm.
    sensor = build_sensor(NTC10K)
    t = np.linspace(tm_c - 5.0, tm_c + 5.0, 2001)
    for factor, near in ((1.0, True), (1.05, False)):
        fixed = inflection_ohm(NTC10K, tm_c) * factor
        slope = np.abs(respond(sensor, Circuit(3.3, sensor_at, fixed), t).sensitivity)
        i = int(np.argmax(slope))
        # Parabola through the three samples around the peak.
        y0, y1, y2 = slope[i - 1 : i + 2]
        peak = t[i] + (t[1] - t[0]) * 0.5 * (y0 - y2) / (y0 - 2 * y1 + y2)
        if near:
            assert peak == pytest.approx(tm_c, abs=1e-3)
        else:
            assert abs(peak - tm_c) > 0.5  # a 5 % wrong resistor moves the peak by about 1 °C


@pytest.mark.parametrize("sensor_at", ["top", "bottom"])
@pytest.mark.parametrize("tm_c", [25.0, 60.0])
def test_linearity_optimum_over_a_narrow_range_tends_to_the_inflection_resistor(tm_c, sensor_at):
    # Solver against the closed form. Over [Tm − δ, Tm + δ] the end-point nonlinearity is
    # led by the curvature term V''(Tm)·δ²/2 (the odd cubic term cannot be tuned away),
    # so the linearity optimum makes V''(Tm) vanish up to the next even term, O(δ²):
    # the solver's exact_ohm must approach the inflection resistor with an error
    # falling 4× per halving of δ, and its Richardson extrapolation to δ = 0 must land on it.
    # A wrong closed form, circuit model or solver would converge elsewhere or not at all.
    sensor = build_sensor(NTC10K)
    target = inflection_ohm(NTC10K, tm_c)
    errors = []
    for delta in (2.0, 1.0, 0.5):
        problem = Problem(sensor, Circuit(3.3, sensor_at), tm_c - delta, tm_c + delta, "linearity")
        errors.append(solve(problem, "exact").exact_ohm / target - 1.0)
    assert abs(errors[-1]) < 5e-5
    for wide, narrow in zip(errors, errors[1:]):
        assert 3.5 < wide / narrow < 4.5
    assert abs((4 * errors[-1] - errors[-2]) / 3) < 1e-6
