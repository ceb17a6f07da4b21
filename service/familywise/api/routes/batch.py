"""POST /v1/batch."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Body, Depends, Response

from familywise.api import examples
from familywise.api.batch import run_batch
from familywise.api.routing import FamilywiseRoute, json_response
from familywise.api.schemas.batch import BatchRequest, BatchResponse
from familywise.api.schemas.problem import STANDARD_REFUSALS
from familywise.api.serialize import provenance
from familywise.api.settings import Settings

router = APIRouter(route_class=FamilywiseRoute, tags=["batch"])

_BATCH_EXAMPLE = {"items": [
    {"id": "plate 7 / lactate", "operation": "pairwise", "request": examples.BUFFER_PLATE},
    {"id": "plate 7 / glucose", "operation": "control",
     "request": {**examples.UNBALANCED_PLATE, "control": "reference buffer"}},
]}


@router.post(
    "/v1/batch",
    response_model=BatchResponse,
    summary="Many independent analyses in one call",
    responses=STANDARD_REFUSALS,
)
async def batch_endpoint(
    request: Annotated[BatchRequest, Body(openapi_examples={"plate": {
        "summary": "Two analytes of one plate", "value": _BATCH_EXAMPLE}})],
    settings: Annotated[Settings, Depends(lambda: None)] = None,
) -> Response:
    """Each item (`id`, `operation`, `request`) is answered by its own result or its own
    problem, in the order given; one bad item never fails the others. Large batches are
    computed in parallel over worker processes."""
    items = [item.model_dump() for item in request.items]
    results = run_batch(items, settings.batch_workers)
    return json_response({"results": results, "provenance": provenance(request)})
