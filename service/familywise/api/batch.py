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

import os
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor
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


def run_item(index: int, item: dict[str, Any]) -> dict[str, Any]:
    """One item: its result with status 200, or its problem document."""
    operation = item["operation"]
    model, run = OPERATIONS[operation]
    prefix = f"/items/{index}/request"
    try:
        return {"id": item["id"], "status": 200, "result": run(model.model_validate(item["request"]))}
    except ValidationError as exc:
        problem = validation_problem(exc.errors(include_url=False), prefix)
    except DataError as exc:
        problem = ProblemError("unanalysable-data", exc.message, pointer=prefix + exc.pointer, rule=exc.rule)
    except ProblemError as exc:
        problem = exc
        if exc.pointer is not None:
            problem.pointer = prefix + exc.pointer
    except Exception:  # a bug: reported for this item only, never failing the batch
        import logging

        logging.getLogger("familywise").exception("batch item %s (%s) failed", item.get("id"), operation)
        problem = ProblemError("internal-error", "this item failed inside the service (a bug)")
    return {"id": item["id"], "status": problem.status, "problem": problem.document()}


def _run_chunk(chunk: list[tuple[int, dict[str, Any]]]) -> list[dict[str, Any]]:
    return [run_item(index, item) for index, item in chunk]


def _workers(configured: int) -> int:
    if configured > 0:
        return configured
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not Linux
        return os.cpu_count() or 1


def _executor(workers: int) -> ProcessPoolExecutor:
    global _pool, _pool_size
    if _pool is None or _pool_size != workers:
        _pool = ProcessPoolExecutor(max_workers=workers, initializer=_warm_worker)
        _pool_size = workers
    return _pool


def _warm_worker() -> None:
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
    results: list[dict[str, Any]] = []
    for part in _executor(workers).map(_run_chunk, chunks):
        results.extend(part)
    return results
