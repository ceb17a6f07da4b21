"""POST /v1/recommendation, /v1/analysis and /v1/plan."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Body, Response

from familywise.api import examples, operations
from familywise.api.routing import ACCEPTS_CSV, FamilywiseRoute, OffloadedRoute, json_response
from familywise.api.schemas.guidance import (
    AnalysisRequest,
    AnalysisResponse,
    PlanRequest,
    PlanResponse,
    RecommendationRequest,
    RecommendationResponse,
)
from familywise.api.schemas.problem import STANDARD_REFUSALS

router = APIRouter(route_class=FamilywiseRoute, tags=["guidance"])
#: Planning a family may simulate (Hsu's MCB): off the event loop, under the time limit.
planning_router = APIRouter(route_class=OffloadedRoute, tags=["guidance"])


@router.post(
    "/v1/recommendation",
    response_model=RecommendationResponse,
    summary="Which follow-up family and method fit the question (and the data)",
    responses=STANDARD_REFUSALS,
)
async def recommendation_endpoint(
    request: Annotated[RecommendationRequest, Body(openapi_examples={
        "control": {"summary": "Each buffer against the reference buffer, with intervals",
                    "value": {**examples.UNBALANCED_PLATE, "question": {
                        "planned": True, "reference": "control", "control": "reference buffer",
                        "error_rate": "familywise", "intervals_needed": True}}},
        "contrasts": {"summary": "Two planned contrasts, design only (sizes)",
                      "value": {"sizes": {g["label"]: len(g["values"])
                                          for g in examples.UNBALANCED_PLATE["groups"]},
                                "question": {"planned": True, "contrasts": examples.PLANNED_CONTRASTS}}},
    })],
) -> Response:
    """The family (pairwise, control, best, contrasts, equivalence), its method and
    options, the reasons, the cautions, and ranked alternatives. With data, the
    diagnostics (unequal variances, non-normality with small groups, imbalance, a
    non-significant omnibus F) shape the choice. Contradictory answers are refused."""
    return json_response(operations.with_provenance(operations.run_recommendation(request), request))


@router.post(
    "/v1/analysis",
    response_model=AnalysisResponse,
    summary="The whole job in one call: omnibus, recommendation, follow-up, report",
    responses=STANDARD_REFUSALS,
    openapi_extra=ACCEPTS_CSV,
)
async def analysis_endpoint(
    request: Annotated[AnalysisRequest, Body(openapi_examples={
        "plate": {"summary": "Buffer plate, each buffer against the reference",
                  "value": {**examples.BUFFER_PLATE, "question": {
                      "reference": "control", "control": "reference buffer"}}}})],
) -> Response:
    """Omnibus analysis and diagnostics, the recommended follow-up family computed
    (or the one given in `followup`), letters where pairwise, and a short report.
    Each part equals what its own endpoint returns for the same data."""
    return json_response(operations.with_provenance(operations.run_analysis(request), request))


@planning_router.post(
    "/v1/plan",
    response_model=PlanResponse,
    summary="Sample size and power for the next experiment",
    responses=STANDARD_REFUSALS,
)
async def plan_endpoint(
    request: Annotated[PlanRequest, Body(openapi_examples={
        "omnibus": {"summary": "Omnibus F, Cohen's f = 0.4, four buffers",
                    "value": {"k": 4, "alpha": 0.05, "power": 0.8, "effect": {"cohens_f": 0.4}}},
        "dunnett": {"summary": "Dunnett, detect 2 U/mg with SD 1.5, five buffers",
                    "value": {"k": 5, "alpha": 0.05, "power": 0.8, "family": "control",
                              "difference": 2.0, "effect": {"sd": 1.5}}}})],
) -> Response:
    """Replicates per group for a target power: for the omnibus F test (noncentral F;
    effect as Cohen's f or as means plus SD), or for a follow-up family (Tukey-Kramer,
    Dunnett, Hsu's MCB) and a given difference. States the rounding to whole groups
    and the power achieved after it."""
    return json_response(operations.with_provenance(operations.run_plan(request), request))
