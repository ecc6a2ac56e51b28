"""Saved designs survive the server process: restarts and SIGKILL mid-burst.

Each server here is a real ``python -m app.cli serve --data DIR`` process
(the command ``ohmpick serve`` runs), so the kill is the operating system's,
not a simulated exception. A save counts as acknowledged once its 201 has
arrived; every acknowledged save must be readable, intact, after restart.
"""

from __future__ import annotations

import os
import random
import signal
import sqlite3
import subprocess
import sys
import threading
import time
from pathlib import Path

import httpx
import pytest

from tests.live import free_port

ROOT = Path(__file__).resolve().parent.parent
ROUNDS = 5
WRITERS = 6
START_TIMEOUT_S = 30.0

INPUTS = {
    "sensor": {"kind": "ntc_beta", "r_nominal_ohm": "10k", "beta_k": 3950},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
    "range": {"min": 0, "max": 100},
    "objective": "swing",
    "series": "E24",
}


class ServerProcess:
    """``ohmpick serve`` on a free loopback port with the given data folder."""

    def __init__(self, data_dir: Path):
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        env = {**os.environ, "PYTHONPATH": str(ROOT)}
        env.pop("OHMPICK_DATA", None)
        env["OHMPICK_SAVES_PER_MINUTE"] = "1000000"  # the burst is the point here, not the per-client limit
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "app.cli", "serve", "--port", str(self.port), "--data", str(data_dir)],
            cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
        )
        deadline = time.monotonic() + START_TIMEOUT_S
        while True:
            if self.proc.poll() is not None:
                raise RuntimeError(f"server exited: {self.proc.stderr.read().decode(errors='replace')}")
            try:
                if httpx.get(self.url + "/api/health", timeout=1).status_code == 200:
                    break
            except httpx.HTTPError:
                pass
            if time.monotonic() > deadline:
                self.kill()
                raise RuntimeError("server did not start")
            time.sleep(0.05)

    def kill(self) -> None:
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGKILL)
        self.proc.wait(timeout=10)
        self.proc.stderr.close()

    def stop(self) -> None:
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=10)
        self.proc.stderr.close()


@pytest.fixture
def servers():
    started: list[ServerProcess] = []

    def start(data_dir: Path) -> ServerProcess:
        server = ServerProcess(data_dir)
        started.append(server)
        return server

    yield start
    for server in started:
        if server.proc.poll() is None:
            server.kill()


def test_a_design_saved_by_one_process_is_read_by_a_fresh_one(tmp_path, servers):
    first = servers(tmp_path)
    made = httpx.post(first.url + "/api/designs", json={"name": "Across restarts", "notes": "n", **INPUTS}).json()
    shown = httpx.get(f"{first.url}/api/designs/{made['id']}").json()
    first.stop()

    second = servers(tmp_path)
    again = httpx.get(f"{second.url}/api/designs/{made['id']}")
    assert again.status_code == 200
    body = again.json()
    assert body["name"] == "Across restarts" and body["inputs"] == INPUTS
    assert body["result"] == shown["result"]
    page = httpx.get(f"{second.url}/d/{made['id']}")
    assert page.status_code == 200 and "Across restarts" in page.text
    # the owner token from the first process still works in the second
    ok = httpx.patch(f"{second.url}/api/designs/{made['id']}", json={"name": "Renamed"},
                     headers={"X-Owner-Token": made["owner_token"]})
    assert ok.status_code == 200
    second.stop()


def _burst(url: str, round_no: int, acknowledged: list, stop: threading.Event, lock: threading.Lock) -> None:
    """Save designs back to back until stopped or the server dies; keep those answered 201."""
    with httpx.Client(timeout=5) as client:
        n = 0
        while not stop.is_set():
            name = f"r{round_no}-{threading.get_ident()}-{n}"
            body = {"name": name, "notes": f"burst save {n} of round {round_no}", **INPUTS,
                    "range": {"min": 0, "max": 50 + n % 50}}
            n += 1
            try:
                res = client.post(url + "/api/designs", json=body)
            except httpx.HTTPError:
                return  # killed mid-request: this save was never acknowledged
            if res.status_code == 201:
                with lock:
                    acknowledged.append((res.json()["id"], body))


def test_every_acknowledged_save_survives_sigkill_mid_burst(tmp_path, servers):
    acknowledged: list[tuple[str, dict]] = []
    lock = threading.Lock()
    rng = random.Random(4)
    for round_no in range(ROUNDS):
        server = servers(tmp_path)
        # every save acknowledged in earlier rounds is still there after the kill
        with httpx.Client(base_url=server.url, timeout=10) as client:
            for design_id, body in rng.sample(acknowledged, min(len(acknowledged), 40)):
                got = client.get(f"/api/designs/{design_id}")
                assert got.status_code == 200, design_id
        before = len(acknowledged)
        stop = threading.Event()
        writers = [threading.Thread(target=_burst, args=(server.url, round_no, acknowledged, stop, lock))
                   for _ in range(WRITERS)]
        for w in writers:
            w.start()
        deadline = time.monotonic() + 10
        while len(acknowledged) - before < 15 and time.monotonic() < deadline:
            time.sleep(0.01)
        time.sleep(rng.uniform(0.05, 0.3))  # mid-burst: saves in flight when the kill lands
        server.kill()
        stop.set()
        for w in writers:
            w.join(timeout=10)
        assert len(acknowledged) - before >= 15, f"round {round_no}: the burst never got going"

    final = servers(tmp_path)
    with httpx.Client(base_url=final.url, timeout=10) as client:
        listed = client.get("/api/designs", params={"limit": 500}).json()["total"]
        assert listed >= len(acknowledged)
        for design_id, body in acknowledged:
            got = client.get(f"/api/designs/{design_id}")
            assert got.status_code == 200, design_id
            saved = got.json()
            assert saved["name"] == body["name"] and saved["notes"] == body["notes"]
            assert saved["inputs"] == {k: v for k, v in body.items() if k not in ("name", "notes")}
            assert saved["result"] is not None and saved["problem"] is None
    final.stop()
    check = sqlite3.connect(tmp_path / "ohmpick.sqlite3")
    try:
        assert check.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    finally:
        check.close()
