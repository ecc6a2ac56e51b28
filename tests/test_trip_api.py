"""``POST /api/trip`` (../shared/contract.md), the page's JSON twin and the page itself.

Check values: the contract's names; IEC 60063 E24 values (typed from the
standard's table); nodal analysis at the reference node (derived in
tests/test_trip.py and repeated here in one line); the beta model
(IEC 60539-1 B definition, T = t + 273.15 K).
"""

from __future__ import annotations

import json
import math
import re

import pytest
from hypothesis import given, settings, strategies as st

E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]  # IEC 60063

ALARM = {
    "sensor": {"kind": "ntc_beta", "r_nominal_ohm": "10k", "beta_k": 3950},
    "supply_v": 3.3, "sensor_at": "bottom",
    "target": {"trip": 60, "release": 55}, "series": "E24",
}
DUSK = {
    "sensor": {"part": "demo-ldr-dim"}, "supply_v": 5, "sensor_at": "top",
    "target": {"trip": 10, "release": 25}, "series": "E24",
}


def body(base=ALARM, **changes):
    out = json.loads(json.dumps(base))
    for path, value in changes.items():
        node = out
        keys = path.split("__")
        for k in keys[:-1]:
            node = node.setdefault(k, {})
        if value is ...:
            node.pop(keys[-1], None)
        else:
            node[keys[-1]] = value
    return out


def e24(ohm: float) -> bool:
    m = ohm / 10 ** math.floor(math.log10(ohm) + 1e-12)
    return any(abs(m - v) < 1e-9 for v in E24)


def test_contract_shape_and_meaning(client):
    r = client.post("/api/trip", json=ALARM)
    assert r.status_code == 200, r.text
    out = r.json()
    for key in ("fixed_ohm", "reference", "hysteresis_ohm", "thresholds_v", "achieved", "output_at_trip"):
        assert key in out
    assert set(out["reference"]) >= {"top_ohm", "bottom_ohm"}
    assert set(out["thresholds_v"]) >= {"upper", "lower"}
    assert set(out["achieved"]) >= {"trip", "release"}
    assert out["output_at_trip"] == "high"  # NTC at the bottom: its voltage falls through the lower level
    for ohm in (out["fixed_ohm"], out["reference"]["top_ohm"], out["reference"]["bottom_ohm"], out["hysteresis_ohm"]):
        assert e24(ohm)
    rt, rb, rh = out["reference"]["top_ohm"], out["reference"]["bottom_ohm"], out["hysteresis_ohm"]
    g = 1 / rt + 1 / rb + 1 / rh  # nodal analysis with the output at 3.3 V and at 0 V
    assert out["thresholds_v"]["upper"] == pytest.approx((3.3 / rt + 3.3 / rh) / g, rel=1e-12)
    assert out["thresholds_v"]["lower"] == pytest.approx((3.3 / rt) / g, rel=1e-12)
    # The achieved trip puts the NTC divider on the lower level (beta model by hand).
    t = out["achieved"]["trip"] + 273.15
    r_ntc = 1e4 * math.exp(3950 * (1 / t - 1 / 298.15))
    assert 3.3 * r_ntc / (r_ntc + out["fixed_ohm"]) == pytest.approx(out["thresholds_v"]["lower"], rel=1e-9)
    assert abs(out["achieved"]["trip"] - 60) < 0.5 and abs(out["achieved"]["release"] - 55) < 0.5


def test_dusk_switch_from_a_library_part(client):
    r = client.post("/api/trip", json=DUSK)
    assert r.status_code == 200, r.text
    out = r.json()
    assert out["output_at_trip"] == "high"  # LDR at the top: darkness lowers its divider voltage
    assert out["achieved"]["trip"] == pytest.approx(10, rel=0.05)
    assert out["achieved"]["release"] == pytest.approx(25, rel=0.05)
    assert out["stimulus_unit"] == "lx"


