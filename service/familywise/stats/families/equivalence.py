"""Equivalence and non-inferiority of each candidate against a reference group.

For each candidate i: d = m_i - m_ref, pooled SE s * sqrt(1/n_i + 1/n_ref),
N - k df, margin delta > 0 in data units. Two one-sided tests (Schuirmann
1987):

    lower test   H0: theta <= -delta   t_L = (d + delta) / SE   large t_L rejects
    upper test   H0: theta >= +delta   t_U = (d - delta) / SE   small t_U rejects

``equivalence`` concludes -delta < theta < delta when both reject (p = the
larger of the two p-values), ``non_inferiority`` theta > -delta from the lower
test alone, ``non_superiority`` theta < delta from the upper test alone.

Methods
-------
tost
    Each candidate at level alpha (per comparison); the matching interval is
    the 1 - 2 alpha interval d -/+ t_{1-alpha} SE.
bonferroni_tost
    Each candidate at alpha / m: familywise in every configuration.
dunnett_tost
    Simultaneous over the m candidates from the one-sided many-to-one
    distribution (Dunnett 1955; lambda_i = sqrt(n_i / (n_i + n_ref))): the
    critical value c with P(max_i T_i > c) = alpha. The familywise error is
    exactly alpha when every candidate that is not equivalent lies beyond
    the same side of the margin; when non-equivalent candidates may lie on
    both sides the one-sided statistics are negatively correlated and the
    error can exceed alpha slightly (computed with the same distribution and
    signed lambdas, at alpha = 5% and equal group sizes: 5.5% for two
    candidates and 5.7% for four with infinite df, 5.6% and 5.8% with 20 df).
    bonferroni_tost guards that case.

The conclusion and the interval agree: a candidate is equivalent exactly when
its interval d -/+ c SE lies inside (-delta, delta) (Berger and Hsu 1996).

References
----------
Schuirmann, D. J. (1987). A comparison of the two one-sided tests procedure
and the power approach for assessing the equivalence of average
bioavailability. J. Pharmacokinetics and Biopharmaceutics 15, 657-680.
Berger, R. L. and Hsu, J. C. (1996). Bioequivalence trials, intersection-union
tests and equivalence confidence sets. Statistical Science 11, 283-319.
Dunnett, C. W. (1955). JASA 50, 1096-1121.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from familywise.stats.data import OneWayData
from familywise.stats.distributions import many_to_one_curve
from familywise.stats.errors import DataError
from familywise.stats.families._common import Comparison, FamilyResult, mean_differences, pooled

KINDS = ("equivalence", "non_inferiority", "non_superiority")
_FLAG = {"equivalence": "equivalent", "non_inferiority": "non_inferior", "non_superiority": "non_superior"}
_ADJECTIVE = {"equivalence": "equivalent", "non_inferiority": "non-inferior", "non_superiority": "non-superior"}
METHODS = ("dunnett_tost", "bonferroni_tost", "tost")


def equivalence_family(
    data: OneWayData,
    reference: str,
    margin: float,
    relative: bool = False,
    kind: str = "equivalence",
    method: str = "dunnett_tost",
    alpha: float = 0.05,
) -> FamilyResult:
    """Each candidate against ``reference`` within ``margin`` (absolute, or
    ``relative`` to the reference mean's magnitude)."""
    if kind not in KINDS:
        raise DataError("kind", f"kind must be one of {', '.join(KINDS)}", "/kind")
    if method not in METHODS:
        raise DataError("method", f"method must be one of {', '.join(METHODS)}", "/method")
    if reference not in data.labels:
        raise DataError("unknown-group", f"no group is labelled {reference!r}", "/reference")
    if not margin > 0.0 or not math.isfinite(margin):
        raise DataError("margin", "the margin must be a positive number", "/margin")
    s, df = pooled(data)
    r = data.labels.index(reference)
    if relative:
        reference_mean = float(data.means[r])
        if reference_mean == 0.0:
            raise DataError("relative-margin", "a relative margin needs a reference mean other than zero",
                            "/margin/relative")
        delta = margin * abs(reference_mean)
    else:
        delta = margin
    candidates = np.array([g for g in range(data.k) if g != r])
    m = candidates.size
    d = mean_differences(data, candidates, np.full(m, r))
    se = s * np.sqrt(1.0 / data.sizes[candidates] + 1.0 / data.sizes[r])
    t_lower = (d + delta) / se
    t_upper = (d - delta) / se
    # per-side p-values, adjusted for the family as the method says
    if method == "tost":
        p_lower = special.stdtr(df, -t_lower)
        p_upper = special.stdtr(df, t_upper)
        critical = float(-special.stdtrit(df, alpha))
        error_rate = "per_comparison"
        interval = "per_comparison"
    elif method == "bonferroni_tost":
        p_lower = np.minimum(1.0, m * special.stdtr(df, -t_lower))
        p_upper = np.minimum(1.0, m * special.stdtr(df, t_upper))
        critical = float(-special.stdtrit(df, alpha / m))
        error_rate = "familywise"
        interval = "simultaneous"
    else:
        lam = np.sqrt(data.sizes[candidates] / (data.sizes[candidates] + data.sizes[r]))
        curve = many_to_one_curve(lam, df, "one_sided")
        p_lower = curve.sf(t_lower)
        p_upper = curve.sf(-t_upper)
        critical = curve.isf(alpha)
        error_rate = "familywise"
        interval = "simultaneous"
    if kind == "equivalence":
        p = np.maximum(p_lower, p_upper)
        low, high = d - critical * se, d + critical * se
        concluded = (low > -delta) & (high < delta)
    elif kind == "non_inferiority":
        p = p_lower
        low, high = d - critical * se, np.full(m, np.nan)
        concluded = low > -delta
    else:
        p = p_upper
        low, high = np.full(m, np.nan), d + critical * se
        concluded = high < delta
    # The interval decides; p-values at the boundary agree to the last bits.
    rows = []
    for i, g in enumerate(candidates):
        label = data.labels[g]
        rows.append(Comparison(
            first=label, second=reference, difference=float(d[i]), se=float(se[i]),
            statistic=float(min(t_lower[i], -t_upper[i]) if kind == "equivalence"
                            else (t_lower[i] if kind == "non_inferiority" else -t_upper[i])),
            df=df, p_value=float(p[i]),
            ci_low=None if math.isnan(low[i]) else float(low[i]),
            ci_high=None if math.isnan(high[i]) else float(high[i]),
            significant=bool(concluded[i]),
            p_lower=float(p_lower[i]), p_upper=float(p_upper[i]),
            conclusion=_sentence(label, kind, bool(concluded[i]), delta, low[i], high[i]),
            **{_FLAG[kind]: bool(concluded[i])},
        ))
    level = 1.0 - 2.0 * alpha if method == "tost" and kind == "equivalence" else 1.0 - alpha
    notes = [f"Margin: ±{delta:.6g} in data units"
             + (f" ({margin:g} of the reference mean's magnitude)" if relative else " (absolute)") + ".",
             f"Intervals: {'per candidate' if method == 'tost' else 'simultaneous'} at level {level:g}"
             f"{' (the 1 - 2 alpha interval of TOST)' if method == 'tost' and kind == 'equivalence' else ''}."]
    if method == "tost" and m > 1:
        notes.append(f"Per-comparison error: with {m} candidates the chance that at least one is wrongly "
                     f"called {_ADJECTIVE[kind]} can reach {min(1.0, m * alpha):.3g}.")
    if method == "dunnett_tost" and kind == "equivalence" and m > 1:
        notes.append("The familywise guarantee of dunnett_tost is exact when the candidates that are not "
                     "equivalent lie beyond the same side of the margin; if they may lie on both sides, "
                     "use bonferroni_tost for a guarantee in every configuration.")
    concluded_labels = [row.first for row in rows if row.significant]
    verb = {"equivalence": "equivalent to", "non_inferiority": "non-inferior to",
            "non_superiority": "non-superior to"}[kind]
    summary = (f"{len(concluded_labels)} of {m} candidates are {verb} {reference!r} within ±{delta:.4g} "
               f"({method.replace('_', ' ')}, alpha = {alpha:g})"
               + (f": {', '.join(concluded_labels)}." if concluded_labels else "."))
    return FamilyResult(
        family="equivalence", method=method, alpha=alpha, error_rate=error_rate,
        critical_value=critical, comparisons=tuple(rows), summary=summary, notes=tuple(notes),
        error_df=df, pooled_sd=s, alternative=kind, interval=interval,
        extra={"reference": reference, "margin": delta, "margin_kind": "relative" if relative else "absolute",
               "kind": kind},
    )


def _sentence(label: str, kind: str, concluded: bool, delta: float, low: float, high: float) -> str:
    if kind == "equivalence":
        if concluded:
            return f"{label} is within ±{delta:.4g} of the reference."
        reach = max(abs(low), abs(high))
        return f"{label}: cannot conclude equivalence: the interval reaches {reach:.4g}."
    if kind == "non_inferiority":
        if concluded:
            return f"{label} is not worse than the reference by {delta:.4g} or more."
        return f"{label}: cannot conclude non-inferiority: the interval reaches {low:.4g}."
    if concluded:
        return f"{label} is not better than the reference by {delta:.4g} or more."
    return f"{label}: cannot conclude non-superiority: the interval reaches {high:.4g}."
