"""The omnibus analysis of a one-way layout: classical ANOVA, tests of equal
means that do not assume equal variances, the rank test, diagnostics and
effect sizes.

References
----------
Fisher, R. A. (1925). Statistical Methods for Research Workers (the ANOVA table).
Welch, B. L. (1951). On the comparison of several mean values: an alternative
approach. Biometrika 38, 330-336 (eq. for F_W and its denominator df).
Brown, M. B. and Forsythe, A. B. (1974a). The small sample behavior of some
statistics which test the equality of several means. Technometrics 16,
129-132 (F* and Satterthwaite's df).
Brown, M. B. and Forsythe, A. B. (1974b). Robust tests for the equality of
variances. JASA 69, 364-367 (Levene's test with median centring).
Kruskal, W. H. and Wallis, W. A. (1952). JASA 47, 583-621.
Shapiro, S. S. and Wilk, M. B. (1965). Biometrika 52, 591-611.
Hays, W. L. (1963). Statistics for Psychologists (omega squared).
Cohen, J. (1988). Statistical Power Analysis for the Behavioral Sciences, 2nd
ed., eq. 8.2.19 (f from eta squared).
Steiger, J. H. (2004). Beyond the F test: effect size confidence intervals
and tests of close fit. Psychological Methods 9, 164-182 (interval for eta
squared by inverting the noncentral F).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize, stats

from familywise.stats.data import GroupSummary, OneWayData, summarise
from familywise.stats.errors import DataError

#: Largest/smallest variance ratio above which variances count as markedly
#: unequal (common practice, no source: a rule of thumb of about 4 is often quoted).
MARKED_VARIANCE_RATIO = 4.0
#: Largest/smallest group size ratio above which a design counts as very unbalanced
#: (common practice, no source).
MARKED_IMBALANCE = 2.0
#: Below this many values per group, normality matters most (common practice, no source).
SMALL_GROUP = 10
SHAPIRO_MAX_N = 5000


@dataclass(frozen=True)
class SourceRow:
    df: int
    ss: float
    ms: float | None


@dataclass(frozen=True)
class AnovaTable:
    between: SourceRow
    within: SourceRow
    total: SourceRow
    f: float
    p_value: float
    residual_sd: float
    r_squared: float


@dataclass(frozen=True)
class HypothesisTest:
    """A test statistic with its reference distribution's degrees of freedom."""

    statistic: float
    df_num: float
    df_den: float | None
    p_value: float


@dataclass(frozen=True)
class Unavailable:
    """A test that the data do not allow, and why."""

    reason: str


@dataclass(frozen=True)
class EffectSizes:
    eta_squared: float
    eta_squared_ci_low: float
    eta_squared_ci_high: float
    omega_squared: float
    cohens_f: float
    confidence_level: float


@dataclass(frozen=True)
class Diagnostics:
    variance_ratio: float | None
    balanced: bool
    size_ratio: float
    smallest_group: int
    notes: tuple[str, ...]


@dataclass(frozen=True)
class OmnibusResult:
    alpha: float
    groups: tuple[GroupSummary, ...]
    anova: AnovaTable
    welch: HypothesisTest | Unavailable
    brown_forsythe: HypothesisTest | Unavailable
    kruskal_wallis: HypothesisTest | Unavailable
    levene: HypothesisTest | Unavailable
    shapiro_wilk: HypothesisTest | Unavailable
    effect_sizes: EffectSizes
    diagnostics: Diagnostics


def anova_table(data: OneWayData) -> AnovaTable:
    """The classical one-way ANOVA table from two-pass centred sums."""
    data.require_error_df()
    ss_between, ss_within = data.between_ss, data.within_ss
    if ss_within == 0.0:
        if ss_between == 0.0:
            raise DataError("constant-data", "all values are identical: F is undefined (0/0)", "/groups")
        raise DataError(
            "zero-variance",
            "every group is constant but the means differ: the within-group variance is zero "
            "and F is infinite",
            "/groups",
        )
    df_between, df_within = data.k - 1, data.df_within
    ms_between, ms_within = ss_between / df_between, ss_within / df_within
    f = ms_between / ms_within
    ss_total = ss_between + ss_within
    return AnovaTable(
        between=SourceRow(df_between, ss_between, ms_between),
        within=SourceRow(df_within, ss_within, ms_within),
        total=SourceRow(data.n_total - 1, ss_total, None),
        f=f,
        p_value=float(stats.f.sf(f, df_between, df_within)),
        residual_sd=math.sqrt(ms_within),
        r_squared=ss_between / ss_total,
    )


