"""POST /api/table and /api/table/view through the app, as ../shared/contract.md names them.

Check values: the stimulus of a code is recomputed here from the divider
equation solved by hand for the NTC at the bottom (R = Rf·u/(1 − u) with
u = (k + ½)/2^N) and the beta model's inverse (1/T = 1/Tn + ln(R/Rn)/β,
../shared/design.md §1), not through the app's own inverse.
"""

from __future__ import annotations

import csv
import io
import math

import pytest

BODY = {
    "sensor": {"part": "demo-ntc-10k-b3950"},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom", "fixed_ohm": "10k"},
    "adc": {"bits": 12, "ratiometric": True},
    "step": 1,
}


def body(**changes) -> dict:
    out = {k: (dict(v) if isinstance(v, dict) else v) for k, v in BODY.items()}
    for key, value in changes.items():
        if "." in key:
            outer, inner = key.split(".")
            if value is None:
                out[outer].pop(inner, None)
            else:
                out[outer][inner] = value
        elif value is None:
            out.pop(key, None)
        else:
            out[key] = value
    return out


def hand_stimulus(code: int, bits: int = 12, fixed: float = 10e3, rn: float = 10e3, beta: float = 3950) -> float:
    u = (code + 0.5) / 2**bits
    r = fixed * u / (1 - u)
    return 1 / (1 / 298.15 + math.log(r / rn) / beta) - 273.15


def test_json_answer_has_the_contract_fields(client):
    r = client.post("/api/table", json=body())
    assert r.status_code == 200, r.text
    out = r.json()
    for key in ("codes", "stimulus", "max_interpolation_error", "valid_codes"):
        assert key in out
    assert set(out["valid_codes"]) >= {"min", "max"}
    v = out["valid_codes"]
    assert out["codes"] == list(range(v["min"], v["max"] + 1))
    assert len(out["stimulus"]) == len(out["codes"])
    for i in (0, 1000, len(out["codes"]) - 1):
        assert out["stimulus"][i] == pytest.approx(hand_stimulus(out["codes"][i]), abs=1e-9)
    assert out["max_interpolation_error"] < 1e-9  # every code is an entry
    assert v["below_fault"] == "short" and v["above_fault"] == "open"


def test_step_and_optional_alternatives(client):
    out = client.post("/api/table", json=body(step=32, error_bound=0.1, poly_degree=4)).json()
    codes = out["codes"]
    assert all(b - a == 32 for a, b in zip(codes[:-2], codes[1:-1]))
    assert out["max_interpolation_error"] > 0.1  # a coarse table bends
    assert out["fewest"]["max_interpolation_error"] <= 0.1
    assert out["fewest"]["entries"] < out["entries"]
    assert out["polynomial"]["degree"] == 4 and len(out["polynomial"]["coefficients"]) == 5
    sh = out["steinhart_hart"]
    assert sh["c"] == 0.0 and sh["b"] == pytest.approx(1 / 3950)
    few = client.post("/api/table", json=body(step=32, error_bound=0.1, table="fewest")).json()
    assert few["layout"] == "fewest" and few["entries"] == out["fewest"]["entries"]
    assert few["max_interpolation_error"] <= 0.1


def test_csv_is_the_same_table(client):
    ask = body(step=64, format="csv")
    r = client.post("/api/table", json=ask)
    assert r.status_code == 200
    assert r.headers["content-type"].startswith("text/csv")
    rows = list(csv.reader(io.StringIO(r.text)))
    assert rows[0][:2] == ["code", "temperature_c"]
    same = client.post("/api/table", json=body(step=64)).json()
    assert [int(x[0]) for x in rows[1:]] == same["codes"]
    assert [float(x[1]) for x in rows[1:]] == pytest.approx(same["stimulus"], abs=1e-12)
    notes = " ".join(x[-1] for x in rows[1:])
    assert "shorted" in notes and "open" in notes and "largest error" in notes


def test_c_header_text(client):
    r = client.post("/api/table", json=body(step=16, format="c"))
    assert r.status_code == 200
    assert r.headers["content-type"].startswith("text/x-c")
    assert 'filename="temp_table.h"' in r.headers["content-disposition"]
    text = r.text
    assert "#ifndef TEMP_TABLE_H" in text and "static const int16_t temp_table_value" in text
    assert "Scale: value = round(100 *" in text


def test_output_is_reproducible(client):
    a = client.post("/api/table", json=body(step=16, format="c", poly_degree=3)).text
    b = client.post("/api/table", json=body(step=16, format="c", poly_degree=3)).text
    assert a == b


def test_light_table_is_held_in_decades(client):
    out = client.post("/api/table", json={
        "sensor": {"part": "demo-ldr-small"}, "circuit": {"supply_v": 5, "sensor_at": "top", "fixed_ohm": "10k"},
        "adc": {"bits": 10}, "step": 4, "range": {"min": 1, "max": 10000}}).json()
    assert out["stimulus_unit"] == "lx" and out["error_unit"] == "decade"
    assert out["axis_values"] == pytest.approx([math.log10(s) for s in out["stimulus"]], abs=1e-12)
    assert out["fixed_point"]["scale"] == 1000


