"""Prometheus metrics: requests and latencies per endpoint and status, and the
computation time of each operation.

With several worker processes (``familywise serve --workers N``) each process
writes its samples to ``PROMETHEUS_MULTIPROC_DIR`` (set by the serve command
to a fresh temporary directory when it is not set), and ``GET /metrics``
aggregates them, as prometheus-client's multiprocess mode prescribes.
"""

from __future__ import annotations

import os

from prometheus_client import CONTENT_TYPE_LATEST, CollectorRegistry, Counter, Histogram, generate_latest, multiprocess

LATENCY_BUCKETS = (0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0, 30.0)

REQUESTS = Counter("familywise_requests_total", "HTTP requests answered", ["endpoint", "method", "status"])
LATENCY = Histogram("familywise_request_duration_seconds", "Time from request to response",
                    ["endpoint", "method"], buckets=LATENCY_BUCKETS)
COMPUTATION = Histogram("familywise_computation_seconds", "Time spent computing an operation",
                        ["operation"], buckets=LATENCY_BUCKETS)


def render() -> tuple[bytes, str]:
    """The exposition text of every metric (aggregated over workers in multiprocess mode)."""
    if os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        registry = CollectorRegistry()
        multiprocess.MultiProcessCollector(registry)
        return generate_latest(registry), CONTENT_TYPE_LATEST
    return generate_latest(), CONTENT_TYPE_LATEST
