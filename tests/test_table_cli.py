"""``ohmpick table FILE [--format json|csv|c] [--out PATH]``, run in-process.

The CLI must print exactly what POST /api/table answers, write files with
--out, and turn bad input into one line on standard error with status 2.
"""

from __future__ import annotations

import io
import json

import pytest

from app.cli import EXIT_BAD_INPUT, main

REQUEST = {
    "sensor": {"part": "demo-pt100"},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom", "fixed_ohm": "1k"},
    "adc": {"bits": 12},
    "step": 8,
    "range": {"min": -50, "max": 300},
}


@pytest.fixture
def request_file(tmp_path):
    path = tmp_path / "table.json"
    path.write_text(json.dumps(REQUEST), encoding="utf-8")
    return path


def test_json_matches_the_endpoint(request_file, capsys, client):
    assert main(["table", str(request_file)]) == 0
    printed = json.loads(capsys.readouterr().out)
    assert printed == client.post("/api/table", json=REQUEST).json()


@pytest.mark.parametrize("fmt", ["csv", "c"])
def test_text_formats_match_the_endpoint(request_file, capsys, client, fmt):
    assert main(["table", str(request_file), "--format", fmt]) == 0
    printed = capsys.readouterr().out
    served = client.post("/api/table", json={**REQUEST, "format": fmt}).text
    assert printed == served


def test_format_in_the_file_is_used_without_the_flag(tmp_path, capsys):
    path = tmp_path / "c.json"
    path.write_text(json.dumps({**REQUEST, "format": "c"}), encoding="utf-8")
    assert main(["table", str(path)]) == 0
    assert "#ifndef TEMP_TABLE_H" in capsys.readouterr().out


def test_out_writes_the_file(request_file, tmp_path, capsys):
    target = tmp_path / "pt100.h"
    assert main(["table", str(request_file), "--format", "c", "--out", str(target)]) == 0
    text = target.read_text(encoding="utf-8")
    assert text.startswith("/*") and "static const" in text and text.endswith("#endif /* TEMP_TABLE_H */\n")
    said = capsys.readouterr().out
    assert said.startswith(f"wrote {target}") and "entries" in said


def test_standard_input(monkeypatch, capsys):
    monkeypatch.setattr("sys.stdin", io.StringIO(json.dumps(REQUEST)))
    assert main(["table", "-", "--format", "csv"]) == 0
    assert capsys.readouterr().out.startswith("code,temperature_c,centre_v,note\n")


@pytest.mark.parametrize("change, field", [
    ({"adc": {"bits": 22}}, "adc.bits"),
    ({"step": 0}, "step"),
    ({"format": "pdf"}, "format"),
    ({"sensor": {"part": "nope"}}, "sensor.part"),
    ({"sensor": {"kind": "pot", "wiring": "divider"}}, "sensor.r_total_ohm"),
])
def test_bad_input_is_one_line_and_status_2(tmp_path, capsys, change, field):
    path = tmp_path / "bad.json"
    path.write_text(json.dumps({**REQUEST, **change}), encoding="utf-8")
    assert main(["table", str(path)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert err.startswith(f"ohmpick: {field}") and err.count("\n") == 1


def test_unwritable_out_and_bad_json(request_file, tmp_path, capsys):
    assert main(["table", str(request_file), "--out", str(tmp_path / "missing" / "x.h")]) == EXIT_BAD_INPUT
    assert capsys.readouterr().err.startswith("ohmpick: cannot write")
    broken = tmp_path / "broken.json"
    broken.write_text("{", encoding="utf-8")
    assert main(["table", str(broken)]) == EXIT_BAD_INPUT
    assert "not valid JSON" in capsys.readouterr().err


def test_other_commands_still_work(tmp_path, capsys):
    path = tmp_path / "evaluate.json"
    path.write_text(json.dumps({"sensor": {"part": "demo-pt100"}, "circuit": {"supply_v": 3.3, "fixed_ohm": 1000},
                                "stimulus": [0, 100]}), encoding="utf-8")
    assert main(["evaluate", str(path), "--json"]) == 0
    assert len(json.loads(capsys.readouterr().out)["vout_v"]) == 2
