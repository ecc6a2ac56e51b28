"""Operating on a shared network: headers, static paths, limits, escaping.

The checks here are this project's own policy (common practice for a web
tool on a lab LAN, no published source beyond the header definitions in the
W3C CSP Level 3 recommendation and the WHATWG Fetch standard for nosniff).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from app.cli import parser
from app.pages.nav import NAV

ROOT = Path(__file__).resolve().parent.parent
NTC = {"kind": "ntc_beta", "r_nominal_ohm": "10k", "beta_k": 3950}
SOLVE = {"sensor": NTC, "circuit": {"supply_v": 3.3}, "range": {"min": 0, "max": 100}}
PAGES = [path for path, _, _ in NAV] + ["/docs", "/no-such-page"]


def _csp(response) -> dict[str, str]:
    policy = response.headers["content-security-policy"]
    return {d.split()[0]: " ".join(d.split()[1:]) for d in (p.strip() for p in policy.split(";")) if d}


@pytest.mark.parametrize("path", PAGES + ["/api/health", "/api/parts", "/static/app.css", "/openapi.json"])
def test_security_headers_on_every_response(client, path):
    r = client.get(path)
    assert r.status_code in (200, 404), path
    csp = _csp(r)
    assert csp["default-src"] == "'self'"
    assert csp["script-src"] == "'self'"  # no inline script, no eval, no other origin
    assert csp["frame-ancestors"] == "'none'" and csp["object-src"] == "'none'"
    assert r.headers["x-content-type-options"] == "nosniff"
    assert r.headers["referrer-policy"] == "same-origin"
    assert r.headers["x-frame-options"] == "DENY"


def test_error_responses_carry_the_headers_too(client):
    for r in (client.post("/api/solve", json={}), client.get("/api/parts/nope"),
              client.post("/api/solve", content=b"x" * 2_000_001)):
        assert r.status_code in (404, 413, 422)
        assert "frame-ancestors 'none'" in r.headers["content-security-policy"]


def test_no_inline_script_or_handlers_in_templates():
    for template in sorted((ROOT / "templates").glob("*.html")):
        text = template.read_text(encoding="utf-8")
        for tag in re.findall(r"<script\b[^>]*>", text):
            assert "src=" in tag or 'type="application/json"' in tag, f"{template.name}: inline script {tag}"
        assert not re.search(r"\son[a-z]+\s*=", text), f"{template.name}: inline event handler"
        assert "javascript:" not in text.lower(), template.name


@pytest.mark.parametrize("path", [
    "/static/../app/web.py", "/static/%2e%2e/app/web.py", "/static/..%2fapp%2fweb.py",
    "/static/%2e%2e%2f%2e%2e%2fetc%2fpasswd", "/static//etc/passwd", "/static/vendor/../../pyproject.toml",
    "/static/vendor/%2e%2e/__init__.py", "/static/js/%2e%2e/%2e%2e/README.md", "/static/..\\app\\web.py",
])
def test_static_files_stay_inside_their_folders(client, path):
    r = client.get(path)
    assert r.status_code in (404, 400, 422), (path, r.status_code)
    assert b"create_app" not in r.content and b"root:" not in r.content and b"[project]" not in r.content


def test_plotly_is_served_locally(client):
    r = client.get("/static/vendor/plotly.min.js")
    assert r.status_code == 200 and len(r.content) > 1_000_000
    assert r.headers["content-type"].startswith(("application/javascript", "text/javascript"))


@pytest.mark.parametrize("body", [
    {"sensor": NTC, "circuit": {"supply_v": 3.3, "fixed_ohm": "10k"}, "stimulus": [25.0] * 10_002},
    {"sensors": [NTC] * 7, "circuit": {"supply_v": 3.3}, "range": {"min": 0, "max": 100}},
])
def test_arrays_over_their_limit_are_refused(client, body):
    path = "/api/evaluate" if "stimulus" in body else "/api/compare"
    r = client.post(path, json=body)
    assert r.status_code == 422 and r.json()["error"]["field"] in ("stimulus", "sensors")


def test_monte_carlo_samples_and_table_steps_are_bounded(client):
    budget = {"sensor": NTC, "circuit": {"supply_v": 3.3, "fixed_ohm": "10k"}, "range": {"min": 0, "max": 100},
              "adc": {"bits": 12, "ratiometric": True}, "monte_carlo": {"samples": 10_000_000, "seed": 1}}
    r = client.post("/api/budget", json=budget)
    assert r.status_code == 422 and "monte_carlo" in r.json()["error"]["field"]
    table = {"sensor": NTC, "circuit": {"supply_v": 3.3, "fixed_ohm": "10k"},
             "adc": {"bits": 12, "ratiometric": True}, "step": 10**9, "format": "json"}
    r = client.post("/api/table", json=table)
    assert r.status_code == 422 and r.json()["error"]["field"] == "step"


def test_body_over_the_limit_gets_413_with_a_message(client):
    r = client.post("/api/solve", content=b"{" + b" " * 1_500_000 + b"}", headers={"content-type": "application/json"})
    assert r.status_code == 413 and "bytes" in r.json()["error"]["message"]


def test_csv_over_one_megabyte_is_refused(client):
    row = "25,10000\n"
    text = "temperature_c,resistance\n" + row * (1_100_000 // len(row))
    r = client.post("/api/parts/import", json={"csv": text, "model": "ntc_beta"})
    assert r.status_code in (413, 422)


def test_saves_per_minute_from_one_client_are_limited(app_factory):
    with TestClient(app_factory(saves_per_minute=3), raise_server_exceptions=False) as c:
        design = {"name": "limit", **SOLVE}
        codes = [c.post("/api/designs", json=design).status_code for _ in range(5)]
        assert codes == [201, 201, 201, 429, 429]
        r = c.post("/api/designs", json=design)
        assert int(r.headers["retry-after"]) >= 1 and "too many saves" in r.json()["error"]["message"]
        part = {"name": "p", "notes": "n", "sensor": NTC}
        assert c.post("/api/parts", json=part).status_code == 429  # one budget for every write


HOSTILE = '<script>alert(1)</script><img src=x onerror="alert(2)">'


def test_user_text_is_escaped_on_every_page_that_shows_it(client):
    saved = client.post("/api/designs", json={"name": HOSTILE, "notes": HOSTILE, **SOLVE})
    assert saved.status_code == 201, saved.text
    part = client.post("/api/parts", json={"name": HOSTILE, "notes": HOSTILE, "sensor": NTC})
    assert part.status_code == 201, part.text
    pages = ["/designs", f"/d/{saved.json()['id']}", "/shelf", "/compare", "/", "/accuracy", "/firmware", "/trip"]
    for path in pages:
        html = client.get(path).text
        assert "<script>alert(1)" not in html and 'onerror="alert(2)"' not in html, path
    toml = client.get(f"/api/parts/{part.json()['id']}/toml").text
    assert "<script>" in toml  # TOML is data, served as text: quoted, not interpreted
    assert client.get(f"/api/parts/{part.json()['id']}/toml").headers["content-type"].startswith(("application/toml", "text/"))


def test_serve_is_loopback_unless_asked():
    args = parser().parse_args(["serve"])
    assert args.host == "127.0.0.1" and args.lan is False


def test_load_script_runs_and_counts(monkeypatch):
    """bench/load_lan.py end to end on a short run (its figures are for the README command, not asserted)."""
    from bench import load_lan

    monkeypatch.setattr(load_lan, "SECONDS", 1.0)
    monkeypatch.setattr(load_lan, "CLIENTS", 4)
    lines = load_lan.run()
    assert any(line.startswith("all") for line in lines)
    assert "(0 errors" in lines[-1], lines


# Valid bodies of the JSON endpoints that take numbers; each numeric leaf in turn becomes an
# integer of 401 digits (JSON has no size limit; no float holds it).
HUGE = "1" + "0" * 400
NUMERIC_BODIES = {
    "/api/evaluate": {"sensor": NTC, "circuit": {"supply_v": 3.3, "fixed_ohm": 10_000, "load_ohm": 1e6,
                                                 "parallel_ohm": 1e5}, "stimulus": [0, 25]},
    "/api/solve": {**SOLVE, "limits": {"min_ohm": 10, "max_ohm": 1e6, "max_sensor_power_w": 0.01}},
    "/api/fit": {"kind": "ntc_beta", "points": [{"stimulus": 25, "ohm": 10_000}, {"stimulus": 85, "ohm": 1_100}]},
    "/api/parts": {"name": "Huge probe", "sensor": {"kind": "ntc_beta", "r_nominal_ohm": 4700, "beta_k": 3977},
                   "dissipation_w_per_k": 0.002, "tolerances": {"sensor_pct": 1}},
    "/api/view/compare": {"sensors": [NTC, {"kind": "rtd", "r0_ohm": 100}], "circuit": {"supply_v": 3.3},
                          "range": {"min": 0, "max": 100}},
}


def _numeric_paths(node, path=()):
    if isinstance(node, dict):
        for key, value in node.items():
            yield from _numeric_paths(value, path + (key,))
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _numeric_paths(value, path + (i,))
    elif isinstance(node, (int, float)) and not isinstance(node, bool):
        yield path


@pytest.mark.parametrize("url", NUMERIC_BODIES)
def test_integers_beyond_any_float_get_422_in_every_numeric_field(app_factory, url):
    import json

    base = NUMERIC_BODIES[url]
    with TestClient(app_factory(saves_per_minute=10_000), raise_server_exceptions=False) as client:
        assert client.post(url, json=base).status_code in (200, 201)
        paths = list(_numeric_paths(base))
        assert len(paths) >= 3
        for path in paths:
            body = json.loads(json.dumps(base))
            node = body
            for key in path[:-1]:
                node = node[key]
            node[path[-1]] = "@huge@"
            raw = json.dumps(body).replace('"@huge@"', HUGE)
            r = client.post(url, content=raw, headers={"content-type": "application/json"})
            assert r.status_code == 422, (path, r.status_code, r.text[:200])
