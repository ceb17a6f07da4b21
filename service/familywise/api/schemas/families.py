"""Request and response models of the follow-up families."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, Field, StrictBool

from familywise.api.schemas.common import GroupsRequest, Label, Number, Provenance, Strict

PairwiseMethod = Literal["tukey_kramer", "lsd", "bonferroni", "sidak", "holm", "games_howell",
                         "benjamini_hochberg", "dunn"]
ControlMethod = Literal["dunnett", "dunnett_stepdown"]
Alternative = Literal["two_sided", "greater", "less"]
ContrastAdjustment = Literal["none", "bonferroni", "sidak", "holm", "benjamini_hochberg", "multivariate_t",
                             "scheffe"]
DunnAdjustment = Literal["holm", "bonferroni", "sidak", "benjamini_hochberg", "none"]


class PairwiseRequest(GroupsRequest):
    method: PairwiseMethod = Field(
        "tukey_kramer",
        description="tukey_kramer (studentized range; pooled variance), lsd (unadjusted t), bonferroni, "
                    "sidak, holm, games_howell (unequal variances), benjamini_hochberg (false-discovery "
                    "rate), dunn (rank-based).")
    protected: StrictBool = Field(
        False, description="lsd only: Fisher's protected LSD, declaring nothing unless the omnibus F "
                           "test is significant at alpha.")
    dunn_adjustment: DunnAdjustment = Field("holm", description="dunn only: the p-value adjustment.")


class ControlRequest(GroupsRequest):
    control: Label = Field(description="Label of the control (reference) group.")
    method: ControlMethod = Field("dunnett", description="dunnett (single step) or dunnett_stepdown.")
    alternative: Alternative = Field(
        "two_sided", description="two_sided, greater (treatment mean above the control's) or less.")


class BestRequest(GroupsRequest):
    best: Literal["highest", "lowest"] = Field(
        "highest", description="Whether the best group is the one with the highest or the lowest mean.")


class Contrast(Strict):
    name: Label = Field(description="Name of the contrast, unique within the request.")
    coefficients: dict[Label, Number] = Field(
        description="Coefficient per group label (a missing label means 0); they must sum to zero.")


class ContrastsRequest(GroupsRequest):
    contrasts: list[Contrast] = Field(min_length=1)
    adjustment: ContrastAdjustment = Field(
        "none",
        description="none (planned orthogonal contrasts), bonferroni, sidak, holm, multivariate_t "
                    "(exact for this set's correlation), scheffe (any contrast, also post hoc).")


class ComparisonOut(BaseModel):
    first: str | None = Field(description="The group compared (treatment; the group itself for 'best').")
    second: str | None = Field(description="The group or reference it is compared with.")
    name: str | None = Field(None, description="Contrast name (contrasts family only).")
    difference: float = Field(description="mean(first) - mean(second), or the contrast's estimate.")
    se: float | None = Field(description="Standard error of the difference.")
    statistic: float
    df: float | None
    p_value: float = Field(description="p-value adjusted for the family.")
    unadjusted_p_value: float | None = None
    ci_low: float | None = Field(description="Interval lower end; null when none or unbounded.")
    ci_high: float | None = Field(description="Interval upper end; null when none or unbounded.")
    significant: bool
    critical_value: float | None = Field(None, description="Row's own multiplier where it has one.")
    ss: float | None = None
    f: float | None = None
    rank_difference: float | None = None
    may_be_best: bool | None = None
    p_lower: float | None = Field(None, description="Equivalence: p-value of the lower one-sided test.")
    p_upper: float | None = Field(None, description="Equivalence: p-value of the upper one-sided test.")
    equivalent: bool | None = None
    non_inferior: bool | None = None
    non_superior: bool | None = None
    conclusion: str | None = Field(None, description="Equivalence: the finding in a sentence.")


class FamilyResponse(BaseModel):
    family: Literal["pairwise", "control", "best", "contrasts", "equivalence"]
    method: str
    alpha: float
    error_rate: Literal["familywise", "per_comparison", "false_discovery"]
    critical_value: float | None = Field(
        description="Multiplier of each comparison's se giving its interval, on the scale of statistic; "
                    "null where the method has none or rows have their own.")
    comparisons: list[ComparisonOut]
    summary: str
    notes: list[str]
    error_df: float | None
    pooled_sd: float | None
    alternative: str | None
    interval: Literal["simultaneous", "per_comparison", "none"]
    letters: dict[str, str] | None = Field(
        None, description="Compact letter display (pairwise): groups sharing a letter do not differ.")
    letters_note: str | None = None
    best_set: list[str] | None = None
    probability_error: float | None = Field(
        None, description="Bound on the absolute error of Monte Carlo probabilities, when used.")
    extra: dict[str, str | float | None]
    provenance: Provenance


class FamilyResult(FamilyResponse):
    """A family's result inside a larger response (no provenance of its own)."""

    provenance: None = Field(None, exclude=True)


class RelativeMargin(Strict):
    relative: Number = Field(description="The margin as a fraction of the reference mean's magnitude.")


class EquivalenceRequest(GroupsRequest):
    reference: Label = Field(description="Label of the reference group.")
    margin: Number | RelativeMargin = Field(
        description="Equivalence margin: a positive number in data units, or {\"relative\": 0.1} as a "
                    "fraction of the reference mean's magnitude.")
    kind: Literal["equivalence", "non_inferiority", "non_superiority"] = Field(
        "equivalence", description="equivalence (both sides), non_inferiority (not worse than reference by "
                                   "more than the margin), non_superiority.")
    method: Literal["dunnett_tost", "bonferroni_tost", "tost"] = Field(
        "dunnett_tost", description="dunnett_tost (simultaneous, familywise), bonferroni_tost, tost "
                                    "(per comparison).")