def _checked(result: HypothesisTest, what: str) -> HypothesisTest | Unavailable:
    """A test whose statistic or p-value is not finite is reported unavailable."""
    values = (result.statistic, result.df_num, result.df_den or 1.0, result.p_value)
    if all(math.isfinite(v) for v in values):
        return result
    return Unavailable(f"{what} is undefined for these data (a degenerate spread)")


def welch_anova(data: OneWayData) -> HypothesisTest | Unavailable:
    """Welch's (1951) test of equal means without equal variances."""
    if np.any(data.sizes < 2):
        return Unavailable("every group needs at least two values")
    var = data.variances
    if np.any(var <= 0.0):
        return Unavailable("a group has zero variance, so its weight n/s² is infinite")
    k = data.k
    w = data.sizes / var
    total_w = w.sum()
    weighted_mean = np.sum(w * data.mean_deviations) / total_w
    a = np.sum(w * (data.mean_deviations - weighted_mean) ** 2) / (k - 1)
    lam = np.sum((1.0 - w / total_w) ** 2 / (data.sizes - 1.0))
    b = 1.0 + 2.0 * (k - 2.0) / (k * k - 1.0) * lam
    f = a / b
    df_den = (k * k - 1.0) / (3.0 * lam)
    return _checked(HypothesisTest(float(f), k - 1.0, float(df_den), float(stats.f.sf(f, k - 1, df_den))),
                    "Welch's test")


def brown_forsythe_means(data: OneWayData) -> HypothesisTest | Unavailable:
    """Brown and Forsythe's (1974a) F* test of equal means."""
    if np.any(data.sizes < 2):
        return Unavailable("every group needs at least two values")
    n, var = data.sizes, data.variances
    weights = (1.0 - n / data.n_total) * var
    denominator = weights.sum()
    if denominator <= 0.0:
        return Unavailable("every group is constant")
    f = data.between_ss / denominator
    c = weights / denominator
    df_den = 1.0 / np.sum(c * c / (n - 1.0))
    return _checked(
        HypothesisTest(float(f), data.k - 1.0, float(df_den), float(stats.f.sf(f, data.k - 1, df_den))),
        "The Brown-Forsythe test")


def kruskal_wallis(data: OneWayData) -> HypothesisTest | Unavailable:
    """Kruskal-Wallis H with the tie correction (scipy.stats.kruskal)."""
    if np.ptp(np.concatenate(data.deviations)) == 0.0:
        return Unavailable("all values are tied")
    h, p = stats.kruskal(*data.deviations)
    return _checked(HypothesisTest(float(h), data.k - 1.0, None, float(p)), "Kruskal-Wallis")


def levene_median(data: OneWayData) -> HypothesisTest | Unavailable:
    """Levene's test on absolute deviations from group medians (Brown and
    Forsythe 1974b): the one-way ANOVA F of z_ij = |x_ij - median_i| on
    (k - 1, N - k) degrees of freedom, as scipy.stats.levene(center="median")
    computes it.

    The z_ij come from the exact decimals, so that deviations equal in
    decimal arithmetic are equal as floats, and the group means of z are
    exactly rounded sums (math.fsum): a degenerate design (equal z within
    every group) is recognised as such, and equal means of z give F = 0 in
    any order of groups and values, rather than a test of rounding noise.
    """
    if np.any(data.sizes < 2):
        return Unavailable("every group needs at least two values")
    within = data.absolute_median_deviations()
    if np.ptp(np.concatenate(within)) == 0.0:
        return Unavailable("the absolute deviations from the medians are all equal")
    if all(np.ptp(z) == 0.0 for z in within):
        return Unavailable("within every group the absolute deviations from the median are equal")
    means = np.array([math.fsum(z) / z.size for z in within])
    df_between, df_within = data.k - 1.0, float(data.df_within)
    if np.ptp(means) == 0.0:
        statistic = 0.0
    else:
        within_ss = math.fsum(math.fsum((z - m) ** 2) for z, m in zip(within, means, strict=True))
        grand = math.fsum(math.fsum(z) for z in within) / data.n_total
        between_ss = math.fsum(z.size * (m - grand) ** 2 for z, m in zip(within, means, strict=True))
        statistic = (between_ss / df_between) / (within_ss / df_within)
    p = float(stats.f.sf(statistic, df_between, df_within))
    return _checked(HypothesisTest(float(statistic), df_between, df_within, p), "Levene's test")


