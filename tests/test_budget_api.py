"""POST /api/budget (../shared/contract.md), the accuracy objective of POST /api/solve,
the accuracy page and its view endpoint, through the real app (TestClient).

The numbers themselves are checked against outside references in
test_budget.py and test_budget_spice.py; here: the contract's names and
shapes, the 422/404 rules, agreement between the solver's accuracy score and
the budget, and the page's data.
"""

from __future__ import annotations

import csv
import io
import json
import re

import pytest

BASE = {
    "sensor": {"part": "demo-ntc-10k-b3950"},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom", "fixed_ohm": "10k"},
    "range": {"min": 0, "max": 100},
    "adc": {"bits": 12, "ratiometric": True},
    "tolerances": {"fixed_pct": 1, "sensor_pct": 1, "beta_pct": 1, "supply_pct": 5},
    "dissipation_w_per_k": 0.0015,
    "monte_carlo": {"samples": 2000, "seed": 3, "distribution": "normal"},
}
CONTRACT_ARRAYS = ("stimulus", "resolution", "quantization", "worst_case", "rss", "mc_p50", "mc_p95", "mc_p997", "self_heating")


def post(client, path, body):
    return client.post(path, content=json.dumps(body, allow_nan=True), headers={"content-type": "application/json"})


def merged(**changes):
    body = json.loads(json.dumps(BASE))
    for key, value in changes.items():
        if isinstance(value, dict) and isinstance(body.get(key), dict) and key != "sensor":
            body[key].update(value)
        elif value is None:
            body.pop(key, None)
        else:
            body[key] = value
    return body


def test_budget_has_the_contract_shape(client):
    r = client.post("/api/budget", json=BASE)
    assert r.status_code == 200, r.text
    out = r.json()
    for name in CONTRACT_ARRAYS:
        assert len(out[name]) == 101, name
    assert out["stimulus"][0] == 0 and out["stimulus"][-1] == 100
    assert set(out["contributors"]) == {"fixed", "sensor", "beta", "supply", "quantization", "self_heating"}
    for name, values in [(n, out[n]) for n in CONTRACT_ARRAYS[1:]] + list(out["contributors"].items()):
        assert len(values) == 101 and all(v >= 0 for v in values), name
    assert all(w >= m for w, m in zip(out["worst_case"], out["mc_p997"]))
    assert all(a <= b <= c for a, b, c in zip(out["mc_p50"], out["mc_p95"], out["mc_p997"]))
    assert out["units"] == {"stimulus": "°C", "error": "°C"}
    assert out["tolerances_applied"] == {"fixed_pct": 1.0, "sensor_pct": 1.0, "beta_pct": 1.0, "supply_pct": 5.0}


def test_points_and_the_same_seed(client):
    body = merged(points=11)
    one, two = client.post("/api/budget", json=body).json(), client.post("/api/budget", json=body).json()
    assert len(one["stimulus"]) == 11
    assert one["mc_p95"] == two["mc_p95"] and one["mc_p997"] == two["mc_p997"]
    other = client.post("/api/budget", json=merged(points=11, monte_carlo={"seed": 4})).json()
    assert other["mc_p95"] != one["mc_p95"]


def test_yield_against_a_spec(client):
    out = client.post("/api/budget", json=merged(spec=1.0)).json()
    assert 0.0 < out["yield"] <= 1.0
    assert out["summary"]["yield"] == out["yield"] and out["spec"] == 1.0
    none = client.post("/api/budget", json=BASE).json()
    assert none["yield"] is None


def test_budget_csv_twin(client):
    r = client.post("/api/budget?format=csv", json=BASE)
    assert r.status_code == 200
    assert r.headers["content-type"].startswith("text/csv")
    rows = list(csv.reader(io.StringIO(r.text)))
    assert rows[0][0].startswith("# error budget")
    header, data = rows[1], rows[2:]
    assert header[:4] == ["stimulus", "resolution", "quantization", "worst_case"]
    assert "contributor_self_heating" in header
    assert len(data) == 101
    js = client.post("/api/budget", json=BASE).json()
    col = header.index("worst_case")
    assert [float(row[col]) for row in data] == pytest.approx(js["worst_case"], rel=1e-15)


