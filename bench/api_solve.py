"""``POST /api/solve`` over real HTTP, beside the trivial ``GET /api/health``.

One uvicorn server (a subprocess, its own temporary data folder) on a random
loopback port; 20 concurrent clients, each a keep-alive HTTP/1.1 connection
sending its next request as soon as the last answer is in. The endpoints
take turns (health, echo, solve, health, ...) so all see the same machine
load; each turn is bounded in time, three turns each. Every solve request is distinct
(``range.max`` steps by 0.001 °C) so no cache could answer for the solver.

Request: the demo 10 kΩ B 3950 K NTC at the bottom, 3.3 V, 0..100 °C,
swing, E96 from 1 Ω to 10 MΩ (673 values) on the contract's 401 points.
A trivial POST (``/api/echo``: reads the same JSON bodies, does nothing)
runs beside them; the throughput target compares solve with it, like with
like, and the GET figure is printed too.
Targets: solve throughput at least 40 % of the trivial POST's, solve median < 15 ms.
"""

from __future__ import annotations

import asyncio
import json
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

CLIENTS = 20
TURN_SECONDS = 2.0   # per endpoint per turn
TURNS = 3            # turns per endpoint: the machine's drift averages out across them
WARMUP_SECONDS = 0.5
TARGET_RATIO, TARGET_MEDIAN_MS = 0.40, 15.0
ROOT = Path(__file__).resolve().parent.parent

SOLVE_BODY = {
    "sensor": {"kind": "ntc_beta", "r_nominal_ohm": 10_000, "beta_k": 3950},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
    "range": {"min": 0, "max": 100},
    "objective": "swing",
    "series": "E96",
    "limits": {"min_ohm": 1, "max_ohm": 1e7},
}


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def http_request(method: str, path: str, body: bytes = b"") -> bytes:
    head = f"{method} {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nAccept: application/json\r\n"
    if body:
        head += f"Content-Type: application/json\r\nContent-Length: {len(body)}\r\n"
    return (head + "\r\n").encode() + body


def solve_requests(count: int = 997) -> list[bytes]:
    out = []
    for i in range(count):
        body = dict(SOLVE_BODY, range={"min": 0, "max": 100 + i * 1e-3})
        out.append(http_request("POST", "/api/solve", json.dumps(body).encode()))
    return out


@dataclass
class Tally:
    latencies: list[float] = field(default_factory=list)
    seconds: float = 0.0
    failures: int = 0

    def add(self, other: "Tally") -> None:
        self.latencies += other.latencies
        self.seconds += other.seconds
        self.failures += other.failures

    @property
    def rate(self) -> float:
        return len(self.latencies) / self.seconds if self.seconds else 0.0

    def median_ms(self) -> float:
        return statistics.median(self.latencies) * 1e3 if self.latencies else float("nan")

    def p95_ms(self) -> float:
        if len(self.latencies) < 20:
            return float("nan")
        return statistics.quantiles(self.latencies, n=20)[-1] * 1e3