def shapiro_wilk_residuals(data: OneWayData) -> HypothesisTest | Unavailable:
    """Shapiro-Wilk W on the pooled residuals (scipy.stats.shapiro)."""
    residuals = data.residuals()
    if not 3 <= residuals.size <= SHAPIRO_MAX_N:
        return Unavailable(f"Shapiro-Wilk needs 3 to {SHAPIRO_MAX_N} residuals")
    if np.ptp(residuals) == 0.0:
        return Unavailable("the residuals are all zero")
    with np.errstate(divide="ignore", invalid="ignore"):
        w, p = stats.shapiro(residuals)
    return _checked(HypothesisTest(float(w), float(residuals.size), None, float(p)), "Shapiro-Wilk")


def effect_sizes(data: OneWayData, table: AnovaTable, alpha: float) -> EffectSizes:
    """eta², omega², Cohen's f, and the 1 - alpha interval for eta² (Steiger 2004)."""
    eta2 = table.between.ss / table.total.ss
    ms_within = table.within.ms
    omega2 = (table.between.ss - table.between.df * ms_within) / (table.total.ss + ms_within)
    cohens_f = math.sqrt(eta2 / (1.0 - eta2)) if eta2 < 1.0 else math.inf
    low, high = _noncentrality_interval(table.f, table.between.df, table.within.df, alpha)
    n = data.n_total
    return EffectSizes(
        eta_squared=eta2,
        eta_squared_ci_low=low / (low + n),
        eta_squared_ci_high=high / (high + n),
        omega_squared=omega2,
        cohens_f=cohens_f,
        confidence_level=1.0 - alpha,
    )


def _noncentrality_interval(f: float, df1: int, df2: int, alpha: float) -> tuple[float, float]:
    """Noncentrality parameters whose noncentral F puts the observed F at the
    1 - alpha/2 and alpha/2 quantiles (0 when the central F already does).

    Where scipy's noncentral F gives no number (noncentrality beyond about
    1e10, that is F beyond about 1e9), the limit for large noncentrality is
    used: chi'^2(df1, lam) / lam -> 1, so F -> (lam / df1) / (chi^2_df2 / df2)
    and lam = F df1 chi^2_{df2; q} / df2 (q the lower alpha/2 quantile for the
    lower end, the upper one for the upper end); its relative error is of
    order sqrt(2 / lam), below 1e-5 there.
    """

    def cdf_minus(target: float):
        return lambda lam: stats.ncf.cdf(f, df1, df2, lam) - target

    def asymptotic(target: float) -> float:
        return float(f * df1 * stats.chi2.isf(target, df2) / df2)

    def solve(target: float) -> float:
        if stats.f.cdf(f, df1, df2) <= target:
            return 0.0
        hi = max(10.0, 2.0 * f * df1)
        gap = cdf_minus(target)(hi)
        while gap > 0.0:
            hi *= 2.0
            gap = cdf_minus(target)(hi)
        if not (math.isfinite(gap) and math.isfinite(cdf_minus(target)(0.0))):
            return asymptotic(target)
        try:
            return float(optimize.brentq(cdf_minus(target), 0.0, hi, xtol=1e-10, rtol=1e-12))
        except ValueError:  # a NaN met inside the bracket
            return asymptotic(target)

    return solve(1.0 - alpha / 2.0), solve(alpha / 2.0)