def test_ratiometric_immunity_through_the_api(client):
    only_supply = {"fixed_pct": 0, "sensor_pct": 0, "beta_pct": 0, "supply_pct": 5}
    ratio = client.post("/api/budget", json=merged(tolerances=only_supply, dissipation_w_per_k=None)).json()
    absolute = client.post("/api/budget", json=merged(tolerances=only_supply, dissipation_w_per_k=None,
                                                      adc={"ratiometric": False, "vref_v": 3.3})).json()
    assert max(ratio["contributors"]["supply"]) < 1e-9
    assert min(absolute["contributors"]["supply"]) > 0.5


@pytest.mark.parametrize("changes, field", [
    ({"monte_carlo": {"samples": 200_001}}, "monte_carlo.samples"),
    ({"monte_carlo": {"samples": 0}}, "monte_carlo.samples"),
    ({"points": 1002}, "points"),
    ({"points": 1001, "monte_carlo": {"samples": 200_000}}, "monte_carlo.samples"),
    ({"monte_carlo": {"distribution": "triangular"}}, "monte_carlo.distribution"),
    ({"adc": {"bits": 7}}, "adc.bits"),
    ({"adc": {"bits": 25}}, "adc.bits"),
    ({"adc": {"ratiometric": False}}, "adc.vref_v"),
    ({"adc": {"window": {"min_v": 2.0, "max_v": 1.0}}}, "adc.window.max_v"),
    ({"tolerances": {"gamma_pct": 5}}, "tolerances.gamma_pct"),
    ({"tolerances": {"fixed_pct": -1}}, "tolerances.fixed_pct"),
    ({"tolerances": {"fixed_pct": 100}}, "tolerances.fixed_pct"),
    ({"tolerances": {"fixed": 1}}, "tolerances.fixed"),
    ({"circuit": {"fixed_ohm": None}}, "circuit.fixed_ohm"),
    ({"circuit": {"fixed_ohm": "-4k7"}}, "circuit.fixed_ohm"),
    ({"range": {"min": 100, "max": 0}}, "range.max"),
    ({"spec": float("nan")}, "spec"),
    ({"spec": 0}, "spec"),
    ({"dissipation_w_per_k": 0}, "dissipation_w_per_k"),
    ({"sensor": {"kind": "ldr", "r_ref_ohm": "20k", "gamma": 0.7}, "range": {"min": 1, "max": 1000},
      "tolerances": {"beta_pct": 0}}, "dissipation_w_per_k"),
    ({"lead_ohm": -1}, "lead_ohm"),
    ({"duty_cycle": 1.5}, "duty_cycle"),
])
def test_bad_budget_requests_are_422_naming_the_field(client, changes, field):
    body = merged(**changes)
    if changes.get("circuit", {}).get("fixed_ohm", 0) is None:
        body["circuit"].pop("fixed_ohm")
    r = post(client, "/api/budget", body)
    assert r.status_code == 422, r.text
    error = r.json()["error"]
    assert error["field"] == field
    assert error["message"].startswith(field)


def test_unknown_part_is_404(client):
    r = client.post("/api/budget", json=merged(sensor={"part": "no-such-part"}))
    assert r.status_code == 404
    assert r.json()["error"]["field"] == "sensor.part"


def test_budget_is_in_the_openapi_schema(client):
    spec = client.get("/openapi.json").json()
    op = spec["paths"]["/api/budget"]["post"]
    assert "422" in op["responses"] and "404" in op["responses"]
    schemas = spec["components"]["schemas"]
    for name in ("BudgetIn", "BudgetOut", "BudgetMonteCarloIn", "ConverterIn", "PartTolerancesIn", "WindowIn", "SamplingIn"):
        assert name in schemas, name
    assert {"samples", "seed", "distribution"} <= set(schemas["BudgetMonteCarloIn"]["properties"])
    assert "/api/view/accuracy" in spec["paths"]


# --- the accuracy objective ------------------------------------------------------------------

SOLVE = {
    "sensor": {"part": "demo-ntc-10k-b3950"},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
    "range": {"min": 0, "max": 100},
    "objective": "accuracy",
    "series": "E24",
    "adc": {"bits": 10},
    "tolerances": {"fixed_pct": 1, "supply_pct": 5},
    "dissipation_w_per_k": 0.0015,
}


