"""One function per operation: validated request model in, JSON-ready result out.

The endpoints, the one-call analysis and the batch endpoint all go through
these functions, so that an analysis or a batch item gives exactly what the
single endpoint gives.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from pydantic import BaseModel, ValidationError

from familywise.api import metrics
from familywise.api.problems import ProblemError, validation_problem
from familywise.api.routing import one_way_data
from familywise.api.schemas.families import (
    BestRequest,
    ContrastsRequest,
    ControlRequest,
    EquivalenceRequest,
    PairwiseRequest,
)
from familywise.api.schemas.guidance import RecommendationRequest
from familywise.api.schemas.omnibus import OmnibusRequest
from familywise.api.serialize import family_json, plain, provenance
from familywise.stats import contrasts as contrast_rules
from familywise.stats.errors import DataError
from familywise.stats.families import FamilyResult, contrast_family, pairwise, versus_best, versus_control
from familywise.stats.families.equivalence import equivalence_family
from familywise.stats.omnibus import anova_table, omnibus
from familywise.stats.planning import cohens_f_from_means, plan_family, plan_omnibus
from familywise.stats.recommend import Question, recommend


def with_provenance(result: dict[str, Any], request: BaseModel) -> dict[str, Any]:
    return {**result, "provenance": provenance(request)}


def run_omnibus(request) -> dict[str, Any]:
    return plain(omnibus(one_way_data(request.groups), request.alpha))


@metrics.timed_family
def compute_pairwise(request) -> FamilyResult:
    data = one_way_data(request.groups)
    omnibus_p = anova_table(data).p_value if request.method == "lsd" and request.protected else None
    return pairwise(data, request.method, request.alpha, protected=request.protected,
                    dunn_adjustment=request.dunn_adjustment, omnibus_p_value=omnibus_p)


@metrics.timed_family
def compute_control(request) -> FamilyResult:
    return versus_control(one_way_data(request.groups), request.control, request.method, request.alternative,
                          request.alpha)


@metrics.timed_family
def compute_best(request) -> FamilyResult:
    return versus_best(one_way_data(request.groups), request.best, request.alpha)


@metrics.timed_family
def compute_contrasts(request) -> FamilyResult:
    data = one_way_data(request.groups)
    names, matrix = contrast_rules.coefficient_matrix(
        data.labels, [(c.name, c.coefficients) for c in request.contrasts])
    contrast_rules.require_contrasts_sum_to_zero(names, matrix)
    return contrast_family(data, names, matrix, request.adjustment, request.alpha)


@metrics.timed_family
def compute_equivalence(request) -> FamilyResult:
    margin = request.margin
    relative = not isinstance(margin, float)
    value = margin.relative if relative else margin
    return equivalence_family(one_way_data(request.groups), request.reference, value, relative, request.kind,
                              request.method, request.alpha)


def run_pairwise(request) -> dict[str, Any]:
    return family_json(compute_pairwise(request))


def run_control(request) -> dict[str, Any]:
    return family_json(compute_control(request))


def run_best(request) -> dict[str, Any]:
    return family_json(compute_best(request))


def run_contrasts(request) -> dict[str, Any]:
    return family_json(compute_contrasts(request))


def run_equivalence(request) -> dict[str, Any]:
    return family_json(compute_equivalence(request))


FAMILY_MODELS: dict[str, type[BaseModel]] = {
    "pairwise": PairwiseRequest,
    "control": ControlRequest,
    "best": BestRequest,
    "contrasts": ContrastsRequest,
    "equivalence": EquivalenceRequest,
}

FAMILY_COMPUTATIONS: dict[type[BaseModel], Callable[[Any], FamilyResult]] = {
    PairwiseRequest: compute_pairwise,
    ControlRequest: compute_control,
    BestRequest: compute_best,
    ContrastsRequest: compute_contrasts,
    EquivalenceRequest: compute_equivalence,
}


def compute_family(request: BaseModel) -> FamilyResult:
    """The FamilyResult of a family's own request model (figures draw it)."""
    return FAMILY_COMPUTATIONS[type(request)](request)


FAMILY_RUNNERS: dict[str, Callable[[Any], dict[str, Any]]] = {
    "pairwise": run_pairwise,
    "control": run_control,
    "best": run_best,
    "contrasts": run_contrasts,
    "equivalence": run_equivalence,
}


