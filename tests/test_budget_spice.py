"""Tolerance corners of the budget against ngspice (Debian's ``ngspice``, run as a subprocess).

Reference: ngspice's operating point (``.op``) of every perturbed circuit.
Each corner is its own copy of the divider in one netlist; the sensor is an
ngspice expression of the published formula (beta model, LDR power law with
a dark resistance in parallel; ../shared/design.md §1) with the corner's
perturbed parameters as literals, the two leads and the load as resistors of
their own, and the supply source set to the corner's voltage. ngspice thus
computes the perturbed resistances and the divider itself; we compare the
output voltage of every corner at every stimulus point (rel 1e-6), and the
budget's reported output envelope (``vout_low_v``, ``vout_high_v``).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from app import budget, reading
from app.adc import Adc
from app.circuit import Circuit
from app.models import build_sensor
from app.reading import Design
from tests.spice import number, op

pytestmark = pytest.mark.ngspice

REL = 1e-6
POINTS = 5


def lit(x: float) -> str:
    return f"({number(x)})"


def ntc_expr(rn: float, beta: float, t: float) -> list[str]:
    return [f"{lit(rn)}*exp({lit(beta)}*(1/({lit(t)}+273.15)-1/(25+273.15)))"]


def ldr_expr(rref: float, gamma: float, lux: float, dark: float) -> list[str]:
    return [f"{lit(rref)}*exp(-{lit(gamma)}*ln({lit(lux)}/10))", lit(dark)]


CASES = {
    # sensor at the top, with a resistor across it, a load, and two leads
    "ntc": dict(
        sensor={"kind": "ntc_beta", "r_nominal_ohm": 10e3, "beta_k": 3950.0},
        circuit=Circuit(5.0, "top", 12e3, load_ohm=150e3, parallel_ohm=220e3), lead_ohm=1.5,
        tol=budget.Tolerances(fixed_pct=1, sensor_pct=3, beta_pct=2, supply_pct=5),
        range=(-30.0, 110.0),
        expr=lambda d, t: ntc_expr(10e3 * (1 + d["sensor"]), 3950.0 * (1 + d["beta"]), t),
    ),
    # sensor at the bottom, the power law with a dark resistance, and a load
    "ldr": dict(
        sensor={"kind": "ldr", "r_ref_ohm": 20e3, "gamma": 0.7, "r_dark_ohm": 2e6},
        circuit=Circuit(3.3, "bottom", 8.2e3, load_ohm=470e3), lead_ohm=0.0,
        tol=budget.Tolerances(fixed_pct=5, sensor_pct=30, gamma_pct=10, supply_pct=2),
        range=(0.5, 2000.0),
        expr=None,  # the scale applies to law ∥ dark (see reading.element_ohm): written below
    ),
}


def _ldr_lines(k: str, d: dict, lux: float, a: str, b: str) -> list[str]:
    """law ∥ dark, scaled: two resistors, each scaled by (1 + sensor delta), in parallel."""
    scale = 1 + d["sensor"]
    law = f"{lit(20e3 * scale)}*exp(-{lit(0.7 * (1 + d['gamma']))}*ln({lit(lux)}/10))"
    return [f"R{k}_s0 {a} {b} {{{law}}}", f"R{k}_s1 {a} {b} {number(2e6 * scale)}"]


def netlist(name: str, case: dict, corners: list[dict], stimulus) -> tuple[list[str], list[tuple[str, int, int]]]:
    c: Circuit = case["circuit"]
    lines, keys = [], []
    for i, d in enumerate(corners):
        for j, s in enumerate(stimulus):
            k = f"{name}{i}x{j}"
            top, out, far = f"{k}_top", f"{k}_out", f"{k}_far"
            lines.append(f"V{k} {top} 0 DC {number(c.supply_v * (1 + d['supply']))}")
            a, b = (top, out) if c.sensor_at == "top" else (out, "0")
            # Leads: one from each board terminal to the sensor; the resistor across sits on the board.
            lead = case["lead_ohm"]
            if lead:
                lines += [f"R{k}_la {a} {far}a {number(lead)}", f"R{k}_lb {far}b {b} {number(lead)}"]
                sa, sb = f"{far}a", f"{far}b"
            else:
                sa, sb = a, b
            if name == "ldr":
                lines += _ldr_lines(k, d, s, sa, sb)
            else:
                for n, expr in enumerate(case["expr"](d, s)):
                    lines.append(f"R{k}_s{n} {sa} {sb} {{{expr}}}")
            if c.parallel_ohm:
                lines.append(f"R{k}_p {a} {b} {number(c.parallel_ohm)}")
            fa, fb = (out, "0") if c.sensor_at == "top" else (top, out)
            lines.append(f"R{k}_f {fa} {fb} {number(c.fixed_ohm * (1 + d['fixed']))}")
            if c.load_ohm:
                lines.append(f"R{k}_load {out} 0 {number(c.load_ohm)}")
            keys.append((f"{k}_out", i, j))
    return lines, keys


@pytest.mark.parametrize("name", list(CASES))
def test_corner_outputs_match_ngspice(name):
    case = CASES[name]
    design = Design(build_sensor(case["sensor"]), case["circuit"], Adc(12), lead_ohm=case["lead_ohm"])
    limits, _ = case["tol"].limits(design)
    corner = budget.corners(limits)
    n_corners = next(iter(corner.values())).shape[0]
    assert n_corners == 16
    rows = [{k: float(corner[k][i, 0]) if k in corner else 0.0 for k in ("fixed", "sensor", "beta", "gamma", "supply")}
            for i in range(n_corners)]
    lo, hi = case["range"]
    s = design.sensor.grid(lo, hi, POINTS)
    lines, keys = netlist(name, case, rows, s)
    spice = op(lines)
    ours = reading.build(design, s, corner).vout_v
    assert ours.shape == (n_corners, s.size)
    theirs = np.empty_like(ours)
    for node, i, j in keys:
        theirs[i, j] = spice[node]
    np.testing.assert_allclose(ours, theirs, rtol=REL, atol=0)
    # The budget reports the envelope of exactly those corners, and the nominal output.
    b = budget.run(design, lo, hi, case["tol"], samples=10, points=POINTS)
    np.testing.assert_allclose(b.stimulus, s, rtol=1e-12)
    np.testing.assert_allclose(b.vout_low_v, theirs.min(axis=0), rtol=REL)
    np.testing.assert_allclose(b.vout_high_v, theirs.max(axis=0), rtol=REL)


def test_every_corner_is_a_distinct_sign_pattern():
    limits = {"fixed": 0.01, "sensor": 0.02, "supply": 0.05}
    corner = budget.corners(limits)
    signs = {tuple(np.sign(corner[k][i, 0]) for k in limits) for i in range(8)}
    assert signs == set(itertools.product((-1.0, 1.0), repeat=3))
