"""Bounded load test: ``python -m tests.load`` (``make load``).

Starts its own multi-worker server on a free loopback port (it never targets
any other host), warms it up, then drives a mixed workload (the omnibus
analysis, every follow-up family, small and large batches, the one-call
analysis) from a fixed number of concurrent keep-alive connections for a
fixed time, stopping by itself at the time limit or the request cap,
whichever comes first. It reports requests per second, latency percentiles,
errors, 5xx answers and the resident memory of all the server's processes
(uvicorn supervisor, workers, batch pool processes) after warm-up and at
the end, and exits non-zero when a target fails:

* zero errors (any exception or any status other than 200),
* zero 5xx,
* resident memory growth after warm-up below 10 %.

Settings (environment): FAMILYWISE_LOAD_CONCURRENCY (64), FAMILYWISE_LOAD_SECONDS (30),
FAMILYWISE_LOAD_MAX_REQUESTS (2,000,000), FAMILYWISE_LOAD_WARMUP_SECONDS (8), FAMILYWISE_LOAD_WORKERS (2),
FAMILYWISE_LOAD_MAX_RSS_GROWTH (0.10), FAMILYWISE_LOAD_REPORT (a path: also write the figures as JSON).

The data are invented plate assays, drawn once from a fixed seed.
"""

from __future__ import annotations

import asyncio
import itertools
import json
import os
import random
import sys
import time
from collections import Counter, defaultdict
from dataclasses import asdict, dataclass, field

import httpx

from tests.load import LOOPBACK, LiveServer, pss_kib, rss_kib


def _env_int(name: str, default: int) -> int:
    return int(os.environ.get(name) or default)


def _env_float(name: str, default: float) -> float:
    return float(os.environ.get(name) or default)


@dataclass(frozen=True)
class LoadConfig:
    concurrency: int = 64
    seconds: float = 30.0
    max_requests: int = 2_000_000
    warmup_seconds: float = 8.0
    workers: int = 2
    max_rss_growth: float = 0.10

    @classmethod
    def from_env(cls) -> LoadConfig:
        return cls(
            concurrency=_env_int("FAMILYWISE_LOAD_CONCURRENCY", cls.concurrency),
            seconds=_env_float("FAMILYWISE_LOAD_SECONDS", cls.seconds),
            max_requests=_env_int("FAMILYWISE_LOAD_MAX_REQUESTS", cls.max_requests),
            warmup_seconds=_env_float("FAMILYWISE_LOAD_WARMUP_SECONDS", cls.warmup_seconds),
            workers=_env_int("FAMILYWISE_LOAD_WORKERS", cls.workers),
            max_rss_growth=_env_float("FAMILYWISE_LOAD_MAX_RSS_GROWTH", cls.max_rss_growth),
        )


# --------------------------------------------------------------------------
# the workload
# --------------------------------------------------------------------------

def _plate(rng: random.Random, k: int, n: int) -> list[dict]:
    """k invented wells of n replicate readings (three decimals), with a little spread between wells."""
    return [{"label": f"well {chr(65 + i)}", "values": [round(rng.gauss(50.0 + 1.5 * i * rng.random(), 2.0), 3)
                                                       for _ in range(n)]}
            for i in range(k)]


@dataclass(frozen=True)
class Kind:
    name: str
    path: str
    weight: int
    make: object  # (rng) -> request body


def _helmert(labels: list[str]) -> list[dict]:
    return [{"name": f"{labels[j]} vs earlier", "coefficients": {**{labels[i]: -1 for i in range(j)}, labels[j]: j}}
            for j in range(1, len(labels))]


def _item(rng: random.Random, i: int) -> dict:
    operation = ("pairwise", "omnibus", "control", "best")[i % 4]
    request: dict = {"groups": _plate(rng, 5, 6)}
    if operation == "control":
        request["control"] = "well A"
    return {"id": f"analyte {i + 1}", "operation": operation, "request": request}