def run_recommendation(request) -> dict[str, Any]:
    data = one_way_data(request.groups) if request.groups is not None else None
    return plain(recommend(_question(request.question), data, request.sizes, request.alpha))


def _question(q) -> Question:
    """The statistics layer's question from the request's (margins as the equivalence family takes them)."""
    return Question(
        planned=q.planned, reference=q.reference, control=q.control, best=q.best, alternative=q.alternative,
        error_rate=q.error_rate, contrasts=tuple((c.name, c.coefficients) for c in q.contrasts),
        intervals_needed=q.intervals_needed, goal=q.goal,
        margin=None if q.margin is None else (q.margin if isinstance(q.margin, float)
                                              else {"relative": q.margin.relative}),
    )


#: Pointers of a family endpoint's request that name the analysis request's own top-level fields.
_SHARED_FIELDS = ("groups", "alpha")


def _requested_followup(followup) -> tuple[str, dict[str, Any], Callable[[str], str]]:
    """The family, the fields its endpoint takes, and where each field was written
    in the analysis request, from an explicit ``followup``. Contradictions and
    options that would be dropped are refused, naming the followup field."""
    fields = followup.model_dump(exclude_none=True)
    family, method = fields.pop("family"), fields.pop("method", None)
    renamed: dict[str, str] = {}
    if family == "best":
        if method not in (None, "hsu_mcb"):
            raise DataError("method", f"the best family has one method, hsu_mcb (Hsu's multiple comparisons "
                            f"with the best); {method!r} is not it", "/followup/method")
    elif family == "contrasts":
        if method is not None:
            adjustment = fields.get("adjustment")
            if adjustment is not None and adjustment != method:
                raise DataError("contradiction", f"method {method!r} and adjustment {adjustment!r} disagree: for "
                                "contrasts the method is the adjustment, so give one of them (or the same in "
                                "both)", "/followup/method")
            if adjustment is None:
                renamed["/adjustment"] = "/followup/method"
            fields["adjustment"] = method
    elif method is not None:
        fields["method"] = method
    # pairwise options of another method (protected, dunn_adjustment) are refused by PairwiseRequest itself

    def where(pointer: str) -> str:
        if not pointer or pointer.strip("/").split("/")[0] in _SHARED_FIELDS:
            return pointer
        for old, new in renamed.items():
            if pointer == old or pointer.startswith(old + "/"):
                return new + pointer[len(old):]
        return "/followup" + pointer

    return family, fields, where


def _recommended_followup(question) -> Callable[[str], str]:
    """Where the question holds each field the recommended family's endpoint takes:
    its control (also the equivalence reference, and the source of the
    comparisons-with-control contrasts), alternative, best, margin and contrasts.
    The method and adjustment are the recommendation's own: a refusal of them
    points at the question as a whole."""

    def where(pointer: str) -> str:
        head, _, rest = pointer.strip("/").partition("/")
        if not pointer or head in _SHARED_FIELDS:
            return pointer
        if head == "contrasts" and not question.contrasts:
            return "/question/control"
        if head == "reference":
            head = "control"
        if head in ("control", "alternative", "best", "margin", "contrasts"):
            return f"/question/{head}" + (f"/{rest}" if rest else "")
        return "/question"

    return where


def _moved(problem: ProblemError, where: Callable[[str], str], family: str) -> ProblemError:
    """A validation problem of a family endpoint's request, its pointers moved to the analysis request."""
    errors = [{**entry, "pointer": where(entry["pointer"])} for entry in problem.errors]
    first = errors[0] if errors else {"pointer": where(problem.pointer or ""), "rule": problem.rule,
                                      "detail": problem.detail}
    detail = f"the follow-up options are not valid for {family!r}: {first['pointer']}: {first['detail']}"
    if len(errors) > 1:
        detail += f" (and {len(errors) - 1} more)"
    return ProblemError(problem.slug, detail, pointer=first["pointer"], rule=first["rule"], errors=errors)


