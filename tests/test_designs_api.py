"""Saved designs through the HTTP API and the two pages (FastAPI test client)."""

from __future__ import annotations

import json

import pytest

from app.api import designs as api
from app.settings import Settings
from app.store import designs as store
from app.store import user_parts

INPUTS = {
    "sensor": {"part": "demo-ntc-10k-b3950"},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom", "load_ohm": "100k"},
    "range": {"min": 0, "max": 100},
    "objective": "swing",
    "series": "E24",
    "override_ohm": "4k7",
}
DESIGN = {"name": "Boiler over-temperature", "notes": "NTC on the flow pipe", **INPUTS}
XSS = "<script>alert(1)</script>"


def save(client, **changes):
    res = client.post("/api/designs", json={**DESIGN, **changes})
    assert res.status_code == 201, res.text
    return res.json()


def test_save_answers_201_with_id_url_and_owner_token(client):
    res = client.post("/api/designs", json=DESIGN)
    assert res.status_code == 201
    body = res.json()
    assert set(body) == {"id", "url", "owner_token"}
    assert store.valid_id(body["id"])
    assert body["url"].endswith(f"/d/{body['id']}") and body["url"].startswith("http")
    assert res.headers["location"] == f"/api/designs/{body['id']}"
    assert len(body["owner_token"]) >= 32


def test_read_returns_the_inputs_as_saved_and_the_recomputed_solve(client):
    made = save(client)
    res = client.get(f"/api/designs/{made['id']}")
    assert res.status_code == 200
    body = res.json()
    assert body["id"] == made["id"] and body["name"] == DESIGN["name"] and body["notes"] == DESIGN["notes"]
    assert body["inputs"] == INPUTS  # "4k7" and "100k" kept as typed; name and notes beside, not inside
    assert body["created"].endswith("+00:00") and body["problem"] is None
    solve_in = {k: v for k, v in INPUTS.items() if k != "override_ohm"}
    solved = client.post("/api/solve", json=solve_in).json()
    for key in ("fixed_ohm", "exact_ohm", "score", "objective", "series", "metrics", "candidates"):
        assert body["result"][key] == solved[key], key
    assert body["kind"].startswith("NTC thermistor")


def test_the_bench_view_and_the_saved_view_agree(client):
    made = save(client)
    view = client.get(f"/api/designs/{made['id']}/view").json()
    bench = client.post("/api/view/bench", json=INPUTS).json()
    figs = {f["id"]: f["figure"] for f in view["figures"]}
    assert figs["plot-output"] == bench["figures"]["output"]
    assert figs["plot-sensitivity"] == bench["figures"]["sensitivity"]
    assert view["headline"][0]["value"] == "4.3 kΩ" == bench["recommended"]["label"]
    assert view["copy_url"] == f"/?copy={made['id']}"


@pytest.mark.parametrize("bad_id", ["x", "A" * 15, "A" * 17, "AAAAAAAA.AAAAAAA", "AAAAAAAAAAAAAAA%25", "%00", "AAAAAAAAAAAAAAAA"])
def test_malformed_and_unknown_ids_give_404(client, bad_id):
    save(client)
    for method, path in (("GET", f"/api/designs/{bad_id}"), ("GET", f"/api/designs/{bad_id}/view"),
                         ("GET", f"/api/designs/{bad_id}/export"), ("PATCH", f"/api/designs/{bad_id}"),
                         ("DELETE", f"/api/designs/{bad_id}")):
        res = client.request(method, path, json={"name": "x"} if method == "PATCH" else None,
                             headers={"X-Owner-Token": "whatever"})
        assert res.status_code == 404, (method, path, res.text)
        assert res.json()["error"]["status"] == 404
    page = client.get(f"/d/{bad_id}")
    assert page.status_code == 404 and "text/html" in page.headers["content-type"]
    assert "No such saved design" in page.text


