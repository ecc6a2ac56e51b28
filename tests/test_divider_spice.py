"""The divider model against ngspice (Debian's ``ngspice``, run as a subprocess).

Reference: ngspice's operating-point solution (``.op``) of the same circuits.
The sensor resistances are not handed to ngspice as numbers: each sensor
element is written as an ngspice expression of the published formula
(beta model, Steinhart–Hart closed form, Callendar–Van Dusen, LDR power law,
pot tapers of ../shared/design.md §1) with the part's parameters and the
stimulus as literals, so ngspice computes the resistance on its own.

Every generated case is six independent copies in one netlist, all solved in
a single ``ngspice -b`` run:
* ``o``: the divider as built; gives Vout, the sensor's resistance and the
  power in the sensor's own resistor(s) (``@r[p]``);
* ``t``: the supply at 0 V and 1 mA pushed into the output node; V(out)/1 mA
  is the resistance the output sees, load included (the contract's Thevenin);
* ``p1``, ``m1``, ``p2``, ``m2``: the stimulus moved ± h and ± 2h on the
  stimulus axis; the fourth-order central difference of their Vout is a
  reference slope for ``sensitivity`` (truncation O(h⁴), below 1e-12 here;
  the plain two-point difference was off by up to 5e-7 for a loaded log pot).

Families (36 cases, seeded): a general divider with load and parallel
resistor (every kind, sensor top or bottom), a pot in divider wiring with a
loaded wiper (linear and log taper), and a plain beta NTC divider.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pytest

from app.circuit import Circuit, respond
from app.models import build_sensor
from tests.spice import number, op

pytestmark = pytest.mark.ngspice

REL = 1e-6  # acceptance tolerance, relative
TEST_CURRENT_A = 1e-3


def lit(x: float) -> str:
    return f"({number(x)})"


# --- each published formula as an ngspice expression (stimulus inserted as a literal) ---

def expr_ntc_beta(p: dict, t: float) -> list[str]:
    tn = p.get("t_nominal_c", 25.0)
    return [f"{lit(p['r_nominal_ohm'])}*exp({lit(p['beta_k'])}*(1/({lit(t)}+273.15)-1/({lit(tn)}+273.15)))"]


def expr_ntc_sh(p: dict, t: float) -> list[str]:
    a, b, c = lit(p["a"]), lit(p["b"]), lit(p["c"])
    y = f"(({a}-1/({lit(t)}+273.15))/{c})"
    q = f"({b}/(3*{c}))"
    x = f"sqrt({q}*{q}*{q}+({y}/2)*({y}/2))"
    # Both pwr() arguments are positive (x > |y/2|), so pwr is a plain cube root here.
    return [f"exp(pwr({x}-{y}/2,1/3)-pwr({x}+{y}/2,1/3))"]


def expr_rtd(p: dict, t: float) -> list[str]:
    T = lit(t)
    cold = f"+(-4.183e-12)*({T}-100)*{T}*{T}*{T}" if t < 0 else ""
    return [f"{lit(p['r0_ohm'])}*(1+(3.9083e-3)*{T}+(-5.775e-7)*{T}*{T}{cold})"]


def expr_ldr(p: dict, lux: float) -> list[str]:
    law = f"{lit(p['r_ref_ohm'])}*exp(-{lit(p['gamma'])}*ln({lit(lux)}/{lit(p.get('lux_ref', 10.0))}))"
    # The dark resistance is a second physical resistor across the same two terminals.
    return [law] + ([lit(p["r_dark_ohm"])] if p.get("r_dark_ohm") else [])


def expr_pot_lower(p: dict, x: float) -> str:
    r = lit(p["r_total_ohm"])
    if p.get("taper", "linear") == "linear":
        return f"{r}*{lit(x)}"
    m = lit(p.get("mid_fraction", 0.1))
    a = f"(((1-{m})/{m})*((1-{m})/{m}))"
    return f"{r}*(pwr({a},{lit(x)})-1)/({a}-1)"


def expr_pot_rheostat(p: dict, x: float) -> list[str]:
    return [expr_pot_lower(p, x)]


EXPR = {"ntc_beta": expr_ntc_beta, "ntc_sh": expr_ntc_sh, "rtd": expr_rtd, "ldr": expr_ldr, "pot": expr_pot_rheostat}


@dataclass
class Case:
    name: str
    sensor: dict
    supply_v: float
    stimulus: float
    step: float  # h on the stimulus axis
    sensor_at: str = "bottom"
    fixed_ohm: float | None = None
    load_ohm: float | None = None
    parallel_ohm: float | None = None
    result: dict = field(default_factory=dict)

    @property
    def model(self):
        return build_sensor(self.sensor)

    @property
    def circuit(self) -> Circuit:
        return Circuit(self.supply_v, self.sensor_at, self.fixed_ohm, self.load_ohm, self.parallel_ohm)

    def moved(self, sign: int) -> float:
        m = self.model
        return float(m.from_axis(m.to_axis(self.stimulus) + sign * self.step))

    def netlist(self, tag: str, stimulus: float, supply: float, inject: bool) -> tuple[list[str], list[str]]:
        """Lines of one copy and the resistor names that make up the sensor."""
        k = f"{self.name}{tag}"
        top, out = f"{k}_top", f"{k}_out"
        lines = [f"V{k} {top} 0 DC {number(supply)}"]
        sensor_names: list[str] = []
        if self.sensor["kind"] == "pot" and self.sensor.get("wiring", "divider") == "divider":
            lower = expr_pot_lower(self.sensor, stimulus)
            lines += [f"R{k}_u {top} {out} {{{lit(self.sensor['r_total_ohm'])}-({lower})}}", f"R{k}_l {out} 0 {{{lower}}}"]
            sensor_names = [f"r{k}_u", f"r{k}_l"]
        else:
            a, b = (top, out) if self.sensor_at == "top" else (out, "0")
            fa, fb = (out, "0") if self.sensor_at == "top" else (top, out)
            for i, expr in enumerate(EXPR[self.sensor["kind"]](self.sensor, stimulus)):
                lines.append(f"R{k}_s{i} {a} {b} {{{expr}}}")
                sensor_names.append(f"r{k}_s{i}")
            lines.append(f"R{k}_f {fa} {fb} {number(self.fixed_ohm)}")
            if self.parallel_ohm:
                lines.append(f"R{k}_par {a} {b} {number(self.parallel_ohm)}")
        if self.load_ohm:
            lines.append(f"R{k}_load {out} 0 {number(self.load_ohm)}")
        if inject:
            lines.append(f"I{k} 0 {out} DC {number(TEST_CURRENT_A)}")
        return lines, sensor_names


def log_uniform(rng, lo, hi) -> float:
    return float(10.0 ** rng.uniform(np.log10(lo), np.log10(hi)))


def _sensor_spec(rng, kind: str) -> tuple[dict, float, float]:
    """(spec, stimulus, axis step) for a random part of ``kind``."""
    if kind == "ntc_beta":
        spec = {"kind": kind, "r_nominal_ohm": log_uniform(rng, 1e3, 1e5), "beta_k": float(rng.uniform(3000, 4500))}
        if rng.random() < 0.5:
            spec["t_nominal_c"] = float(rng.uniform(0, 50))
        return spec, float(rng.uniform(-40, 125)), 1e-3
    if kind == "ntc_sh":
        # Coefficient sets of 10 kΩ-class beads (common practice, no published source).
        a, b, c = [(1.129148e-3, 2.34125e-4, 8.76741e-8), (1.009249e-3, 2.378405e-4, 2.019202e-7)][int(rng.integers(2))]
        return {"kind": kind, "a": a, "b": b, "c": c}, float(rng.uniform(-40, 125)), 1e-3
    if kind == "rtd":
        spec = {"kind": kind, "r0_ohm": [100.0, 500.0, 1000.0][int(rng.integers(3))]}
        return spec, float(rng.uniform(-200, 850)), 1e-3
    if kind == "ldr":
        spec = {"kind": kind, "r_ref_ohm": log_uniform(rng, 5e3, 5e4), "gamma": float(rng.uniform(0.5, 1.0))}
        if rng.random() < 0.5:
            spec["r_dark_ohm"] = log_uniform(rng, 5e5, 1e7)
        return spec, log_uniform(rng, 0.1, 1e4), 1e-4
    taper = ["linear", "log"][int(rng.integers(2))]
    spec = {"kind": "pot", "r_total_ohm": log_uniform(rng, 1e3, 1e6), "taper": taper, "wiring": "rheostat"}
    return spec, float(rng.uniform(0.05, 0.95)), 1e-4


def generate_cases() -> list[Case]:
    rng = np.random.default_rng(60751)
    cases: list[Case] = []
    kinds = ["ntc_beta", "ntc_sh", "rtd", "ldr", "pot"]
    for i in range(14):  # general divider: load and parallel resistor, every kind
        spec, s, h = _sensor_spec(rng, kinds[i % len(kinds)])
        cases.append(Case(
            f"d{i}", spec, float(rng.uniform(1.0, 24.0)), s, h,
            sensor_at=["top", "bottom"][i % 2],
            fixed_ohm=log_uniform(rng, 100, 1e6),
            load_ohm=log_uniform(rng, 1e3, 1e7) if i % 7 else None,
            parallel_ohm=log_uniform(rng, 1e3, 1e6) if i % 5 else None,
        ))
    for i in range(10):  # pot in divider wiring, loaded wiper
        taper = "linear" if i % 2 else "log"
        spec = {"kind": "pot", "r_total_ohm": log_uniform(rng, 1e3, 1e6), "taper": taper, "wiring": "divider"}
        if taper == "log" and i % 4 == 0:
            spec["mid_fraction"] = float(rng.uniform(0.1, 0.15))
        cases.append(Case(
            f"p{i}", spec, float(rng.uniform(1.0, 24.0)), float(rng.uniform(0.03, 0.97)), 1e-4,
            load_ohm=log_uniform(rng, 1e2, 1e7) if i != 9 else None,
        ))
    for i in range(12):  # beta NTC divider
        spec, s, h = _sensor_spec(rng, "ntc_beta")
        cases.append(Case(
            f"n{i}", spec, float(rng.choice([1.8, 3.3, 5.0, 12.0])), s, h,
            sensor_at=["top", "bottom"][i % 2],
            fixed_ohm=log_uniform(rng, 1e3, 1e5),
            load_ohm=log_uniform(rng, 1e4, 1e7) if i % 3 == 0 else None,
        ))
    return cases


CASES = generate_cases()


@pytest.fixture(scope="module")
def solved() -> dict[str, Case]:
    """All cases, all copies, one ngspice run; each case gets its reference numbers."""
    lines: list[str] = []
    parts: dict[str, list[str]] = {}
    for case in CASES:
        for tag, stim, supply, inject in (
            ("o", case.stimulus, case.supply_v, False),
            ("t", case.stimulus, 0.0, True),
            ("p1", case.moved(+1), case.supply_v, False),
            ("m1", case.moved(-1), case.supply_v, False),
            ("p2", case.moved(+2), case.supply_v, False),
            ("m2", case.moved(-2), case.supply_v, False),
        ):
            copy, names = case.netlist(tag, stim, supply, inject)
            lines += copy
            if tag == "o":
                parts[case.name] = names
    probes = [f"@{n}[{q}]" for names in parts.values() for n in names for q in ("p", "resistance")]
    v = op(lines, probes)
    for case in CASES:
        k = case.name
        names = parts[k]
        case.result = {
            "vout": v[f"{k}o_out"],
            "thevenin": v[f"{k}t_out"] / TEST_CURRENT_A,
            "power": sum(v[f"@{n}[p]"] for n in names),
            "slope": (
                8.0 * (v[f"{k}p1_out"] - v[f"{k}m1_out"]) - (v[f"{k}p2_out"] - v[f"{k}m2_out"])
            ) / (12.0 * case.step),
            "ohm": [v[f"@{n}[resistance]"] for n in names],
        }
    return {case.name: case for case in CASES}


def test_enough_generated_cases():
    assert len(CASES) >= 30
    families = {case.name[0] for case in CASES}
    assert families == {"d", "p", "n"}
    assert any(c.load_ohm and c.parallel_ohm for c in CASES)
    assert {c.sensor["kind"] for c in CASES if c.name[0] == "d"} == {"ntc_beta", "ntc_sh", "rtd", "ldr", "pot"}


def _ours(case: Case):
    return respond(case.model, case.circuit, np.array([case.stimulus]))


@pytest.mark.parametrize("name", [c.name for c in CASES])
def test_vout_thevenin_power_match_ngspice(solved, name):
    case = solved[name]
    ref = case.result
    ours = _ours(case)
    assert float(ours.vout_v[0]) == pytest.approx(ref["vout"], rel=REL, abs=0)
    assert float(ours.thevenin_ohm[0]) == pytest.approx(ref["thevenin"], rel=REL, abs=0)
    assert float(ours.sensor_power_w[0]) == pytest.approx(ref["power"], rel=REL, abs=0)


@pytest.mark.parametrize("name", [c.name for c in CASES])
def test_sensitivity_matches_ngspice_difference(solved, name):
    # Reference: fourth-order central difference of ngspice's Vout, h = 1e-3 °C or
    # 1e-4 decade or travel. Its round-off (16 printed digits of Vout over a Vout
    # change of V'·h) is largest for an RTD on a high supply: about 2e-8 relative.
    case = solved[name]
    assert float(_ours(case).sensitivity[0]) == pytest.approx(case.result["slope"], rel=REL, abs=0)


@pytest.mark.parametrize("name", [c.name for c in CASES])
def test_sensor_resistance_matches_ngspice_expression(solved, name):
    case = solved[name]
    ohm = case.result["ohm"]
    model = case.model
    if case.sensor["kind"] == "pot" and case.sensor.get("wiring", "divider") == "divider":
        lower = float(model.resistance(np.array(case.stimulus)))
        assert lower == pytest.approx(ohm[1], rel=1e-9)
        assert model.r_total_ohm - lower == pytest.approx(ohm[0], rel=1e-9)
        return
    combined = 1.0 / sum(1.0 / r for r in ohm)  # law ∥ dark resistance for an LDR
    assert float(model.resistance(np.array(case.stimulus))) == pytest.approx(combined, rel=1e-9)
