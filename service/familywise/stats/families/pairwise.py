"""All pairwise comparisons.

Rows come in the order of the groups: (1, 2), (1, 3), ..., (k-1, k), with
``difference = mean(first) - mean(second)``.

Methods
-------
tukey_kramer
    Pooled SE s * sqrt(1/n_i + 1/n_j), p-values and the simultaneous
    multiplier from the studentized range with k groups and N - k df
    (Tukey 1953; Kramer 1956). Exact for equal n, conservative for unequal n
    (Hayter 1984).
lsd
    Fisher's least significant difference: the unadjusted pooled t test of
    each pair, with per-comparison t intervals. It controls the error of each
    comparison only. Protected (Fisher 1935) it declares a pair different only
    when the omnibus F test and the pair's t test are both significant; its
    p-value is then max(p_pair, p_F), the smallest alpha at which the
    protected procedure declares the pair (the adjusted p-value of a
    sequential procedure, Wright 1992), so ``significant`` is ``p < alpha``
    as in every family. When the F test is significant, p < alpha exactly
    when p_pair < alpha, and the per-comparison t intervals agree with the
    decisions; when it is not, no pair is declared and no intervals are given
    (``interval`` "none", a note says why): an interval that excluded zero
    would state a difference the procedure does not declare. The protection
    controls the familywise error rate when all means are equal, and for any
    configuration of means only with three groups (Hayter 1986), so the
    error rate reported stays per comparison.
bonferroni, sidak
    Pooled t with p multiplied by m = k(k-1)/2 (Dunn 1961), or 1 - (1 - p)^m
    (Šidák 1967); intervals with the matching t quantile.
holm
    Holm's (1979) step-down on the pooled t p-values (no intervals).
games_howell
    Unequal variances: SE sqrt(s_i²/n_i + s_j²/n_j), Welch-Satterthwaite df
    per pair, studentized range with k groups (Games and Howell 1976). The
    p-values are one vectorised call of the studentized range; each pair's
    critical value is the range quantile at its own df, computed exactly for
    each distinct df when there are few, and otherwise read from a piecewise
    Chebyshev interpolant of log q in log df built on exact quantiles (see
    ``range_quantiles``; within 1e-12 relative of the exact quantile).
benjamini_hochberg
    False-discovery rate (Benjamini and Hochberg 1995) on the pooled t
    p-values, for screening many groups (no intervals).
dunn
    Rank-based: mean ranks of the pooled sample, z with the tie correction
    (Dunn 1964, eq. for z_ij), then an adjustment (Holm by default).

References
----------
Tukey, J. W. (1953). The problem of multiple comparisons. Unpublished
manuscript, reprinted in Collected Works VIII (1994).
Kramer, C. Y. (1956). Extension of multiple range tests to group means with
unequal numbers of replications. Biometrics 12, 307-310.
Hayter, A. J. (1984). A proof of the conjecture that the Tukey-Kramer multiple
comparisons procedure is conservative. Annals of Statistics 12, 61-75.
Games, P. A. and Howell, J. F. (1976). Pairwise multiple comparison procedures
with unequal n's and/or variances. J. Educational Statistics 1, 113-125.
Dunn, O. J. (1964). Multiple comparisons using rank sums. Technometrics 6, 241-252.
Fisher, R. A. (1935). The Design of Experiments.
Hayter, A. J. (1986). The maximum familywise error rate of Fisher's least
significant difference test. JASA 81, 1000-1004.
Wright, S. P. (1992). Adjusted P-values for simultaneous inference.
Biometrics 48, 1005-1013.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy import special, stats

from familywise.stats.data import OneWayData
from familywise.stats.distributions import (
    studentized_range_curve,
    studentized_range_isf,
    studentized_range_sf,
)
from familywise.stats.errors import DataError
from familywise.stats.families._common import (
    ADJUSTMENTS,
    FamilyResult,
    agreeing_critical_value,
    comparison_rows,
    mean_differences,
    pooled,
    pooled_t_family,
)
from familywise.stats.letters import compact_letter_display

METHODS = ("tukey_kramer", "lsd", "bonferroni", "sidak", "holm", "games_howell",
           "benjamini_hochberg", "dunn")
DUNN_ADJUSTMENTS = ("holm", "bonferroni", "sidak", "benjamini_hochberg", "none")
SQRT2 = math.sqrt(2.0)


@lru_cache(maxsize=256)
def pairs(k: int) -> tuple[np.ndarray, np.ndarray]:
    """Index arrays of the pairs (i < j) in row order (cached; read-only)."""
    first, second = np.triu_indices(k, 1)
    first.setflags(write=False)
    second.setflags(write=False)
    return first, second


def pairwise(
    data: OneWayData,
    method: str = "tukey_kramer",
    alpha: float = 0.05,
    *,
    protected: bool = False,
    dunn_adjustment: str = "holm",
    omnibus_p_value: float | None = None,
) -> FamilyResult:
    """All pairwise comparisons by ``method`` (see the module docstring)."""
    if method not in METHODS:
        raise DataError("method", f"unknown pairwise method {method!r}", "/method")
    if protected and method != "lsd":
        raise DataError("contradiction", "protected applies only to method lsd (Fisher's protected "
                        f"LSD), not to {method}", "/protected")
    if method == "dunn":
        return _dunn(data, alpha, dunn_adjustment)
    if method == "games_howell":
        return _games_howell(data, alpha)
    s, df = pooled(data)
    first, second = pairs(data.k)
    m = first.size
    diff = mean_differences(data, first, second)
    se = s * np.sqrt(1.0 / data.sizes[first] + 1.0 / data.sizes[second])
    t = diff / se
    raw = 2.0 * special.stdtr(df, -np.abs(t))
    notes: list[str] = []
    interval = "simultaneous"
    error_rate = "familywise"
    if method == "tukey_kramer":
        curve = studentized_range_curve(data.k, df)
        p = curve.sf(np.abs(t) * SQRT2)
        critical = curve.isf(alpha) / SQRT2
        if not np.all(data.sizes == data.sizes[0]):
            notes.append("Group sizes differ: the Tukey-Kramer intervals are conservative "
                         "(their joint coverage is at least, not exactly, 1 - alpha).")
    else:
        family = pooled_t_family(raw, df, alpha, "none" if method == "lsd" else method)
        p, critical = family.p_values, family.critical_value
        error_rate, interval = family.error_rate, family.interval
        notes.extend(family.notes)
        if method == "lsd":
            notes.append(
                f"Unadjusted t tests: each comparison has error rate alpha, but the chance of at least "
                f"one false difference among the {m} pairs is up to {min(1.0, m * alpha):.3g} "
                f"(Bonferroni bound; {1 - (1 - alpha) ** m:.3g} were the tests independent)."
            )
    if method == "lsd" and protected:
        if omnibus_p_value is None:
            raise DataError("protected-lsd", "the protected LSD needs the omnibus p-value", "/protected")
        # Fisher's protected LSD declares a pair when both the F test and the
        # pair's t test reject: its adjusted p-value is the larger of the two.
        p = np.maximum(raw, omnibus_p_value)
        if omnibus_p_value >= alpha:
            critical, interval = None, "none"
            notes.append(f"Protected LSD: the omnibus F test is not significant (p = {omnibus_p_value:.3g}), "
                         "so no pair is declared different and no intervals are given. Each p-value is the "
                         "larger of the pair's t-test p-value and the omnibus p-value (the smallest alpha at "
                         "which the protected procedure would declare the pair); the t-test p-value is "
                         "reported unadjusted beside it.")
        else:
            notes.append(f"Protected LSD: the omnibus F test is significant (p = {omnibus_p_value:.3g}). Each "
                         "p-value is the larger of the pair's t-test p-value and the omnibus p-value; the "
                         "intervals are the per-comparison t intervals, which exclude zero exactly for the "
                         "pairs declared different.")
    significant = p < alpha
    if critical is not None:
        critical = agreeing_critical_value(critical, np.abs(t), p, alpha)
        low, high = (diff - critical * se).tolist(), (diff + critical * se).tolist()
    else:
        low = high = [None] * m
    labels = data.labels
    rows = comparison_rows(
        first=[labels[i] for i in first.tolist()], second=[labels[j] for j in second.tolist()],
        difference=diff.tolist(), se=se.tolist(), statistic=t.tolist(), df=[df] * m, p_value=p.tolist(),
        ci_low=low, ci_high=high, significant=significant.tolist(), unadjusted_p_value=raw.tolist(),
    )
    return _finish(data, method, alpha, error_rate, critical, rows, notes, interval, df, s)


def _games_howell(data: OneWayData, alpha: float) -> FamilyResult:
    if np.any(data.sizes < 2):
        raise DataError("group-size", "Games-Howell needs at least two values in every group", "/groups")
    var = data.variances
    if np.any(var <= 0.0):
        g = int(np.flatnonzero(var <= 0.0)[0])
        raise DataError("zero-variance", f"group {data.labels[g]!r} has zero variance: "
                        "Games-Howell standard errors need every group's variance", f"/groups/{g}/values")
    first, second = pairs(data.k)
    diff = mean_differences(data, first, second)
    a, b = var[first] / data.sizes[first], var[second] / data.sizes[second]
    se = np.sqrt(a + b)
    df = (a + b) ** 2 / (a * a / (data.sizes[first] - 1.0) + b * b / (data.sizes[second] - 1.0))
    t = diff / se
    evidence = np.abs(t)
    p = studentized_range_sf(evidence * SQRT2, data.k, df)
    significant = p < alpha
    critical = range_quantiles(alpha, data.k, df) / SQRT2
    # Each row's own agreement rule (_common.agreeing_critical_value on one
    # row), vectorised: the interval excludes zero exactly when p < alpha.
    too_high = significant & (critical >= evidence)
    too_low = ~significant & (critical <= evidence)
    critical = np.where(too_high, np.nextafter(evidence, -np.inf) * (1.0 - 4e-16), critical)
    critical = np.where(too_low, np.nextafter(evidence, np.inf) * (1.0 + 4e-16), critical)
    labels = data.labels
    rows = comparison_rows(
        first=[labels[i] for i in first.tolist()], second=[labels[j] for j in second.tolist()],
        difference=diff.tolist(), se=se.tolist(), statistic=t.tolist(), df=df.tolist(), p_value=p.tolist(),
        ci_low=(diff - critical * se).tolist(), ci_high=(diff + critical * se).tolist(),
        significant=significant.tolist(), critical_value=critical.tolist(),
        unadjusted_p_value=(2.0 * special.stdtr(df, -evidence)).tolist(),
    )
    notes = ["Each pair has its own SE and Welch degrees of freedom, so each row carries its own "
             "critical value; the familywise error rate is controlled approximately."]
    return _finish(data, "games_howell", alpha, "familywise", None, rows, notes,
                   "simultaneous", None, None)


#: Up to this many distinct df (all designs up to 32 groups), range_quantiles
#: solves for each one: the results are then exactly studentized_range_isf's.
EXACT_QUANTILES = 512
#: The interpolant of log q in x = log df: panels at most PANEL_WIDTH wide,
#: PANEL_NODES Chebyshev nodes each; a panel is halved while its last four
#: coefficients exceed PANEL_TOLERANCE, down to MIN_PANEL_WIDTH.
PANEL_WIDTH = 0.5
PANEL_NODES = 16
PANEL_TOLERANCE = 2e-14
MIN_PANEL_WIDTH = 1.0 / 32.0


def range_quantiles(alpha: float, k: int, df: np.ndarray) -> np.ndarray:
    """The studentized range quantiles q with P(Q_{k, df_r} > q) = alpha for
    every df_r: studentized_range_isf's numbers, exactly for up to
    EXACT_QUANTILES distinct df and to within 1e-12 relative beyond, at a
    fraction of its cost.

    Many distinct df: log q is a smooth function of x = log df, interpolated
    on Chebyshev panels over the df present (see the PANEL_* constants;
    Chebyshev points of the first kind, coefficients by the discrete cosine
    sums). The last coefficients estimate the truncation error in log q,
    i.e. relative in q. The exact quantiles themselves scatter by up to
    about 2e-13 relative where the root-finder's quadrature is hardest (many
    groups, few df), which bounds what any interpolant can match, and why
    panels stop halving at MIN_PANEL_WIDTH. If the panels would need more
    than half as many exact quantiles as there are distinct df, each df is
    solved exactly instead. Deterministic: the panels depend only on the
    smallest and largest df.
    """
    distinct, inverse = np.unique(df, return_inverse=True)
    if distinct.size <= EXACT_QUANTILES:
        return np.array([studentized_range_isf(alpha, k, float(v)) for v in distinct])[inverse]
    x = np.log(distinct)
    panels = _quantile_panels(alpha, k, float(x[0]), float(x[-1]), distinct.size // 2)
    if panels is None:
        return np.array([studentized_range_isf(alpha, k, float(v)) for v in distinct])[inverse]
    out = np.empty(distinct.size)
    which = np.searchsorted([lo for lo, _, _ in panels[1:]], x, side="right")
    for index, (lo, hi, coef) in enumerate(panels):
        inside = which == index
        u = (2.0 * x[inside] - lo - hi) / (hi - lo)
        out[inside] = np.exp(np.polynomial.chebyshev.chebval(u, coef))
    return out[inverse]


def _quantile_panels(alpha: float, k: int, lo: float, hi: float, budget: int):
    """Panels (lo, hi, Chebyshev coefficients of log q in log df) covering
    [lo, hi] in order, or None when they would take more than ``budget``
    exact quantiles."""
    nodes = np.cos(np.pi * (np.arange(PANEL_NODES) + 0.5) / PANEL_NODES)
    basis = np.cos(np.outer(np.arange(PANEL_NODES), np.pi * (np.arange(PANEL_NODES) + 0.5) / PANEL_NODES))
    count = max(1, math.ceil((hi - lo) / PANEL_WIDTH))
    cuts = np.linspace(lo, hi, count + 1)
    pending = [(float(a), float(b)) for a, b in zip(cuts[-2::-1], cuts[:0:-1], strict=True)]
    done, used = [], 0
    while pending:
        a, b = pending.pop()
        used += PANEL_NODES
        if used > budget:
            return None
        points = 0.5 * (a + b) + 0.5 * (b - a) * nodes
        values = np.log([studentized_range_isf(alpha, k, float(math.exp(v))) for v in points])
        coef = basis @ values * (2.0 / PANEL_NODES)
        coef[0] *= 0.5
        if np.max(np.abs(coef[-4:])) <= PANEL_TOLERANCE or b - a <= MIN_PANEL_WIDTH:
            done.append((a, b, coef))
        else:
            middle = 0.5 * (a + b)
            pending += [(middle, b), (a, middle)]
    return done


def _dunn(data: OneWayData, alpha: float, adjustment: str) -> FamilyResult:
    if adjustment not in DUNN_ADJUSTMENTS:
        raise DataError("adjustment", f"Dunn's test takes one of {', '.join(DUNN_ADJUSTMENTS)}",
                        "/dunn_adjustment")
    pooled_values = np.concatenate(data.deviations)
    n = pooled_values.size
    ranks = stats.rankdata(pooled_values)
    _, ties = np.unique(pooled_values, return_counts=True)
    variance = n * (n + 1) / 12.0 - np.sum(ties**3 - ties) / (12.0 * (n - 1))
    if variance <= 0.0:
        raise DataError("constant-data", "all values are tied: ranks carry no information", "/groups")
    bounds = np.cumsum(np.concatenate([[0], data.sizes.astype(int)]))
    mean_ranks = np.array([ranks[bounds[g] : bounds[g + 1]].mean() for g in range(data.k)])
    first, second = pairs(data.k)
    rank_diff = mean_ranks[first] - mean_ranks[second]
    z = rank_diff / np.sqrt(variance * (1.0 / data.sizes[first] + 1.0 / data.sizes[second]))
    raw = 2.0 * stats.norm.sf(np.abs(z))
    p = ADJUSTMENTS[adjustment](raw)
    diff = mean_differences(data, first, second)
    m = first.size
    labels = data.labels
    rows = comparison_rows(
        first=[labels[i] for i in first.tolist()], second=[labels[j] for j in second.tolist()],
        difference=diff.tolist(), se=[None] * m, statistic=z.tolist(), df=[None] * m, p_value=p.tolist(),
        ci_low=[None] * m, ci_high=[None] * m, significant=(p < alpha).tolist(),
        unadjusted_p_value=raw.tolist(), rank_difference=rank_diff.tolist(),
    )
    error_rate = {"none": "per_comparison", "benjamini_hochberg": "false_discovery"}.get(
        adjustment, "familywise")
    notes = [f"Rank-based z statistics (mean-rank difference over its SE, tie-corrected), "
             f"{'unadjusted' if adjustment == 'none' else adjustment.replace('_', '-') + '-adjusted'}. "
             "The difference column is the difference in means, for orientation; the test is on ranks, "
             "so no interval is given."]
    result = _finish(data, "dunn", alpha, error_rate, None, rows, notes, "none", None, None)
    return FamilyResult(**{**result.__dict__, "extra": {"adjustment": adjustment}})


def _finish(data, method, alpha, error_rate, critical, rows, notes, interval, df, s) -> FamilyResult:
    k = data.k
    index = {label: g for g, label in enumerate(data.labels)}
    different = np.zeros((k, k), dtype=bool)
    for row in rows:
        i, j = index[row.first], index[row.second]
        different[i, j] = different[j, i] = row.significant
    display = compact_letter_display(data.labels, data.mean_deviations, different)
    found = sum(row.significant for row in rows)
    what = {"familywise": "familywise", "per_comparison": "per-comparison",
            "false_discovery": "false-discovery"}[error_rate]
    if found:
        strongest = min(rows, key=lambda r: r.p_value)
        summary = (f"{found} of {len(rows)} pairs differ at {what} alpha = {alpha:g} "
                   f"({method.replace('_', '-')}); the clearest is {strongest.first} vs {strongest.second} "
                   f"(difference {strongest.difference:.4g}, p = {strongest.p_value:.3g}).")
    else:
        summary = (f"No pair of the {k} groups differs at {what} alpha = {alpha:g} "
                   f"({method.replace('_', '-')}).")
    return FamilyResult(
        family="pairwise", method=method, alpha=alpha, error_rate=error_rate, critical_value=critical,
        comparisons=rows, summary=summary, notes=tuple(notes), error_df=df, pooled_sd=s,
        interval=interval, letters=display.letters, letters_note=display.note,
    )