def test_rename_and_delete_need_the_owner_token(client):
    made = save(client)
    other = save(client, name="someone else's")
    url = f"/api/designs/{made['id']}"
    assert client.patch(url, json={"name": "mine now"}).status_code == 401
    assert client.patch(url, json={"name": "mine now"}, headers={"X-Owner-Token": ""}).status_code == 401
    assert client.patch(url, json={"name": "mine now"}, headers={"X-Owner-Token": "guess"}).status_code == 403
    assert client.patch(url, json={"name": "mine now"}, headers={"X-Owner-Token": other["owner_token"]}).status_code == 403
    assert client.delete(url).status_code == 401
    assert client.delete(url, headers={"X-Owner-Token": other["owner_token"]}).status_code == 403
    assert client.get(url).json()["name"] == DESIGN["name"]  # nothing changed
    owner = {"X-Owner-Token": made["owner_token"]}
    assert client.patch(url, json={}, headers=owner).status_code == 422
    assert client.patch(url, json={"name": ""}, headers=owner).json()["error"]["field"] == "name"
    assert client.patch(url, json={"colour": "red"}, headers=owner).status_code == 422

    ok = client.patch(url, json={"name": "  Boiler, loop 2  ", "notes": "moved\nto the return"},
                      headers={"X-Owner-Token": made["owner_token"]})
    assert ok.status_code == 200 and ok.json()["name"] == "Boiler, loop 2"
    assert client.get(url).json()["notes"] == "moved\nto the return"
    assert client.get(url).json()["inputs"] == INPUTS

    assert client.delete(url, headers={"X-Owner-Token": made["owner_token"]}).status_code == 204
    assert client.get(url).status_code == 404
    assert client.get(f"/api/designs/{other['id']}").status_code == 200


@pytest.mark.parametrize("change, field", [
    ({"name": ""}, "name"),
    ({"name": "   "}, "name"),
    ({"name": "x" * (api.MAX_NAME + 1)}, "name"),
    ({"name": "bell\x07"}, "name"),
    ({"name": 42}, "name"),
    ({"notes": "n" * (api.MAX_NOTES + 1)}, "notes"),
    ({"range": {"min": 100, "max": 0}}, "range.max"),
    ({"sensor": {"kind": "ntc_beta", "r_nominal_ohm": -10, "beta_k": 3950}}, "sensor.r_nominal_ohm"),
    ({"circuit": {"supply_v": 0}}, "circuit.supply_v"),
    ({"objective": "loudest"}, "objective"),
    ({"override_ohm": "4m7"}, "override_ohm"),
    ({"stimulus": [1, 2]}, "stimulus"),
    ({"view": "nowhere"}, "view"),
])
def test_invalid_designs_get_422_naming_the_field(client, change, field):
    res = client.post("/api/designs", json={**DESIGN, **change})
    assert res.status_code == 422, res.text
    err = res.json()["error"]
    assert field in [p["field"] for p in err["problems"]] or err["field"] == field, err


def test_name_is_required_and_bodies_must_be_json_objects(client):
    body = {k: v for k, v in DESIGN.items() if k != "name"}
    assert client.post("/api/designs", json=body).json()["error"]["field"] == "name"
    assert client.post("/api/designs", json=[DESIGN]).status_code == 422
    assert client.post("/api/designs", content=b"{not json", headers={"content-type": "application/json"}).status_code == 422
    nan = json.dumps(DESIGN).replace('"supply_v": 3.3', '"supply_v": NaN')
    res = client.post("/api/designs", content=nan.encode(), headers={"content-type": "application/json"})
    assert res.status_code == 422 and res.json()["error"]["field"] == "circuit.supply_v"
    assert client.get("/api/designs").json()["total"] == 0  # nothing half-saved


def test_unknown_part_is_404_and_nothing_is_saved(client):
    res = client.post("/api/designs", json={**DESIGN, "sensor": {"part": "no-such-part"}})
    assert res.status_code == 404 and res.json()["error"]["field"] == "sensor.part"
    assert client.get("/api/designs").json()["total"] == 0


def test_an_oversize_body_gets_413(app_factory):
    from fastapi.testclient import TestClient

    with TestClient(app_factory(max_body_bytes=4000), raise_server_exceptions=False) as client:
        small = client.post("/api/designs", json=DESIGN)
        assert small.status_code == 201
        big = client.post("/api/designs", json={**DESIGN, "notes": "x" * 5000})
        assert big.status_code == 413 and big.json()["error"]["status"] == 413
        imported = client.post("/api/designs/import", content=b"{" + b" " * 5000 + b"}",
                               headers={"content-type": "application/json"})
        assert imported.status_code == 413
        assert client.get("/api/designs").json()["total"] == 1


