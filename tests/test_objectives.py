"""The objective and metric functions on their own, against plain definitions.

min_sensitivity is checked against numpy.gradient (its documented default
edges), on even and uneven axes and with the caller vouching for an even
axis; nonlinearity_pct against a plain-Python worst distance from the
end-point chord. Both written here from the definitions in
../shared/contract.md, not from app code.
"""

from __future__ import annotations

import numpy as np
import pytest

from app import objectives


def curves(k: int = 7, n: int = 61, seed: int = 3) -> np.ndarray:
    rng = np.random.default_rng(seed)
    x = np.linspace(0.0, 1.0, n)
    gain, bend = rng.uniform(0.5, 3.0, (k, 1)), rng.uniform(-2.0, 2.0, (k, 1))
    return gain * x + bend * x**2 + 0.3 * np.sin(5 * x + rng.uniform(0, 6, (k, 1)))


@pytest.mark.parametrize("even", [False, True])
def test_min_sensitivity_is_the_smallest_numpy_gradient_on_an_even_axis(even):
    axis = np.linspace(-40.0, 125.0, 61)
    vout = curves()
    want = np.min(np.abs(np.gradient(vout, axis, axis=-1)), axis=-1)
    np.testing.assert_allclose(objectives.min_sensitivity(vout, axis, even), want, rtol=1e-9)


def test_min_sensitivity_on_an_uneven_axis_takes_numpy_gradient():
    axis = np.cumsum(np.r_[0.0, np.linspace(0.5, 2.0, 60)])
    vout = curves()
    want = np.min(np.abs(np.gradient(vout, axis, axis=-1)), axis=-1)
    np.testing.assert_allclose(objectives.min_sensitivity(vout, axis), want, rtol=1e-12)


def test_nonlinearity_is_the_worst_distance_from_the_chord():
    axis = np.linspace(0.0, 100.0, 61)
    vout = curves()
    for row, got in zip(vout, objectives.nonlinearity_pct(vout, axis)):
        v0, v1 = float(row[0]), float(row[-1])
        worst = max(abs(v - (v0 + (v1 - v0) * (a - axis[0]) / (axis[-1] - axis[0]))) for v, a in zip(row, axis))
        assert got == pytest.approx(worst / abs(v1 - v0) * 100.0, rel=1e-9)


def test_a_flat_output_has_no_finite_nonlinearity():
    axis = np.linspace(0.0, 1.0, 11)
    flat = np.full((2, 11), 1.5)
    assert np.all(np.isinf(objectives.nonlinearity_pct(flat, axis)))
    assert np.all(objectives.min_sensitivity(flat, axis) == 0.0)
    assert objectives.nonlinearity_pct(flat[0], axis) == np.inf  # one curve, 1-D


def test_one_curve_gives_the_numbers_of_its_row():
    axis = np.linspace(0.0, 100.0, 61)
    vout, power = curves(), curves(seed=9) ** 2
    rows = objectives.metrics(vout, axis, power, even=True)
    for i in range(vout.shape[0]):
        one = objectives.metrics(vout[i], axis, power[i], even=True)
        assert {k: float(v) for k, v in one.items()} == {k: float(v[i]) for k, v in rows.items()}


def test_metrics_share_one_swing():
    axis = np.linspace(0.0, 100.0, 61)
    vout, power = curves(), curves(seed=9) ** 2
    found = objectives.metrics(vout, axis, power, even=True)
    np.testing.assert_array_equal(found["swing_v"], np.abs(vout[:, -1] - vout[:, 0]))
    np.testing.assert_array_equal(found["max_sensor_power_w"], power.max(axis=-1))
    np.testing.assert_array_equal(found["nonlinearity_pct"], objectives.nonlinearity_pct(vout, axis))
