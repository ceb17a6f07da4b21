"""Request and response models of the familywise API.

Generated from openapi/openapi.json by clients/python/tools/generate_models.py; do not edit.
Regenerate after an API change: `python clients/python/tools/generate_models.py`.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import Field, StrictBool, StrictStr

from familywise_client._types import Integer, Number, RequestModel, ResponseModel

__all__ = [
    "AnalysisOmnibus",
    "AnalysisRecommendation",
    "AnalysisRequest",
    "AnalysisResponse",
    "AnovaOut",
    "BatchItem",
    "BatchRequest",
    "BatchResponse",
    "BatchResult",
    "BestRequest",
    "ChoiceOut",
    "ComparisonOut",
    "Contrast",
    "ContrastIn",
    "ContrastOut",
    "ContrastValidationRequest",
    "ContrastValidationResponse",
    "ContrastsRequest",
    "ControlRequest",
    "DiagnosticsOut",
    "DifferencesFigureRequest",
    "Effect",
    "EffectSizesOut",
    "EquivalenceRequest",
    "FamilyResponse",
    "FamilyResult",
    "FieldError",
    "FindingsOut",
    "FollowupChoice",
    "Group",
    "GroupSizeOut",
    "GroupSummaryOut",
    "Health",
    "MeansFigureRequest",
    "OmnibusRequest",
    "OmnibusResponse",
    "PairOut",
    "PairwiseRequest",
    "PlanRequest",
    "PlanResponse",
    "Problem",
    "Provenance",
    "Question",
    "RecommendationRequest",
    "RecommendationResponse",
    "RelativeMargin",
    "SetOut",
    "SourceRowOut",
    "StandardIn",
    "StandardOut",
    "TestOut",
]

API_TITLE = "familywise"
API_VERSION = "0.1.0"
REQUEST_MODELS = frozenset({
    "AnalysisRequest",
    "BatchItem",
    "BatchRequest",
    "BestRequest",
    "Contrast",
    "ContrastIn",
    "ContrastValidationRequest",
    "ContrastsRequest",
    "ControlRequest",
    "DifferencesFigureRequest",
    "Effect",
    "EquivalenceRequest",
    "FollowupChoice",
    "Group",
    "MeansFigureRequest",
    "OmnibusRequest",
    "PairwiseRequest",
    "PlanRequest",
    "Question",
    "RecommendationRequest",
    "RelativeMargin",
    "StandardIn",
})


class AnalysisOmnibus(ResponseModel):
    """The ``AnalysisOmnibus`` object."""

    alpha: float
    groups: list[GroupSummaryOut]
    anova: AnovaOut
    welch: TestOut = Field(description="Welch's (1951) test of equal means, unequal variances.")
    brown_forsythe: TestOut = Field(description="Brown and Forsythe's (1974) F* test of equal means.")
    kruskal_wallis: TestOut = Field(description="Kruskal-Wallis rank test (tie-corrected).")
    levene: TestOut = Field(description="Levene's test of equal variances, median-centred.")
    shapiro_wilk: TestOut = Field(description="Shapiro-Wilk test of normality of the residuals.")
    effect_sizes: EffectSizesOut
    diagnostics: DiagnosticsOut


class AnalysisRecommendation(ResponseModel):
    """The ``AnalysisRecommendation`` object."""

    family: Literal["pairwise", "control", "best", "contrasts", "equivalence"]
    method: str
    options: dict[str, Any] = Field(description="The options of the recommended family, ready to send.")
    reasons: list[str]
    cautions: list[str]
    alternatives: list[ChoiceOut] = Field(description="Ranked alternatives, with when to prefer them.")
    findings: FindingsOut | None = Field(description="What the data say, when data are given.")


class AnalysisRequest(RequestModel):
    """Body of POST /v1/analysis."""

    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )
    question: Question | None = Field(default=None, description="Defaults to all pairs, familywise.")
    followup: FollowupChoice | None = Field(default=None, description="Override the recommended family and method.")


class AnalysisResponse(ResponseModel):
    """Answer of POST /v1/analysis."""

    omnibus: AnalysisOmnibus
    recommendation: AnalysisRecommendation
    followup: FamilyResult
    followup_source: Literal["recommended", "requested"]
    report: list[str] = Field(description="A short plain-language report of the whole analysis.")
    provenance: Provenance


class AnovaOut(ResponseModel):
    """The ``AnovaOut`` object."""

    between: SourceRowOut
    within: SourceRowOut
    total: SourceRowOut
    f: float
    p_value: float
    residual_sd: float
    r_squared: float


class BatchItem(RequestModel):
    """The ``BatchItem`` object."""

    id: StrictStr = Field(description="The caller's identifier of the item, unique.")
    operation: Literal[
        "omnibus",
        "pairwise",
        "control",
        "best",
        "contrasts",
        "equivalence",
        "validate_contrasts",
        "recommendation",
        "analysis",
        "plan",
    ] = Field(
        description="Which endpoint's computation (omnibus, pairwise, ...).",
    )
    request: dict[str, Any] = Field(description="That endpoint's request body.")


class BatchRequest(RequestModel):
    """Body of POST /v1/batch."""

    items: list[BatchItem] = Field(description="The analyses; ids must be unique.")


class BatchResponse(ResponseModel):
    """Answer of POST /v1/batch."""

    results: list[BatchResult]
    provenance: Provenance


class BatchResult(ResponseModel):
    """The ``BatchResult`` object."""

    id: str
    status: int = Field(description="200, or the status the item's problem would have had on its own.")
    result: dict[str, Any] | None = Field(default=None, description="The operation's result (no provenance).")
    problem: Problem | None = None


class BestRequest(RequestModel):
    """Body of POST /v1/followup/best."""

    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )
    best: Literal["highest", "lowest"] = Field(
        default="highest",
        description="Whether the best group is the one with the highest or the lowest mean.",
    )


class ChoiceOut(ResponseModel):
    """The ``ChoiceOut`` object."""

    family: str
    method: str
    options: dict[str, Any]
    when: str | None = Field(default=None, description="When to prefer this alternative.")


class ComparisonOut(ResponseModel):
    """The ``ComparisonOut`` object."""

    first: str | None = Field(description="The group compared (treatment; the group itself for 'best').")
    second: str | None = Field(description="The group or reference it is compared with.")
    name: str | None = Field(default=None, description="Contrast name (contrasts family only).")
    difference: float = Field(
        description=(
            "mean(first) - mean(second), or the contrast's estimate. best: the group's mean minus the highest (lowest) "
            "mean among the others."
        ),
    )
    se: float | None = Field(description="Standard error of the difference (best: of the difference to that rival).")
    statistic: float = Field(
        description=(
            "The standardised difference behind p_value (t, z or q / sqrt 2, by method). best: the smallest "
            "standardised gap min_j (mean_i - mean_j) / se_ij over all the other groups (for lowest, of mean_j - "
            "mean_i), which decides the exclusion; with unequal sizes it can be against a different rival than "
            "difference and se, so it need not equal difference / se."
        ),
    )
    df: float | None
    p_value: float = Field(
        description=(
            "p-value adjusted for the family; significant is p_value < alpha. Protected lsd: the larger of the pair's "
            "t-test p-value and the omnibus p-value."
        ),
    )
    unadjusted_p_value: float | None = Field(default=None, description="The comparison's own p-value, unadjusted.")
    ci_low: float | None = Field(description="Interval lower end; null when none or unbounded.")
    ci_high: float | None = Field(
        description=(
            "Interval upper end; null when none or unbounded. Where intervals are given, an interval excludes zero "
            "exactly when significant. best: Hsu's constrained interval, cut at 0, not difference +- critical_value * "
            "se."
        ),
    )
    significant: bool
    critical_value: float | None = Field(
        default=None,
        description=(
            "Row's own multiplier where it has one (games_howell: the quantile at the row's df; best: Hsu's d_i for "
            "this group's sizes, which with the rivals' d_j and the rule of the constrained interval gives ci_low and "
            "ci_high, not a half-width over se)."
        ),
    )
    ss: float | None = None
    f: float | None = None
    rank_difference: float | None = None
    may_be_best: bool | None = Field(default=None, description="best: the group can be the best (not significant).")
    p_lower: float | None = Field(default=None, description="Equivalence: p-value of the lower one-sided test.")
    p_upper: float | None = Field(default=None, description="Equivalence: p-value of the upper one-sided test.")
    equivalent: bool | None = None
    non_inferior: bool | None = None
    non_superior: bool | None = None
    conclusion: str | None = Field(default=None, description="Equivalence: the finding in a sentence.")


class Contrast(RequestModel):
    """The ``Contrast`` object."""

    name: StrictStr = Field(description="Name of the contrast, unique within the request.")
    coefficients: dict[str, Number] = Field(
        description="Coefficient per group label (a missing label means 0); they must sum to zero.",
    )


class ContrastIn(RequestModel):
    """The ``ContrastIn`` object."""

    name: StrictStr = Field(description="Name of the contrast, unique within the request.")
    coefficients: dict[str, Number] = Field(
        description=(
            "Coefficient of each group, keyed by group label; a group left out has coefficient 0. The coefficients of "
            "a contrast sum to zero."
        ),
    )


class ContrastOut(ResponseModel):
    """The ``ContrastOut`` object."""

    name: str
    origin: str = Field(description="'given', or the kind of standard set that generated it.")
    coefficients: dict[str, float] = Field(description="Every group's coefficient, in group order.")
    sum: float = Field(description="Sum of the coefficients (correctly rounded).")
    sum_tolerance: float = Field(description="Largest |sum| that counts as zero: 64 eps * sum |c_i|.")
    sums_to_zero: bool
    estimable: bool = Field(description="Sums to zero and involves only groups with n >= 1.")
    normalised_coefficients: dict[str, float] = Field(
        description="Scaled so that the absolute values add up to 2 (positive part 1, negative part -1).",
    )
    variance_factor: float = Field(description="sum c_i^2 / n_i: variance of the estimate over sigma^2.")
    estimate: float | None = Field(description="sum c_i mean_i (with data).")
    ss: float | None = Field(description="Sum of squares estimate^2 / sum(c_i^2 / n_i) (with data).")


class ContrastValidationRequest(RequestModel):
    """Body of POST /v1/contrasts/validate.

    The design (groups with their values, or only the group sizes) and the
    planned contrasts and/or a standard set to check against it.
    """

    groups: list[Group] | None = Field(
        default=None,
        description="Two or more groups of measurements (give this or sizes).",
    )
    sizes: dict[str, Integer] | None = Field(
        default=None,
        description="Group sizes keyed by label, in the group order (give this or groups).",
    )
    contrasts: list[ContrastIn] | None = Field(default=None, description="The planned contrasts.")
    standard: StandardIn | None = Field(default=None, description="A standard set to generate as well.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )


class ContrastValidationResponse(ResponseModel):
    """Answer of POST /v1/contrasts/validate."""

    alpha: float
    groups: list[GroupSizeOut]
    balanced: bool
    relative_tolerance: float = Field(description="Relative tolerance of the sum-to-zero test (64 eps).")
    pair_tolerance: float = Field(description="Relative tolerance of the orthogonality test.")
    standard: StandardOut | None
    contrasts: list[ContrastOut]
    pairs: list[PairOut]
    set: SetOut
    verdict: Literal["orthogonal", "not_orthogonal", "invalid"]
    consequences: list[str] = Field(description="What the checks mean for testing the set, in plain words.")
    provenance: Provenance


class ContrastsRequest(RequestModel):
    """Body of POST /v1/followup/contrasts."""

    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )
    contrasts: list[Contrast]
    adjustment: Literal[
        "none",
        "bonferroni",
        "sidak",
        "holm",
        "benjamini_hochberg",
        "multivariate_t",
        "scheffe",
    ] = Field(
        default="none",
        description=(
            "none (planned orthogonal contrasts), bonferroni, sidak, holm, multivariate_t (exact for this set's "
            "correlation), scheffe (any contrast, also post hoc)."
        ),
    )


class ControlRequest(RequestModel):
    """Body of POST /v1/followup/control."""

    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )
    control: StrictStr = Field(description="Label of the control (reference) group.")
    method: Literal["dunnett", "dunnett_stepdown"] = Field(
        default="dunnett",
        description="dunnett (single step) or dunnett_stepdown.",
    )
    alternative: Literal["two_sided", "greater", "less"] = Field(
        default="two_sided",
        description="two_sided, greater (treatment mean above the control's) or less.",
    )


class DiagnosticsOut(ResponseModel):
    """The ``DiagnosticsOut`` object."""

    variance_ratio: float | None = Field(
        description="Largest over smallest group variance; null when a variance is zero.",
    )
    balanced: bool
    size_ratio: float = Field(description="Largest over smallest group size.")
    smallest_group: int
    notes: list[str] = Field(description="What the diagnostics mean for the follow-up.")


class DifferencesFigureRequest(RequestModel):
    """Body of POST /v1/figures/differences."""

    title: StrictStr | None = Field(default=None, description="Title printed above the figure (none by default).")
    value_label: StrictStr = Field(
        default="value",
        description=(
            "What was measured, with its unit, e.g. 'specific activity (U/mg)': the value axis of the means figure, "
            "and of the differences ('difference in ...')."
        ),
    )
    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )
    family: Literal["pairwise", "control", "best", "contrasts"] = Field(
        description=(
            "Which follow-up family to draw: pairwise, control, best or contrasts. The other fields are that family's "
            "options, as /v1/followup/{family} takes them; an option of another family is refused. A figure draws at "
            "most 60 comparisons."
        ),
    )
    method: (
        Literal[
            "tukey_kramer",
            "lsd",
            "bonferroni",
            "sidak",
            "holm",
            "games_howell",
            "benjamini_hochberg",
            "dunn",
        ]
        | Literal["dunnett", "dunnett_stepdown"]
        | None
    ) = Field(
        default=None,
        description=(
            "pairwise: tukey_kramer (default), lsd, bonferroni, sidak, games_howell; control: dunnett (default). "
            "Stepwise methods (holm, benjamini_hochberg, dunn, dunnett_stepdown) give decisions without intervals and "
            "are refused here."
        ),
    )
    protected: StrictBool | None = Field(default=None, description="pairwise, lsd only: Fisher's protected LSD.")
    dunn_adjustment: Literal["holm", "bonferroni", "sidak", "benjamini_hochberg", "none"] | None = Field(
        default=None,
        description="pairwise, dunn only (refused here, as Dunn's test has no intervals).",
    )
    control: StrictStr | None = Field(default=None, description="control (required): label of the control group.")
    alternative: Literal["two_sided", "greater", "less"] | None = Field(
        default=None,
        description=(
            "control: two_sided (default), greater or less; one-sided intervals are drawn open towards the unbounded "
            "side."
        ),
    )
    best: Literal["highest", "lowest"] | None = Field(
        default=None,
        description="best: whether the best group has the highest (default) or lowest mean.",
    )
    contrasts: list[Contrast] | None = Field(
        default=None,
        description="contrasts (required): the contrasts, as /v1/followup/contrasts.",
    )
    adjustment: (
        Literal[
            "none",
            "bonferroni",
            "sidak",
            "holm",
            "benjamini_hochberg",
            "multivariate_t",
            "scheffe",
        ]
        | None
    ) = Field(
        default=None,
        description=(
            "contrasts: none (default), bonferroni, sidak, multivariate_t, scheffe; holm gives no intervals and is "
            "refused here."
        ),
    )


class Effect(RequestModel):
    """The ``Effect`` object."""

    cohens_f: Number | None = Field(default=None, description="Cohen's f.")
    means: list[Number] | None = Field(default=None, description="Expected group means (one per group).")
    sd: Number | None = Field(default=None, description="Expected within-group standard deviation.")


class EffectSizesOut(ResponseModel):
    """The ``EffectSizesOut`` object."""

    eta_squared: float
    eta_squared_ci_low: float = Field(description="Lower end of the interval for eta² (noncentral F; Steiger 2004).")
    eta_squared_ci_high: float
    omega_squared: float
    cohens_f: float
    confidence_level: float = Field(description="Level of the interval for eta² (1 - alpha).")


class EquivalenceRequest(RequestModel):
    """Body of POST /v1/followup/equivalence."""

    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description=(
            "Error rate of each one-sided test (familywise for dunnett_tost and bonferroni_tost): 1e-10 <= alpha < "
            "0.5. Two-sided equivalence intervals have level 1 - 2 alpha."
        ),
    )
    reference: StrictStr = Field(description="Label of the reference group.")
    margin: Number | RelativeMargin = Field(
        description=(
            "Equivalence margin: a positive number in data units, or {\"relative\": 0.1} as a fraction of the "
            "reference mean's magnitude."
        ),
    )
    kind: Literal["equivalence", "non_inferiority", "non_superiority"] = Field(
        default="equivalence",
        description=(
            "equivalence (within the margin on both sides), non_inferiority (the candidate's mean is not lower than "
            "the reference's by the margin or more), non_superiority (not higher by the margin or more)."
        ),
    )
    method: Literal["dunnett_tost", "bonferroni_tost", "tost"] = Field(
        default="dunnett_tost",
        description=(
            "dunnett_tost (simultaneous, familywise in every configuration), bonferroni_tost, tost (per comparison)."
        ),
    )


class FamilyResponse(ResponseModel):
    """Answer of POST /v1/followup/pairwise.

    Answer of POST /v1/followup/control.

    Answer of POST /v1/followup/best.

    Answer of POST /v1/followup/contrasts.

    Answer of POST /v1/followup/equivalence.
    """

    family: Literal["pairwise", "control", "best", "contrasts", "equivalence"]
    method: str
    alpha: float
    error_rate: Literal["familywise", "per_comparison", "false_discovery"]
    critical_value: float | None = Field(
        description=(
            "Multiplier of each comparison's se giving its interval, on the scale of statistic; null where the method "
            "has none (stepwise methods, dunn, protected lsd after a non-significant omnibus test) or rows have their "
            "own (games_howell; best with unequal group sizes, where each row's d_i differs; with equal sizes best "
            "gives the common d, which with Hsu's constraint gives the intervals rather than multiplying se)."
        ),
    )
    comparisons: list[ComparisonOut]
    summary: str
    notes: list[str]
    error_df: float | None
    pooled_sd: float | None
    alternative: str | None
    interval: Literal["simultaneous", "per_comparison", "none"]
    letters: dict[str, str] | None = Field(
        default=None,
        description="Compact letter display (pairwise): groups sharing a letter do not differ.",
    )
    letters_note: str | None = None
    best_set: list[str] | None = None
    probability_error: float | None = Field(
        default=None,
        description="Bound on the absolute error of Monte Carlo probabilities, when used.",
    )
    extra: dict[str, str | float | None]
    provenance: Provenance


class FamilyResult(ResponseModel):
    """A family's result inside a larger response (no provenance of its own)."""

    family: Literal["pairwise", "control", "best", "contrasts", "equivalence"]
    method: str
    alpha: float
    error_rate: Literal["familywise", "per_comparison", "false_discovery"]
    critical_value: float | None = Field(
        description=(
            "Multiplier of each comparison's se giving its interval, on the scale of statistic; null where the method "
            "has none (stepwise methods, dunn, protected lsd after a non-significant omnibus test) or rows have their "
            "own (games_howell; best with unequal group sizes, where each row's d_i differs; with equal sizes best "
            "gives the common d, which with Hsu's constraint gives the intervals rather than multiplying se)."
        ),
    )
    comparisons: list[ComparisonOut]
    summary: str
    notes: list[str]
    error_df: float | None
    pooled_sd: float | None
    alternative: str | None
    interval: Literal["simultaneous", "per_comparison", "none"]
    letters: dict[str, str] | None = Field(
        default=None,
        description="Compact letter display (pairwise): groups sharing a letter do not differ.",
    )
    letters_note: str | None = None
    best_set: list[str] | None = None
    probability_error: float | None = Field(
        default=None,
        description="Bound on the absolute error of Monte Carlo probabilities, when used.",
    )
    extra: dict[str, str | float | None]


