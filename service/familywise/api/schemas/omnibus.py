"""Request and response models of POST /v1/omnibus."""

from __future__ import annotations

from pydantic import BaseModel, Field

from familywise.api.schemas.common import GroupsRequest, Provenance, response_model
from familywise.stats.omnibus import EffectSizes


class OmnibusRequest(GroupsRequest):
    """Groups of replicate measurements and the level for intervals and tests."""


class GroupSummaryOut(BaseModel):
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


class SourceRowOut(BaseModel):
    df: int
    ss: float
    ms: float | None


class AnovaOut(BaseModel):
    between: SourceRowOut
    within: SourceRowOut
    total: SourceRowOut
    f: float
    p_value: float
    residual_sd: float
    r_squared: float


class TestOut(BaseModel):
    """A test that the data allow has statistic, df and p_value; one they do
    not allow has nulls and says why in ``unavailable``."""

    statistic: float | None
    df_num: float | None
    df_den: float | None
    p_value: float | None
    unavailable: str | None = None


EffectSizesOut = response_model("EffectSizesOut", EffectSizes, {
    "eta_squared_ci_low": "Lower end of the interval for eta² (noncentral F; Steiger 2004).",
    "confidence_level": "Level of the interval for eta² (1 - alpha).",
})


class DiagnosticsOut(BaseModel):
    variance_ratio: float | None = Field(
        description="Largest over smallest group variance; null when a variance is zero."
    )
    balanced: bool
    size_ratio: float = Field(description="Largest over smallest group size.")
    smallest_group: int
    notes: list[str] = Field(description="What the diagnostics mean for the follow-up.")


class OmnibusResponse(BaseModel):
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
