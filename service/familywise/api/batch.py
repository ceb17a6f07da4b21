"""Many independent analyses in one request.

A plate reader measures dozens of analytes on one plate: each item of a
batch is an analysis of its own (id, operation, request), answered with its
own result or its own problem, in the order given; one bad item never fails
the others. Items run through the same operation functions as the single
endpoints, so an item's result is exactly what the endpoint returns (without
the provenance, which the batch carries once).

Large batches are spread over a pool of worker processes (each item
validated and computed there); small ones are computed inline, where a
process hop would cost more than it saves.
"""

from __future__ import annotations

import logging
import os
import signal
import threading
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from typing import Any

from pydantic import BaseModel, ValidationError

from familywise.api import operations
from familywise.api.problems import ProblemError, validation_problem
from familywise.api.schemas.contrasts import ContrastValidationRequest
from familywise.api.schemas.families import (
    BestRequest,
    ContrastsRequest,
    ControlRequest,
    EquivalenceRequest,
    PairwiseRequest,
)
from familywise.api.schemas.guidance import AnalysisRequest, PlanRequest, RecommendationRequest
from familywise.api.schemas.omnibus import OmnibusRequest
from familywise.stats.errors import DataError


def _validate_contrasts(request: ContrastValidationRequest) -> dict[str, Any]:
    from familywise.api.routes.contrasts import run_contrast_validation

    return run_contrast_validation(request)


OPERATIONS: dict[str, tuple[type[BaseModel], Callable[[Any], dict[str, Any]]]] = {
    "omnibus": (OmnibusRequest, operations.run_omnibus),
    "pairwise": (PairwiseRequest, operations.run_pairwise),
    "control": (ControlRequest, operations.run_control),
    "best": (BestRequest, operations.run_best),
    "contrasts": (ContrastsRequest, operations.run_contrasts),
    "equivalence": (EquivalenceRequest, operations.run_equivalence),
    "validate_contrasts": (ContrastValidationRequest, _validate_contrasts),
    "recommendation": (RecommendationRequest, operations.run_recommendation),
    "analysis": (AnalysisRequest, operations.run_analysis),
    "plan": (PlanRequest, operations.run_plan),
}

#: Below this many items, or this many values in all, the batch runs inline.
POOL_MIN_ITEMS = 64
POOL_MIN_VALUES = 20_000
_pool: ProcessPoolExecutor | None = None
_pool_size = 0
_pool_lock = threading.Lock()  # batches run in threads (under the time limit): one pool per process
log = logging.getLogger("familywise")


def run_item(index: int, item: dict[str, Any]) -> dict[str, Any]:
    """One item: its result with status 200, or its problem document."""
    operation = item["operation"]
    model, run = OPERATIONS[operation]
    prefix = f"/items/{index}/request"
    try:
        return {"id": item["id"], "status": 200, "result": run(model.model_validate(item["request"]))}
    except ValidationError as exc:
        problem = validation_problem(exc.errors(include_url=False), prefix, body=item["request"])
    except DataError as exc:
        problem = ProblemError("unanalysable-data", exc.message, pointer=prefix + exc.pointer, rule=exc.rule)
    except ProblemError as exc:  # raised inside the operation: pointers relative to the item's request
        problem = ProblemError(exc.slug, exc.detail, None if exc.pointer is None else prefix + exc.pointer,
                               exc.rule, [{**e, "pointer": prefix + e["pointer"]} for e in exc.errors],
                               dict(exc.headers), dict(exc.extra))
    except Exception:  # a bug: reported for this item only, never failing the batch
        log.exception("batch item %s (%s) failed", item.get("id"), operation)
        problem = ProblemError("internal-error", "this item failed inside the service (a bug)")
    return {"id": item["id"], "status": problem.status, "problem": problem.document()}


def _run_chunk(chunk: list[tuple[int, dict[str, Any]]]) -> list[dict[str, Any]]:
    return [run_item(index, item) for index, item in chunk]


def _workers(configured: int) -> int:
    """The pool's size: as configured, or the CPUs this process may use (its
    affinity, and a container's CPU quota where the cgroup sets one)."""
    if configured > 0:
        return configured
    try:
        usable = len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not Linux
        usable = os.cpu_count() or 1
    quota = cpu_quota()
    return max(1, min(usable, quota)) if quota is not None else usable


def cpu_quota(path: str = "/sys/fs/cgroup/cpu.max") -> int | None:
    """The CPUs a cgroup v2 quota allows ("max" or no file: None), rounded up."""
    try:
        with open(path, encoding="ascii") as handle:
            limit, period = handle.read().split()[:2]
    except (OSError, ValueError):
        return None
    if limit == "max":
        return None
    try:
        return max(1, -(-int(limit) // int(period)))
    except (ValueError, ZeroDivisionError):
        return None


def _executor(workers: int) -> ProcessPoolExecutor:
    global _pool, _pool_size
    with _pool_lock:
        if _pool is None or _pool_size != workers:
            if _pool is not None:
                _pool.shutdown(wait=False, cancel_futures=True)
            _pool = ProcessPoolExecutor(max_workers=workers, initializer=_start_worker)
            _pool_size = workers
        return _pool


def _discard_pool(broken: ProcessPoolExecutor) -> None:
    """Forget a pool whose process died (killed for memory, say), so that the
    next large batch starts a new one."""
    global _pool
    with _pool_lock:
        if _pool is broken:
            _pool = None
    broken.shutdown(wait=False, cancel_futures=True)


def shutdown_pool() -> None:
    """End the pool's processes (the service's shutdown calls this): they are
    not the server's to leave behind."""
    global _pool
    with _pool_lock:
        pool, _pool = _pool, None
    if pool is not None:
        pool.shutdown(wait=True, cancel_futures=True)


def _start_worker() -> None:
    # A pool process is forked from a server worker and inherits its signal
    # handlers, which only ask the server to stop: restore the defaults so
    # that SIGTERM ends it, and leave SIGINT (a Ctrl-C meant for the server)
    # to the server, which shuts the pool down.
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    from familywise.stats.distributions import warm_up

    warm_up(6)


def run_batch(items: list[dict[str, Any]], configured_workers: int = 0) -> list[dict[str, Any]]:
    """Results in the order of ``items`` (each a dict with id, operation, request)."""
    seen: dict[str, int] = {}
    for index, item in enumerate(items):
        if item["id"] in seen:
            raise ProblemError("invalid-input", f"item id {item['id']!r} is used by items {seen[item['id']]} "
                               f"and {index}", pointer=f"/items/{index}/id", rule="unique-id")
        seen[item["id"]] = index
    indexed = list(enumerate(items))
    workers = _workers(configured_workers)
    values = sum(len(g.get("values", ())) for _, it in indexed for g in (it["request"].get("groups") or ())
                 if isinstance(g, dict))
    if workers < 2 or (len(items) < POOL_MIN_ITEMS and values < POOL_MIN_VALUES):
        return _run_chunk(indexed)
    size = max(1, -(-len(indexed) // (4 * workers)))
    chunks = [indexed[i : i + size] for i in range(0, len(indexed), size)]
    pool = _executor(workers)
    try:
        return [row for part in pool.map(_run_chunk, chunks) for row in part]
    except BrokenProcessPool:
        log.error("a batch worker process died; this batch is computed in the server process")
        _discard_pool(pool)
        return _run_chunk(indexed)
