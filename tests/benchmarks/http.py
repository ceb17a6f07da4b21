"""HTTP benchmarks of issues 4 and 7, against a live server on loopback.

(a) Per-request overhead: requests per second of POST /v1/followup/pairwise
    (Tukey-Kramer, 6 groups of 8) as a ratio of the same server's GET /healthz
    in the same run, both measured with ``wrk`` (one thread, 16 connections,
    8 s each after a 2 s warm-up; a Lua script sends the POST body). One server
    worker, so that the ratio compares the two endpoints on one CPU. Target:
    ratio >= 0.5.
(b) The batch endpoint: 384 items of 6 groups x 8 in one POST /v1/batch
    (the process pool; and inline, with FAMILYWISE_BATCH_WORKERS=1), total
    time and cost per item, against the same 384 analyses as single calls,
    sequentially over one keep-alive connection and with 16 concurrent
    connections (httpx, a fixed count of 384).

Nothing here is a test: the figures are printed (and returned to the runner),
never asserted. The data are invented plate assays, drawn from a fixed seed.
"""

from __future__ import annotations

import asyncio
import json
import os
import random
import re
import shutil
import statistics
import subprocess
import tempfile
import time
from dataclasses import dataclass

import httpx

from tests.load import LiveServer

WRK = shutil.which("wrk") or "/usr/bin/wrk"
RATIO_TARGET = 0.5
ITEMS = 384
CONNECTIONS = 16


def plate(rng: random.Random, k: int = 6, n: int = 8) -> list[dict]:
    return [{"label": f"well {chr(65 + i)}", "values": [round(rng.gauss(50.0 + 0.8 * i, 2.0), 3) for _ in range(n)]}
            for i in range(k)]


def pairwise_body(rng: random.Random) -> dict:
    return {"groups": plate(rng), "method": "tukey_kramer"}


@dataclass(frozen=True)
class WrkResult:
    requests_per_second: float
    latency_avg: str
    requests: int
    non_2xx: int
    socket_errors: str


def wrk(url: str, seconds: float, connections: int = CONNECTIONS, script: str | None = None) -> WrkResult:
    command = [WRK, "-t1", f"-c{connections}", f"-d{max(1, round(seconds))}s", "--latency"]
    if script:
        command += ["-s", script]
    out = subprocess.run([*command, url], capture_output=True, text=True, timeout=seconds + 60, check=True).stdout
    rps = float(re.search(r"Requests/sec:\s+([\d.]+)", out).group(1))
    latency = re.search(r"Latency\s+(\S+)", out).group(1)
    requests = int(re.search(r"(\d+) requests in", out).group(1))
    non_2xx = re.search(r"Non-2xx or 3xx responses:\s+(\d+)", out)
    errors = re.search(r"Socket errors: (.*)", out)
    return WrkResult(rps, latency, requests, int(non_2xx.group(1)) if non_2xx else 0,
                     errors.group(1) if errors else "none")


def post_script(path: str, body: bytes) -> str:
    """A wrk Lua script that POSTs ``body`` (JSON) to ``path``; the file's name."""
    text = body.decode()
    assert "]==]" not in text
    handle, name = tempfile.mkstemp(prefix="familywise-wrk-", suffix=".lua")
    with os.fdopen(handle, "w", encoding="utf-8") as script:
        script.write(f'wrk.method = "POST"\nwrk.path = "{path}"\n'
                     'wrk.headers["Content-Type"] = "application/json"\n'
                     f"wrk.body = [==[{text}]==]\n")
    return name


def overhead_ratio(server: LiveServer, seconds: float, warmup: float) -> dict:
    rng = random.Random(4)
    body = json.dumps(pairwise_body(rng)).encode()
    assert httpx.post(f"{server.url}/v1/followup/pairwise", content=body,
                      headers={"content-type": "application/json"}).status_code == 200
    script = post_script("/v1/followup/pairwise", body)
    try:
        wrk(f"{server.url}/healthz", warmup)
        wrk(server.url, warmup, script=script)
        health = wrk(f"{server.url}/healthz", seconds)
        pairwise = wrk(server.url, seconds, script=script)
    finally:
        os.unlink(script)
    return {"healthz": health, "pairwise": pairwise,
            "ratio": pairwise.requests_per_second / health.requests_per_second}


