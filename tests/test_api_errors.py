"""Bad input on the core endpoints: 422 naming the field, 404 for unknown ids, never 500.

Every answer has the one error shape
``{"error": {"status", "message", "field", "problems": [{"field", "message"}]}}``
with ``message`` starting with the offending field's dotted path.
"""

from __future__ import annotations

import json

import pytest

from app import constants as K

NTC = {"kind": "ntc_beta", "r_nominal_ohm": 10_000, "beta_k": 3950}
CIRCUIT = {"supply_v": 3.3, "sensor_at": "bottom"}
EVAL = {"sensor": NTC, "circuit": {**CIRCUIT, "fixed_ohm": "10k"}, "stimulus": [0, 25, 50]}
SOLVE = {"sensor": NTC, "circuit": CIRCUIT, "range": {"min": 0, "max": 100}, "objective": "swing", "series": "E24"}
BENCH = {**SOLVE, "sensor": {"part": "demo-ntc-10k-b3950"}}
FIT = {"kind": "ntc_beta", "points": [{"stimulus": 25, "ohm": 10_000}, {"stimulus": 85, "ohm": 1_100}]}


@pytest.fixture(scope="module")
def client(tmp_path_factory):
    """One app for the module: these tests only read (a fresh app per test costs ~0.2 s)."""
    from fastapi.testclient import TestClient

    from app.settings import Settings
    from app.web import create_app

    app = create_app(Settings(data_dir=tmp_path_factory.mktemp("data")))
    with TestClient(app, raise_server_exceptions=False) as c:
        yield c


def with_(base: dict, path: str, value) -> dict:
    """A deep copy of ``base`` with the dotted ``path`` set (or removed when value is ...)."""
    out = json.loads(json.dumps(base))
    node = out
    keys = [int(k) if k.isdigit() else k for k in path.split(".")]
    for key in keys[:-1]:
        node = node[key]
    if value is ...:
        del node[keys[-1]]
    else:
        node[keys[-1]] = value
    return out