async def read_answer(reader: asyncio.StreamReader) -> int:
    """Read one response; its status code."""
    head = await reader.readuntil(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    status = int(lines[0].split()[1])
    length = next((int(l.split(":", 1)[1]) for l in lines[1:] if l.lower().startswith("content-length:")), 0)
    await reader.readexactly(length)
    return status


async def _client(port: int, requests: list[bytes], offset: int, until: float, measure_from: float, tally: Tally):
    reader, writer = await asyncio.open_connection("127.0.0.1", port)
    try:
        i = offset
        while True:
            start = time.perf_counter()
            if start >= until:
                break
            writer.write(requests[i % len(requests)])
            i += 1
            status = await read_answer(reader)
            end = time.perf_counter()
            if measure_from <= end <= until:  # answers completed within the window
                tally.latencies.append(end - start)
                tally.failures += status != 200
    finally:
        writer.close()
        await writer.wait_closed()


async def _turn(port: int, requests: list[bytes], seconds: float) -> Tally:
    tally = Tally()
    begin = time.perf_counter()
    measure_from, until = begin + WARMUP_SECONDS, begin + WARMUP_SECONDS + seconds
    await asyncio.gather(*(_client(port, requests, k * 50, until, measure_from, tally) for k in range(CLIENTS)))
    # Throughput: answers completed within the measured window, per second.
    tally.seconds = seconds
    return tally


def start_server(port: int, data_dir: str, **env_extra: str) -> subprocess.Popen:
    env = dict(os.environ, OHMPICK_DATA=data_dir, PYTHONPATH=str(ROOT), **env_extra)
    cmd = [sys.executable, "-m", "uvicorn", "app.web:create_app", "--factory", "--host", "127.0.0.1",
           "--port", str(port), "--log-level", "warning", "--no-access-log"]
    proc = subprocess.Popen(cmd, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            raise RuntimeError(f"server exited: {proc.stderr.read().decode()[-500:]}")
        try:
            with socket.create_connection(("127.0.0.1", port), timeout=0.2):
                return proc
        except OSError:
            time.sleep(0.05)
    proc.kill()
    raise RuntimeError("server did not start within 30 s")


def echo_requests(count: int = 997) -> list[bytes]:
    """The trivial POST: the very solve bodies, sent to an endpoint that only reads them."""
    return [r.replace(b"POST /api/solve ", b"POST /api/echo ", 1) for r in solve_requests(count)]


async def _measure(port: int) -> tuple[Tally, Tally, Tally]:
    health_req = [http_request("GET", "/api/health")]
    echo_req, solve_req = echo_requests(), solve_requests()
    health, echo, solve = Tally(), Tally(), Tally()
    for _ in range(TURNS):
        health.add(await _turn(port, health_req, TURN_SECONDS))
        echo.add(await _turn(port, echo_req, TURN_SECONDS))
        solve.add(await _turn(port, solve_req, TURN_SECONDS))
    return health, echo, solve


def _in_process() -> tuple[float, float]:
    """Median seconds of the service call and of the bare solver for the same request."""
    from app import schemas, service
    from app.parts import Library
    from app.solver import solve as solve_problem
    from bench import median_seconds

    library = Library.load()
    req = schemas.SolveIn.model_validate(SOLVE_BODY)
    problem = service.problem_of(req, library)
    return (median_seconds(lambda: service.solve(req, library), repeat=101),
            median_seconds(lambda: solve_problem(problem, req.series), repeat=101))


def run() -> list[str]:
    t_service, t_solver = _in_process()
    port = free_port()
    with tempfile.TemporaryDirectory(prefix="ohmpick-bench-") as data_dir:
        proc = start_server(port, data_dir)
        try:
            health, echo, solve = asyncio.run(_measure(port))
        finally:
            proc.terminate()
            try:
                proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                proc.kill()
            proc.stderr.close()
    ratio = solve.rate / echo.rate if echo.rate else 0.0
    ratio_get = solve.rate / health.rate if health.rate else 0.0
    ok_ratio, ok_median = ratio >= TARGET_RATIO, solve.median_ms() < TARGET_MEDIAN_MS
    lines = [
        f"uvicorn subprocess on 127.0.0.1:{port}, {CLIENTS} concurrent keep-alive clients, "
        f"{TURNS} × {TURN_SECONDS:g} s per endpoint (after {WARMUP_SECONDS:g} s warm-up each), turns alternate",
        f"{'endpoint':<18}{'req/s':>9}{'median ms':>11}{'p95 ms':>9}{'requests':>10}{'failed':>8}",
    ]
    for name, t in (("GET /api/health", health), ("POST /api/echo", echo), ("POST /api/solve", solve)):
        lines.append(f"{name:<18}{t.rate:>9.0f}{t.median_ms():>11.2f}{t.p95_ms():>9.2f}"
                     f"{len(t.latencies):>10}{t.failures:>8}")
    lines += [
        f"solve/echo throughput: {ratio * 100:.0f} % (target ≥ {TARGET_RATIO * 100:.0f} %: "
        f"{'ok' if ok_ratio else 'MISSED'}); solve median {solve.median_ms():.2f} ms "
        f"(target < {TARGET_MEDIAN_MS:g} ms: {'ok' if ok_median else 'MISSED'})",
        f"solve/health (GET, no body) throughput: {ratio_get * 100:.0f} %, shown for reference: the trivial"
        " endpoint judged against is POST /api/echo, which reads the same JSON bodies and does nothing",
        "solve: NTC 10 kΩ B 3950 K, 3.3 V, 0..100 °C, swing, E96 1 Ω–10 MΩ (673 values) × 401 points;"
        " every request distinct (range.max + i·0.001 °C)",
    ]
    per_health, per_echo, per_solve = (1e3 / t.rate if t.rate else float("nan") for t in (health, echo, solve))
    lines.append(
        f"server time per request (1/throughput): health {per_health:.2f} ms, echo {per_echo:.2f} ms, solve"
        f" {per_solve:.2f} ms; in-process medians: service.solve {t_service * 1e3:.2f} ms, of which"
        f" app.solver.solve {t_solver * 1e3:.2f} ms")
    if solve.failures or health.failures or echo.failures:
        lines.append("FAILED requests: the numbers above are not valid")
    return lines


if __name__ == "__main__":
    print("\n".join(run()))
