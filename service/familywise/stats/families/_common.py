"""What every follow-up family shares: the result types, the pooled error,
p-value adjustments, and the rule that keeps intervals and p-values agreeing.

References
----------
Bonferroni: Dunn, O. J. (1961). Multiple comparisons among means. JASA 56, 52-64.
Šidák, Z. (1967). Rectangular confidence regions for the means of multivariate
normal distributions. JASA 62, 626-633.
Holm, S. (1979). A simple sequentially rejective multiple test procedure.
Scand. J. Statist. 6, 65-70.
Benjamini, Y. and Hochberg, Y. (1995). Controlling the false discovery rate.
JRSS B 57, 289-300.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import MISSING, dataclass, field, fields

import numpy as np
from scipy import special

from familywise.stats.data import OneWayData

ERROR_RATES = ("familywise", "per_comparison", "false_discovery")


@dataclass(frozen=True)
class Comparison:
    """One row of a family.

    ``difference`` is the estimate (mean(first) - mean(second), or the
    contrast's value), ``se`` its standard error, ``statistic`` the
    standardised difference on which ``p_value`` (adjusted for the family)
    and the interval's multiplier ``critical_value`` are defined. An interval
    end is None where the method gives no interval or the interval is
    unbounded on that side (one-sided alternatives).
    """

    first: str | None
    second: str | None
    difference: float
    se: float | None
    statistic: float
    df: float | None
    p_value: float
    ci_low: float | None
    ci_high: float | None
    significant: bool
    unadjusted_p_value: float | None = None
    critical_value: float | None = None
    name: str | None = None
    ss: float | None = None
    f: float | None = None
    rank_difference: float | None = None
    may_be_best: bool | None = None
    p_lower: float | None = None
    p_upper: float | None = None
    equivalent: bool | None = None
    non_inferior: bool | None = None
    non_superior: bool | None = None
    conclusion: str | None = None


_ROW_DEFAULTS = {f.name: f.default for f in fields(Comparison) if f.default is not MISSING}
_ROW_REQUIRED = frozenset(f.name for f in fields(Comparison) if f.default is MISSING)


def comparison_rows(**columns: Sequence[object]) -> tuple[Comparison, ...]:
    """Rows from one sequence per field, equal to ``Comparison(**fields)`` row
    by row, built without the frozen dataclass's per-field ``__init__`` cost
    (a family of 100 groups has 4950 rows). Pass Python numbers (``tolist()``)."""
    missing = _ROW_REQUIRED - columns.keys()
    if missing:
        raise TypeError(f"missing row fields: {sorted(missing)}")
    names = list(columns)
    rows = []
    for values in zip(*columns.values(), strict=True):
        row = object.__new__(Comparison)
        row.__dict__.update(_ROW_DEFAULTS)
        row.__dict__.update(zip(names, values, strict=True))
        rows.append(row)
    return tuple(rows)


@dataclass(frozen=True)
class FamilyResult:
    family: str
    method: str
    alpha: float
    error_rate: str
    critical_value: float | None
    comparisons: tuple[Comparison, ...]
    summary: str
    notes: tuple[str, ...] = ()
    error_df: float | None = None
    pooled_sd: float | None = None
    alternative: str | None = None
    interval: str = "simultaneous"  # simultaneous | per_comparison | none
    letters: dict[str, str] | None = None
    letters_note: str | None = None
    best_set: tuple[str, ...] | None = None
    probability_error: float | None = None
    extra: dict[str, object] = field(default_factory=dict)


def pooled(data: OneWayData) -> tuple[float, float]:
    """Pooled within-group SD and its degrees of freedom (refusing designs
    without error degrees of freedom or with zero pooled variance)."""
    data.require_pooled_variance()
    return math.sqrt(data.pooled_variance), float(data.df_within)


def mean_differences(data: OneWayData, first: np.ndarray, second: np.ndarray) -> np.ndarray:
    """mean(first) - mean(second), correctly rounded (see OneWayData.mean_differences)."""
    return data.mean_differences(first, second)


# --------------------------------------------------------------------------
# p-value adjustments (each returns adjusted p in the input order)
# --------------------------------------------------------------------------


def bonferroni(p: np.ndarray) -> np.ndarray:
    return np.minimum(1.0, p * p.size)


def sidak(p: np.ndarray) -> np.ndarray:
    """1 - (1 - p)^m, computed without cancellation for small p (and never
    below p, which rounding alone could otherwise leave it)."""
    with np.errstate(divide="ignore"):  # p = 1: log1p(-1) = -inf, and the result is exactly 1
        return np.maximum(p, -np.expm1(p.size * np.log1p(-np.minimum(p, 1.0))))


def holm(p: np.ndarray) -> np.ndarray:
    """Holm's step-down: sorted p_(j) times (m - j + 1), made monotone."""
    m = p.size
    order = np.argsort(p, kind="stable")
    stepped = np.minimum(1.0, (m - np.arange(m)) * p[order])
    out = np.empty(m)
    out[order] = np.maximum.accumulate(stepped)
    return out


def benjamini_hochberg(p: np.ndarray) -> np.ndarray:
    """Benjamini-Hochberg step-up: sorted p_(j) times m / j, made monotone from the top."""
    m = p.size
    order = np.argsort(p, kind="stable")
    stepped = p[order] * m / np.arange(1, m + 1)
    out = np.empty(m)
    out[order] = np.minimum(1.0, np.minimum.accumulate(stepped[::-1])[::-1])
    # p m / j >= p in exact arithmetic; rounding must not take it below p.
    return np.maximum(out, p)


ADJUSTMENTS = {
    "none": lambda p: p.copy(),
    "bonferroni": bonferroni,
    "sidak": sidak,
    "holm": holm,
    "benjamini_hochberg": benjamini_hochberg,
}


def agreeing_critical_value(critical: float, evidence: np.ndarray, p_values: np.ndarray,
                            alpha: float) -> float:
    """The critical value, moved (if at all) to just past the nearest
    statistic on the wrong side, so that evidence > critical exactly when
    p < alpha (evidence: |t| for two-sided tests, the signed statistic in the
    alternative's direction for one-sided ones).

    The quantile and the p-values come from the same distribution code: the
    families read both from one tabulated curve, the quantile found by
    bisection on it, so they agree to a few units in the last place, and the
    general multivariate t reads both from the same fixed points. A statistic
    that lands inside that band would otherwise have an interval and a
    p-value that disagree; the move is then of the band's size.
    """
    significant = p_values < alpha
    above = evidence[significant]
    below = evidence[~significant]
    low = float(below.max()) if below.size else -math.inf
    high = float(above.min()) if above.size else math.inf
    if low < critical < high or low >= high:
        return critical
    if critical >= high:
        return math.nextafter(high, -math.inf) * (1.0 - 4e-16)
    return math.nextafter(low, math.inf) * (1.0 + 4e-16)


def count_phrase(n: int, singular: str, plural: str | None = None) -> str:
    return f"{n} {singular if n == 1 else (plural or singular + 's')}"


@dataclass(frozen=True)
class PooledTFamily:
    """How a family of pooled t tests is adjusted: its p-values, the interval
    multiplier (None for stepwise procedures), error rate and interval kind."""

    p_values: np.ndarray
    critical_value: float | None
    error_rate: str
    interval: str
    notes: tuple[str, ...]


POOLED_T_METHODS = ("none", "bonferroni", "sidak", "holm", "benjamini_hochberg")


def pooled_t_family(raw: np.ndarray, df: float, alpha: float, method: str) -> PooledTFamily:
    """Unadjusted, Bonferroni (Dunn 1961), Šidák (1967), Holm (1979) or
    Benjamini-Hochberg (1995) on two-sided pooled t p-values ``raw``; the
    single-step methods with their t multipliers."""
    m = raw.size
    if method == "none":
        return PooledTFamily(raw.copy(), float(-special.stdtrit(df, alpha / 2.0)), "per_comparison",
                             "per_comparison", ())
    if method == "bonferroni":
        return PooledTFamily(bonferroni(raw), float(-special.stdtrit(df, alpha / (2.0 * m))),
                             "familywise", "simultaneous", ())
    if method == "sidak":
        level = -math.expm1(math.log1p(-alpha) / m)
        return PooledTFamily(sidak(raw), float(-special.stdtrit(df, level / 2.0)), "familywise",
                             "simultaneous", ())
    stepwise = ("A stepwise procedure gives decisions, not simultaneous intervals.",)
    if method == "holm":
        return PooledTFamily(holm(raw), None, "familywise", "none", stepwise)
    if method == "benjamini_hochberg":
        return PooledTFamily(benjamini_hochberg(raw), None, "false_discovery", "none", (
            "The false-discovery rate is controlled: among the differences declared, the expected share "
            "of false ones is at most alpha.", *stepwise))
    raise ValueError(f"not a pooled-t adjustment: {method!r}")
