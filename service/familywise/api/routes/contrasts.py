"""POST /v1/contrasts/validate."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Body, Response

from familywise.api import examples
from familywise.api.problems import ProblemError
from familywise.api.routing import FamilywiseRoute, json_response, one_way_data
from familywise.api.schemas.contrasts import ContrastValidationRequest, ContrastValidationResponse
from familywise.api.schemas.problem import STANDARD_REFUSALS
from familywise.api.serialize import plain, provenance
from familywise.api.settings import Settings
from familywise.stats.contrasts import StandardSpec, check_planned_set, standard_set_size

router = APIRouter(route_class=FamilywiseRoute, tags=["contrasts"])

#: Limits for what the generic body check (routing.check_limits) cannot see: a
#: design given as ``sizes`` and the contrasts a standard set generates. The
#: endpoint receives only the validated request, so these are the defaults of
#: the corresponding settings, not their configured values.
MAX_GROUPS = Settings.max_groups
MAX_CONTRASTS = Settings.max_contrasts

EXAMPLES = {
    "balanced plate": {
        "summary": "Four planned contrasts on the buffer plate, six wells per buffer",
        "value": examples.CONTRASTS_BALANCED,
    },
    "unbalanced plate": {
        "summary": "The same contrasts after some wells were lost: no longer orthogonal",
        "value": examples.CONTRASTS_UNBALANCED,
    },
    "weighted Helmert set": {
        "summary": "A Helmert set for the unbalanced plate's sizes, weighted so that it stays orthogonal",
        "value": examples.CONTRASTS_HELMERT_SIZES,
    },
}


def _check_size(request: ContrastValidationRequest) -> None:
    if request.sizes is not None and len(request.sizes) > MAX_GROUPS:
        raise ProblemError("limit-exceeded", f"{len(request.sizes)} groups exceed the limit of {MAX_GROUPS}",
                           pointer="/sizes", rule="max_groups")
    if request.standard is not None:
        k = len(request.groups) if request.groups is not None else len(request.sizes or ())
        total = len(request.contrasts) + standard_set_size(request.standard.kind, k, request.standard.degree)
        if total > MAX_CONTRASTS:
            raise ProblemError(
                "limit-exceeded",
                f"the {request.standard.kind} set for {k} groups brings the request to {total} contrasts, "
                f"above the limit of {MAX_CONTRASTS}", pointer="/standard", rule="max_contrasts")


@router.post(
    "/v1/contrasts/validate",
    response_model=ContrastValidationResponse,
    summary="Check planned contrasts for the actual group sizes; generate standard sets",
    responses=STANDARD_REFUSALS,
)
async def validate_contrasts_endpoint(
    request: Annotated[ContrastValidationRequest, Body(openapi_examples=EXAMPLES)],
) -> Response:
    """Before any test is run: does each contrast sum to zero, are the contrasts
    orthogonal under the actual group sizes (weighted products sum c_i d_i / n_i,
    and the correlations of the estimates), what is the rank of the set, is it
    complete (k - 1 mutually orthogonal contrasts); with data, each contrast's sum
    of squares and the check that a complete orthogonal set partitions the
    between-groups SS. `standard` generates Helmert, orthogonal polynomial,
    versus-reference or pairwise sets for these groups. The verdict and its
    plain-language consequences say whether each contrast may be tested at alpha
    or a multiplicity adjustment is needed."""
    return json_response({**run_contrast_validation(request), "provenance": provenance(request)})


def run_contrast_validation(request: ContrastValidationRequest) -> dict[str, Any]:
    """Validated request in, JSON-ready result out (limits, conversion, one stats call)."""
    _check_size(request)
    standard = None
    if request.standard is not None:
        s = request.standard
        standard = StandardSpec(kind=s.kind, levels=s.levels, reference=s.reference, degree=s.degree)
    data = one_way_data(request.groups) if request.groups is not None else None
    result = check_planned_set(
        [(c.name, c.coefficients) for c in request.contrasts],
        data=data, sizes=request.sizes, standard=standard, alpha=request.alpha,
    )
    return plain(result)
