"""Speed of the distribution engine against SciPy, on the same inputs, in one process.

Cases (the targets of issue 3):

* one studentized range quantile, against ``scipy.stats.studentized_range.ppf``: 200x;
* a Dunnett family of five comparisons with unequal group sizes (the critical value
  and five p-values, from the data), against ``scipy.stats.dunnett`` with its
  ``confidence_interval``: 50x;
* a Tukey-Kramer family for six groups with unequal sizes and the pooled standard
  error (the critical value and fifteen p-values), against ``scipy.stats.tukey_hsd``
  with its ``confidence_interval``: 100x.

Each case is timed twice: "warm", with the engine's table for k (or for the set of
lambdas) already built, and "cold", with the tables cleared before every
repetition. The service builds the range tables for small k at start-up, so for
the studentized range the warm row (a fresh (k, nu, alpha) on a built k table) is
its steady state; a Dunnett request with group sizes not seen before builds its
table, so for Dunnett the cold row is the steady state. Times are medians.

Memory: the engine's only caches are the two bounded ``lru_cache`` tables; the
last part shows traced memory staying flat over many families.
"""

from __future__ import annotations

import gc
import math
import resource
import statistics
import time
import tracemalloc
import warnings
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy import stats

from familywise.stats.distributions import (
    many_to_one_isf,
    many_to_one_sf,
    studentized_range_isf,
    studentized_range_sf,
)
from familywise.stats.distributions._tables import max_table, range_table

SQRT2 = math.sqrt(2.0)
ALPHA = 0.05

# Invented data (a benchmark input, not a result): unequal group sizes.
DUNNETT_SIZES = (10, 6, 8, 12, 15, 20)  # control first, then five treatments
TUKEY_SIZES = (5, 7, 9, 11, 13, 16)  # six groups
QUANTILE_CASE = (ALPHA, 6, 30.0)  # (alpha, k, nu)


@dataclass
class Row:
    case: str
    state: str
    ours: float  # seconds, median
    scipy: float  # seconds, median
    target: float
    steady: bool  # the row that reflects the service's steady state

    @property
    def ratio(self) -> float:
        return self.scipy / self.ours


def _groups(sizes, seed: int) -> list[np.ndarray]:
    rng = np.random.default_rng(seed)
    return [rng.normal(50.0 + 0.4 * i, 2.0, n) for i, n in enumerate(sizes)]


# --------------------------------------------------------------------------
# The families, ours and SciPy's
# --------------------------------------------------------------------------


def _pooled(groups):
    n = np.array([g.size for g in groups], dtype=float)
    means = np.array([g.mean() for g in groups])
    df = float(n.sum() - len(groups))
    s = math.sqrt(sum(((g - m) ** 2).sum() for g, m in zip(groups, means, strict=True)) / df)
    return n, means, df, s


def ours_dunnett(groups):
    """Critical value and the five two-sided p-values of Dunnett's comparisons with group 0."""
    n, means, df, s = _pooled(groups)
    lam = np.sqrt(n[1:] / (n[1:] + n[0]))
    t = (means[1:] - means[0]) / (s * np.sqrt(1.0 / n[1:] + 1.0 / n[0]))
    critical = many_to_one_isf(ALPHA, lam, df)
    return critical, many_to_one_sf(np.abs(t), lam, df)


def scipy_dunnett(groups):
    result = stats.dunnett(*groups[1:], control=groups[0], rng=np.random.default_rng(0))
    interval = result.confidence_interval(1 - ALPHA)
    return interval, result.pvalue


_PAIRS = np.triu_indices(len(TUKEY_SIZES), 1)


def ours_tukey(groups):
    """Tukey-Kramer: critical value (on the t scale) and the fifteen p-values, pooled SE."""
    n, means, df, s = _pooled(groups)
    i, j = _PAIRS
    t = (means[i] - means[j]) / (s * np.sqrt(1.0 / n[i] + 1.0 / n[j]))
    k = len(groups)
    critical = studentized_range_isf(ALPHA, k, df) / SQRT2
    return critical, studentized_range_sf(np.abs(t) * SQRT2, k, df)


def scipy_tukey(groups):
    result = stats.tukey_hsd(*groups)
    return result.confidence_interval(1 - ALPHA), result.pvalue


# --------------------------------------------------------------------------
# Timing
# --------------------------------------------------------------------------


def _median_time(call: Callable[[], object], repeats: int, before: Callable[[], None] | None = None) -> float:
    times = []
    for _ in range(repeats):
        if before is not None:
            before()
        started = time.perf_counter()
        call()
        times.append(time.perf_counter() - started)
    return statistics.median(times)


def _clear_tables() -> None:
    range_table.cache_clear()
    max_table.cache_clear()


def _format_time(seconds: float) -> str:
    if seconds < 1e-3:
        return f"{seconds * 1e6:8.1f} µs"
    if seconds < 1.0:
        return f"{seconds * 1e3:8.2f} ms"
    return f"{seconds:8.3f} s "


