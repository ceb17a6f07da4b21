"""Equivalence and non-inferiority of each candidate against a reference group.

For each candidate i: d = m_i - m_ref, pooled SE s * sqrt(1/n_i + 1/n_ref),
N - k df, margin delta > 0 in data units. Two one-sided tests (Schuirmann
1987):

    lower test   H0: theta <= -delta   t_L = (d + delta) / SE   large t_L rejects
    upper test   H0: theta >= +delta   t_U = (d - delta) / SE   small t_U rejects

``equivalence`` concludes -delta < theta < delta when both reject (p = the
larger of the two p-values), ``non_inferiority`` theta > -delta from the lower
test alone, ``non_superiority`` theta < delta from the upper test alone. The
names follow the usual convention that a higher mean is better; the tests
themselves only say on which side of the reference the margin lies
(non_inferiority: the candidate is not lower by delta or more).

Methods
-------
tost
    Each candidate at level alpha (per comparison); the matching interval is
    the 1 - 2 alpha interval d -/+ t_{1-alpha} SE (1 - alpha one-sided).
bonferroni_tost
    Each candidate at alpha / m: familywise in every configuration.
dunnett_tost
    Simultaneous over the m candidates from the many-to-one distribution
    (Dunnett 1955; lambda_i = sqrt(n_i / (n_i + n_ref))).

    A candidate that is not equivalent (theta_i >= delta, or theta_i <=
    -delta) is wrongly called equivalent only if s_i T_i > c, with T_i =
    (d_i - theta_i) / SE_i the centred statistic and s_i = -1 above the
    margin, +1 below it. The T_i are many-to-one t with correlation
    lambda_i lambda_j, so s_i T_i are many-to-one t with the signed lambdas
    s_i lambda_i, and the familywise error is at most

        max over s in {-1, +1}^m of  P(max_i s_i T_i > c),

    attained at the margin. ``equivalence`` therefore takes c as the largest
    one-sided many-to-one quantile over the sign patterns. Candidates with
    equal lambda are exchangeable, so a pattern is fixed by how many of each
    class of equal lambda are positive, and s and -s give the same
    probability: prod_j (m_j + 1) patterns, about half of them distinct. Up to
    MAX_SIGN_PATTERNS they are all searched (exact); beyond, c is the
    two-sided many-to-one quantile, P(max_i |T_i| > c) = alpha, an upper
    bound for every pattern (P(max s_i T_i > c) <= P(max |T_i| > c)):
    familywise, conservative, and said so in the notes. The adjusted
    p-values are the same maximum over patterns (or the two-sided tail), so
    that p < alpha exactly when the interval lies inside the margin.

    ``non_inferiority`` and ``non_superiority`` test one side only: every
    false claim is on the same side, and the same-sign one-sided quantile
    (P(max_i T_i > c) = alpha) is exact.

Intervals
---------
Two-sided equivalence intervals d -/+ c SE use one-sided critical values, so
their level is 1 - 2 alpha (Berger and Hsu 1996): exactly, per candidate,
for tost; at least, simultaneously, for bonferroni_tost and dunnett_tost
(P(max |T_i| > c) <= P(max T_i > c) + P(max -T_i > c) <= 2 alpha). Under the
two-sided fallback of dunnett_tost the intervals are simultaneous at exactly
1 - alpha. One-sided intervals have level 1 - alpha. ``extra.interval_level``
reports the level.

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

import itertools
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

#: Most sign patterns searched for the dunnett_tost equivalence critical
#: value; beyond, the two-sided quantile bounds them all. 64 covers every
#: design with up to 7 candidates, and up to 127 candidates of one size.
MAX_SIGN_PATTERNS = 64


def sign_pattern_count(lambdas: np.ndarray) -> int:
    """Distinct sign patterns of these lambdas: prod_j (m_j + 1) over the
    classes of equal lambda, halved for s ~ -s (the all-half pattern, which
    exists when every m_j is even, is its own mirror)."""
    _, counts = np.unique(lambdas, return_counts=True)
    total = math.prod(int(m) + 1 for m in counts)
    return (total + int(all(m % 2 == 0 for m in counts))) // 2


def sign_patterns(lambdas: np.ndarray) -> list[np.ndarray]:
    """One signed-lambda vector per distinct sign pattern (see
    sign_pattern_count), the all-positive one first."""
    distinct, counts = np.unique(lambdas, return_counts=True)
    counts = [int(m) for m in counts]
    patterns = []
    for positives in itertools.product(*(range(m, -1, -1) for m in counts)):
        mirror = tuple(m - a for m, a in zip(counts, positives, strict=True))
        if mirror > positives:
            continue  # the same probability as its mirror, kept once
        signed = np.concatenate([np.concatenate([np.full(a, lam), np.full(m - a, -lam)])
                                 for lam, m, a in zip(distinct, counts, positives, strict=True)])
        patterns.append(signed)
    return patterns


class _WorstSignPattern:
    """P(max_i s_i T_i > c) maximised over sign patterns s: sf is the
    maximum of the patterns' tails and isf the largest of their quantiles,
    so that sf(isf(alpha)) = alpha."""

    def __init__(self, lambdas: np.ndarray, df: float) -> None:
        self.curves = [many_to_one_curve(signed, df, "one_sided") for signed in sign_patterns(lambdas)]

    def sf(self, c: np.ndarray) -> np.ndarray:
        return np.max([curve.sf(c) for curve in self.curves], axis=0)

    def isf(self, alpha: float) -> float:
        return max(curve.isf(alpha) for curve in self.curves)


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
    if not 0.0 < alpha < 0.5:
        raise DataError("alpha-below-half",
                        f"alpha must be below 0.5 for equivalence, non-inferiority and non-superiority (got "
                        f"{alpha:g}): at 0.5 the one-sided critical value is 0 and the interval's level "
                        f"(1 - 2 alpha, or 1 - alpha one-sided) is 0 or 0.5", "/alpha")
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
    two_sided_kind = kind == "equivalence"
    # per-side p-values, adjusted for the family as the method says
    patterns = None
    if method == "tost":
        p_lower = special.stdtr(df, -t_lower)
        p_upper = special.stdtr(df, t_upper)
        critical = float(-special.stdtrit(df, alpha))
        error_rate, interval, basis = "per_comparison", "per_comparison", "per_comparison"
        level = 1.0 - 2.0 * alpha if two_sided_kind else 1.0 - alpha
    elif method == "bonferroni_tost":
        p_lower = np.minimum(1.0, m * special.stdtr(df, -t_lower))
        p_upper = np.minimum(1.0, m * special.stdtr(df, t_upper))
        critical = float(-special.stdtrit(df, alpha / m))
        error_rate, interval, basis = "familywise", "simultaneous", "bonferroni"
        level = 1.0 - 2.0 * alpha if two_sided_kind else 1.0 - alpha
    else:
        lam = np.sqrt(data.sizes[candidates] / (data.sizes[candidates] + data.sizes[r]))
        error_rate, interval = "familywise", "simultaneous"
        level = 1.0 - 2.0 * alpha if two_sided_kind else 1.0 - alpha
        if not two_sided_kind:
            curve = many_to_one_curve(lam, df, "one_sided")
            basis = "same_side"
        else:
            patterns = sign_pattern_count(lam)
            if patterns <= MAX_SIGN_PATTERNS:
                curve = _WorstSignPattern(lam, df)
                basis = "worst_sign_pattern"
            else:
                curve = many_to_one_curve(lam, df, "two_sided")
                basis = "two_sided_bound"
                level = 1.0 - alpha
        p_lower = curve.sf(t_lower)
        p_upper = curve.sf(-t_upper)
        critical = curve.isf(alpha)
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
    notes = _notes(kind, method, basis, alpha, level, m, delta, margin, relative, patterns)
    concluded_labels = [row.first for row in rows if row.significant]
    summary = (f"{len(concluded_labels)} of {m} candidates are {_VERDICT[kind]} {reference!r}"
               f"{_margin_phrase(kind, delta)}; {method.replace('_', ' ')}, alpha = {alpha:g})"
               + (f": {', '.join(concluded_labels)}." if concluded_labels else "."))
    return FamilyResult(
        family="equivalence", method=method, alpha=alpha, error_rate=error_rate,
        critical_value=critical, comparisons=tuple(rows), summary=summary, notes=tuple(notes),
        error_df=df, pooled_sd=s, alternative=kind, interval=interval,
        extra={"reference": reference, "margin": delta, "margin_kind": "relative" if relative else "absolute",
               "kind": kind, "interval_level": level, "critical_value_basis": basis},
    )


_VERDICT = {"equivalence": "equivalent to", "non_inferiority": "non-inferior to",
            "non_superiority": "non-superior to"}


def _margin_phrase(kind: str, delta: float) -> str:
    if kind == "equivalence":
        return f" (within ±{delta:.4g}"
    if kind == "non_inferiority":
        return f", that is not lower by {delta:.4g} or more (difference above −{delta:.4g}"
    return f", that is not higher by {delta:.4g} or more (difference below +{delta:.4g}"


def _notes(kind: str, method: str, basis: str, alpha: float, level: float, m: int, delta: float,
           margin: float, relative: bool, patterns: int | None) -> list[str]:
    sign = "±" if kind == "equivalence" else ("−" if kind == "non_inferiority" else "+")
    notes = [f"Margin: {sign}{delta:.6g} in data units"
             + (f" ({margin:g} of the reference mean's magnitude)" if relative else " (absolute)") + "."]
    if relative:
        notes.append("The relative margin is computed from the estimated reference mean; its sampling error "
                     "is not taken into account, so the error rates hold as if this margin had been fixed "
                     "in advance.")
    sides = "two-sided" if kind == "equivalence" else "one-sided"
    if method == "tost":
        notes.append(f"Intervals: per candidate, not simultaneous, {sides} at level {level:g}"
                     + (" (1 - 2 alpha: the interval of TOST)." if kind == "equivalence" else " (1 - alpha)."))
    elif basis == "two_sided_bound":
        notes.append(f"Intervals: simultaneous, two-sided at level {level:g} (1 - alpha: the two-sided "
                     f"many-to-one critical value).")
    elif kind == "equivalence":
        notes.append(f"Intervals: simultaneous, two-sided at level at least {level:g} (1 - 2 alpha: each "
                     f"interval uses a one-sided critical value on both sides).")
    else:
        notes.append(f"Intervals: simultaneous, one-sided at level {level:g} (1 - alpha).")
    if kind != "equivalence":
        direction = "lower" if kind == "non_inferiority" else "higher"
        notes.append(f"{kind} asks whether each candidate's mean is not {direction} than the reference's by "
                     f"the margin or more; which direction is worse depends on the measure (for an "
                     f"impurity, a higher value is worse).")
    if method == "tost" and m > 1:
        notes.append(f"Per-comparison error: with {m} candidates the chance that at least one is wrongly "
                     f"called {_ADJECTIVE[kind]} can reach {min(1.0, m * alpha):.3g}.")
    if basis == "worst_sign_pattern" and m > 1:
        notes.append(f"Critical value: the largest one-sided many-to-one quantile over the {patterns} distinct "
                     f"ways the candidates that are not equivalent can lie beyond either side of the margin: "
                     f"the familywise error is at most alpha in every configuration.")
    if basis == "two_sided_bound":
        notes.append(f"Critical value: the {patterns} ways the candidates that are not equivalent can lie beyond "
                     f"either side of the margin are more than the {MAX_SIGN_PATTERNS} searched, so the "
                     f"two-sided many-to-one quantile is used, an upper bound for all of them: the familywise "
                     f"error is at most alpha, conservatively (less power than an exact search).")
    return notes


def _signed(x: float) -> str:
    """A number with its sign, minus as U+2212 like the margins'."""
    return f"{x:+.4g}".replace("-", "−")


def _sentence(label: str, kind: str, concluded: bool, delta: float, low: float, high: float) -> str:
    if kind == "equivalence":
        if concluded:
            return f"{label} is within ±{delta:.4g} of the reference."
        reach = low if abs(low) > abs(high) else high
        return (f"{label}: cannot conclude equivalence: the interval reaches {_signed(reach)}; "
                f"the margin is ±{delta:.4g}.")
    if kind == "non_inferiority":
        if concluded:
            return (f"{label} is not lower than the reference by {delta:.4g} or more: the interval's lower end "
                    f"{_signed(low)} is above −{delta:.4g}.")
        return (f"{label}: cannot conclude non-inferiority: the interval's lower end {_signed(low)} is not "
                f"above −{delta:.4g}.")
    if concluded:
        return (f"{label} is not higher than the reference by {delta:.4g} or more: the interval's upper end "
                f"{_signed(high)} is below +{delta:.4g}.")
    return (f"{label}: cannot conclude non-superiority: the interval's upper end {_signed(high)} is not "
            f"below +{delta:.4g}.")