# (id, method, path, body, status, field)
CASES = [
    ("negative resistance", "POST", "/api/evaluate", with_(EVAL, "sensor.r_nominal_ohm", -10), 422, "sensor.r_nominal_ohm"),
    ("zero resistance as text", "POST", "/api/evaluate", with_(EVAL, "sensor.r_nominal_ohm", "0"), 422, "sensor.r_nominal_ohm"),
    ("unreadable resistance", "POST", "/api/evaluate", with_(EVAL, "circuit.fixed_ohm", "4x7"), 422, "circuit.fixed_ohm"),
    ("ambiguous milli or mega", "POST", "/api/evaluate", with_(EVAL, "circuit.fixed_ohm", "4m7"), 422, "circuit.fixed_ohm"),
    ("boolean as resistance", "POST", "/api/evaluate", with_(EVAL, "circuit.load_ohm", True), 422, "circuit.load_ohm"),
    ("list as resistance", "POST", "/api/evaluate", with_(EVAL, "circuit.parallel_ohm", [1, 2]), 422, "circuit.parallel_ohm"),
    ("unknown sensor kind", "POST", "/api/evaluate", with_(EVAL, "sensor.kind", "thermocouple"), 422, "sensor"),
    ("missing beta", "POST", "/api/evaluate", with_(EVAL, "sensor.beta_k", ...), 422, "sensor.beta_k"),
    ("beta outside physics", "POST", "/api/evaluate", with_(EVAL, "sensor.beta_k", 50), 422, "sensor.beta_k"),
    ("unknown field", "POST", "/api/evaluate", with_(EVAL, "sensor.colour", "blue"), 422, "sensor.colour"),
    ("unknown part", "POST", "/api/evaluate", with_(EVAL, "sensor", {"part": "no-such-part"}), 404, "sensor.part"),
    ("negative supply", "POST", "/api/evaluate", with_(EVAL, "circuit.supply_v", -5), 422, "circuit.supply_v"),
    ("sensor position", "POST", "/api/evaluate", with_(EVAL, "circuit.sensor_at", "middle"), 422, "circuit.sensor_at"),
    ("empty stimulus", "POST", "/api/evaluate", with_(EVAL, "stimulus", []), 422, "stimulus"),
    ("too many points", "POST", "/api/evaluate", with_(EVAL, "stimulus", [25.0] * (K.MAX_STIMULUS_POINTS + 1)), 422, "stimulus"),
    ("below absolute zero", "POST", "/api/evaluate", with_(EVAL, "stimulus", [25, -300]), 422, "stimulus"),
    ("text in the stimulus", "POST", "/api/evaluate", with_(EVAL, "stimulus", [25, "warm"]), 422, "stimulus.1"),
    ("no fixed resistor", "POST", "/api/evaluate", with_(EVAL, "circuit.fixed_ohm", ...), 422, "circuit.fixed_ohm"),
    ("LDR slope out of range", "POST", "/api/evaluate",
     with_(EVAL, "sensor", {"kind": "ldr", "r_ref_ohm": "20k", "gamma": 7}), 422, "sensor.gamma"),
    ("pot taper", "POST", "/api/evaluate",
     with_(EVAL, "sensor", {"kind": "pot", "r_total_ohm": "10k", "taper": "square"}), 422, "sensor.taper"),
    ("inverted range", "POST", "/api/solve", with_(SOLVE, "range", {"min": 80, "max": 20}), 422, "range.max"),
    ("range beyond the standard", "POST", "/api/solve",
     with_(SOLVE, "sensor", {"kind": "rtd", "r0_ohm": 100}) | {"range": {"min": 0, "max": 900}}, 422, "range.max"),
    ("range min beyond physics", "POST", "/api/solve", with_(SOLVE, "range.min", -400), 422, "range.min"),
    ("range missing an end", "POST", "/api/solve", with_(SOLVE, "range.max", ...), 422, "range.max"),
    ("fixed resistor given to the solver", "POST", "/api/solve", with_(SOLVE, "circuit.fixed_ohm", "10k"), 422, "circuit.fixed_ohm"),
    ("unknown objective", "POST", "/api/solve", with_(SOLVE, "objective", "beauty"), 422, "objective"),
    ("unknown series", "POST", "/api/solve", with_(SOLVE, "series", "E7"), 422, "series"),
    ("limits inverted", "POST", "/api/solve", with_(SOLVE, "limits", {"min_ohm": "1M", "max_ohm": "1k"}), 422, "limits.max_ohm"),
    ("power limit unreachable", "POST", "/api/solve", with_(SOLVE, "limits", {"max_sensor_power_w": 1e-12}), 422,
     "limits.max_sensor_power_w"),
    ("nothing to choose for a divider pot", "POST", "/api/solve",
     with_(SOLVE, "sensor", {"kind": "pot", "r_total_ohm": "10k"}) | {"range": {"min": 0, "max": 1}}, 422, "sensor.wiring"),
    ("solve with an unknown part", "POST", "/api/solve", with_(SOLVE, "sensor", {"part": "gone"}), 404, "sensor.part"),
    ("unknown series table", "GET", "/api/series/E7", None, 404, "name"),
    ("fit with one point", "POST", "/api/fit", with_(FIT, "points", FIT["points"][:1]), 422, "points"),
    ("fit kind", "POST", "/api/fit", with_(FIT, "kind", "pot"), 422, "kind"),
    ("fit negative resistance", "POST", "/api/fit", with_(FIT, "points.0.ohm", -1), 422, "points.0.ohm"),
    ("fit repeated stimulus", "POST", "/api/fit",
     with_(FIT, "points", [{"stimulus": 25, "ohm": 1e4}, {"stimulus": 25, "ohm": 9e3}]), 422, "points"),
    ("fit stimulus beyond physics", "POST", "/api/fit",
     {"kind": "rtd", "points": [{"stimulus": 20, "ohm": 107.8}, {"stimulus": 8e79, "ohm": 1}]}, 422, "points.1.stimulus"),
    ("unknown part id", "GET", "/api/parts/no-such-part", None, 404, "id"),
    ("bench override unreadable", "POST", "/api/view/bench", with_(BENCH, "override_ohm", "abc"), 422, "override_ohm"),
    ("bench range inverted", "POST", "/api/view/bench", with_(BENCH, "range", {"min": 50, "max": 10}), 422, "range.max"),
    ("bench load negative", "POST", "/api/view/bench", with_(BENCH, "circuit.load_ohm", "-1k"), 422, "circuit.load_ohm"),
    ("bench light range at zero lux", "POST", "/api/view/bench",
     with_(BENCH, "sensor", {"part": "demo-ldr-small"}) | {"range": {"min": 0, "max": 100}}, 422, "range.min"),
    ("bench unknown part", "POST", "/api/view/bench", with_(BENCH, "sensor", {"part": "gone"}), 404, "sensor.part"),
]


