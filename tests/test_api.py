"""The core JSON endpoints (contract), the Bench view and the Bench page, via the test client.

Check values name their source beside them. "Closed form" values are the
divider equation Vout = Vs·Rb/(Rt + Rb) applied by hand to the published
model, not a number taken from the code under test.
"""

from __future__ import annotations

import json
import math
import re

import pytest

from app import constants as K

KELVIN = 273.15  # SI Brochure, 9th ed.
NTC = {"kind": "ntc_beta", "r_nominal_ohm": 10_000, "beta_k": 3950}
CIRCUIT = {"supply_v": 3.3, "sensor_at": "bottom"}


@pytest.fixture(scope="module")
def client(tmp_path_factory):
    """One app for the module: these tests only read (a fresh app per test costs ~0.2 s)."""
    from fastapi.testclient import TestClient

    from app.settings import Settings
    from app.web import create_app

    app = create_app(Settings(data_dir=tmp_path_factory.mktemp("data")))
    with TestClient(app, raise_server_exceptions=False) as c:
        yield c


def post(client, path, body, status=200):
    res = client.post(path, json=body)
    assert res.status_code == status, res.text
    return res.json()


def ntc_ohm(t_c, r25=10_000.0, beta=3950.0):
    """Beta model, IEC 60539-1 B-value definition solved for R."""
    return r25 * math.exp(beta * (1 / (t_c + KELVIN) - 1 / (25 + KELVIN)))


# ---- health -------------------------------------------------------------------

def test_health_answers_ok(client):
    res = client.get("/api/health")
    assert res.status_code == 200
    assert res.json()["status"] == "ok" and res.json()["version"]


# ---- evaluate -----------------------------------------------------------------

def test_evaluate_returns_aligned_arrays(client):
    out = post(client, "/api/evaluate", {"sensor": NTC, "circuit": {**CIRCUIT, "fixed_ohm": "10k"},
                                          "stimulus": [0, 25, 50, 75, 100]})
    assert set(out) == {"stimulus", "sensor_ohm", "vout_v", "thevenin_ohm", "sensor_power_w", "sensitivity"}
    assert all(len(v) == 5 for v in out.values())
    assert out["stimulus"] == [0, 25, 50, 75, 100]


def test_evaluate_ntc_at_nominal_matches_closed_form(client):
    # At 25 °C the beta NTC is exactly its nominal 10 kΩ (definition of the nominal point);
    # with a 10 kΩ top resistor: Vout = Vs/2, Rth = 10k∥10k = 5 kΩ, P = (Vs/2)²/10 kΩ,
    # dVout/dT = Vs·Rf·dR/dT/(Rf + R)² with dR/dT = −β/T²·R, i.e. −Vs·β/(4T²) here (closed form).
    out = post(client, "/api/evaluate", {"sensor": NTC, "circuit": {**CIRCUIT, "fixed_ohm": 10_000},
                                          "stimulus": [25]})
    t = 25 + KELVIN
    assert out["sensor_ohm"][0] == pytest.approx(10_000, rel=1e-12)
    assert out["vout_v"][0] == pytest.approx(1.65, rel=1e-12)
    assert out["thevenin_ohm"][0] == pytest.approx(5_000, rel=1e-12)
    assert out["sensor_power_w"][0] == pytest.approx(1.65**2 / 10_000, rel=1e-12)
    assert out["sensitivity"][0] == pytest.approx(-3.3 * 3950 / (4 * t * t), rel=1e-9)


def test_evaluate_sensitivity_does_not_depend_on_point_spacing(client):
    body = {"sensor": NTC, "circuit": {**CIRCUIT, "fixed_ohm": "4k7"}}
    alone = post(client, "/api/evaluate", {**body, "stimulus": [40]})["sensitivity"][0]
    coarse = post(client, "/api/evaluate", {**body, "stimulus": [0, 40, 90]})["sensitivity"][1]
    assert alone == pytest.approx(coarse, rel=1e-12)