def test_resistances_as_text_and_limits(client):
    r = client.post("/api/trip", json=body(limits={"min_ohm": "4k7", "max_ohm": "1M"}, series="E12"))
    assert r.status_code == 200, r.text
    out = r.json()
    for ohm in (out["fixed_ohm"], out["reference"]["top_ohm"], out["reference"]["bottom_ohm"], out["hysteresis_ohm"]):
        assert 4700 <= ohm <= 1e6


@pytest.mark.parametrize("changes,field", [
    ({"target__release": 60}, "target.release"),                      # release equal to trip
    ({"target__trip": 5000}, "target.trip"),                          # outside the sensor's range
    ({"target__trip": "hot"}, "target.trip"),
    ({"detector": {"output_high_v": 0.1}}, "target.release"),         # band wider than the output swing
    ({"detector": {"output_high_v": 3.3, "output_low_v": 3.0}}, "target.trip"),  # level the network cannot reach
    ({"detector": {"output_high_v": 1, "output_low_v": 2}}, "detector.output_high_v"),
    ({"target__release": 59.99999999}, "target.release"),             # resistors beyond the limits
    ({"supply_v": -5}, "supply_v"),
    ({"series": "E5"}, "series"),
    ({"sensor_at": "middle"}, "sensor_at"),
    ({"sensor__beta_k": -1}, "sensor.beta_k"),
    ({"output_at_trip": "low"}, "output_at_trip"),
    ({"tolerances": {"gamma_pct": 5}}, "tolerances.gamma_pct"),
    ({"tolerances": {"resistor_pct": 80}}, "tolerances.resistor_pct"),
    ({"monte_carlo": {"samples": 10**9}}, "monte_carlo.samples"),
    ({"adjust": {"min": 70, "max": 50}}, "adjust.max"),
    ({"adjust": {"min": -500, "max": 50}}, "adjust.min"),
    ({"limits": {"min_ohm": "4m7"}}, "limits.min_ohm"),
    ({"colour": "red"}, "colour"),
    ({"target__release": ...}, "target.release"),
])
def test_bad_input_is_a_422_naming_the_field(client, changes, field):
    r = client.post("/api/trip", json=body(**changes))
    assert r.status_code == 422, r.text
    err = r.json()["error"]
    assert err["field"] == field
    assert err["message"].startswith(field)


def test_a_trip_outside_an_ldr_range_and_a_divider_pot(client):
    r = client.post("/api/trip", json=body(DUSK, target__trip=1e7))
    assert r.status_code == 422 and r.json()["error"]["field"] == "target.trip"
    r = client.post("/api/trip", json=body(sensor={"kind": "pot", "r_total_ohm": "10k"}, target={"trip": 0.6, "release": 0.5}))
    assert r.status_code == 422 and r.json()["error"]["field"] == "sensor.wiring"


def test_unknown_part_is_404(client):
    r = client.post("/api/trip", json=body(sensor={"part": "no-such-part"}))
    assert r.status_code == 404
    assert r.json()["error"]["field"] == "sensor.part"


def test_spread_and_adjust(client):
    req = body(DUSK, tolerances={"resistor_pct": 1, "offset_v": 0.005},
               monte_carlo={"samples": 4000, "seed": 5}, adjust={"min": 3, "max": 30})
    out = client.post("/api/trip", json=req).json()
    sp = out["spread"]
    # The part's own tolerances fill in what the request leaves out (demo-ldr-dim: 30 % and γ 5 %).
    assert sp["tolerances"]["sensor_pct"] == 30 and sp["tolerances"]["gamma_pct"] == 5
    wc, mc = sp["worst_case"], sp["monte_carlo"]
    assert wc["trip"]["min"] <= mc["trip"]["p0_135"] <= mc["trip"]["p50"] <= mc["trip"]["p99_865"] <= wc["trip"]["max"]
    assert wc["release"]["min"] <= mc["release"]["p0_135"] <= mc["release"]["p99_865"] <= wc["release"]["max"]
    again = client.post("/api/trip", json=req).json()["spread"]
    assert again == sp  # seeded
    a = out["adjust"]
    assert len(a["position"]) == len(a["trip"]) == len(a["release"]) == 101
    assert min(a["covered"].values()) <= 3 and max(a["covered"].values()) >= 30
    assert a["guaranteed"]["min"] <= 3 and a["guaranteed"]["max"] >= 30