class FieldError(ResponseModel):
    """The ``FieldError`` object."""

    pointer: str = Field(description="JSON pointer (RFC 6901) to the offending field.")
    rule: str = Field(description="Identifier of the rule the field breaks.")
    detail: str


class FindingsOut(ResponseModel):
    """The ``FindingsOut`` object."""

    variance_ratio: float | None
    levene_p_value: float | None
    shapiro_p_value: float | None
    smallest_group: int
    size_ratio: float
    omnibus_p_value: float | None
    unequal_variances: bool
    non_normal_small: bool
    very_unbalanced: bool
    own_variances: bool


class FollowupChoice(RequestModel):
    """An explicit follow-up instead of the recommended one (fields as the family's endpoint takes them)."""

    family: Literal["pairwise", "control", "best", "contrasts", "equivalence"]
    method: StrictStr | None = Field(
        default=None,
        description=(
            "The family's method as its endpoint names it. For contrasts it is the adjustment (give method or "
            "adjustment, or the same in both); for best only hsu_mcb. Options that do not apply to the method "
            "(dunn_adjustment without dunn, protected without lsd) are refused, not ignored."
        ),
    )
    control: StrictStr | None = None
    alternative: Literal["two_sided", "greater", "less"] | None = None
    best: Literal["highest", "lowest"] | None = None
    contrasts: list[Contrast] | None = None
    adjustment: (
        Literal[
            "none",
            "bonferroni",
            "sidak",
            "holm",
            "benjamini_hochberg",
            "multivariate_t",
            "scheffe",
        ]
        | None
    ) = None
    dunn_adjustment: Literal["holm", "bonferroni", "sidak", "benjamini_hochberg", "none"] | None = None
    protected: StrictBool | None = None
    reference: StrictStr | None = None
    margin: Number | RelativeMargin | None = None
    kind: Literal["equivalence", "non_inferiority", "non_superiority"] | None = None