def run_analysis(request) -> dict[str, Any]:
    omnibus_result = run_omnibus(OmnibusRequest(groups=request.groups, alpha=request.alpha))
    recommendation = run_recommendation(
        RecommendationRequest(question=request.question, groups=request.groups, alpha=request.alpha))
    if request.followup is not None:
        family, fields, where = _requested_followup(request.followup)
        source = "requested"
    else:
        family, method = recommendation["family"], recommendation["method"]
        fields = {k: v for k, v in recommendation["options"].items() if v is not None}
        if family == "contrasts":
            fields["adjustment"] = method
        elif family != "best":
            fields["method"] = method
        where = _recommended_followup(request.question)
        source = "recommended"
    if family == "equivalence" and "margin" not in fields:
        raise DataError("margin", "equivalence needs a margin: give question.margin or followup.margin",
                        where("/margin"))
    try:
        family_request = FAMILY_MODELS[family].model_validate(
            {"groups": request.groups, "alpha": request.alpha, **fields})
    except ValidationError as exc:
        raise _moved(validation_problem(exc.errors(include_url=False), body=fields), where, family) from None
    try:
        followup = FAMILY_RUNNERS[family](family_request)
    except DataError as exc:
        raise DataError(exc.rule, exc.message, where(exc.pointer)) from None
    return {
        "omnibus": omnibus_result,
        "recommendation": recommendation,
        "followup": followup,
        "followup_source": source,
        "report": _report(omnibus_result, recommendation, followup, source),
    }


def _report(omnibus_result: dict, recommendation: dict, followup: dict, source: str) -> list[str]:
    anova = omnibus_result["anova"]
    k = len(omnibus_result["groups"])
    lines = [
        f"{k} groups, {sum(g['n'] for g in omnibus_result['groups'])} values. One-way ANOVA: "
        f"F({anova['between']['df']}, {anova['within']['df']}) = {anova['f']:.4g}, p = {anova['p_value']:.3g}; "
        f"R² = {anova['r_squared']:.3g}.",
    ]
    welch = omnibus_result["welch"]
    if welch["p_value"] is not None:
        lines.append(f"Welch's test of equal means: F = {welch['statistic']:.4g}, p = {welch['p_value']:.3g}.")
    lines.extend(omnibus_result["diagnostics"]["notes"][:2])
    chosen = f"{followup['family']} / {followup['method']}"
    if source == "recommended":
        lines.append(f"Follow-up (recommended): {chosen}. {recommendation['reasons'][0]}")
    else:
        lines.append(f"Follow-up (as requested): {chosen}; the recommendation was "
                     f"{recommendation['family']} / {recommendation['method']}.")
    lines.append(followup["summary"])
    lines.append(recommendation["cautions"][-1])
    return lines


def run_plan(request) -> dict[str, Any]:
    effect = request.effect
    if effect.cohens_f is not None and effect.means is not None:
        raise DataError("contradiction", "give Cohen's f or the means, not both", "/effect")
    if effect.means is not None and len(effect.means) != request.k:
        raise DataError("means", f"{len(effect.means)} means for k = {request.k} groups", "/effect/means")
    if effect.means is not None and effect.sd is None:
        raise DataError("sd", "the means need the within-group SD", "/effect/sd")
    if request.family == "omnibus":
        if request.difference is not None or request.method is not None:
            raise DataError("contradiction", "difference and method are for follow-up families; set family",
                            "/family")
        if request.alternative != "two_sided":
            raise DataError("contradiction", "the omnibus F test has no one-sided alternative; the alternative "
                            "is for the control family", "/alternative")
        if effect.cohens_f is None and effect.means is None:
            raise DataError("effect", "give Cohen's f, or the means and SD", "/effect")
        f = effect.cohens_f if effect.cohens_f is not None else cohens_f_from_means(effect.means, effect.sd)
        return plain(plan_omnibus(request.k, request.alpha, request.power, f))
    if effect.cohens_f is not None:
        raise DataError("contradiction", "a follow-up family is planned from the difference and the SD, not from "
                        "Cohen's f", "/effect/cohens_f")
    if effect.sd is None:
        raise DataError("sd", "a follow-up family needs the within-group SD", "/effect/sd")
    difference = request.difference
    if difference is None:
        if effect.means is None:
            raise DataError("difference", "give the difference to detect (or the means)", "/difference")
        difference = max(effect.means) - min(effect.means)
    elif effect.means is not None:
        raise DataError("contradiction", "give the difference to detect or the means, not both", "/difference")
    return plain(plan_family(request.family, request.method, request.k, request.alpha, request.power,
                             difference, effect.sd, request.alternative))