def measure(quick: bool) -> list[Row]:
    ours_n, scipy_n = (20, 2) if quick else (300, 7)
    cold_n = 5 if quick else 40
    rows = []

    alpha, k, nu = QUANTILE_CASE
    studentized_range_isf(alpha, k, nu)  # compile / load, build the k table
    scipy_q = _median_time(lambda: stats.studentized_range.ppf(1 - alpha, k, nu), scipy_n)
    case = f"studentized range quantile (k={k}, nu={nu:g}, alpha={alpha})"
    warm = _median_time(lambda: studentized_range_isf(alpha, k, nu), ours_n)
    cold = _median_time(lambda: studentized_range_isf(alpha, k, nu), cold_n, _clear_tables)
    rows += [Row(case, "warm", warm, scipy_q, 200.0, True), Row(case, "cold", cold, scipy_q, 200.0, False)]

    groups = _groups(DUNNETT_SIZES, 1)
    ours_dunnett(groups)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # scipy may warn that its noisy interval search did not converge
        scipy_d = _median_time(lambda: scipy_dunnett(groups), scipy_n)
    case = "Dunnett family, 5 comparisons, unequal n (critical value + 5 p-values)"
    warm = _median_time(lambda: ours_dunnett(groups), ours_n)
    cold = _median_time(lambda: ours_dunnett(groups), cold_n, _clear_tables)
    rows += [Row(case, "warm", warm, scipy_d, 50.0, False), Row(case, "cold", cold, scipy_d, 50.0, True)]

    groups = _groups(TUKEY_SIZES, 2)
    ours_tukey(groups)
    scipy_t = _median_time(lambda: scipy_tukey(groups), scipy_n)
    case = "Tukey-Kramer family, 6 groups, unequal n (critical value + 15 p-values)"
    warm = _median_time(lambda: ours_tukey(groups), ours_n)
    cold = _median_time(lambda: ours_tukey(groups), cold_n, _clear_tables)
    rows += [Row(case, "warm", warm, scipy_t, 100.0, True), Row(case, "cold", cold, scipy_t, 100.0, False)]
    return rows


def check_same_answers() -> list[str]:
    """The benchmark compares like with like: both sides give the same family."""
    notes = []
    groups = _groups(DUNNETT_SIZES, 1)
    _, p = ours_dunnett(groups)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        _, p_scipy = scipy_dunnett(groups)
    notes.append(f"Dunnett: largest p-value difference from scipy {np.max(np.abs(p - p_scipy)):.1e}")
    groups = _groups(TUKEY_SIZES, 2)
    _, p = ours_tukey(groups)
    _, p_scipy = scipy_tukey(groups)
    i, j = _PAIRS
    notes.append(
        f"Tukey-Kramer: largest p-value difference from scipy {np.max(np.abs(p - p_scipy[i, j])):.1e}"
    )
    return notes


# --------------------------------------------------------------------------
# Memory
# --------------------------------------------------------------------------


def _traced_kib() -> float:
    gc.collect()
    return tracemalloc.get_traced_memory()[0] / 1024


def memory_report(quick: bool) -> list[str]:
    lines = []
    first, more = (50, 200) if quick else (300, 3000)
    tracemalloc.start()
    rss_start = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    rng = np.random.default_rng(3)

    def dunnett_and_tukey():
        ours_dunnett([rng.normal(0.0, 1.0, n) for n in DUNNETT_SIZES])
        ours_tukey([rng.normal(0.0, 1.0, n) for n in TUKEY_SIZES])

    for _ in range(first):
        dunnett_and_tukey()
    after_first = _traced_kib()
    for _ in range(more):
        dunnett_and_tukey()
    after_more = _traced_kib()
    lines.append(
        f"{first + more} Dunnett + Tukey-Kramer families on new data (same group sizes): traced memory "
        f"{after_first:,.0f} KiB after {first}, {after_more:,.0f} KiB after {first + more} "
        f"(growth {after_more - after_first:+,.0f} KiB)"
    )

    # New group sizes every time: each builds a many-to-one table; the cache is bounded.
    limit = max_table.cache_info().maxsize
    _clear_tables()
    designs = 200 if quick else limit + 300
    sizes = rng.integers(3, 60, size=(2 * designs, 5))
    for n in sizes[:designs]:
        lam = np.sqrt(n / (n + 10.0))
        many_to_one_sf(2.5, lam, 40.0)
    filled = _traced_kib()
    for n in sizes[designs:]:
        lam = np.sqrt(n / (n + 10.0))
        many_to_one_sf(2.5, lam, 40.0)
    later = _traced_kib()
    info = max_table.cache_info()
    lines.append(
        f"{2 * designs} families with distinct group sizes (each builds a table): cache holds "
        f"{info.currsize} of at most {info.maxsize}; traced memory {filled:,.0f} KiB after {designs}, "
        f"{later:,.0f} KiB after {2 * designs}"
    )
    tracemalloc.stop()
    rss_end = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    lines.append(
        f"peak resident set of the process: {rss_start / 1024:,.0f} MiB before, "
        f"{rss_end / 1024:,.0f} MiB after"
    )
    return lines


# --------------------------------------------------------------------------
# Report
# --------------------------------------------------------------------------


def run(quick: bool = False) -> bool:
    rows = measure(quick)
    width = max(len(r.case) for r in rows)
    header = f"{'case':<{width}}  {'state':<5}  {'ours':>11}  {'scipy':>11}  {'ratio':>8}  {'target':>6}  met"
    print("Distribution engine against SciPy " + ("(quick run)" if quick else ""))
    print(header)
    print("-" * len(header))
    all_met = True
    for row in rows:
        met = row.ratio >= row.target
        if row.steady:
            all_met &= met
        mark = " *" if row.steady else ""
        ours, theirs = _format_time(row.ours), _format_time(row.scipy)
        print(
            f"{row.case:<{width}}  {row.state:<5}  {ours:>11}  {theirs:>11}  "
            f"{row.ratio:>7.0f}x  {row.target:>5.0f}x  {'yes' if met else 'no'}{mark}"
        )
    print(
        "* the service's steady state: range tables for small k are built at start-up (warm); a\n"
        "  Dunnett request with new group sizes builds its table (cold).\n"
        "  warm = the table for k (or the lambdas) already built; cold = tables cleared before every\n"
        "  repetition."
    )
    for note in check_same_answers():
        print(note)
    print("Memory")
    for line in memory_report(quick):
        print("  " + line)
    return all_met
