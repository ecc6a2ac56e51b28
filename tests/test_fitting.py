"""Fitting sensor parameters to (stimulus, resistance) points.

Sources: the Steinhart–Hart equation (Steinhart and Hart, Deep-Sea Research
15, 1968) evaluated forward, 1/T = A + B·ln R + C·(ln R)³, to make the
points; the IEC 60539-1 B-value definition β = ln(R1/R2)/(1/T1 − 1/T2); the
LDR slope γ = log10(R1/R2)/log10(E2/E1) (common practice for photoresistor
data, no published standard); kelvin = °C + 273.15 (SI Brochure).

Noisy tables: the noise is seeded and its size known, so each fitted
coefficient is held to 5 standard deviations of the ordinary-least-squares
estimate, propagated through the covariance (XᵀX)⁻¹ Xᵀ Σ X (XᵀX)⁻¹ of the
linear problem the fit solves (Σ the noise covariance of the target).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from app.errors import InputError
from app.fitting import fit

K0 = 273.15
# A 10 kΩ bead's coefficients as widely quoted (common practice, no published source):
# used only to generate points, so any plausible set would do.
SH = (1.129148e-3, 2.34125e-4, 8.76741e-8)
SIGMAS = 5.0


def sh_temperature_c(ohm, coef=SH):
    ln_r = np.log(np.asarray(ohm, dtype=float))
    return 1.0 / (coef[0] + coef[1] * ln_r + coef[2] * ln_r**3) - K0


def ols_sigma(design: np.ndarray, noise_var: np.ndarray) -> np.ndarray:
    """Standard deviation of each OLS coefficient for independent target noise of variance ``noise_var``."""
    inv = np.linalg.inv(design.T @ design)
    cov = inv @ design.T @ np.diag(noise_var) @ design @ inv
    return np.sqrt(np.diag(cov))


@pytest.mark.parametrize(
    "ohm",
    [[30000.0, 10000.0, 1000.0], [336000.0, 10000.0, 680.0], [97000.0, 3300.0, 180.0]],
    ids=["0-90C", "-40-100C", "-20-150C"],
)
def test_three_exact_points_recover_steinhart_hart(ohm):
    t = sh_temperature_c(ohm)
    result = fit("ntc_sh", t, ohm)
    got = (result.sensor.a, result.sensor.b, result.sensor.c)
    for value, want in zip(got, SH):
        assert value == pytest.approx(want, rel=1e-9)
    assert result.max_abs_error < 1e-9  # residuals in °C
    assert result.residuals.shape == (3,)


@pytest.mark.parametrize("seed", [1, 2, 3, 4, 5])
def test_noisy_steinhart_hart_table_within_propagated_bound(seed):
    rng = np.random.default_rng(seed)
    ohm = np.geomspace(3.3e5, 300.0, 25)
    t_true = sh_temperature_c(ohm)
    sigma_t = 0.02  # °C, thermometer noise
    t_meas = t_true + rng.normal(0.0, sigma_t, ohm.size)
    result = fit("ntc_sh", t_meas, ohm)
    ln_r = np.log(ohm)
    design = np.column_stack([np.ones_like(ln_r), ln_r, ln_r**3])
    # The fit's target is 1/T: a temperature error e maps to −e/T² (second order is 1e-5 of it).
    sigma = ols_sigma(design, (sigma_t / (t_true + K0) ** 2) ** 2)
    got = np.array([result.sensor.a, result.sensor.b, result.sensor.c])
    assert np.all(np.abs(got - np.array(SH)) <= SIGMAS * sigma)
    # The bound is tight enough to mean something: 5σ is C within 3 %, B within 0.3 %.
    assert sigma[2] / SH[2] < 0.006 and sigma[1] / SH[1] < 0.0006
    # Residuals are model − measured stimulus in °C, about the noise in size.
    np.testing.assert_allclose(result.residuals, sh_temperature_c(ohm, got) - t_meas, atol=1e-9)
    assert result.max_abs_error < 6 * sigma_t


@pytest.mark.parametrize(
    ("t1", "r1", "t2", "r2"),
    [(25.0, 10000.0, 85.0, 1451.3), (0.0, 32650.0, 50.0, 3603.0), (-10.0, 55330.0, 100.0, 679.0)],
)
def test_two_point_beta_is_the_iec_60539_b_value(t1, r1, t2, r2):
    # The points are arbitrary plausible readings, not any part's data.
    beta_iec = math.log(r1 / r2) / (1.0 / (t1 + K0) - 1.0 / (t2 + K0))
    result = fit("ntc_beta", [t1, t2], [r1, r2])
    assert result.sensor.beta_k == pytest.approx(beta_iec, rel=1e-12)
    np.testing.assert_allclose(result.sensor.resistance(np.array([t1, t2])), [r1, r2], rtol=1e-12)
    assert result.max_abs_error < 1e-9
    if t1 == 25.0:
        assert result.sensor.t_nominal_c == 25.0
        assert result.sensor.r_nominal_ohm == pytest.approx(r1, rel=1e-12)


def test_noisy_beta_table_within_propagated_bound():
    rng = np.random.default_rng(60539)
    beta, rn = 3950.0, 10000.0
    t = np.linspace(-20.0, 100.0, 31)
    x = 1.0 / (t + K0) - 1.0 / (25.0 + K0)
    sigma_ln = 1e-3  # 0.1 % resistance-meter noise, relative
    ohm = rn * np.exp(beta * x) * np.exp(rng.normal(0.0, sigma_ln, t.size))
    result = fit("ntc_beta", t, ohm)
    sigma = ols_sigma(np.column_stack([np.ones_like(x), x]), np.full(t.size, sigma_ln**2))
    assert abs(math.log(result.sensor.r_nominal_ohm / rn)) <= SIGMAS * sigma[0]
    assert abs(result.sensor.beta_k - beta) <= SIGMAS * sigma[1]
    assert sigma[1] < 5.0  # K: the bound is a real constraint


@pytest.mark.parametrize(
    ("e1", "r1", "e2", "r2"),
    [(10.0, 20000.0, 100.0, 4000.0), (2.0, 80000.0, 500.0, 1500.0), (100.0, 3000.0, 10.0, 15000.0)],
)
def test_two_point_ldr_gamma(e1, r1, e2, r2):
    gamma = math.log10(r1 / r2) / math.log10(e2 / e1)
    result = fit("ldr", [e1, e2], [r1, r2])
    assert result.sensor.gamma == pytest.approx(gamma, rel=1e-12)
    np.testing.assert_allclose(result.sensor.resistance(np.array([e1, e2])), [r1, r2], rtol=1e-12)
    assert result.max_abs_error < 1e-9  # decades of lux
    if e1 == 10.0:
        assert result.sensor.r_ref_ohm == pytest.approx(r1, rel=1e-12)


def test_noisy_ldr_table_within_propagated_bound():
    rng = np.random.default_rng(7)
    lux = np.geomspace(0.5, 5000.0, 17)
    x = np.log10(lux / 10.0)
    sigma_log = 0.01  # decades of resistance
    ohm = 20000.0 * (lux / 10.0) ** -0.75 * 10.0 ** rng.normal(0.0, sigma_log, lux.size)
    result = fit("ldr", lux, ohm)
    sigma = ols_sigma(np.column_stack([np.ones_like(x), x]), np.full(lux.size, sigma_log**2))
    assert abs(math.log10(result.sensor.r_ref_ohm / 20000.0)) <= SIGMAS * sigma[0]
    assert abs(result.sensor.gamma - 0.75) <= SIGMAS * sigma[1]


@pytest.mark.parametrize(
    ("kind", "stimulus", "ohm"),
    [
        ("ntc_beta", [25.0], [10000.0]),
        ("ntc_sh", [0.0, 25.0], [30000.0, 10000.0]),
        ("ntc_beta", [25.0, 25.0], [10000.0, 9000.0]),
        ("ntc_beta", [25.0, 50.0], [10000.0, -1.0]),
        ("ntc_beta", [25.0, math.nan], [10000.0, 4000.0]),
        ("ntc_beta", [25.0, 50.0], [10000.0, 20000.0]),  # rising: not an NTC
        ("ldr", [0.0, 10.0], [1e5, 2e4]),
    ],
)
def test_bad_points_name_the_field(kind, stimulus, ohm):
    with pytest.raises(InputError) as caught:
        fit(kind, stimulus, ohm)
    assert caught.value.field == "points"


def test_unknown_kind_is_named():
    with pytest.raises(InputError) as caught:
        fit("thermocouple", [0.0, 1.0], [1.0, 2.0])
    assert caught.value.field == "kind"
