"""POST /v1/followup/{pairwise, control, best, contrasts}."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Body, Response

from familywise.api import examples, operations
from familywise.api.routing import ACCEPTS_CSV, FamilywiseRoute, json_response
from familywise.api.schemas.families import (
    BestRequest,
    ContrastsRequest,
    ControlRequest,
    EquivalenceRequest,
    FamilyResponse,
    PairwiseRequest,
)
from familywise.api.schemas.problem import STANDARD_REFUSALS

router = APIRouter(route_class=FamilywiseRoute, tags=["follow-up families"])


def _example(summary: str, value: dict) -> dict:
    return {"plate": {"summary": summary, "value": value}}


def _respond(run, request) -> Response:
    return json_response(operations.with_provenance(run(request), request))


@router.post(
    "/v1/followup/pairwise",
    response_model=FamilyResponse,
    summary="All pairwise comparisons, with the compact letter display",
    responses=STANDARD_REFUSALS,
    openapi_extra=ACCEPTS_CSV,
)
async def pairwise_endpoint(
    request: Annotated[PairwiseRequest, Body(openapi_examples=_example(
        "Tukey-Kramer on the buffer plate", examples.with_fields(examples.BUFFER_PLATE,
                                                                 method="tukey_kramer")))],
) -> Response:
    """Every pair of groups, by the chosen method; `letters` gives the compact letter
    display (groups sharing a letter are not significantly different)."""
    return _respond(operations.run_pairwise, request)


@router.post(
    "/v1/followup/control",
    response_model=FamilyResponse,
    summary="Each group against a control (Dunnett)",
    responses=STANDARD_REFUSALS,
    openapi_extra=ACCEPTS_CSV,
)
async def control_endpoint(
    request: Annotated[ControlRequest, Body(openapi_examples=_example(
        "Each buffer against the reference buffer", examples.with_fields(
            examples.UNBALANCED_PLATE, control="reference buffer", method="dunnett")))],
) -> Response:
    """Each group against `control`: `first` is the treatment, `second` the control.
    Exact for unequal group sizes; one-sided alternatives give one-sided intervals."""
    return _respond(operations.run_control, request)


@router.post(
    "/v1/followup/best",
    response_model=FamilyResponse,
    summary="Each group against the best of the others (Hsu's MCB)",
    responses=STANDARD_REFUSALS,
    openapi_extra=ACCEPTS_CSV,
)
async def best_endpoint(
    request: Annotated[BestRequest, Body(openapi_examples=_example(
        "Which buffer may give the highest activity", examples.with_fields(
            examples.UNBALANCED_PLATE, best="highest")))],
) -> Response:
    """Constrained simultaneous intervals for each mean minus the best of the others,
    `may_be_best` per group and `best_set`, exact for unequal group sizes."""
    return _respond(operations.run_best, request)


@router.post(
    "/v1/followup/contrasts",
    response_model=FamilyResponse,
    summary="Planned or post-hoc contrasts",
    responses=STANDARD_REFUSALS,
)
async def contrasts_endpoint(
    request: Annotated[ContrastsRequest, Body(openapi_examples=_example(
        "Reference against the rest, and HEPES against phosphate", examples.with_fields(
            examples.BUFFER_PLATE, adjustment="multivariate_t", contrasts=examples.PLANNED_CONTRASTS)))],
) -> Response:
    """Estimate, SE, t, p, interval, sum of squares and F of each contrast
    (coefficients keyed by group label, summing to zero), with the chosen adjustment."""
    return _respond(operations.run_contrasts, request)


@router.post(
    "/v1/followup/equivalence",
    response_model=FamilyResponse,
    summary="Each candidate against a reference within a margin (equivalence, non-inferiority)",
    responses=STANDARD_REFUSALS,
    openapi_extra=ACCEPTS_CSV,
)
async def equivalence_endpoint(
    request: Annotated[EquivalenceRequest, Body(openapi_examples=_example(
        "Are the new buffers within 2 U/mg of the reference?", examples.with_fields(
            examples.BUFFER_PLATE, reference="reference buffer", margin=2.0, kind="equivalence",
            method="dunnett_tost")))],
) -> Response:
    """Two one-sided tests per candidate against `reference` within `margin`
    (absolute, or relative to the reference mean); `equivalent`, `non_inferior` or
    `non_superior` per candidate, both one-sided p-values, and the interval at the
    level the method implies."""
    return _respond(operations.run_equivalence, request)