def test_evaluate_pt100_at_100c_matches_iec_60751_table(client):
    # IEC 60751 table: Pt100 at 100 °C is 138.51 Ω (the table's two decimals).
    out = post(client, "/api/evaluate", {"sensor": {"kind": "rtd", "r0_ohm": 100},
                                          "circuit": {"supply_v": 5, "fixed_ohm": "1k"}, "stimulus": [100]})
    assert out["sensor_ohm"][0] == pytest.approx(138.51, abs=0.005)


def test_evaluate_load_and_parallel_resistor_follow_the_divider_equation(client):
    # Closed form: sensor 10 kΩ (25 °C) ∥ 10 kΩ parallel = 5 kΩ at the bottom, 20 kΩ load across it
    # gives 4 kΩ; top 6 kΩ: Vout = 3.3·4/(6+4) = 1.32 V, Rth = 6k∥4k = 2.4 kΩ;
    # sensor current = (1.32 V / 10 kΩ), power = 1.32²/10k.
    out = post(client, "/api/evaluate", {
        "sensor": NTC, "circuit": {**CIRCUIT, "fixed_ohm": "6k", "parallel_ohm": "10 kΩ", "load_ohm": "20k"},
        "stimulus": [25]})
    assert out["vout_v"][0] == pytest.approx(1.32, rel=1e-12)
    assert out["thevenin_ohm"][0] == pytest.approx(2_400, rel=1e-12)
    assert out["sensor_power_w"][0] == pytest.approx(1.32**2 / 10_000, rel=1e-12)


def test_evaluate_linear_pot_divider_is_a_straight_line_without_load(client):
    # Closed form: ends across the supply, output at the wiper: Vout = x·Vs, slope Vs per travel.
    out = post(client, "/api/evaluate", {"sensor": {"kind": "pot", "r_total_ohm": "10k"},
                                          "circuit": {"supply_v": 5}, "stimulus": [0, 0.25, 0.5, 1]})
    assert out["vout_v"] == pytest.approx([0, 1.25, 2.5, 5], abs=1e-12)
    assert out["sensitivity"] == pytest.approx([5, 5, 5, 5], rel=1e-12)


def test_evaluate_accepts_a_library_part(client):
    by_part = post(client, "/api/evaluate", {"sensor": {"part": "demo-ntc-10k-b3950"},
                                              "circuit": {**CIRCUIT, "fixed_ohm": "4k7"}, "stimulus": [10, 60]})
    by_values = post(client, "/api/evaluate", {"sensor": {**NTC, "t_nominal_c": 25},
                                                "circuit": {**CIRCUIT, "fixed_ohm": 4700}, "stimulus": [10, 60]})
    assert by_part == by_values


def test_evaluate_accepts_the_largest_allowed_array(client):
    n = K.MAX_STIMULUS_POINTS
    out = post(client, "/api/evaluate", {"sensor": NTC, "circuit": {**CIRCUIT, "fixed_ohm": "10k"},
                                          "stimulus": [20 + i * 1e-3 for i in range(n)]})
    assert len(out["vout_v"]) == n


# ---- solve --------------------------------------------------------------------

SOLVE = {"sensor": NTC, "circuit": CIRCUIT, "range": {"min": 0, "max": 100}, "objective": "swing", "series": "E24"}


def test_solve_answers_the_contract_shape(client):
    out = post(client, "/api/solve", SOLVE)
    assert {"fixed_ohm", "exact_ohm", "score", "objective", "series", "metrics", "candidates"} <= set(out)
    assert set(out["metrics"]) == {"swing_v", "nonlinearity_pct", "min_sensitivity", "max_sensor_power_w"}
    assert out["objective"] == "swing" and out["series"] == "E24"
    assert out["candidates"][0] == {"fixed_ohm": out["fixed_ohm"], "score": out["score"]}
    scores = [c["score"] for c in out["candidates"]]
    assert scores == sorted(scores, reverse=True)  # swing: larger is better, best first
    assert out["warnings"] == []