class Group(RequestModel):
    """The ``Group`` object."""

    label: StrictStr = Field(description="Name of the group, unique within the request.")
    values: list[Number] = Field(description="Replicate measurements, as decimal numbers.")


class GroupSizeOut(ResponseModel):
    """The ``GroupSizeOut`` object."""

    label: str
    n: int


class GroupSummaryOut(ResponseModel):
    """The ``GroupSummaryOut`` object."""

    label: str
    n: int
    mean: float
    sd: float | None = Field(description="Sample standard deviation; null for a group of one.")
    se: float | None = Field(description="Standard error of the mean from the group's own SD.")
    ci_low: float | None = Field(description="Lower end of the 1 - alpha t interval of the mean.")
    ci_high: float | None
    median: float
    minimum: float
    maximum: float


class Health(ResponseModel):
    """Answer of GET /healthz.

    Answer of GET /readyz.
    """

    status: str


class MeansFigureRequest(RequestModel):
    """Body of POST /v1/figures/means."""

    title: StrictStr | None = Field(default=None, description="Title printed above the figure (none by default).")
    value_label: StrictStr = Field(
        default="value",
        description=(
            "What was measured, with its unit, e.g. 'specific activity (U/mg)': the value axis of the means figure, "
            "and of the differences ('difference in ...')."
        ),
    )
    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )
    interval: Literal["group", "pooled"] = Field(
        default="group",
        description=(
            "group (default): each mean's t interval from its own SD, which shows unequal spreads as they are; pooled: "
            "t intervals from the pooled within-group SD with N - k df, the variance the pooled-variance comparisons "
            "use. Either way, the interval of each mean is not a comparison of means: the letters are."
        ),
    )
    letters_method: (
        Literal[
            "tukey_kramer",
            "lsd",
            "bonferroni",
            "sidak",
            "holm",
            "games_howell",
            "benjamini_hochberg",
            "dunn",
        ]
        | None
    ) = Field(
        default="tukey_kramer",
        description=(
            "Pairwise method whose compact letters are printed beside each group (as /v1/followup/pairwise computes "
            "them, with that endpoint's defaults); null: no letters."
        ),
    )
    show_values: StrictBool = Field(
        default=True,
        description=(
            "Draw the replicate values under each interval (left out, and said so in the key, beyond 2000 values)."
        ),
    )