def batch_times(url: str, repeats: int) -> dict:
    rng = random.Random(7)
    items = [{"id": f"analyte {i + 1}", "operation": "pairwise", "request": pairwise_body(rng)} for i in range(ITEMS)]
    batch = json.dumps({"items": items}).encode()
    singles = [json.dumps(item["request"]).encode() for item in items]
    headers = {"content-type": "application/json"}
    out: dict[str, list[float]] = {"batch": [], "sequential": [], "concurrent": []}
    with httpx.Client(base_url=url, timeout=300) as client:
        for _ in range(2):  # warm-up: the pool processes start, the curves are tabulated
            assert client.post("/v1/batch", content=batch, headers=headers).status_code == 200
            for body in singles[:32]:
                client.post("/v1/followup/pairwise", content=body, headers=headers)
        for _ in range(repeats):
            started = time.perf_counter()
            response = client.post("/v1/batch", content=batch, headers=headers)
            out["batch"].append(time.perf_counter() - started)
            assert response.status_code == 200 and all(r["status"] == 200 for r in response.json()["results"])
            started = time.perf_counter()
            for body in singles:
                assert client.post("/v1/followup/pairwise", content=body, headers=headers).status_code == 200
            out["sequential"].append(time.perf_counter() - started)
            out["concurrent"].append(asyncio.run(_concurrent(url, singles)))
    return {name: statistics.median(values) for name, values in out.items()}


async def _concurrent(url: str, bodies: list[bytes]) -> float:
    limits = httpx.Limits(max_connections=CONNECTIONS, max_keepalive_connections=CONNECTIONS)
    queue = list(reversed(bodies))
    async with httpx.AsyncClient(base_url=url, limits=limits, timeout=300) as client:
        await client.get("/healthz")

        async def connection() -> None:
            while queue:
                body = queue.pop()
                response = await client.post("/v1/followup/pairwise", content=body,
                                             headers={"content-type": "application/json"})
                assert response.status_code == 200

        started = time.perf_counter()
        await asyncio.gather(*(connection() for _ in range(CONNECTIONS)))
        return time.perf_counter() - started


def _load() -> str:
    try:
        with open("/proc/loadavg", encoding="ascii") as handle:
            return " ".join(handle.read().split()[:3])
    except OSError:
        return "unknown"


def run(quick: bool = False) -> bool:
    if not os.path.exists(WRK):
        print("\nHTTP benchmarks: skipped, wrk is not installed (Debian: apt-get install wrk)")
        return False
    seconds, warmup, repeats = (3.0, 1.0, 1) if quick else (8.0, 2.0, 5)
    print(f"HTTP benchmarks (issues 4 and 7): loopback, {os.cpu_count()} CPUs shared by client and server, "
          f"load average at start {_load()}")
    with LiveServer(workers=1) as server:
        ratio = overhead_ratio(server, seconds, warmup)
        pooled = batch_times(server.url, repeats)
    with LiveServer(workers=1, env={"FAMILYWISE_BATCH_WORKERS": "1"}) as server:
        inline = batch_times(server.url, repeats)
    health, pw = ratio["healthz"], ratio["pairwise"]
    print(f"\n(a) wrk -t1 -c{CONNECTIONS} -d{seconds:g}s, one server worker (access log on, as deployed)")
    print(f"    {'endpoint':42s} {'req/s':>9s} {'avg latency':>12s} {'requests':>9s} {'non-2xx':>8s}")
    print(f"    {'GET /healthz':42s} {health.requests_per_second:9.0f} {health.latency_avg:>12s} {health.requests:9d} "
          f"{health.non_2xx:8d}")
    print(f"    {'POST /v1/followup/pairwise (6 x 8, Tukey)':42s} {pw.requests_per_second:9.0f} "
          f"{pw.latency_avg:>12s} {pw.requests:9d} {pw.non_2xx:8d}")
    met = ratio["ratio"] >= RATIO_TARGET and pw.non_2xx == 0
    print(f"    ratio pairwise / healthz: {ratio['ratio']:.2f} (target >= {RATIO_TARGET}: "
          f"{'met' if met else 'MISSED'}); socket errors: {health.socket_errors} / {pw.socket_errors}")
    print(f"\n(b) {ITEMS} pairwise analyses (6 x 8, Tukey), one server worker, median of {repeats}")
    print(f"    {'how':52s} {'total s':>8s} {'ms per item':>12s} {'vs batch':>9s}")
    rows = [(f"one POST /v1/batch, process pool ({os.cpu_count()} processes)", pooled["batch"]),
            ("one POST /v1/batch, inline (FAMILYWISE_BATCH_WORKERS=1)", inline["batch"]),
            (f"{ITEMS} single calls, sequential, one keep-alive connection", pooled["sequential"]),
            (f"{ITEMS} single calls, {CONNECTIONS} concurrent connections", pooled["concurrent"])]
    for name, total in rows:
        print(f"    {name:52s} {total:8.3f} {1e3 * total / ITEMS:12.2f} {total / pooled['batch']:8.1f}x")
    return met