def test_solve_swing_optimum_is_the_geometric_mean(client):
    # Closed form (design notes §3): unloaded swing peaks at Rf = sqrt(R(min)·R(max)).
    out = post(client, "/api/solve", {**SOLVE, "series": "exact"})
    expected = math.sqrt(ntc_ohm(0) * ntc_ohm(100))
    assert out["exact_ohm"] == pytest.approx(expected, rel=1e-3)
    assert out["fixed_ohm"] == out["exact_ohm"]


def test_solve_picks_an_e24_value_next_to_the_optimum(client):
    # IEC 60063 E24 around 4.84 kΩ: 4.3, 4.7, 5.1 kΩ.
    out = post(client, "/api/solve", SOLVE)
    assert out["fixed_ohm"] in (4300.0, 4700.0, 5100.0)
    assert out["fixed_ohm"] == 4700.0  # 4.7 kΩ is the nearer in log ratio to 4.84 kΩ, and swing is flat-topped


def test_solve_linearity_scores_in_percent_smaller_is_better(client):
    out = post(client, "/api/solve", {**SOLVE, "objective": "linearity", "series": "E96"})
    scores = [c["score"] for c in out["candidates"]]
    assert scores == sorted(scores)
    assert out["score"] == pytest.approx(out["metrics"]["nonlinearity_pct"])


def test_solve_light_sensor_over_lux(client):
    # Closed form: power-law LDR, R(1 lx) = 20k·10^0.7, R(1000 lx) = 20k·100^-0.7; swing optimum
    # is their geometric mean = 20k·10^(0.7·(1 − 2)/2) ... = 20k·10^(-0.35).
    ldr = {"kind": "ldr", "r_ref_ohm": "20k", "gamma": 0.7}
    out = post(client, "/api/solve", {**SOLVE, "sensor": ldr, "range": {"min": 1, "max": 1000}, "series": "exact"})
    assert out["exact_ohm"] == pytest.approx(20_000 * 10 ** (-0.35), rel=1e-3)


def test_solve_warns_when_a_fitted_part_is_used_beyond_its_range(client, app_factory, tmp_path):
    folder = tmp_path / "parts"
    folder.mkdir()
    (folder / "fitted-ntc.toml").write_text(
        'name = "Fitted demo NTC"\nnotes = "Invented demo part"\n[sensor]\nkind = "ntc_beta"\n'
        'r_nominal_ohm = "10k"\nbeta_k = 3950\n[fitted]\nmin = 0.0\nmax = 50.0\n', encoding="utf-8")
    from fastapi.testclient import TestClient

    with TestClient(app_factory(parts_dir=folder)) as own:
        out = post(own, "/api/solve", {**SOLVE, "sensor": {"part": "fitted-ntc"}})
    assert len(out["warnings"]) == 1 and "range.max" in out["warnings"][0]


# ---- series, fit, parts ---------------------------------------------------------

def test_series_e24_is_the_iec_60063_table(client):
    out = client.get("/api/series/E24").json()
    # IEC 60063 E24 (not the rounded powers of ten: 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2).
    assert out == {"name": "E24", "tolerance_pct": 5, "values": [
        1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]}


@pytest.mark.parametrize("name, count", [("E3", 3), ("E6", 6), ("E12", 12), ("E48", 48), ("E96", 96), ("E192", 192)])
def test_series_tables_have_their_counts(client, name, count):
    out = client.get(f"/api/series/{name}").json()
    assert out["name"] == name and len(out["values"]) == count


def test_series_e192_keeps_the_iec_exception(client):
    # IEC 60063: E192 lists 9.20 where rounding 10^(i/192) would give 9.19.
    assert 9.20 in client.get("/api/series/e192").json()["values"]