def test_accuracy_objective_ranks_series_values_by_the_worst_case(client):
    r = client.post("/api/solve", json=SOLVE)
    assert r.status_code == 200, r.text
    out = r.json()
    assert out["objective"] == "accuracy"
    scores = [c["score"] for c in out["candidates"]]
    assert scores == sorted(scores) and len(scores) == 5
    assert out["candidates"][0]["fixed_ohm"] == out["fixed_ohm"]
    # The score is the budget's worst case over the objective's 401 points.
    budget = client.post("/api/budget", json={
        **{k: SOLVE[k] for k in ("sensor", "range", "adc", "tolerances", "dissipation_w_per_k")},
        "circuit": {**SOLVE["circuit"], "fixed_ohm": out["fixed_ohm"]}, "points": 401,
        "monte_carlo": {"samples": 10},
    }).json()
    assert out["score"] == pytest.approx(max(budget["worst_case"]), rel=1e-9)
    # Every other E24 value in the decade does worse.
    for value in (out["fixed_ohm"] * 0.5, out["fixed_ohm"] * 2):
        other = client.post("/api/budget", json={**budget_request(value), "points": 401}).json()
        assert max(other["worst_case"]) > out["score"]


def budget_request(fixed_ohm):
    return {**{k: SOLVE[k] for k in ("sensor", "range", "adc", "tolerances", "dissipation_w_per_k")},
            "circuit": {**SOLVE["circuit"], "fixed_ohm": fixed_ohm}, "monte_carlo": {"samples": 10}}


def test_window_is_a_constraint_of_the_accuracy_objective(client):
    # A 12-bit converter that reads nothing useful below 20 % and above 80 % of its reference.
    body = {**SOLVE, "range": {"min": 0, "max": 60}, "dissipation_w_per_k": None,
            "adc": {"bits": 12, "window": {"min_fraction": 0.2, "max_fraction": 0.8}}}
    free = client.post("/api/solve", json={**body, "adc": {"bits": 12}}).json()
    held = client.post("/api/solve", json=body).json()
    assert held["fixed_ohm"] != free["fixed_ohm"]
    check = lambda ohm: client.post("/api/budget", json={**budget_request(ohm), "range": body["range"],
                                                         "dissipation_w_per_k": None, "adc": body["adc"]}).json()
    assert check(held["fixed_ohm"])["window"]["ok"] is True
    assert check(free["fixed_ohm"])["window"]["ok"] is False
    for c in held["candidates"]:
        assert check(c["fixed_ohm"])["window"]["ok"] is True


def test_other_objectives_ignore_the_accuracy_fields(client):
    for objective in ("swing", "linearity", "sensitivity"):
        plain = {k: v for k, v in SOLVE.items() if k not in ("adc", "tolerances", "dissipation_w_per_k")}
        a = client.post("/api/solve", json={**plain, "objective": objective}).json()
        b = client.post("/api/solve", json={**SOLVE, "objective": objective}).json()
        assert a == b


def test_accuracy_objective_bad_inputs(client):
    r = client.post("/api/solve", json={**SOLVE, "tolerances": {"gamma_pct": 3}})
    assert r.status_code == 422 and r.json()["error"]["field"] == "tolerances.gamma_pct"
    r = client.post("/api/solve", json={**SOLVE, "adc": {"bits": 40}})
    assert r.status_code == 422 and r.json()["error"]["field"] == "adc.bits"
    r = client.post("/api/solve", json={k: v for k, v in SOLVE.items() if k not in ("adc", "tolerances")})
    assert r.status_code == 200  # default: a 12-bit ratiometric converter, no tolerances


def test_self_heating_pushes_the_accuracy_pick_to_a_larger_resistor(client):
    cool = client.post("/api/solve", json={**SOLVE, "dissipation_w_per_k": None}).json()
    warm = client.post("/api/solve", json={**SOLVE, "dissipation_w_per_k": 0.0005}).json()
    assert warm["fixed_ohm"] > cool["fixed_ohm"]


# --- the page and its view ----------------------------------------------------------------------

VIEW = {**{k: v for k, v in BASE.items() if k != "circuit"}, "circuit": {"supply_v": 3.3}, "spec": 1.0,
        "fixed_from": "swing"}