def test_self_heating_from_the_part(client):
    out = client.post("/api/trip", json=body(sensor={"part": "demo-ntc-10k-b3950"})).json()
    # ΔT = P/δ (first order), δ = 1.5 mW/K for the demo part.
    assert out["self_heating_c"]["trip"] == pytest.approx(out["sensor_power_w"]["trip"] / 0.0015, rel=1e-12)


def test_view_draws_the_band(client):
    r = client.post("/api/view/trip", json=body(tolerances={"resistor_pct": 1}, adjust={"min": 50, "max": 70}))
    assert r.status_code == 200, r.text
    view = r.json()
    band = view["figures"]["band"]
    filled = [t for t in band["data"] if t.get("fill") == "tonexty"]
    assert filled and filled[0]["name"].startswith("Upper level")
    assert band["layout"]["yaxis"]["title"]["text"] == "Sensor divider output (V)"
    assert "°C" in band["layout"]["xaxis"]["title"]["text"]
    assert {"spread", "adjust"} <= set(view["figures"])
    assert view["result"]["fixed_ohm"] == client.post("/api/trip", json=ALARM).json()["fixed_ohm"]
    assert re.fullmatch(r"\d+(\.\d+)? [kM]?Ω", view["resistors"][0]["value"])
    r = client.post("/api/view/trip", json=body(target__release=60))
    assert r.status_code == 422 and r.json()["error"]["field"] == "target.release"


def test_page_renders_with_caution_and_data(client):
    r = client.get("/trip")
    assert r.status_code == 200
    html = r.text
    assert 'id="mains-caution"' in html and "licensed electrician" in html
    data = json.loads(re.search(r'<script type="application/json" id="page-data">(.*?)</script>', html, re.S).group(1))
    assert data["view"]["result"]["output_at_trip"] in ("high", "low")
    assert {p["id"] for p in data["presets"]} >= {"over-temperature", "dusk"}
    assert "<script>" not in html  # no inline script (strict CSP)


def test_presets_all_solve(client):
    data = json.loads(re.search(r'id="page-data">(.*?)</script>', client.get("/trip").text, re.S).group(1))
    for preset in data["presets"]:
        r = client.post("/api/trip", json=preset["inputs"])
        assert r.status_code == 200, (preset["id"], r.text)


def test_openapi_documents_the_endpoints(client):
    paths = client.get("/openapi.json").json()["paths"]
    assert "/api/trip" in paths and "/api/view/trip" in paths
    schema = paths["/api/trip"]["post"]
    assert "422" in schema["responses"]


@pytest.fixture(scope="module")
def fuzz_client(tmp_path_factory):
    from fastapi.testclient import TestClient

    from app.settings import Settings
    from app.web import create_app

    with TestClient(create_app(Settings(data_dir=tmp_path_factory.mktemp("trip-fuzz"))),
                    raise_server_exceptions=False) as c:
        yield c


@settings(max_examples=60)
@given(trip=st.floats(-300, 1200, allow_nan=False), release=st.floats(-300, 1200, allow_nan=False),
       supply=st.floats(-1, 60, allow_nan=False), high=st.one_of(st.none(), st.floats(-5, 60, allow_nan=False)),
       series=st.sampled_from(["E3", "E24", "E192", "exact"]), at=st.sampled_from(["top", "bottom"]))
def test_never_a_500(fuzz_client, trip, release, supply, high, series, at):
    req = body(target={"trip": trip, "release": release}, supply_v=supply, series=series, sensor_at=at,
               detector={} if high is None else {"output_high_v": high},
               tolerances={"resistor_pct": 5}, monte_carlo={"samples": 200}, adjust={"min": trip - 5, "max": trip + 5})
    r = fuzz_client.post("/api/trip", json=req)
    assert r.status_code in (200, 422), r.text
    if r.status_code == 422:
        assert r.json()["error"]["field"]