class OmnibusRequest(RequestModel):
    """Body of POST /v1/omnibus.

    Groups of replicate measurements and the level for intervals and tests.
    """

    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )


class OmnibusResponse(ResponseModel):
    """Answer of POST /v1/omnibus."""

    alpha: float
    groups: list[GroupSummaryOut]
    anova: AnovaOut
    welch: TestOut = Field(description="Welch's (1951) test of equal means, unequal variances.")
    brown_forsythe: TestOut = Field(description="Brown and Forsythe's (1974) F* test of equal means.")
    kruskal_wallis: TestOut = Field(description="Kruskal-Wallis rank test (tie-corrected).")
    levene: TestOut = Field(description="Levene's test of equal variances, median-centred.")
    shapiro_wilk: TestOut = Field(description="Shapiro-Wilk test of normality of the residuals.")
    effect_sizes: EffectSizesOut
    diagnostics: DiagnosticsOut
    provenance: Provenance


class PairOut(ResponseModel):
    """The ``PairOut`` object."""

    first: str
    second: str
    weighted_product: float = Field(description="sum c_i d_i / n_i: covariance of the two estimates over sigma^2.")
    unweighted_product: float = Field(description="sum c_i d_i: what the weighted product would be with equal sizes.")
    correlation: float = Field(description="Correlation of the two estimates under a common variance.")
    orthogonal: bool = Field(description="Weighted product zero for the actual group sizes.")
    orthogonal_for_equal_sizes: bool


