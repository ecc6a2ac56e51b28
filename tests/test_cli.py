"""The command line, in-process: evaluate, solve, fit, bad input, and ``serve``'s start-up lines."""

from __future__ import annotations

import io
import json
import math

import pytest

from app import cli, serve
from tests.tools import run_cli as run

NTC = {"kind": "ntc_beta", "r_nominal_ohm": "10k", "beta_k": 3950}
EVALUATE = {"sensor": NTC, "circuit": {"supply_v": 3.3, "fixed_ohm": "10k"}, "stimulus": [0, 25, 50]}
SOLVE = {"sensor": {"part": "demo-ntc-10k-b3950"}, "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
         "range": {"min": 0, "max": 100}, "objective": "swing", "series": "E24"}
FIT = {"kind": "ntc_beta", "points": [{"stimulus": 25, "ohm": "10k"}, {"stimulus": 85, "ohm": "1k1"}]}


def test_evaluate_json_is_the_endpoints_json(capsys, request_file, client):
    code, out, err = run(capsys, "evaluate", request_file(EVALUATE), "--json")
    assert code == 0 and err == ""
    assert json.loads(out) == client.post("/api/evaluate", json=EVALUATE).json()


def test_evaluate_readable_table(capsys, request_file):
    code, out, _ = run(capsys, "evaluate", request_file(EVALUATE))
    lines = out.strip().splitlines()
    assert code == 0 and len(lines) == 4  # header + three points
    assert "Vout (V)" in lines[0]
    # 25 °C: the 10 kΩ NTC against 10 kΩ gives half the supply (closed form).
    assert "10 kΩ" in lines[2] and "1.65" in lines[2]


def test_solve_json_and_readable(capsys, request_file, client):
    path = request_file(SOLVE)
    code, out, _ = run(capsys, "solve", path, "--json")
    assert code == 0
    assert json.loads(out) == client.post("/api/solve", json=SOLVE).json()
    code, out, _ = run(capsys, "solve", path)
    assert code == 0
    assert "fixed resistor (E24): 4.7 kΩ" in out
    assert "exact optimum:" in out and "candidates:" in out


def test_solve_reads_standard_input(capsys, monkeypatch):
    monkeypatch.setattr("sys.stdin", io.StringIO(json.dumps(SOLVE)))
    code, out, _ = run(capsys, "solve", "-", "--json")
    assert code == 0 and json.loads(out)["fixed_ohm"] == 4700.0


def test_fit_json(capsys, request_file):
    code, out, _ = run(capsys, "fit", request_file(FIT), "--json")
    assert code == 0
    beta = json.loads(out)["sensor"]["beta_k"]
    # IEC 60539-1: B = ln(R1/R2) / (1/T1 − 1/T2).
    assert beta == pytest.approx(math.log(10_000 / 1_100) / (1 / 298.15 - 1 / 358.15), rel=1e-9)


def test_fit_readable(capsys, request_file):
    code, out, _ = run(capsys, "fit", request_file(FIT))
    assert code == 0 and "beta_k = " in out and "residuals:" in out


BAD = [
    ("not json", "evaluate", "{sensor:", "not valid JSON"),
    ("validation", "evaluate", json.dumps({**EVALUATE, "circuit": {"supply_v": -1, "fixed_ohm": "10k"}}), "circuit.supply_v"),
    ("bad resistance", "evaluate", json.dumps({**EVALUATE, "circuit": {"supply_v": 3.3, "fixed_ohm": "4x7"}}), "circuit.fixed_ohm"),
    ("core error", "solve", json.dumps({**SOLVE, "range": {"min": 90, "max": 10}}), "range.max"),
    ("unknown part", "solve", json.dumps({**SOLVE, "sensor": {"part": "gone"}}), "sensor.part"),
    ("fit too few", "fit", json.dumps({**FIT, "points": FIT["points"][:1]}), "points"),
]


@pytest.mark.parametrize("label, command, text, needle", BAD, ids=[b[0] for b in BAD])
def test_bad_input_exits_2_with_one_line(capsys, request_file, label, command, text, needle):
    code, out, err = run(capsys, command, request_file(text))
    assert code == cli.EXIT_BAD_INPUT == 2
    assert out == ""
    assert err.count("\n") == 1 and err.startswith("ohmpick: ")
    assert needle in err
    assert "Traceback" not in err


def test_missing_file_exits_2(capsys, tmp_path):
    code, out, err = run(capsys, "solve", str(tmp_path / "absent.json"))
    assert code == 2 and out == "" and err.count("\n") == 1 and "cannot read" in err


# ---- serve ------------------------------------------------------------------------

def test_banner_for_lan_lists_addresses_and_warns(tmp_path):
    # 192.0.2.0/24 and 198.51.100.0/24 are documentation networks (RFC 5737).
    lines = serve.banner("0.0.0.0", 8123, True, tmp_path, ["192.0.2.10", "198.51.100.7"])
    assert lines[0] == serve.LAN_WARNING
    assert "anyone on this network" in lines[0]
    assert "  colleagues can open: http://192.0.2.10:8123/" in lines
    assert "  colleagues can open: http://198.51.100.7:8123/" in lines
    assert lines[-1].startswith("ohmpick on http://127.0.0.1:8123/")


def test_banner_on_loopback_has_no_warning(tmp_path):
    lines = serve.banner("127.0.0.1", 8000, False, tmp_path, [])
    assert lines == [f"ohmpick on http://127.0.0.1:8000/ (data in {tmp_path})"]


def test_banner_without_any_lan_address_says_so(tmp_path):
    lines = serve.banner("0.0.0.0", 8000, True, tmp_path, [])
    assert any("no LAN address found" in line for line in lines)


def test_lan_addresses_are_text_and_never_loopback():
    found = serve.lan_addresses()
    assert all(isinstance(a, str) and not a.startswith("127.") for a in found)


@pytest.fixture
def fake_uvicorn(monkeypatch):
    """Record uvicorn.run's arguments instead of binding a socket."""
    import uvicorn

    calls = []
    monkeypatch.setattr(uvicorn, "run", lambda app, **kw: calls.append(kw))
    monkeypatch.setattr(serve, "lan_addresses", lambda: ["192.0.2.10"])
    return calls


def test_serve_lan_prints_addresses_and_listens_everywhere(capsys, tmp_path, fake_uvicorn):
    code, out, _ = run(capsys, "serve", "--lan", "--port", "8123", "--data", str(tmp_path))
    assert code == 0
    assert serve.LAN_WARNING in out
    assert "colleagues can open: http://192.0.2.10:8123/" in out
    assert fake_uvicorn == [{"host": "0.0.0.0", "port": 8123, "log_level": "warning"}]


def test_serve_defaults_to_loopback_8000(capsys, tmp_path, fake_uvicorn):
    code, out, _ = run(capsys, "serve", "--data", str(tmp_path))
    assert code == 0 and "warning" not in out
    assert "http://127.0.0.1:8000/" in out
    assert fake_uvicorn[0]["host"] == "127.0.0.1" and fake_uvicorn[0]["port"] == 8000


def test_serve_refuses_an_impossible_port(capsys, tmp_path, fake_uvicorn):
    code, out, err = run(capsys, "serve", "--port", "70000", "--data", str(tmp_path))
    assert code == 2 and "--port" in err and fake_uvicorn == []