def test_pot_divider_needs_no_fixed_resistor(client):
    out = client.post("/api/table", json={
        "sensor": {"kind": "pot", "r_total_ohm": "10k"}, "circuit": {"supply_v": 3.3, "load_ohm": "100k"},
        "adc": {"bits": 10}, "step": 8}).json()
    assert out["valid_codes"]["min"] == 0 and out["valid_codes"]["max"] == 1023
    assert out["stimulus"][0] == pytest.approx(0.5 / 1024, rel=0.05)


@pytest.mark.parametrize("ask, field", [
    (body(**{"adc.bits": 7}), "adc.bits"),
    (body(**{"adc.bits": 21}), "adc.bits"),
    (body(**{"adc.bits": 24}), "adc.bits"),
    (body(**{"adc.bits": "twelve"}), "adc.bits"),
    (body(**{"adc.ratiometric": False}), "adc.vref_v"),
    (body(**{"adc.ratiometric": False, "adc.vref_v": -1}), "adc.vref_v"),
    (body(step=0), "step"),
    (body(step=-4), "step"),
    (body(step=10**9), "step"),
    (body(step=1.5), "step"),
    (body(format="xml"), "format"),
    (body(table="fewest"), "error_bound"),
    (body(error_bound=0), "error_bound"),
    (body(poly_degree=0), "poly_degree"),
    (body(poly_degree=99), "poly_degree"),
    (body(fixed_scale=0), "fixed_scale"),
    (body(fixed_scale=10_000_000, range={"min": -55, "max": 800}, sensor={"kind": "rtd", "r0_ohm": 100},
          circuit={"supply_v": 3.3, "fixed_ohm": 1000}), "fixed_scale"),
    (body(c_name="Bad-Name"), "c_name"),
    (body(range={"min": 100, "max": 0}), "range.max"),
    (body(range={"min": -300, "max": 0}), "range.min"),
    (body(**{"circuit.fixed_ohm": None}), "circuit.fixed_ohm"),
    (body(**{"circuit.fixed_ohm": "-10k"}), "circuit.fixed_ohm"),
    (body(sensor={"kind": "pot", "wiring": "divider"}), "sensor.r_total_ohm"),
    (body(sensor={"kind": "pot", "r_total_ohm": "10k", "wiring": "rheostat"}, **{"circuit.fixed_ohm": None}), "circuit.fixed_ohm"),
    (body(sensor={"kind": "ntc_beta", "r_nominal_ohm": "10k"}), "sensor.beta_k"),
    (body(surprise=1), "surprise"),
])
def test_bad_input_gets_422_naming_the_field(client, ask, field):
    r = client.post("/api/table", json=ask)
    assert r.status_code == 422, r.text
    err = r.json()["error"]
    assert err["field"] == field
    assert err["message"].startswith(field)
    # The page's view refuses the same way.
    assert client.post("/api/table/view", json=ask).json()["error"]["field"] == field


def test_nan_and_unknown_part(client):
    raw = '{"sensor": {"part": "demo-ntc-10k-b3950"}, "circuit": {"supply_v": NaN, "fixed_ohm": 1e4}, "adc": {"bits": 12}}'
    r = client.post("/api/table", content=raw, headers={"content-type": "application/json"})
    assert r.status_code == 422
    r = client.post("/api/table", json=body(sensor={"part": "no-such-part"}))
    assert r.status_code == 404 and r.json()["error"]["field"] == "sensor.part"


def test_view_carries_figures_with_units(client):
    r = client.post("/api/table/view", json=body(step=16, error_bound=0.1, poly_degree=3))
    assert r.status_code == 200
    out = r.json()
    figs = out["figures"]
    assert figs["curve"]["layout"]["xaxis"]["title"]["text"] == "ADC code (LSB)"
    assert figs["curve"]["layout"]["yaxis"]["title"]["text"] == "Temperature (°C)"
    assert figs["error"]["layout"]["yaxis"]["title"]["text"] == "Interpolation error (°C)"
    assert figs["poly"]["layout"]["yaxis"]["title"]["text"] == "Polynomial error (°C)"
    # The drawn error reaches the reported worst case (the envelope keeps the extremes).
    drawn = max(abs(y) for y in figs["error"]["data"][0]["y"])
    assert drawn == pytest.approx(out["uniform"]["max_interpolation_error"])
    assert out["rows"][0]["code"] == out["valid_codes"]["min"]
    assert "codes" not in out  # the page gets the first rows, the downloads the whole table


def test_page_and_schema(client):
    r = client.get("/firmware")
    assert r.status_code == 200
    assert 'id="page-data"' in r.text and "/static/js/firmware.js" in r.text
    assert "<script>" not in r.text  # no inline script
    paths = client.get("/openapi.json").json()["paths"]
    assert "/api/table" in paths and "/api/table/view" in paths
    content = paths["/api/table"]["post"]["responses"]["200"]["content"]
    assert {"application/json", "text/csv", "text/x-c"} <= set(content)