class PairwiseRequest(RequestModel):
    """Body of POST /v1/followup/pairwise."""

    groups: list[Group] = Field(description="Two or more groups of measurements.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )
    method: Literal[
        "tukey_kramer",
        "lsd",
        "bonferroni",
        "sidak",
        "holm",
        "games_howell",
        "benjamini_hochberg",
        "dunn",
    ] = Field(
        default="tukey_kramer",
        description=(
            "tukey_kramer (studentized range; pooled variance), lsd (unadjusted t), bonferroni, sidak, holm, "
            "games_howell (unequal variances), benjamini_hochberg (false-discovery rate), dunn (rank-based)."
        ),
    )
    protected: StrictBool = Field(
        default=False,
        description=(
            "lsd only (true with any other method is refused): Fisher's protected LSD, declaring a pair different only "
            "when the omnibus F test is significant at alpha as well. Each p-value is then the larger of the pair's "
            "t-test p-value and the omnibus p-value; when the F test is not significant no pair is declared and no "
            "intervals are given."
        ),
    )
    dunn_adjustment: Literal["holm", "bonferroni", "sidak", "benjamini_hochberg", "none"] = Field(
        default="holm",
        description=(
            "dunn only (refused with any other method, even as holm, which would not be applied): the p-value "
            "adjustment."
        ),
    )


class PlanRequest(RequestModel):
    """Body of POST /v1/plan."""

    k: Integer = Field(description="Number of groups.")
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )
    power: Number = Field(description="Target power, between alpha and 1 (for example 0.8).")
    effect: Effect = Field(description="Cohen's f, or the means and SD (for a family: the SD).")
    family: Literal["omnibus", "pairwise", "control", "best"] = Field(
        default="omnibus",
        description="Plan for the omnibus F test or for a follow-up family.",
    )
    method: Literal["tukey_kramer", "dunnett", "hsu_mcb"] | None = Field(
        default=None,
        description="The family's method (the default of the family when omitted).",
    )
    difference: Number | None = Field(
        default=None,
        description=(
            "Family: the size of the true difference to detect (positive; for a one-sided comparison with a control, "
            "in the direction of the alternative)."
        ),
    )
    alternative: Literal["two_sided", "greater", "less"] = Field(
        default="two_sided",
        description="Family control: one- or two-sided.",
    )