def test_default_body_limit_refuses_a_megabyte_design(client):
    res = client.post("/api/designs", json={**DESIGN, "padding": "x" * 1_100_000})
    assert res.status_code == 413


def test_list_filters_by_name_and_pages(client):
    for name in ("Boiler NTC", "Dusk switch", "boiler backup"):
        save(client, name=name)
    all_ = client.get("/api/designs").json()
    assert all_["total"] == 3 and [d["name"] for d in all_["designs"]] == ["boiler backup", "Dusk switch", "Boiler NTC"]
    assert set(all_["designs"][0]) == {"id", "name", "notes", "kind", "view", "created", "updated", "url"}
    found = client.get("/api/designs", params={"name": "BOILER"}).json()
    assert found["total"] == 2 and {d["name"] for d in found["designs"]} == {"Boiler NTC", "boiler backup"}
    assert client.get("/api/designs", params={"limit": 1, "offset": 1}).json()["designs"][0]["name"] == "Dusk switch"
    assert client.get("/api/designs", params={"limit": 0}).status_code == 422
    assert client.get("/api/designs", params={"name": "x" * (api.MAX_NAME + 1)}).status_code == 422
    page = client.get("/designs", params={"name": "dusk"})
    assert page.status_code == 200 and "Dusk switch" in page.text and "Boiler NTC" not in page.text


def test_export_downloads_json_that_imports_back(client):
    made = save(client)
    res = client.get(f"/api/designs/{made['id']}/export")
    assert res.status_code == 200
    assert res.headers["content-disposition"] == 'attachment; filename="boiler-over-temperature.ohmpick.json"'
    file = res.json()
    assert file["ohmpick_design"] == 1 and file["inputs"] == INPUTS and file["name"] == DESIGN["name"]
    again = client.post("/api/designs/import", json=file)
    assert again.status_code == 201
    copy = client.get(f"/api/designs/{again.json()['id']}").json()
    assert again.json()["id"] != made["id"]
    assert copy["inputs"] == INPUTS and copy["name"] == DESIGN["name"] and copy["notes"] == DESIGN["notes"]
    assert copy["result"] == client.get(f"/api/designs/{made['id']}").json()["result"]


@pytest.mark.parametrize("file, field", [
    ({"name": "x", "inputs": INPUTS}, "ohmpick_design"),
    ({"ohmpick_design": 2, "name": "x", "inputs": INPUTS}, "ohmpick_design"),
    ({"ohmpick_design": True, "name": "x", "inputs": INPUTS}, "ohmpick_design"),
    ({"ohmpick_design": 1, "name": "x", "inputs": INPUTS, "extra": 1}, "extra"),
    ({"ohmpick_design": 1, "name": "x", "inputs": "nope"}, "inputs"),
    ({"ohmpick_design": 1, "name": "x", "inputs": {**INPUTS, "name": "inside"}}, "inputs.name"),
    ({"ohmpick_design": 1, "name": "x", "inputs": {**INPUTS, "range": {"min": 5, "max": 1}}}, "inputs.range.max"),
    ({"ohmpick_design": 1, "inputs": INPUTS}, "name"),
])
def test_import_validates_like_save(client, file, field):
    res = client.post("/api/designs/import", json=file)
    assert res.status_code == 422, res.text
    err = res.json()["error"]
    assert field in [p["field"] for p in err["problems"]], err


def test_a_design_that_no_longer_recomputes_still_opens_with_its_inputs(client):
    """A later version may refuse old inputs: the design shows them and the reason, never a 500."""
    old_inputs = {**INPUTS, "objective": "retired-objective"}
    with client.app.state.store.connection() as conn:
        design, _ = store.save(conn, name="Old one", kind="NTC thermistor (beta)", inputs=old_inputs)
    res = client.get(f"/api/designs/{design.id}")
    assert res.status_code == 200
    body = res.json()
    assert body["result"] is None and body["inputs"] == old_inputs
    assert body["problem"]["field"] == "objective"
    page = client.get(f"/d/{design.id}")
    assert page.status_code == 200
    assert "no longer recomputes" in page.text and "retired-objective" in page.text
    assert client.get(f"/api/designs/{design.id}/view").status_code == 200
    assert client.get(f"/api/designs/{design.id}/export").json()["inputs"] == old_inputs
    assert client.get("/designs").status_code == 200


