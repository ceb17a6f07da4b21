"""Request and response models of the follow-up families."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, Field, StrictBool, ValidationInfo, field_validator
from pydantic_core import PydanticCustomError

from familywise.api.schemas.common import Alpha, GroupsRequest, Label, Number, Provenance, Strict

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
        False, description="lsd only (true with any other method is refused): Fisher's protected LSD, "
                           "declaring a pair different only when the omnibus F test is significant at alpha "
                           "as well. Each p-value is then the larger of the pair's t-test p-value and the "
                           "omnibus p-value; when the F test is not significant no pair is declared and no "
                           "intervals are given.")
    dunn_adjustment: DunnAdjustment = Field(
        "holm", description="dunn only (refused with any other method, even as holm, which would not be "
                            "applied): the p-value adjustment.")

    # These run only for an option the request gives (defaults are not
    # validated): an option of another method would otherwise be ignored.
    @field_validator("protected")
    @classmethod
    def _protected_for_lsd(cls, value: bool, info: ValidationInfo) -> bool:
        method = info.data.get("method")
        if value and method is not None and method != "lsd":
            raise PydanticCustomError(
                "contradiction", "protected applies to method lsd only (Fisher's protected LSD), and the "
                "method is {method}: drop protected or set method to lsd", {"method": method})
        return value

    @field_validator("dunn_adjustment")
    @classmethod
    def _adjustment_for_dunn(cls, value: str, info: ValidationInfo) -> str:
        method = info.data.get("method")
        if method is not None and method != "dunn":
            raise PydanticCustomError(
                "contradiction", "dunn_adjustment applies to method dunn only, and the method is {method}: "
                "drop dunn_adjustment or set method to dunn", {"method": method})
        return value


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
    difference: float = Field(
        description="mean(first) - mean(second), or the contrast's estimate. best: the group's mean minus the "
                    "highest (lowest) mean among the others.")
    se: float | None = Field(
        description="Standard error of the difference (best: of the difference to that rival).")
    statistic: float = Field(
        description="The standardised difference behind p_value (t, z or q / sqrt 2, by method). best: the "
                    "smallest standardised gap min_j (mean_i - mean_j) / se_ij over all the other groups (for "
                    "lowest, of mean_j - mean_i), which decides the exclusion; with unequal sizes it can be "
                    "against a different rival than difference and se, so it need not equal difference / se.")
    df: float | None
    p_value: float = Field(
        description="p-value adjusted for the family; significant is p_value < alpha. Protected lsd: the "
                    "larger of the pair's t-test p-value and the omnibus p-value.")
    unadjusted_p_value: float | None = Field(None, description="The comparison's own p-value, unadjusted.")
    ci_low: float | None = Field(description="Interval lower end; null when none or unbounded.")
    ci_high: float | None = Field(
        description="Interval upper end; null when none or unbounded. Where intervals are given, an interval "
                    "excludes zero exactly when significant. best: Hsu's constrained interval, cut at 0, "
                    "not difference +- critical_value * se.")
    significant: bool
    critical_value: float | None = Field(
        None, description="Row's own multiplier where it has one (games_howell: the quantile at the row's "
                          "df; best: Hsu's d_i for this group's sizes, which with the rivals' d_j and the "
                          "rule of the constrained interval gives ci_low and ci_high, not a half-width over se).")
    ss: float | None = None
    f: float | None = None
    rank_difference: float | None = None
    may_be_best: bool | None = Field(None, description="best: the group can be the best (not significant).")
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
                    "null where the method has none (stepwise methods, dunn, protected lsd after a "
                    "non-significant omnibus test) or rows have their own (games_howell; best with unequal "
                    "group sizes, where each row's d_i differs; with equal sizes best gives the common d, "
                    "which with Hsu's constraint gives the intervals rather than multiplying se).")
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
        "equivalence", description="equivalence (within the margin on both sides), non_inferiority (the "
                                   "candidate's mean is not lower than the reference's by the margin or more), "
                                   "non_superiority (not higher by the margin or more).")
    method: Literal["dunnett_tost", "bonferroni_tost", "tost"] = Field(
        "dunnett_tost", description="dunnett_tost (simultaneous, familywise in every configuration), "
                                    "bonferroni_tost, tost (per comparison).")
    alpha: Alpha = Field(
        0.05, json_schema_extra={
            "exclusiveMaximum": 0.5,
            "description": "Error rate of each one-sided test (familywise for dunnett_tost and bonferroni_tost): "
                           "1e-10 <= alpha < 0.5. Two-sided equivalence intervals have level 1 - 2 alpha."})