def test_fit_beta_from_two_points_is_the_b_value_definition(client):
    # IEC 60539-1: B = ln(R1/R2) / (1/T1 − 1/T2); here B25/85 for 10 kΩ at 25 °C and 1.1 kΩ at 85 °C.
    out = post(client, "/api/fit", {"kind": "ntc_beta", "points": [{"stimulus": 25, "ohm": "10k"},
                                                                    {"stimulus": 85, "ohm": "1k1"}]})
    expected = math.log(10_000 / 1_100) / (1 / (25 + KELVIN) - 1 / (85 + KELVIN))
    assert out["sensor"]["kind"] == "ntc_beta"
    assert out["sensor"]["beta_k"] == pytest.approx(expected, rel=1e-9)
    assert out["max_abs_error"] == pytest.approx(0, abs=1e-6) and len(out["residuals"]) == 2


def test_fit_ldr_gamma_is_the_two_point_slope(client):
    # Common practice: γ = log10(R1/R2) / log10(E2/E1), between 10 and 100 lux.
    out = post(client, "/api/fit", {"kind": "ldr", "points": [{"stimulus": 10, "ohm": "20k"},
                                                               {"stimulus": 100, "ohm": "4k"}]})
    assert out["sensor"]["gamma"] == pytest.approx(math.log10(20 / 4) / math.log10(100 / 10), rel=1e-9)


def test_fit_steinhart_hart_through_three_points(client):
    pts = [{"stimulus": 0, "ohm": 32_000}, {"stimulus": 25, "ohm": 10_000}, {"stimulus": 70, "ohm": 1_750}]
    out = post(client, "/api/fit", {"kind": "ntc_sh", "points": pts})
    assert set(out["sensor"]) == {"kind", "a", "b", "c"}
    assert out["max_abs_error"] < 1e-6  # three points determine a, b, c exactly (Steinhart and Hart, 1968)


def test_parts_list_every_demo_part_marked_as_demo(client):
    parts = client.get("/api/parts").json()
    kinds = {p["kind"] for p in parts}
    assert kinds == set(K.KINDS)
    for p in parts:
        assert {"id", "name", "kind", "sensor", "notes"} <= set(p)
        assert p["sensor"]["kind"] == p["kind"]
        assert re.search(r"demo|invented", p["notes"], re.I), p["id"]


def test_part_by_id(client):
    out = client.get("/api/parts/demo-pt100").json()
    assert out["kind"] == "rtd" and out["sensor"]["r0_ohm"] == 100


def test_openapi_documents_the_core_endpoints(client):
    paths = client.get("/openapi.json").json()["paths"]
    for path in ("/api/evaluate", "/api/solve", "/api/series/{name}", "/api/fit", "/api/parts",
                 "/api/parts/{part_id}", "/api/health", "/api/view/bench"):
        assert path in paths, path
    assert "422" in paths["/api/solve"]["post"]["responses"]


# ---- the Bench view (the page's JSON twin) --------------------------------------

BENCH = {"sensor": {"part": "demo-ntc-10k-b3950"}, "circuit": CIRCUIT, "range": {"min": 0, "max": 100},
         "objective": "swing", "series": "E24"}


def test_bench_view_agrees_with_solve(client):
    view = post(client, "/api/view/bench", BENCH)
    solved = post(client, "/api/solve", BENCH)
    assert view["mode"] == "solve"
    assert view["solve"] == solved
    assert view["recommended"]["fixed_ohm"] == solved["fixed_ohm"]
    assert view["recommended"]["label"] == "4.7 kΩ"
    assert view["recommended"]["metrics"] == pytest.approx(solved["metrics"])
    assert [r["fixed_ohm"] for r in view["runners_up"]] == [c["fixed_ohm"] for c in solved["candidates"][1:]]
    assert view["exact"]["fixed_ohm"] == solved["exact_ohm"]
    assert view["units"] == {"stimulus": "°C", "axis": "°C", "score": "V", "sensitivity": "V/°C"}


