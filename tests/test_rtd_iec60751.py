"""Platinum RTD against the IEC 60751 Pt100 table.

Source: IEC 60751:2008 table (Pt100), values typed from the published table.
Every value below was double-checked before it was kept: the table is the
Callendar–Van Dusen equation with the standard's coefficients rounded to
0.01 Ω, and each typed value equals that equation, computed independently
in this file, after rounding to 0.01 Ω (none had to be dropped).
"""

from __future__ import annotations

import numpy as np
import pytest

from app.models import build_sensor

# IEC 60751:2008 table (Pt100), values typed from the published table: °C → Ω.
PT100_TABLE = {
    -200: 18.52, -190: 22.83, -150: 39.72, -100: 60.26, -80: 68.33, -50: 80.31,
    -40: 84.27, -30: 88.22, -20: 92.16, -10: 96.09, 0: 100.00, 10: 103.90,
    20: 107.79, 25: 109.73, 30: 111.67, 50: 119.40, 100: 138.51, 150: 157.33,
    200: 175.86, 250: 194.10, 300: 212.05, 400: 247.09, 500: 280.98, 600: 313.71,
    700: 345.28, 800: 375.70, 850: 390.48,
}
TEMPS = sorted(PT100_TABLE)

# IEC 60751 coefficients, typed from the standard (not imported from the code).
A, B, C = 3.9083e-3, -5.775e-7, -4.183e-12
TABLE_STEP_OHM = 0.01  # the table's resolution


def cvd_ohm(t: float, r0: float = 100.0) -> float:
    """Callendar–Van Dusen, scalar, written out from IEC 60751 (C term below 0 °C only)."""
    cold = C * (t - 100.0) * t * t * t if t < 0 else 0.0
    return r0 * (1.0 + A * t + B * t * t + cold)


def cvd_slope(t: float, r0: float = 100.0) -> float:
    cold = C * (4.0 * t**3 - 300.0 * t**2) if t < 0 else 0.0
    return r0 * (A + 2.0 * B * t + cold)


@pytest.fixture(scope="module")
def pt100():
    return build_sensor({"kind": "rtd", "r0_ohm": 100.0})


def test_table_spans_the_standard_range():
    assert len(TEMPS) >= 10 and TEMPS[0] == -200 and TEMPS[-1] == 850
    assert sum(t < 0 for t in TEMPS) >= 5  # the C term is exercised


@pytest.mark.parametrize("t", TEMPS)
def test_typed_table_value_is_the_rounded_equation(t):
    # Guards the typing: a mistyped value would not round to the equation.
    assert round(cvd_ohm(t), 2) == pytest.approx(PT100_TABLE[t], abs=1e-9)


@pytest.mark.parametrize("t", TEMPS)
def test_resistance_matches_the_table(pt100, t):
    # The table is rounded to 0.01 Ω, so model and table differ by at most half of that.
    r = float(pt100.resistance(np.array(float(t))))
    assert abs(r - PT100_TABLE[t]) <= TABLE_STEP_OHM / 2 + 1e-9
    assert abs(r - PT100_TABLE[t]) <= 0.01  # the acceptance bound


def test_resistance_vectorised_matches_the_table(pt100):
    r = pt100.resistance(np.array(TEMPS, dtype=float))
    np.testing.assert_allclose(r, [PT100_TABLE[t] for t in TEMPS], rtol=0, atol=0.005 + 1e-9)


@pytest.mark.parametrize("t", TEMPS)
def test_inverse_of_the_table_value(pt100, t):
    # The table resistance is the true one ± 0.005 Ω (rounding), which maps to
    # ± 0.005/slope °C: up to 0.013 °C at 0 °C and 0.017 °C at 850 °C for a
    # Pt100. That rounding is the whole allowance; the model adds nothing.
    allowed = (TABLE_STEP_OHM / 2) / cvd_slope(t) + 1e-9
    t_back = float(pt100.stimulus_of(np.array(PT100_TABLE[t])))
    assert abs(t_back - t) <= allowed


@pytest.mark.parametrize("t", TEMPS + [-199.99, -123.4, -0.001, 0.001, 649.5])
def test_inverse_of_the_exact_equation_within_0_01_c(pt100, t):
    # At the unrounded standard curve the inverse must be far inside 0.01 °C
    # (the below-zero branch is a Newton solve).
    t_back = float(pt100.stimulus_of(np.array(cvd_ohm(t))))
    assert abs(t_back - t) <= 0.01
    assert abs(t_back - t) <= 1e-7


def test_alpha_is_0_00385(pt100):
    # IEC 60751 names the curve by its mean coefficient α = (R100 − R0)/(100 · R0),
    # nominally 0.00385 /°C (from memory); the coefficients make it A + 100·B = 0.00385055.
    r0, r100 = (float(pt100.resistance(np.array(t))) for t in (0.0, 100.0))
    alpha = (r100 - r0) / (100.0 * r0)
    assert alpha == pytest.approx(0.00385, abs=1e-6)
    assert alpha == pytest.approx(A + 100.0 * B, rel=1e-12)


@pytest.mark.parametrize("r0", [100.0, 500.0, 1000.0])
def test_other_r0_scale_the_same_curve(r0):
    # IEC 60751 defines Pt500/Pt1000 by the same equation with another R0.
    sensor = build_sensor({"kind": "rtd", "r0_ohm": r0})
    t = np.array(TEMPS, dtype=float)
    np.testing.assert_allclose(sensor.resistance(t), [cvd_ohm(x, r0) for x in TEMPS], rtol=1e-13)
    np.testing.assert_allclose(sensor.stimulus_of(sensor.resistance(t)), t, rtol=0, atol=1e-7)
