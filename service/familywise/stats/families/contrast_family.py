"""Planned or post-hoc contrasts.

For a contrast c (coefficients summing to zero): estimate L = sum c_i m_i,
SE s * sqrt(sum c_i^2 / n_i), t = L / SE on N - k df, its sum of squares
L^2 / sum(c_i^2 / n_i) and F = SS / MSE = t^2 (Scheffé 1959, ch. 3).

Adjustments
-----------
none
    Each contrast at level alpha: right for a small set of planned,
    orthogonal contrasts (orthogonal under the actual group sizes:
    sum c_i d_i / n_i = 0).
bonferroni, sidak, holm, benjamini_hochberg
    As for pairwise comparisons, over the m contrasts.
multivariate_t
    Exact simultaneous inference for this set: the maximum of |T| for the
    set's own correlation, corr(L_a, L_b) = sum c_ai c_bi / n_i over the
    product of the SE factors. A product-structured correlation (for
    example treatments against one reference) goes to the exact many-to-one
    code; any other to randomised quasi-Monte Carlo with a fixed seed and a
    stated error bound (see distributions.multivariate_t).
scheffe
    Any contrast, even one chosen after seeing the data: multiplier
    sqrt((k - 1) F_{alpha; k-1, N-k}), p = P(F_{k-1, N-k} > t^2 / (k - 1))
    (Scheffé 1953).

References
----------
Scheffé, H. (1953). A method for judging all contrasts in the analysis of
variance. Biometrika 40, 87-104.
Scheffé, H. (1959). The Analysis of Variance. Wiley.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import stats

from familywise.stats.data import OneWayData
from familywise.stats.distributions import many_to_one_curve
from familywise.stats.distributions.multivariate_t import MaxAbsT, product_lambdas
from familywise.stats.errors import DataError
from familywise.stats.families._common import (
    POOLED_T_METHODS,
    Comparison,
    FamilyResult,
    agreeing_critical_value,
    pooled,
    pooled_t_family,
)

ADJUSTMENT_NAMES = ("none", "bonferroni", "sidak", "holm", "benjamini_hochberg", "multivariate_t", "scheffe")
#: Most contrasts whose correlation has no product structure that the
#: multivariate t takes (by quasi-Monte Carlo, whose cost grows as m^3: about
#: ten seconds at this size on one core); larger sets are refused with the
#: alternatives named.
MAX_GENERAL_MULTIVARIATE_T = 60


def contrast_family(
    data: OneWayData,
    names: Sequence[str],
    matrix: np.ndarray,
    adjustment: str = "none",
    alpha: float = 0.05,
) -> FamilyResult:
    """Estimates, SE, t, p, SS, F and intervals of the contrasts in ``matrix``
    (one row per contrast, one column per group, rows summing to zero)."""
    if adjustment not in ADJUSTMENT_NAMES:
        raise DataError("adjustment", f"adjustment must be one of {', '.join(ADJUSTMENT_NAMES)}",
                        "/adjustment")
    s, df = pooled(data)
    c = np.asarray(matrix, dtype=float)
    m = c.shape[0]
    # Each row is computed scaled by a power of two near its largest |c_i|
    # (exact), so that coefficients of any magnitude neither underflow nor
    # overflow in sum c_i^2 / n_i; t, p, SS and F do not depend on the scale.
    scale = np.exp2(np.floor(np.log2(np.max(np.abs(c), axis=1))))[:, None]
    unit = c / scale
    unit_estimate = data.contrast_estimates(unit)
    unit_factor = np.sqrt(np.sum(unit * unit / data.sizes, axis=1))
    estimate = unit_estimate * scale[:, 0]
    se = s * unit_factor * scale[:, 0]
    t = unit_estimate / (s * unit_factor)
    ss = unit_estimate**2 / unit_factor**2
    f = ss / data.pooled_variance
    raw = 2.0 * stats.t.sf(np.abs(t), df)
    notes: list[str] = []
    interval = "simultaneous"
    error_rate = "familywise"
    probability_error = None
    critical: float | None
    if adjustment in POOLED_T_METHODS:
        family = pooled_t_family(raw, df, alpha, adjustment)
        p, critical = family.p_values, family.critical_value
        error_rate, interval = family.error_rate, family.interval
        notes.extend(family.notes)
        if adjustment == "none" and m > 1:
            notes.append("Unadjusted: each contrast is tested at alpha. This is justified for a few "
                         "planned contrasts that are orthogonal under the actual group sizes "
                         "(check with /v1/contrasts/validate); otherwise choose an adjustment.")
    elif adjustment == "scheffe":
        q = data.k - 1
        p = stats.f.sf(t * t / q, q, df)
        critical = math.sqrt(q * stats.f.isf(alpha, q, df))
        notes.append("Scheffé's intervals hold simultaneously for every contrast, including those "
                     "chosen after looking at the data.")
    else:
        p, critical, probability_error, how = _multivariate_t(unit, data.sizes, np.abs(t), df, alpha)
        notes.append(how)
    if critical is not None:
        critical = agreeing_critical_value(critical, np.abs(t), p, alpha)
        low, high = estimate - critical * se, estimate + critical * se
    else:
        low = high = [None] * m
    rows = tuple(
        Comparison(
            first=None, second=None, name=names[r], difference=float(estimate[r]), se=float(se[r]),
            statistic=float(t[r]), df=df, p_value=float(p[r]),
            ci_low=None if low[r] is None else float(low[r]),
            ci_high=None if high[r] is None else float(high[r]),
            significant=bool(p[r] < alpha), unadjusted_p_value=float(raw[r]),
            ss=float(ss[r]), f=float(f[r]),
        )
        for r in range(m)
    )
    found = [row.name for row in rows if row.significant]
    rate = {"familywise": "familywise", "false_discovery": "false-discovery"}.get(error_rate, "per-contrast")
    if found:
        summary = (f"{len(found)} of {m} contrasts are non-zero at {rate} alpha = {alpha:g} "
                   f"({adjustment.replace('_', ' ')}): {', '.join(found)}.")
    else:
        summary = f"No contrast is non-zero at {rate} alpha = {alpha:g} ({adjustment.replace('_', ' ')})."
    return FamilyResult(
        family="contrasts", method=adjustment, alpha=alpha, error_rate=error_rate,
        critical_value=critical, comparisons=rows, summary=summary, notes=tuple(notes), error_df=df,
        pooled_sd=s, interval=interval, probability_error=probability_error,
    )


def contrast_correlation(matrix: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    """corr(L_a, L_b) = sum c_ai c_bi / n_i / (||c_a|| ||c_b||), norms weighted by 1/n."""
    weighted = matrix / sizes
    cov = weighted @ matrix.T
    scale = np.sqrt(np.diag(cov))
    return cov / np.outer(scale, scale)


def _multivariate_t(matrix, sizes, abs_t, df, alpha):
    m = matrix.shape[0]
    if m > 1 and np.linalg.matrix_rank(matrix / np.sqrt(sizes)) < m:
        raise DataError("rank", "the contrasts are linearly dependent: their correlation matrix is "
                        "singular; drop the redundant ones or use Scheffé", "/contrasts")
    corr = contrast_correlation(matrix, sizes)
    lam = product_lambdas(corr)
    if lam is not None:
        curve = many_to_one_curve(lam, df)
        p = curve.sf(abs_t)
        critical = curve.isf(alpha)
        return p, critical, None, ("The contrasts' correlation has product structure: exact "
                                   "many-to-one probabilities (Dunnett 1955).")
    if m > MAX_GENERAL_MULTIVARIATE_T:
        raise DataError("multivariate_t_size", f"the multivariate t for {m} contrasts whose correlation has no "
                        f"product structure is limited to {MAX_GENERAL_MULTIVARIATE_T} contrasts (its cost grows "
                        "as the cube of their number); use holm or sidak (familywise, valid for any "
                        "correlation) or scheffe", "/adjustment")
    exact = MaxAbsT(corr, df)
    p, error = exact.sf(abs_t)
    critical = exact.isf(alpha)
    how = (f"Probabilities for this correlation by randomised quasi-Monte Carlo with a fixed seed "
           f"(Genz and Bretz 2002); absolute error at most {error:.1g} (3.5 standard errors).")
    return np.clip(p, 0.0, 1.0), critical, error, how