def test_bench_view_runners_up_say_how_much_worse(client):
    view = post(client, "/api/view/bench", BENCH)
    best = view["recommended"]["score"]
    for row in view["runners_up"]:
        assert row["worse_abs"] == pytest.approx(best - row["score"])  # swing: more is better
        assert row["worse_abs"] >= 0
        assert row["worse_pct"] == pytest.approx(row["worse_abs"] / best * 100)


def test_bench_view_ends_are_the_divider_outputs(client):
    view = post(client, "/api/view/bench", BENCH)
    r = view["recommended"]["fixed_ohm"]
    # Closed form: sensor at the bottom, Vout = Vs·R(t)/(Rf + R(t)).
    assert view["recommended"]["ends_v"]["min"] == pytest.approx(3.3 * ntc_ohm(0) / (r + ntc_ohm(0)), rel=1e-9)
    assert view["recommended"]["ends_v"]["max"] == pytest.approx(3.3 * ntc_ohm(100) / (r + ntc_ohm(100)), rel=1e-9)


def test_bench_view_override_accepts_rkm_text(client):
    view = post(client, "/api/view/bench", {**BENCH, "override_ohm": "4k7"})
    mine = view["override"]
    assert mine["fixed_ohm"] == 4700.0 and mine["label"] == "4.7 kΩ"
    names = [t["name"] for t in view["figures"]["output"]["data"]]
    assert "4.7 kΩ (yours)" in names
    assert mine["score"] == pytest.approx(view["recommended"]["score"])  # 4.7 kΩ is also the E24 pick


def test_bench_view_override_other_than_the_pick_is_worse(client):
    view = post(client, "/api/view/bench", {**BENCH, "override_ohm": "1k"})
    assert view["override"]["worse_abs"] > 0 and view["override"]["worse_pct"] > 0


def test_bench_view_figures_have_units_and_points(client):
    view = post(client, "/api/view/bench", BENCH)
    out, sens = view["figures"]["output"], view["figures"]["sensitivity"]
    assert out["layout"]["xaxis"]["title"]["text"] == "Temperature (°C)"
    assert out["layout"]["yaxis"]["title"]["text"] == "Output (V)"
    assert "(V/°C)" in sens["layout"]["yaxis"]["title"]["text"]
    first = out["data"][0]
    assert len(first["x"]) == len(first["y"]) > 100
    assert first["x"][0] == 0 and first["x"][-1] == 100
    assert len(out["data"]) == 1 + len(view["runners_up"])


def test_bench_view_light_uses_a_log_lux_axis(client):
    view = post(client, "/api/view/bench", {**BENCH, "sensor": {"part": "demo-ldr-small"},
                                             "range": {"min": 1, "max": 1000}})
    assert view["figures"]["output"]["layout"]["xaxis"]["type"] == "log"
    assert view["units"]["sensitivity"] == "V/decade"


def test_bench_view_divider_pot_chooses_nothing_and_shows_loading(client):
    # Common textbook result: a load on a linear pot's wiper errs most near 2/3 of the travel.
    view = post(client, "/api/view/bench", {**BENCH, "sensor": {"part": "demo-pot-10k-linear"},
                                             "circuit": {"supply_v": 5, "load_ohm": "10k"},
                                             "range": {"min": 0, "max": 1}})
    assert view["mode"] == "divider" and view["solve"] is None and view["recommended"] is None
    assert any(n["code"] == "divider" for n in view["notices"])
    loading = view["divider"]["loading"]
    assert loading["at"] == pytest.approx(2 / 3, abs=0.03)
    assert loading["max_drop_v"] > 0
    assert [t["name"] for t in view["figures"]["output"]["data"]] == ["with 10 kΩ load", "unloaded"]


