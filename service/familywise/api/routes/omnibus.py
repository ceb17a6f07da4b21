"""POST /v1/omnibus."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Body, Response

from familywise.api import examples, operations
from familywise.api.routing import ACCEPTS_CSV, FamilywiseRoute, json_response
from familywise.api.schemas.omnibus import OmnibusRequest, OmnibusResponse
from familywise.api.schemas.problem import STANDARD_REFUSALS

router = APIRouter(route_class=FamilywiseRoute, tags=["omnibus"])


@router.post(
    "/v1/omnibus",
    response_model=OmnibusResponse,
    summary="Group summaries, ANOVA, robust tests of means, diagnostics, effect sizes",
    responses=STANDARD_REFUSALS,
    openapi_extra=ACCEPTS_CSV,
)
async def omnibus_endpoint(
    request: Annotated[
        OmnibusRequest,
        Body(openapi_examples={"buffer plate": {
            "summary": "Specific activity (U/mg) in five buffer formulations, six wells each",
            "value": examples.BUFFER_PLATE}}),
    ],
) -> Response:
    """The omnibus analysis of a one-way experiment: per-group n, mean, SD, SE and
    interval; the ANOVA table; Welch's and Brown-Forsythe's tests of equal means;
    Kruskal-Wallis; Levene (median) and Shapiro-Wilk diagnostics with plain-language
    notes on what they mean for the follow-up; eta², omega², Cohen's f."""
    return json_response(operations.with_provenance(operations.run_omnibus(request), request))