def assert_error_shape(res, status: int, field: str) -> dict:
    assert res.status_code == status, res.text
    assert res.headers["content-type"].startswith("application/json")
    body = res.json()
    assert set(body) == {"error"}
    err = body["error"]
    assert set(err) == {"status", "message", "field", "problems"}
    assert err["status"] == status
    assert err["field"] == field, err
    assert err["message"].startswith(f"{field}: "), err["message"]
    assert err["problems"] and all(set(p) == {"field", "message"} for p in err["problems"])
    assert "Traceback" not in res.text
    return err


def test_there_are_at_least_twenty_kinds_of_bad_input():
    assert len({case[0] for case in CASES}) >= 20


@pytest.mark.parametrize("label, method, path, body, status, field", CASES, ids=[c[0] for c in CASES])
def test_bad_input_is_refused_with_the_one_shape(client, label, method, path, body, status, field):
    res = client.request(method, path, json=body) if body is not None else client.request(method, path)
    assert res.status_code != 500
    assert_error_shape(res, status, field)


NAN_BODIES = [
    ("/api/evaluate", '{"sensor": {"kind": "ntc_beta", "r_nominal_ohm": 10000, "beta_k": 3950},'
                      ' "circuit": {"supply_v": NaN, "fixed_ohm": 10000}, "stimulus": [25]}', "circuit.supply_v"),
    ("/api/evaluate", '{"sensor": {"kind": "ntc_beta", "r_nominal_ohm": 10000, "beta_k": 3950},'
                      ' "circuit": {"supply_v": 3.3, "fixed_ohm": 10000}, "stimulus": [25, Infinity]}', "stimulus.1"),
    ("/api/solve", '{"sensor": {"kind": "ntc_beta", "r_nominal_ohm": 10000, "beta_k": 3950},'
                   ' "circuit": {"supply_v": 3.3}, "range": {"min": 0, "max": -Infinity}}', "range.max"),
    ("/api/evaluate", '{"sensor": {"kind": "ntc_beta", "r_nominal_ohm": NaN, "beta_k": 3950},'
                      ' "circuit": {"supply_v": 3.3, "fixed_ohm": 10000}, "stimulus": [25]}', "sensor.r_nominal_ohm"),
]


@pytest.mark.parametrize("path, text, field", NAN_BODIES)
def test_nan_and_infinity_are_refused(client, path, text, field):
    res = client.post(path, content=text, headers={"content-type": "application/json"})
    assert_error_shape(res, 422, field)


@pytest.mark.parametrize("text", ['{"sensor": ', "[1, 2, 3]", '"just text"', ""])
def test_malformed_or_non_object_bodies_get_422(client, text):
    res = client.post("/api/solve", content=text, headers={"content-type": "application/json"})
    assert res.status_code == 422, res.text
    assert set(res.json()["error"]) == {"status", "message", "field", "problems"}


def test_a_body_over_the_limit_gets_413_in_the_one_shape(app_factory):
    from fastapi.testclient import TestClient

    with TestClient(app_factory(max_body_bytes=10_000), raise_server_exceptions=False) as small:
        res = small.post("/api/evaluate", json={**EVAL, "stimulus": [25.0] * 5_000})
    assert res.status_code == 413
    assert res.json()["error"]["status"] == 413


def test_unknown_page_html_but_api_json(client):
    page = client.get("/nowhere/at/all")
    assert page.status_code == 404 and page.headers["content-type"].startswith("text/html")
    for method, path in (("GET", "/api/nowhere"), ("POST", "/api/nowhere"), ("POST", "/nowhere")):
        res = client.request(method, path)
        assert res.status_code == 404, (method, path)
        assert res.json()["error"]["status"] == 404


def test_fallback_does_not_shadow_real_routes_mounts_or_redirects(client):
    # The unknown-page fallback sits behind every route (FastAPI low-priority routes).
    assert client.get("/static/app.css").status_code == 200
    assert client.get("/static/no-such-file.css").status_code == 404
    assert client.get("/api/health").status_code == 200
    assert client.post("/api/health").status_code == 405  # method mismatch is still 405, not 404
    assert client.get("/").status_code == 200