class PlanResponse(ResponseModel):
    """Answer of POST /v1/plan."""

    target: str
    method: str
    k: int
    alpha: float
    power: float
    n_per_group: int
    total_n: int
    achieved_power: float
    cohens_f: float | None
    difference: float | None
    sd: float | None
    unrounded_total_n: float | None = Field(description="Omnibus: the continuous solution before rounding.")
    power_standard_error: float | None = Field(description="Simulation error of the power, when simulated.")
    method_note: str
    rounding: str
    provenance: Provenance


class Problem(ResponseModel):
    """The ``Problem`` object."""

    type: str = Field(description="Path on this service that describes the kind of problem.")
    title: str
    status: int
    detail: str
    pointer: str | None = Field(default=None, description="JSON pointer to the field at fault.")
    rule: str | None = None
    errors: list[FieldError] | None = None


class Provenance(ResponseModel):
    """The ``Provenance`` object."""

    service: str
    version: str
    input_sha256: str = Field(description="SHA-256 of the canonical form of the validated request.")
    libraries: dict[str, str]


class Question(RequestModel):
    """The ``Question`` object."""

    planned: StrictBool = Field(default=False, description="Were the comparisons fixed before seeing the data?")
    reference: Literal["none", "control", "best"] = Field(
        default="none",
        description="Is there a reference: a control group, or the best performer?",
    )
    control: StrictStr | None = Field(default=None, description="The control's label (reference = control).")
    best: Literal["highest", "lowest"] | None = Field(
        default=None,
        description="Reference = best: whether the highest or the lowest mean is best.",
    )
    alternative: Literal["two_sided", "greater", "less"] = Field(
        default="two_sided",
        description=(
            "Reference = control, goal differences, familywise error: one- or two-sided (Dunnett). A one-sided "
            "alternative with another goal or error rate is refused."
        ),
    )
    error_rate: Literal["familywise", "per_comparison", "false_discovery"] = Field(
        default="familywise",
        description="Which error rate matters.",
    )
    contrasts: list[Contrast] | None = Field(default=None, description="The planned contrasts, if any.")
    intervals_needed: StrictBool = Field(
        default=True,
        description="Are simultaneous intervals needed, or decisions only?",
    )
    goal: Literal["differences", "equivalence"] = Field(
        default="differences",
        description="Find differences, or show equivalence to the reference (control).",
    )
    margin: Number | RelativeMargin | None = Field(
        default=None,
        description=(
            "Goal equivalence: the margin, a positive number in data units, or {\"relative\": positive fraction of the "
            "reference mean's magnitude}."
        ),
    )