def test_view_picks_the_swing_resistor_and_says_it_plainly(client):
    r = client.post("/api/view/accuracy", json=VIEW)
    assert r.status_code == 200, r.text
    out = r.json()
    swing = client.post("/api/solve", json={"sensor": VIEW["sensor"], "circuit": {"supply_v": 3.3},
                                            "range": VIEW["range"]}).json()
    assert out["headline"]["fixed_ohm"] == swing["fixed_ohm"] == out["picks"]["swing"]
    assert re.fullmatch(r"±[\d.]+ °C worst case from 0 to 100 °C; 99\.7 % of builds within ±[\d.]+ °C\.",
                        out["summary_text"]), out["summary_text"]
    assert re.search(r"Against a spec of ±1 °C: [\d.]+ % of 2,000 simulated builds", out["yield_text"])
    for name in ("errors", "contributors", "output"):
        fig = out["figures"][name]
        assert fig["data"] and all(len(t["x"]) == 101 for t in fig["data"])
        assert "(" in fig["layout"]["yaxis"]["title"]["text"]  # a unit in the axis title
    assert out["budget"]["worst_case"] == client.post(
        "/api/budget", json={**{k: v for k, v in VIEW.items() if k not in ("fixed_from",)},
                             "circuit": {"supply_v": 3.3, "fixed_ohm": swing["fixed_ohm"]}}).json()["worst_case"]


def test_view_with_the_accuracy_pick_and_with_a_given_value(client):
    acc = client.post("/api/view/accuracy", json={**VIEW, "fixed_from": "accuracy"}).json()
    assert acc["headline"]["fixed_from"] == "accuracy"
    assert acc["headline"]["fixed_ohm"] == acc["picks"]["accuracy"]
    assert acc["picks"]["accuracy_candidates"][0]["fixed_ohm"] == acc["picks"]["accuracy"]
    mine = client.post("/api/view/accuracy", json={**VIEW, "fixed_from": "given",
                                                   "circuit": {"supply_v": 3.3, "fixed_ohm": "22k"}}).json()
    assert mine["headline"]["fixed_ohm"] == 22_000 and mine["headline"]["fixed_from"] == "given"
    assert mine["inputs"]["circuit"]["fixed_ohm"] == 22_000


def test_view_of_other_kinds(client):
    ldr = {**VIEW, "sensor": {"part": "demo-ldr-small"}, "range": {"min": 1, "max": 1000}, "dissipation_w_per_k": None,
           "tolerances": {"fixed_pct": 1, "sensor_pct": 30, "gamma_pct": 5}, "spec": 0.2}
    out = client.post("/api/view/accuracy", json=ldr).json()
    assert "decade" in out["summary_text"] and "% in lux" in out["summary_text"]
    assert out["figures"]["errors"]["layout"]["xaxis"]["type"] == "log"
    pot = {**VIEW, "sensor": {"kind": "pot", "r_total_ohm": "10k"}, "range": {"min": 0, "max": 1},
           "dissipation_w_per_k": None, "tolerances": {"sensor_pct": 20}, "circuit": {"supply_v": 3.3, "load_ohm": "47k"},
           "spec": 0.01}
    out = client.post("/api/view/accuracy", json=pot).json()
    assert out["headline"]["fixed_ohm"] is None and "of travel" in out["summary_text"]
    assert "load" in out["budget"]["contributors"]


def test_view_settling_and_window(client):
    body = {**VIEW, "adc": {"bits": 12, "window": {"min_v": 0.2, "max_v": 3.1},
                            "sampling": {"capacitance_f": 1.5e-11, "switch_ohm": 2000, "acquisition_s": 2e-7}}}
    out = client.post("/api/view/accuracy", json=body).json()
    settling = out["budget"]["settling"]
    assert settling["ok"] is False and settling["fixes"]
    assert any(n["code"] == "settling" for n in out["notices"])
    assert out["budget"]["window"]["min_v"] == 0.2
    assert len(out["figures"]["output"]["data"]) == 5  # corner band (2), nominal, the window's two edges


def test_accuracy_page_renders_its_data(client):
    r = client.get("/accuracy")
    assert r.status_code == 200
    html = r.text
    match = re.search(r'<script type="application/json" id="page-data">(.*?)</script>', html, re.S)
    data = json.loads(match.group(1))
    assert data["result"]["summary_text"].startswith("±")
    assert {p["id"] for p in data["parts"]} >= {"demo-ntc-10k-b3950", "demo-pt100"}
    pt100 = next(p for p in data["parts"] if p["id"] == "demo-pt100")
    assert pt100["tolerances"] == {"sensor_pct": 0.12} and pt100["dissipation_w_per_k"] == 0.004
    # No inline script code: only the JSON block and module files.
    scripts = re.findall(r"<script([^>]*)>(.*?)</script>", html, re.S)
    assert all('type="application/json"' in attrs or (not body.strip() and "src=" in attrs) for attrs, body in scripts)
    assert "/static/js/accuracy.js" in html
