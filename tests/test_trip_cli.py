"""``ohmpick trip FILE [--json]``, in-process."""

from __future__ import annotations

import io
import json

import pytest

from app.units import format_resistance
from tests.tools import run_cli as run

ALARM = {"sensor": {"part": "demo-ntc-10k-b3950"}, "supply_v": 3.3, "sensor_at": "bottom",
         "target": {"trip": 60, "release": 55}, "series": "E24",
         "tolerances": {"resistor_pct": 1}, "adjust": {"min": 50, "max": 70}}


def test_json_is_the_endpoints_json(capsys, request_file, client):
    code, out, err = run(capsys, "trip", request_file(ALARM), "--json")
    assert code == 0 and err == ""
    assert json.loads(out) == client.post("/api/trip", json=ALARM).json()


def test_readable_summary(capsys, request_file, client):
    code, out, err = run(capsys, "trip", request_file(ALARM))
    assert code == 0 and err == ""
    api = client.post("/api/trip", json=ALARM).json()
    assert "goes high at the trip" in out
    for ohm in (api["fixed_ohm"], api["reference"]["top_ohm"], api["reference"]["bottom_ohm"], api["hysteresis_ohm"]):
        assert format_resistance(ohm) in out
    assert "worst case" in out and "trimmer" in out


def test_standard_input(capsys, monkeypatch):
    monkeypatch.setattr("sys.stdin", io.StringIO(json.dumps(ALARM)))
    code, out, _ = run(capsys, "trip", "-", "--json")
    assert code == 0 and json.loads(out)["output_at_trip"] == "high"


@pytest.mark.parametrize("body,field", [
    ({**ALARM, "target": {"trip": 60, "release": 60}}, "target.release"),
    ({**ALARM, "target": {"trip": 5000, "release": 55}}, "target.trip"),
    ({**ALARM, "supply_v": "lots"}, "supply_v"),
    ({**ALARM, "sensor": {"part": "nope"}}, "sensor.part"),
])
def test_bad_input_exits_2_with_one_line(capsys, request_file, body, field):
    code, out, err = run(capsys, "trip", request_file(body))
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"ohmpick: {field}")


def test_malformed_json(capsys, request_file):
    code, _, err = run(capsys, "trip", request_file("{not json"))
    assert code == 2 and "not valid JSON" in err