def test_bench_view_warns_when_the_optimum_sits_on_a_limit(client):
    view = post(client, "/api/view/bench", {**BENCH, "limits": {"min_ohm": 1, "max_ohm": "1k"}})
    assert any(n["code"] == "limit" and "limits.max_ohm" in n["text"] for n in view["notices"])


def test_bench_view_cautions_above_extra_low_voltage(client):
    view = post(client, "/api/view/bench", {**BENCH, "circuit": {"supply_v": 230}})
    assert any(n["level"] == "caution" for n in view["notices"])
    assert not any(n["level"] == "caution" for n in post(client, "/api/view/bench", BENCH)["notices"])


def test_bench_view_is_json_safe(client):
    res = client.post("/api/view/bench", json={**BENCH, "objective": "linearity", "override_ohm": "1M"})
    assert res.status_code == 200
    json.loads(res.text, parse_constant=lambda c: pytest.fail(f"non-JSON constant {c}"))


# ---- pages ------------------------------------------------------------------------

def page_data(html: str) -> dict:
    found = re.search(r'<script type="application/json" id="page-data">(.*?)</script>', html, re.S)
    assert found, "page has no page-data block"
    return json.loads(found.group(1))


def test_home_is_the_bench_with_the_demo_design(client):
    res = client.get("/")
    assert res.status_code == 200 and res.headers["content-type"].startswith("text/html")
    data = page_data(res.text)
    assert data["inputs"]["sensor"] == {"part": "demo-ntc-10k-b3950"}
    assert data["result"]["recommended"]["label"] == "4.7 kΩ"
    assert [o["value"] for o in data["objectives"]] == list(K.OBJECTIVES)
    assert {k["kind"] for k in data["kinds"]} == set(K.KINDS)
    assert 'id="bench-extras"' in res.text
    assert "<script>" not in res.text.replace('<script type="application/json"', "")  # no inline code


def test_home_form_labels_every_input(client):
    html = client.get("/").text
    form = html[html.index('<form id="bench-form"'):html.index("</form>")]
    # Every input and select sits inside a <label> (the labels wrap their controls).
    opened = 0
    for tag in re.finditer(r"<(/?)(label|input|select)\b", form):
        closing, name = tag.group(1), tag.group(2)
        if name == "label":
            opened += -1 if closing else 1
        elif not closing:
            assert opened > 0, f"unlabelled <{name}> at {form[tag.start():tag.start() + 80]!r}"


def test_unknown_page_gets_a_friendly_html_page(client):
    res = client.get("/no-such-page")
    assert res.status_code == 404
    assert res.headers["content-type"].startswith("text/html")
    assert "No such page" in res.text and 'href="/"' in res.text


def test_unknown_api_path_keeps_the_json_error(client):
    res = client.get("/api/no-such-thing")
    assert res.status_code == 404 and res.json()["error"]["status"] == 404


def test_plotly_is_served_locally(client):
    res = client.get("/static/vendor/plotly.min.js")
    assert res.status_code == 200 and len(res.content) > 1_000_000
    assert 'src="/static/vendor/plotly.min.js"' in client.get("/").text


# ---- the benchmark's own client, briefly, against a real server ---------------------

def test_bench_client_talks_to_a_real_server(live_server, monkeypatch):
    """bench/api_solve.py's raw keep-alive client parses answers and counts only successes (no timing asserted)."""
    import asyncio

    from bench import api_solve

    monkeypatch.setattr(api_solve, "WARMUP_SECONDS", 0.05)
    monkeypatch.setattr(api_solve, "CLIENTS", 3)
    requests = api_solve.solve_requests(5)
    assert len({r for r in requests}) == 5  # every request distinct
    tally = asyncio.run(api_solve._turn(live_server.port, requests, 0.3))
    assert tally.latencies and tally.failures == 0
    bad = [api_solve.http_request("POST", "/api/solve", b'{"sensor": {}}')]
    assert asyncio.run(api_solve._turn(live_server.port, bad, 0.2)).failures > 0