KINDS = [
    Kind("omnibus", "/v1/omnibus", 14, lambda rng: {"groups": _plate(rng, 5, 8)}),
    Kind("pairwise tukey_kramer", "/v1/followup/pairwise", 14,
         lambda rng: {"groups": _plate(rng, 6, 8), "method": "tukey_kramer"}),
    Kind("pairwise games_howell", "/v1/followup/pairwise", 6,
         lambda rng: {"groups": _plate(rng, 6, 8), "method": "games_howell"}),
    Kind("pairwise holm", "/v1/followup/pairwise", 4, lambda rng: {"groups": _plate(rng, 6, 8), "method": "holm"}),
    Kind("pairwise dunn", "/v1/followup/pairwise", 4, lambda rng: {"groups": _plate(rng, 6, 8), "method": "dunn"}),
    Kind("control dunnett", "/v1/followup/control", 10,
         lambda rng: {"groups": _plate(rng, 5, 8), "control": "well A"}),
    Kind("control step-down, one-sided", "/v1/followup/control", 4,
         lambda rng: {"groups": _plate(rng, 5, 8), "control": "well A", "method": "dunnett_stepdown",
                      "alternative": "greater"}),
    Kind("best (Hsu MCB)", "/v1/followup/best", 8, lambda rng: {"groups": _plate(rng, 5, 8)}),
    Kind("contrasts scheffe", "/v1/followup/contrasts", 4,
         lambda rng: {"groups": (g := _plate(rng, 4, 8)), "adjustment": "scheffe",
                      "contrasts": _helmert([x["label"] for x in g])}),
    Kind("contrasts multivariate_t", "/v1/followup/contrasts", 4,
         lambda rng: {"groups": (g := _plate(rng, 4, 8)), "adjustment": "multivariate_t",
                      "contrasts": _helmert([x["label"] for x in g])}),
    Kind("equivalence", "/v1/followup/equivalence", 6,
         lambda rng: {"groups": _plate(rng, 4, 8), "reference": "well A", "margin": {"relative": 0.1}}),
    Kind("analysis", "/v1/analysis", 6, lambda rng: {"groups": _plate(rng, 5, 8)}),
    Kind("batch of 8", "/v1/batch", 5, lambda rng: {"items": [_item(rng, i) for i in range(8)]}),
    Kind("batch of 64 (process pool)", "/v1/batch", 1, lambda rng: {"items": [_item(rng, i) for i in range(64)]}),
]


def build_workload(seed: int = 8, variants: int = 12) -> list[tuple[str, str, bytes]]:
    """A fixed shuffled sequence of (kind, path, body): each kind ``weight`` times per round, with
    ``variants`` different invented data sets per kind."""
    rng = random.Random(seed)
    bodies = {kind.name: [json.dumps(kind.make(rng)).encode() for _ in range(variants)] for kind in KINDS}
    sequence = []
    for round_ in range(variants):
        for kind in KINDS:
            for _ in range(kind.weight):
                sequence.append((kind.name, kind.path, bodies[kind.name][round_]))
    rng.shuffle(sequence)
    return sequence


# --------------------------------------------------------------------------
# the driver
# --------------------------------------------------------------------------

@dataclass
class Results:
    latencies: dict[str, list[float]] = field(default_factory=lambda: defaultdict(list))
    statuses: Counter = field(default_factory=Counter)
    exceptions: Counter = field(default_factory=Counter)
    elapsed: float = 0.0

    @property
    def count(self) -> int:
        return sum(len(v) for v in self.latencies.values())


async def drive(url: str, workload: list[tuple[str, str, bytes]], concurrency: int, seconds: float,
                max_requests: int) -> Results:
    """``concurrency`` connections, each sending the next request of the workload as soon as its last
    answer is in, until ``seconds`` have passed or ``max_requests`` have been sent."""
    results = Results()
    sequence = itertools.cycle(workload)
    sent = 0
    started = time.perf_counter()
    deadline = started + seconds
    limits = httpx.Limits(max_connections=concurrency, max_keepalive_connections=concurrency)
    headers = {"content-type": "application/json"}
    async with httpx.AsyncClient(base_url=url, limits=limits, timeout=httpx.Timeout(60.0)) as client:

        async def connection() -> None:
            nonlocal sent
            while time.perf_counter() < deadline and sent < max_requests:
                sent += 1
                kind, path, body = next(sequence)
                t0 = time.perf_counter()
                try:
                    response = await client.post(path, content=body, headers=headers)
                    await response.aread()
                    results.statuses[response.status_code] += 1
                    if response.status_code != 200:
                        results.exceptions[f"HTTP {response.status_code} on {kind}"] += 1
                except httpx.HTTPError as exc:
                    results.exceptions[f"{type(exc).__name__} on {kind}"] += 1
                results.latencies[kind].append(time.perf_counter() - t0)

        await asyncio.gather(*(connection() for _ in range(concurrency)))
    results.elapsed = time.perf_counter() - started
    return results


def percentile(values: list[float], q: float) -> float:
    """The q-quantile (0..1) by the nearest-rank rule."""
    if not values:
        return float("nan")
    ordered = sorted(values)
    rank = max(1, min(len(ordered), round(q * len(ordered) + 0.5)))
    return ordered[rank - 1]


@dataclass(frozen=True)
class Report:
    workers: int
    concurrency: int
    seconds: float
    requests: int
    requests_per_second: float
    p50_ms: float
    p95_ms: float
    p99_ms: float
    max_ms: float
    errors: int
    server_errors: int
    statuses: dict[str, int]
    error_kinds: dict[str, int]
    rss_start_mib: float
    rss_end_mib: float
    rss_growth: float
    pss_start_mib: float
    pss_end_mib: float
    processes: int
    per_kind: dict[str, dict[str, float]]
    cpu_count: int


