"""POST /v1/followup/{pairwise, control, best, contrasts, equivalence}.

The five endpoints differ only in their request model, their computation and
their documentation, so they are declared from one table.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Annotated, Any

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

ENDPOINTS: list[dict[str, Any]] = [
    {
        "name": "pairwise", "model": PairwiseRequest, "run": operations.run_pairwise, "csv": True,
        "summary": "All pairwise comparisons, with the compact letter display",
        "description": "Every pair of groups, by the chosen method; `letters` gives the compact letter "
                       "display (groups sharing a letter are not significantly different).",
        "example": ("Tukey-Kramer on the buffer plate",
                    examples.with_fields(examples.BUFFER_PLATE, method="tukey_kramer")),
    },
    {
        "name": "control", "model": ControlRequest, "run": operations.run_control, "csv": True,
        "summary": "Each group against a control (Dunnett)",
        "description": "Each group against `control`: `first` is the treatment, `second` the control. Exact "
                       "for unequal group sizes; one-sided alternatives give one-sided intervals.",
        "example": ("Each buffer against the reference buffer", examples.with_fields(
            examples.UNBALANCED_PLATE, control="reference buffer", method="dunnett")),
    },
    {
        "name": "best", "model": BestRequest, "run": operations.run_best, "csv": True,
        "summary": "Each group against the best of the others (Hsu's MCB)",
        "description": "Constrained simultaneous intervals for each mean minus the best of the others, "
                       "`may_be_best` per group and `best_set`, exact for unequal group sizes.",
        "example": ("Which buffer may give the highest activity",
                    examples.with_fields(examples.UNBALANCED_PLATE, best="highest")),
    },
    {
        "name": "contrasts", "model": ContrastsRequest, "run": operations.run_contrasts, "csv": False,
        "summary": "Planned or post-hoc contrasts",
        "description": "Estimate, SE, t, p, interval, sum of squares and F of each contrast (coefficients "
                       "keyed by group label, summing to zero), with the chosen adjustment.",
        "example": ("Reference against the rest, and HEPES against phosphate", examples.with_fields(
            examples.BUFFER_PLATE, adjustment="multivariate_t", contrasts=examples.PLANNED_CONTRASTS)),
    },
    {
        "name": "equivalence", "model": EquivalenceRequest, "run": operations.run_equivalence, "csv": True,
        "summary": "Each candidate against a reference within a margin (equivalence, non-inferiority)",
        "description": "Two one-sided tests per candidate against `reference` within `margin` (absolute, or "
                       "relative to the reference mean); `equivalent`, `non_inferior` or `non_superior` per "
                       "candidate, both one-sided p-values, and the interval at the level the method implies.",
        "example": ("Are the new buffers within 2 U/mg of the reference?", examples.with_fields(
            examples.BUFFER_PLATE, reference="reference buffer", margin=2.0, kind="equivalence",
            method="dunnett_tost")),
    },
]


def _endpoint(model: type, run: Callable[[Any], dict[str, Any]], example: tuple[str, dict]) -> Callable:
    async def endpoint(request) -> Response:
        return json_response(operations.with_provenance(run(request), request))

    summary, value = example
    endpoint.__annotations__ = {
        "request": Annotated[model, Body(openapi_examples={"plate": {"summary": summary, "value": value}})],
        "return": Response,
    }
    return endpoint


for spec in ENDPOINTS:
    router.add_api_route(
        f"/v1/followup/{spec['name']}",
        _endpoint(spec["model"], spec["run"], spec["example"]),
        methods=["POST"],
        name=f"{spec['name']}_endpoint",
        response_model=FamilyResponse,
        summary=spec["summary"],
        description=spec["description"],
        responses=STANDARD_REFUSALS,
        openapi_extra=ACCEPTS_CSV if spec["csv"] else None,
    )