class RecommendationRequest(RequestModel):
    """Body of POST /v1/recommendation."""

    question: Question
    groups: list[Group] | None = Field(default=None, description="The data, if already measured.")
    sizes: dict[str, Integer] | None = Field(
        default=None,
        description="Group sizes (label -> n) when the data are not given (contrast orthogonality).",
    )
    alpha: Number = Field(
        default=0.05,
        description="Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5.",
    )


class RecommendationResponse(ResponseModel):
    """Answer of POST /v1/recommendation."""

    family: Literal["pairwise", "control", "best", "contrasts", "equivalence"]
    method: str
    options: dict[str, Any] = Field(description="The options of the recommended family, ready to send.")
    reasons: list[str]
    cautions: list[str]
    alternatives: list[ChoiceOut] = Field(description="Ranked alternatives, with when to prefer them.")
    findings: FindingsOut | None = Field(description="What the data say, when data are given.")
    provenance: Provenance


class RelativeMargin(RequestModel):
    """The ``RelativeMargin`` object."""

    relative: Number = Field(description="The margin as a fraction of the reference mean's magnitude.")


class SetOut(ResponseModel):
    """The ``SetOut`` object."""

    count: int
    between_df: int = Field(description="k - 1, the most mutually orthogonal contrasts there can be.")
    all_sum_to_zero: bool
    mutually_orthogonal: bool
    orthogonal_for_equal_sizes: bool
    linearly_independent: bool
    rank: int
    exceeds_between_df: bool = Field(description="More than k - 1 contrasts.")
    complete: bool = Field(description="k - 1 mutually orthogonal contrasts that sum to zero.")
    max_abs_correlation: float | None
    ss_between: float | None = Field(description="Between-groups sum of squares (with data).")
    ss_contrasts_total: float | None = Field(description="Sum of the contrasts' SS (with data).")
    ss_partition_holds: bool | None = Field(
        description="For a complete orthogonal set with data: the contrast SS add up to ss_between.",
    )


