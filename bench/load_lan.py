"""Load as a shared lab server sees it: 20 clients for 30 s on loopback.

One uvicorn server (subprocess, temporary data folder, demo parts) with a
few saved designs; 20 keep-alive clients, each cycling through a mix of
``POST /api/solve`` (every body distinct), the Bench page ``GET /`` and
saved-design reads (``GET /api/designs/{id}`` and the page ``/d/{id}``).
Prints requests per second, median and 99th-percentile latency and the
error count per kind; target: zero errors, p99 under 250 ms.
``OHMPICK_LOAD_SECONDS`` shortens the run (default 30).
"""

from __future__ import annotations

import asyncio
import json
import os
import statistics
import tempfile
import time
import urllib.request

from bench.api_solve import SOLVE_BODY, free_port, http_request, read_answer, start_server

CLIENTS = 20
SECONDS = float(os.environ.get("OHMPICK_LOAD_SECONDS", "30"))
TARGET_P99_MS = 250.0
SAVED = 5


def _save_designs(port: int) -> list[str]:
    ids = []
    for i in range(SAVED):
        body = json.dumps({"name": f"load design {i}", **SOLVE_BODY, "range": {"min": 0, "max": 60 + 10 * i}}).encode()
        req = urllib.request.Request(f"http://127.0.0.1:{port}/api/designs", data=body, method="POST",
                                     headers={"Content-Type": "application/json"})
        with urllib.request.urlopen(req, timeout=10) as r:
            ids.append(json.load(r)["id"])
    return ids


def _mix(ids: list[str], count: int = 400) -> list[tuple[str, bytes]]:
    """(kind, raw request) in a fixed cycle: 2 solves, 1 page, 2 saved reads."""
    out = []
    for i in range(count):
        solve = dict(SOLVE_BODY, range={"min": 0, "max": 100 + i * 1e-3})
        out.append(("solve", http_request("POST", "/api/solve", json.dumps(solve).encode())))
        out.append(("solve", http_request("POST", "/api/solve", json.dumps(dict(solve, objective="linearity")).encode())))
        out.append(("bench page", http_request("GET", "/")))
        out.append(("saved read", http_request("GET", f"/api/designs/{ids[i % len(ids)]}")))
        out.append(("saved read", http_request("GET", f"/d/{ids[(i + 1) % len(ids)]}")))
    return out


async def _client(port, mix, offset, until, latencies, errors):
    reader, writer = await asyncio.open_connection("127.0.0.1", port)
    try:
        i = offset
        while time.perf_counter() < until:
            kind, raw = mix[i % len(mix)]
            i += 1
            start = time.perf_counter()
            writer.write(raw)
            status = await read_answer(reader)
            latencies.setdefault(kind, []).append(time.perf_counter() - start)
            if status != 200:
                errors[kind] = errors.get(kind, 0) + 1
    finally:
        writer.close()
        await writer.wait_closed()


async def _load(port: int, mix) -> tuple[dict, dict, float]:
    latencies: dict[str, list[float]] = {}
    errors: dict[str, int] = {}
    begin = time.perf_counter()
    until = begin + SECONDS
    await asyncio.gather(*(_client(port, mix, k * 37, until, latencies, errors) for k in range(CLIENTS)))
    return latencies, errors, time.perf_counter() - begin


def _row(name: str, lat: list[float], errs: int, seconds: float) -> str:
    p99 = statistics.quantiles(lat, n=100)[-1] * 1e3 if len(lat) >= 100 else max(lat) * 1e3
    return (f"{name:<12}{len(lat) / seconds:>9.0f}{statistics.median(lat) * 1e3:>11.1f}{p99:>10.1f}"
            f"{len(lat):>10}{errs:>8}")


def run() -> list[str]:
    port = free_port()
    with tempfile.TemporaryDirectory(prefix="ohmpick-load-") as data_dir:
        proc = start_server(port, data_dir)
        try:
            mix = _mix(_save_designs(port))
            latencies, errors, seconds = asyncio.run(_load(port, mix))
        finally:
            proc.terminate()
            proc.wait(timeout=10)
            proc.stderr.close()
    every = [x for v in latencies.values() for x in v]
    lines = [f"{CLIENTS} concurrent keep-alive clients for {SECONDS:g} s on 127.0.0.1:{port}; "
             "mix per cycle: 2 solves (E96, swing and linearity), the Bench page, 2 saved-design reads",
             f"{'kind':<12}{'req/s':>9}{'median ms':>11}{'p99 ms':>10}{'requests':>10}{'errors':>8}"]
    for kind in sorted(latencies):
        lines.append(_row(kind, latencies[kind], errors.get(kind, 0), seconds))
    total_errors = sum(errors.values())
    lines.append(_row("all", every, total_errors, seconds))
    p99 = statistics.quantiles(every, n=100)[-1] * 1e3
    verdict = "ok" if total_errors == 0 and p99 < TARGET_P99_MS else "MISSED"
    lines.append(f"target: zero errors and p99 < {TARGET_P99_MS:g} ms: {verdict} ({total_errors} errors, p99 {p99:.1f} ms)")
    return lines


if __name__ == "__main__":
    print("\n".join(run()))