def diagnostics(
    data: OneWayData,
    table: AnovaTable,
    levene: HypothesisTest | Unavailable,
    shapiro: HypothesisTest | Unavailable,
    alpha: float,
) -> Diagnostics:
    """Variance ratio, balance, and what each finding means for the follow-up."""
    var = data.variances[data.sizes > 1]
    ratio: float | None = None
    beyond_range = False
    if var.size >= 2 and var.min() > 0.0:
        with np.errstate(over="ignore"):
            ratio = float(var.max() / var.min())
        if not math.isfinite(ratio):
            ratio, beyond_range = None, True
    sizes = data.sizes
    balanced = bool(np.all(sizes == sizes[0]))
    size_ratio = float(sizes.max() / sizes.min())
    notes: list[str] = []
    unequal = beyond_range or (ratio is not None and ratio > MARKED_VARIANCE_RATIO) or (
        isinstance(levene, HypothesisTest) and levene.p_value < alpha
    )
    if unequal:
        if ratio is not None:
            described = f"largest/smallest variance {ratio:.3g}"
        elif beyond_range:
            described = "largest/smallest variance beyond double range"
        else:
            described = "a zero variance"
        levene_text = (
            f", Levene (median) p = {levene.p_value:.3g}" if isinstance(levene, HypothesisTest) else ""
        )
        notes.append(
            f"Group variances look unequal ({described}{levene_text}). The classical F test and "
            "pooled-variance comparisons (Tukey-Kramer, Dunnett) can then be misleading, above "
            "all with unequal group sizes: prefer Welch's test and Games-Howell comparisons."
        )
    else:
        notes.append(
            "No marked difference between group variances was found; pooled-variance methods "
            "are reasonable (a non-significant Levene test does not prove equal variances)."
        )
    if isinstance(shapiro, HypothesisTest) and shapiro.p_value < alpha:
        if sizes.min() < SMALL_GROUP:
            notes.append(
                f"The residuals depart from normality (Shapiro-Wilk p = {shapiro.p_value:.3g}) "
                "and some groups are small: consider the rank-based Kruskal-Wallis test and "
                "Dunn's comparisons, or a transformation chosen on scientific grounds."
            )
        else:
            notes.append(
                f"The residuals depart from normality (Shapiro-Wilk p = {shapiro.p_value:.3g}); "
                "with groups of this size the mean-based tests are usually robust, but check "
                "for outliers and skew."
            )
    if not balanced:
        if size_ratio > MARKED_IMBALANCE:
            notes.append(
                f"The design is very unbalanced (largest/smallest group size {size_ratio:.3g}): "
                "Tukey-Kramer intervals are conservative, and unequal variances do more harm."
            )
        else:
            notes.append("Group sizes differ slightly; the methods used allow for unequal sizes.")
    if table.p_value >= alpha:
        notes.append(
            f"The omnibus F test is not significant at alpha = {alpha:g}. This does not show "
            "that the means are equal, and planned contrasts or comparisons with a control may "
            "still be tested as planned; Fisher's protected LSD stops here."
        )
    return Diagnostics(
        variance_ratio=ratio,
        balanced=balanced,
        size_ratio=size_ratio,
        smallest_group=int(sizes.min()),
        notes=tuple(notes),
    )


def omnibus(data: OneWayData, alpha: float = 0.05) -> OmnibusResult:
    """Everything the omnibus analysis of a one-way layout reports."""
    table = anova_table(data)
    levene = levene_median(data)
    shapiro = shapiro_wilk_residuals(data)
    return OmnibusResult(
        alpha=alpha,
        groups=summarise(data, alpha),
        anova=table,
        welch=welch_anova(data),
        brown_forsythe=brown_forsythe_means(data),
        kruskal_wallis=kruskal_wallis(data),
        levene=levene,
        shapiro_wilk=shapiro,
        effect_sizes=effect_sizes(data, table, alpha),
        diagnostics=diagnostics(data, table, levene, shapiro, alpha),
    )