class SourceRowOut(ResponseModel):
    """The ``SourceRowOut`` object."""

    df: int
    ss: float
    ms: float | None


class StandardIn(RequestModel):
    """A standard contrast set to generate for these groups (in the order given)."""

    kind: Literal["helmert", "polynomial", "versus_reference", "versus_first", "pairwise"] = Field(
        description=(
            "helmert: each group against the size-weighted mean of the groups before it; polynomial: orthogonal "
            "linear, quadratic, ... trends in numeric levels, for the actual sizes; versus_reference / versus_first: "
            "each group against one reference group (not orthogonal); pairwise: every pair of groups."
        ),
    )
    levels: dict[str, Number] | None = Field(
        default=None,
        description=(
            "polynomial only: the numeric level (dose, concentration, pH ...) of every group; unequal spacing is "
            "allowed, levels must be distinct."
        ),
    )
    reference: StrictStr | None = Field(
        default=None,
        description="versus_reference only (required): the label of the reference group.",
    )
    degree: Integer | None = Field(
        default=None,
        description="polynomial only: the highest trend degree (default k - 1, the complete set).",
    )


class StandardOut(ResponseModel):
    """The ``StandardOut`` object."""

    kind: str
    reference: str | None
    names: list[str]
    orthogonal_by_construction: bool
    description: str


class TestOut(ResponseModel):
    """A test that the data allow has statistic, df and p_value; one they do
    not allow has nulls and says why in ``unavailable``.
    """

    statistic: float | None
    df_num: float | None
    df_den: float | None
    p_value: float | None
    unavailable: str | None = None


for _model in (
    AnalysisOmnibus,
    AnalysisRecommendation,
    AnalysisRequest,
    AnalysisResponse,
    AnovaOut,
    BatchItem,
    BatchRequest,
    BatchResponse,
    BatchResult,
    BestRequest,
    ChoiceOut,
    ComparisonOut,
    Contrast,
    ContrastIn,
    ContrastOut,
    ContrastValidationRequest,
    ContrastValidationResponse,
    ContrastsRequest,
    ControlRequest,
    DiagnosticsOut,
    DifferencesFigureRequest,
    Effect,
    EffectSizesOut,
    EquivalenceRequest,
    FamilyResponse,
    FamilyResult,
    FieldError,
    FindingsOut,
    FollowupChoice,
    Group,
    GroupSizeOut,
    GroupSummaryOut,
    Health,
    MeansFigureRequest,
    OmnibusRequest,
    OmnibusResponse,
    PairOut,
    PairwiseRequest,
    PlanRequest,
    PlanResponse,
    Problem,
    Provenance,
    Question,
    RecommendationRequest,
    RecommendationResponse,
    RelativeMargin,
    SetOut,
    SourceRowOut,
    StandardIn,
    StandardOut,
    TestOut,
):
    _model.model_rebuild()
del _model