def summarise(config: LoadConfig, results: Results, rss: tuple[int, int], pss: tuple[int, int],
              processes: int) -> Report:
    rss_start, rss_end = rss
    everything = [x for v in results.latencies.values() for x in v]
    per_kind = {kind: {"requests": len(v), "p50_ms": 1e3 * percentile(v, 0.5), "p99_ms": 1e3 * percentile(v, 0.99)}
                for kind, v in sorted(results.latencies.items())}
    return Report(
        workers=config.workers, concurrency=config.concurrency, seconds=round(results.elapsed, 2),
        requests=results.count, requests_per_second=results.count / results.elapsed,
        p50_ms=1e3 * percentile(everything, 0.50), p95_ms=1e3 * percentile(everything, 0.95),
        p99_ms=1e3 * percentile(everything, 0.99), max_ms=1e3 * max(everything, default=float("nan")),
        errors=sum(results.exceptions.values()),
        server_errors=sum(n for status, n in results.statuses.items() if status >= 500),
        statuses={str(k): v for k, v in sorted(results.statuses.items())}, error_kinds=dict(results.exceptions),
        rss_start_mib=rss_start / 1024, rss_end_mib=rss_end / 1024,
        rss_growth=(rss_end - rss_start) / rss_start if rss_start else float("nan"),
        pss_start_mib=pss[0] / 1024, pss_end_mib=pss[1] / 1024, processes=processes,
        per_kind=per_kind, cpu_count=os.cpu_count() or 0,
    )


def failures(report: Report, config: LoadConfig) -> list[str]:
    out = []
    if report.errors:
        out.append(f"{report.errors} errors: {report.error_kinds}")
    if report.server_errors:
        out.append(f"{report.server_errors} answers with 5xx")
    if not report.rss_growth < config.max_rss_growth:
        out.append(f"resident memory grew by {100 * report.rss_growth:.1f} % (limit {100 * config.max_rss_growth:g} %)")
    return out


def print_report(report: Report, config: LoadConfig) -> None:
    print(f"familywise load test: {report.workers} workers, {report.concurrency} connections, "
          f"{report.seconds:g} s, {report.cpu_count} CPUs (client and server share them), loopback")
    print(f"  requests            {report.requests}")
    print(f"  requests per second {report.requests_per_second:.0f}")
    print(f"  latency p50 / p95 / p99 / max  {report.p50_ms:.1f} / {report.p95_ms:.1f} / {report.p99_ms:.1f} / "
          f"{report.max_ms:.1f} ms")
    print(f"  errors              {report.errors}")
    print(f"  5xx                 {report.server_errors}")
    print(f"  statuses            {report.statuses}")
    print(f"  resident memory     {report.rss_start_mib:.1f} MiB after warm-up, {report.rss_end_mib:.1f} MiB at the "
          f"end ({100 * report.rss_growth:+.1f} %, sum of VmRSS over {report.processes} processes)")
    print(f"  proportional memory {report.pss_start_mib:.1f} MiB after warm-up, {report.pss_end_mib:.1f} MiB at the "
          "end (sum of Pss: pages shared by forked processes counted once)")
    print("  per kind (requests, p50 ms, p99 ms):")
    for kind, figures in report.per_kind.items():
        print(f"    {kind:32s} {figures['requests']:7.0f} {figures['p50_ms']:8.1f} {figures['p99_ms']:8.1f}")
    problems = failures(report, config)
    print("  targets: " + ("met" if not problems else "FAILED: " + "; ".join(problems)))


def main() -> int:
    config = LoadConfig.from_env()
    if config.concurrency < 1 or config.seconds <= 0 or config.max_requests < 1:
        print("familywise load: concurrency, seconds and max requests must be positive", file=sys.stderr)
        return 2
    workload = build_workload()
    with LiveServer(workers=config.workers, log_level="warning") as server:
        assert server.host == LOOPBACK  # this tool only ever loads a server it started itself
        asyncio.run(drive(server.url, workload, config.concurrency, config.warmup_seconds, config.max_requests))
        time.sleep(1.0)  # let the warm-up's last allocations settle
        processes = server.processes()
        rss_start, pss_start = sum(rss_kib(p) for p in processes), sum(pss_kib(p) for p in processes)
        results = asyncio.run(drive(server.url, workload, config.concurrency, config.seconds, config.max_requests))
        processes = server.processes()
        rss_end, pss_end = sum(rss_kib(p) for p in processes), sum(pss_kib(p) for p in processes)
        report = summarise(config, results, (rss_start, rss_end), (pss_start, pss_end), len(processes))
    print_report(report, config)
    if os.environ.get("FAMILYWISE_LOAD_REPORT"):
        with open(os.environ["FAMILYWISE_LOAD_REPORT"], "w", encoding="utf-8") as handle:
            json.dump(asdict(report), handle, indent=2)
    return 1 if failures(report, config) else 0


if __name__ == "__main__":
    sys.exit(main())
