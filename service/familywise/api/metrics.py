"""Prometheus metrics: request counts and latencies per endpoint, method and
status; computation time per endpoint; and computation time per follow-up
family and method, wherever the family was computed.

* ``familywise_requests_total{endpoint, method, status}`` and
  ``familywise_request_duration_seconds{endpoint, method, status}``: every
  request, timed from its arrival to the end of its answer (refusals
  included). ``endpoint`` is the route's path, or ``other`` for paths the
  service does not have (so that probing cannot add label values).
* ``familywise_computation_seconds{operation}``: the computation of an
  accepted request, from the validated model to the response, by endpoint
  path (``/v1/analysis`` and ``/v1/batch`` as a whole).
* ``familywise_family_computation_seconds{family, method}``: one follow-up
  family computed (pairwise / tukey_kramer, control / dunnett, ...), whether
  its own endpoint, ``/v1/analysis``, a ``/v1/batch`` item or a figure asked
  for it: the breakdown the per-endpoint histogram cannot give. The
  operations that compute a family are wrapped with :func:`timed_family`.

With several worker processes (``familywise serve --workers N``) each process
writes its samples to ``PROMETHEUS_MULTIPROC_DIR`` (set by the serve command
to a fresh temporary directory when it is not set), and ``GET /metrics``
aggregates them, as prometheus-client's multiprocess mode prescribes; the
batch pool's processes, forked from a worker, write their own files there
too. With a single worker, the samples of batch items computed in the pool's
processes stay in those processes and are not shown.

No label ever carries a request's data: labels are paths, methods, statuses
and the names of families and methods, all from fixed sets.
"""

from __future__ import annotations

import functools
import os
import time
from collections.abc import Callable
from typing import Any, TypeVar

from prometheus_client import CONTENT_TYPE_LATEST, CollectorRegistry, Counter, Histogram, generate_latest, multiprocess

LATENCY_BUCKETS = (0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0, 30.0)

REQUESTS = Counter("familywise_requests_total", "HTTP requests answered", ["endpoint", "method", "status"])
LATENCY = Histogram("familywise_request_duration_seconds", "Time from request to response",
                    ["endpoint", "method", "status"], buckets=LATENCY_BUCKETS)
COMPUTATION = Histogram("familywise_computation_seconds", "Time spent computing an accepted request, by endpoint",
                        ["operation"], buckets=LATENCY_BUCKETS)
FAMILY_COMPUTATION = Histogram(
    "familywise_family_computation_seconds",
    "Time spent computing one follow-up family (at its endpoint, in /v1/analysis, in a /v1/batch item or a figure)",
    ["family", "method"], buckets=LATENCY_BUCKETS)

Compute = TypeVar("Compute", bound=Callable[..., Any])


def timed_family(compute: Compute) -> Compute:
    """Wrap a function that computes a follow-up family (a request model in, a
    ``FamilyResult`` out) so that each call is observed in
    ``familywise_family_computation_seconds``, labelled by the result's
    ``family`` and ``method``. A call that raises (bad data) is not observed:
    it computed no family."""

    @functools.wraps(compute)
    def timed(*args: Any, **kwargs: Any) -> Any:
        started = time.perf_counter()
        result = compute(*args, **kwargs)
        FAMILY_COMPUTATION.labels(result.family, result.method).observe(time.perf_counter() - started)
        return result

    return timed  # type: ignore[return-value]


def render() -> tuple[bytes, str]:
    """The exposition text of every metric (aggregated over workers in multiprocess mode)."""
    if os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        registry = CollectorRegistry()
        multiprocess.MultiProcessCollector(registry)
        return generate_latest(registry), CONTENT_TYPE_LATEST
    return generate_latest(), CONTENT_TYPE_LATEST
