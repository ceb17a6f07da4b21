"""POST /v1/followup/{pairwise, control, best, contrasts}."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Body, Response

from familywise.api import examples
from familywise.api.routing import ACCEPTS_CSV, FamilywiseRoute, json_response, one_way_data
from familywise.api.schemas.families import (
    BestRequest,
    ContrastsRequest,
    ControlRequest,
    FamilyResponse,
    PairwiseRequest,
)
from familywise.api.schemas.problem import STANDARD_REFUSALS
from familywise.api.serialize import family_json, provenance
from familywise.stats import contrasts as contrast_rules
from familywise.stats.families import contrast_family, pairwise, versus_best, versus_control
from familywise.stats.omnibus import anova_table

router = APIRouter(route_class=FamilywiseRoute, tags=["follow-up families"])


def _example(summary: str, value: dict) -> dict:
    return {"plate": {"summary": summary, "value": value}}


def _respond(result, request) -> Response:
    return json_response({**family_json(result), "provenance": provenance(request)})


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
    data = one_way_data(request.groups)
    omnibus_p = anova_table(data).p_value if request.method == "lsd" and request.protected else None
    result = pairwise(data, request.method, request.alpha, protected=request.protected,
                      dunn_adjustment=request.dunn_adjustment, omnibus_p_value=omnibus_p)
    return _respond(result, request)


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
    result = versus_control(one_way_data(request.groups), request.control, request.method,
                            request.alternative, request.alpha)
    return _respond(result, request)


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
    result = versus_best(one_way_data(request.groups), request.best, request.alpha)
    return _respond(result, request)


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
    data = one_way_data(request.groups)
    names, matrix = contrast_rules.coefficient_matrix(
        data.labels, [(c.name, c.coefficients) for c in request.contrasts])
    contrast_rules.require_contrasts_sum_to_zero(names, matrix)
    result = contrast_family(data, names, matrix, request.adjustment, request.alpha)
    return _respond(result, request)
