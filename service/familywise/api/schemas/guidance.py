"""Request and response models of /v1/recommendation, /v1/analysis and /v1/plan."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, Field, StrictBool, model_validator

from familywise.api.schemas.common import (
    Alpha,
    ErrorRate,
    Group,
    GroupsRequest,
    Integer,
    Label,
    Number,
    Provenance,
    Strict,
    response_model,
)
from familywise.api.schemas.contrasts import GroupSize
from familywise.api.schemas.families import (
    Alternative,
    Contrast,
    ContrastAdjustment,
    DunnAdjustment,
    FamilyResult,
    RelativeMargin,
)
from familywise.api.schemas.omnibus import OmnibusResponse
from familywise.stats.planning import Plan
from familywise.stats.recommend import Findings


class Question(Strict):
    planned: StrictBool = Field(False, description="Were the comparisons fixed before seeing the data?")
    reference: Literal["none", "control", "best"] = Field(
        "none", description="Is there a reference: a control group, or the best performer?")
    control: Label | None = Field(None, description="The control's label (reference = control).")
    best: Literal["highest", "lowest"] | None = Field(
        None, description="Reference = best: whether the highest or the lowest mean is best.")
    alternative: Alternative = Field(
        "two_sided", description="Reference = control, goal differences, familywise error: one- or two-sided "
                                 "(Dunnett). A one-sided alternative with another goal or error rate is refused.")
    error_rate: ErrorRate = Field("familywise", description="Which error rate matters.")
    contrasts: list[Contrast] = Field(default_factory=list, description="The planned contrasts, if any.")
    intervals_needed: StrictBool = Field(True, description="Are simultaneous intervals needed, or decisions only?")
    goal: Literal["differences", "equivalence"] = Field(
        "differences", description="Find differences, or show equivalence to the reference (control).")
    margin: Number | RelativeMargin | None = Field(
        None, description="Goal equivalence: the margin, a positive number in data units, or {\"relative\": "
                          "positive fraction of the reference mean's magnitude}.")


class RecommendationRequest(Strict):
    question: Question
    groups: list[Group] | None = Field(None, min_length=2, description="The data, if already measured.")
    sizes: dict[Label, GroupSize] | None = Field(
        None, description="Group sizes (label -> n) when the data are not given (contrast orthogonality).")
    alpha: Alpha = 0.05

    @model_validator(mode="after")
    def _one_design(self) -> RecommendationRequest:
        if self.groups is not None and self.sizes is not None:
            raise ValueError("give groups or sizes, not both")
        return self


class ChoiceOut(BaseModel):
    family: str
    method: str
    options: dict[str, object]
    when: str | None = Field(None, description="When to prefer this alternative.")


FindingsOut = response_model("FindingsOut", Findings)


class RecommendationResponse(BaseModel):
    family: Literal["pairwise", "control", "best", "contrasts", "equivalence"]
    method: str
    options: dict[str, object] = Field(description="The options of the recommended family, ready to send.")
    reasons: list[str]
    cautions: list[str]
    alternatives: list[ChoiceOut] = Field(description="Ranked alternatives, with when to prefer them.")
    findings: FindingsOut | None = Field(description="What the data say, when data are given.")
    provenance: Provenance


class FollowupChoice(Strict):
    """An explicit follow-up instead of the recommended one (fields as the family's endpoint takes them)."""

    family: Literal["pairwise", "control", "best", "contrasts", "equivalence"]
    method: str | None = Field(
        None, description="The family's method as its endpoint names it. For contrasts it is the adjustment "
                          "(give method or adjustment, or the same in both); for best only hsu_mcb. Options "
                          "that do not apply to the method (dunn_adjustment without dunn, protected without "
                          "lsd) are refused, not ignored.")
    control: Label | None = None
    alternative: Alternative | None = None
    best: Literal["highest", "lowest"] | None = None
    contrasts: list[Contrast] | None = None
    adjustment: ContrastAdjustment | None = None
    dunn_adjustment: DunnAdjustment | None = None
    protected: StrictBool | None = None
    reference: Label | None = None
    margin: Number | RelativeMargin | None = None
    kind: Literal["equivalence", "non_inferiority", "non_superiority"] | None = None


class AnalysisRequest(GroupsRequest):
    question: Question = Field(default_factory=Question, description="Defaults to all pairs, familywise.")
    followup: FollowupChoice | None = Field(None, description="Override the recommended family and method.")


class AnalysisOmnibus(OmnibusResponse):
    provenance: None = Field(None, exclude=True)


class AnalysisRecommendation(RecommendationResponse):
    provenance: None = Field(None, exclude=True)


class AnalysisResponse(BaseModel):
    omnibus: AnalysisOmnibus
    recommendation: AnalysisRecommendation
    followup: FamilyResult
    followup_source: Literal["recommended", "requested"]
    report: list[str] = Field(description="A short plain-language report of the whole analysis.")
    provenance: Provenance


class Effect(Strict):
    cohens_f: Number | None = Field(None, description="Cohen's f.")
    means: list[Number] | None = Field(None, description="Expected group means (one per group).")
    sd: Number | None = Field(None, description="Expected within-group standard deviation.")


class PlanRequest(Strict):
    k: Integer = Field(description="Number of groups.")
    alpha: Alpha = 0.05
    power: Number = Field(description="Target power, between alpha and 1 (for example 0.8).")
    effect: Effect = Field(description="Cohen's f, or the means and SD (for a family: the SD).")
    family: Literal["omnibus", "pairwise", "control", "best"] = Field(
        "omnibus", description="Plan for the omnibus F test or for a follow-up family.")
    method: Literal["tukey_kramer", "dunnett", "hsu_mcb"] | None = Field(
        None, description="The family's method (the default of the family when omitted).")
    difference: Number | None = Field(
        None, description="Family: the size of the true difference to detect (positive; for a one-sided "
                          "comparison with a control, in the direction of the alternative).")
    alternative: Alternative = Field("two_sided", description="Family control: one- or two-sided.")


PlanResponse = response_model("PlanResponse", Plan, {
    "unrounded_total_n": "Omnibus: the continuous solution before rounding.",
    "power_standard_error": "Simulation error of the power, when simulated.",
}, provenance=(Provenance, ...))