def test_a_saved_design_keeps_working_after_its_user_part_is_deleted(app_factory, tmp_path):
    from fastapi.testclient import TestClient

    with TestClient(app_factory(), raise_server_exceptions=False) as client:
        source = client.app.state.library.get("demo-pt100")
        with client.app.state.store.connection() as conn:
            part_id = user_parts.new_id(conn, "Bench Pt100")
            user_parts.save(conn, {**source.to_dict(), "id": part_id, "name": "Bench Pt100"})
    with TestClient(app_factory(), raise_server_exceptions=False) as client:
        part = client.app.state.library.get(part_id)  # user parts join the library at start-up
        assert part.origin == "user"
        made = save(client, sensor={"part": part_id}, range={"min": 0, "max": 200}, override_ohm=None)
        before = client.get(f"/api/designs/{made['id']}").json()
        assert before["kind"] == "Platinum RTD (IEC 60751)" and before["result"] is not None
        with client.app.state.store.connection() as conn:
            user_parts.delete(conn, part_id)
    with TestClient(app_factory(), raise_server_exceptions=False) as client:
        assert part_id not in client.app.state.library.parts
        after = client.get(f"/api/designs/{made['id']}").json()
        assert after["problem"] is None and after["result"] == before["result"]
        page = client.get(f"/d/{made['id']}")
        assert page.status_code == 200 and "no longer in the library" in page.text


def test_pot_wired_as_divider_saves_with_its_metrics(client):
    made = save(client, sensor={"kind": "pot", "r_total_ohm": "10k", "wiring": "divider"},
                range={"min": 0, "max": 1}, override_ohm=None)
    body = client.get(f"/api/designs/{made['id']}").json()
    assert body["result"]["fixed_ohm"] is None and body["result"]["candidates"] == []
    assert body["result"]["metrics"]["swing_v"] > 0
    assert client.get(f"/d/{made['id']}").status_code == 200


def test_names_and_notes_are_escaped_on_every_page(client):
    made = save(client, name=XSS, notes=f"note {XSS}")
    for path in ("/designs", f"/designs?name={XSS}", f"/d/{made['id']}"):
        page = client.get(path)
        assert page.status_code == 200, path
        assert "<script>alert(1)" not in page.text, path
        assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page.text, path


def test_the_data_folder_comes_from_settings_flag_or_environment(tmp_path, monkeypatch, app_factory):
    monkeypatch.setenv("OHMPICK_DATA", str(tmp_path / "from-env"))
    assert Settings.from_env().data_dir == tmp_path / "from-env"
    assert Settings.from_env(data_dir=tmp_path / "flag").data_dir == tmp_path / "flag"
    monkeypatch.delenv("OHMPICK_DATA")
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "xdg"))
    assert Settings.from_env().data_dir == tmp_path / "xdg" / "ohmpick"
    app = app_factory(data_dir=tmp_path / "a" / "b")  # created on start-up
    assert (tmp_path / "a" / "b" / "ohmpick.sqlite3").is_file()
    assert app.state.store.data_dir == tmp_path / "a" / "b"


def test_openapi_documents_the_design_endpoints(client):
    spec = client.get("/openapi.json").json()
    post = spec["paths"]["/api/designs"]["post"]
    schema = post["requestBody"]["content"]["application/json"]["schema"]
    assert {"name", "notes", "sensor", "circuit", "range"} <= set(schema["properties"])
    assert "name" in schema["required"]
    assert "$defs" not in json.dumps(schema)
    for method in ("patch", "delete"):
        params = spec["paths"]["/api/designs/{design_id}"][method]["parameters"]
        assert any(p["name"] == "X-Owner-Token" and p["in"] == "header" for p in params)
    assert "/api/designs/import" in spec["paths"] and "/api/designs/{design_id}/export" in spec["paths"]
