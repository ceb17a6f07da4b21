"""Sample size and power for the next experiment (equal group sizes).

Omnibus F test
    Power at total size N is P(F' > F_{alpha; k-1, N-k}) for the noncentral F
    with noncentrality lambda = f^2 N (Cohen 1988, ch. 8; f = sigma_means /
    sigma, eq. 8.2.1). The unrounded N solving power = target is reported
    (the continuous solution, as tables and software interpolate), then the
    smallest whole number of replicates per group reaching the target.

Follow-up families, for a given true difference (delta) and SD (sigma)
    tukey_kramer, dunnett: the power that one pair (Tukey-Kramer) or one
    treatment against the control (Dunnett) whose true difference is delta
    is declared different, with the family's critical value c. The pair's
    statistic is noncentral t with N - k df and noncentrality
    delta / (sigma sqrt(2/n)), so the power P(|T'| > c) (or P(T' > c) one-
    sided) is exact (per-comparison power; Hsu 1996, section 6.2).
    hsu_mcb: the power that a group delta below the best (the others tied
    with it) is excluded from the best, by a seeded simulation of the group
    means and the pooled SD (20 000 replicates, common random numbers across
    n); its standard error is reported.

References
----------
Cohen, J. (1988). Statistical Power Analysis for the Behavioral Sciences,
2nd ed. Erlbaum, ch. 8.
Hsu, J. C. (1996). Multiple Comparisons: Theory and Methods. Chapman & Hall, ch. 6.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import optimize, stats

from familywise.stats.distributions import many_to_one_isf, studentized_range_isf
from familywise.stats.errors import DataError

FAMILY_METHODS = {"pairwise": ("tukey_kramer",), "control": ("dunnett",), "best": ("hsu_mcb",)}
SIMULATION_REPLICATES = 20_000
SEED = 20261201
MAX_PER_GROUP = 100_000
#: Most groups planned for: beyond it the families' critical values leave the
#: distribution code's validated range, and the simulation of Hsu's MCB
#: (replicates x k normal draws) grows too large to answer in time.
MAX_GROUPS = 100
#: Largest Cohen's f planned for (a difference of a hundred SDs is found with
#: two replicates per group; beyond it the noncentral F leaves double range).
MAX_COHENS_F = 100.0
ROUNDING = ("n_per_group is the smallest whole number of replicates per group that reaches the target "
            "power; total_n = k x n_per_group; achieved_power is the power at that n (never below the target).")


@dataclass(frozen=True)
class Plan:
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
    unrounded_total_n: float | None
    power_standard_error: float | None
    method_note: str
    rounding: str = ROUNDING


def cohens_f_from_means(means: Sequence[float], sd: float) -> float:
    """f = sqrt(mean((mu_i - mu_bar)^2)) / sigma (Cohen 1988, eq. 8.2.1, equal n)."""
    if not sd > 0:
        raise DataError("sd", "the standard deviation must be positive", "/effect/sd")
    mu = np.asarray(means, dtype=float)
    with np.errstate(over="ignore", invalid="ignore"):
        f = float(np.sqrt(np.mean((mu - mu.mean()) ** 2)) / sd)
    if not math.isfinite(f):
        raise DataError("effect", "Cohen's f from these means and SD leaves double precision", "/effect")
    return f


def omnibus_power(f: float, k: int, total_n: float, alpha: float) -> float:
    """Power of the one-way F test at total size N (may be fractional)."""
    df2 = total_n - k
    critical = stats.f.isf(alpha, k - 1, df2)
    return float(stats.ncf.sf(critical, k - 1, df2, f * f * total_n))


def plan_omnibus(k: int, alpha: float, power: float, f: float) -> Plan:
    _check(k, alpha, power)
    if not f > 0:
        raise DataError("effect", "the effect size must be positive", "/effect")
    if not f <= MAX_COHENS_F:
        raise DataError("effect", f"Cohen's f must be at most {MAX_COHENS_F:g} (an effect this large is found "
                        "with two replicates per group)", "/effect")
    lo, hi = k + 1.0, float(k + 2)
    if omnibus_power(f, k, lo, alpha) >= power:
        hi = lo  # one error df is already enough: the smallest design, two per group, is the answer
    while omnibus_power(f, k, hi, alpha) < power:
        lo, hi = hi, hi * 2.0
        if hi > k * MAX_PER_GROUP:
            raise DataError("effect", "the effect is too small to reach the power with a sane sample size",
                            "/effect")
    note = "Power of the omnibus F test from the noncentral F (lambda = f^2 N); exact."
    unrounded: float | None
    if hi == lo:
        unrounded = None
        note += (" The target is reached with a single error degree of freedom (N = k + 1): the smallest "
                 "design, two replicates per group, is the answer, and there is no continuous solution.")
    else:
        unrounded = float(optimize.brentq(lambda n: omnibus_power(f, k, n, alpha) - power, lo, hi, xtol=1e-10))
    n = max(2, math.ceil((unrounded or 0.0) / k))
    while omnibus_power(f, k, k * n, alpha) < power:
        n += 1
    while n > 2 and omnibus_power(f, k, k * (n - 1), alpha) >= power:
        n -= 1
    return Plan(
        target="omnibus", method="anova_f", k=k, alpha=alpha, power=power, n_per_group=n, total_n=k * n,
        achieved_power=omnibus_power(f, k, k * n, alpha), cohens_f=f, difference=None, sd=None,
        unrounded_total_n=unrounded, power_standard_error=None, method_note=note,
    )


def family_power(family: str, k: int, n: int, alpha: float, delta: float, sd: float,
                 alternative: str = "two_sided") -> tuple[float, float | None]:
    """Power (and its simulation standard error, if simulated) at n per group."""
    nu = float(k * (n - 1))
    ncp = delta / (sd * math.sqrt(2.0 / n))
    if family == "pairwise":
        critical = studentized_range_isf(alpha, k, nu) / math.sqrt(2.0)
        return _t_power(critical, nu, ncp, "two_sided"), None
    if family == "control":
        lam = np.full(k - 1, math.sqrt(0.5))
        sided = "two_sided" if alternative == "two_sided" else "one_sided"
        critical = many_to_one_isf(alpha, lam, nu, sided)
        return _t_power(critical, nu, ncp, alternative), None
    return _mcb_power(k, n, alpha, delta, sd)


def _t_power(critical: float, nu: float, ncp: float, alternative: str) -> float:
    """Power of a t test with critical value c whose statistic is noncentral t
    with noncentrality ncp >= 0 in the direction of the alternative: P(T' > c)
    one-sided (for "less", the statistic's sign is turned, so that the given
    difference is a shortfall below the control), P(|T'| > c) two-sided. The
    lower tail P(T' < -c) is taken as P(-T' > c): scipy's nct.cdf far in the
    lower tail returns NaN at large df."""
    power = float(stats.nct.sf(critical, nu, ncp))
    if alternative == "two_sided":
        power += float(stats.nct.sf(critical, nu, -ncp))
    if not math.isfinite(power):
        raise DataError("difference", "the power cannot be computed for this difference and SD (the "
                        "noncentral t leaves double precision); use a smaller difference or a larger SD",
                        "/difference")
    return min(power, 1.0)


def _mcb_power(k: int, n: int, alpha: float, delta: float, sd: float) -> tuple[float, float]:
    """P(group 1, delta below the best group 0, others tied with it, is excluded)."""
    rng = np.random.default_rng(SEED)
    z = rng.standard_normal((SIMULATION_REPLICATES, k))
    u = rng.uniform(size=SIMULATION_REPLICATES)
    nu = k * (n - 1)
    means = np.zeros(k)
    means[0] = delta / sd
    m = means + z / math.sqrt(n)
    s = np.sqrt(stats.chi2.ppf(u, nu) / nu)
    d = many_to_one_isf(alpha, np.full(k - 1, math.sqrt(0.5)), float(nu), "one_sided")
    gaps = (np.delete(m, 1, axis=1) - m[:, [1]]) / (s[:, None] * math.sqrt(2.0 / n))
    excluded = gaps.max(axis=1) >= d
    power = float(excluded.mean())
    return power, float(math.sqrt(max(power * (1.0 - power), 1e-12) / SIMULATION_REPLICATES))


def plan_family(family: str, method: str | None, k: int, alpha: float, power: float, delta: float,
                sd: float, alternative: str = "two_sided") -> Plan:
    _check(k, alpha, power)
    if family not in FAMILY_METHODS:
        raise DataError("family", f"planning covers the families {', '.join(FAMILY_METHODS)}", "/family")
    method = method or FAMILY_METHODS[family][0]
    if method not in FAMILY_METHODS[family]:
        raise DataError("method", f"planning for {family!r} covers {', '.join(FAMILY_METHODS[family])}",
                        "/method")
    if not delta > 0 or not math.isfinite(delta):
        raise DataError("difference", "the difference to detect must be a positive number", "/difference")
    if not sd > 0:
        raise DataError("sd", "the standard deviation must be positive", "/effect/sd")
    if alternative != "two_sided" and family != "control":
        raise DataError("alternative", "a one-sided alternative applies to comparisons with a control",
                        "/alternative")

    def at(n: int) -> tuple[float, float | None]:
        return family_power(family, k, n, alpha, delta, sd, alternative)

    lo, hi = 2, 4
    while at(hi)[0] < power:
        lo, hi = hi, hi * 2
        if hi > MAX_PER_GROUP:
            raise DataError("difference", "the difference is too small to reach the power with a sane "
                            "sample size", "/difference")
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if at(mid)[0] >= power:
            hi = mid
        else:
            lo = mid
    n = hi if at(lo)[0] < power else lo
    achieved, error = at(n)
    notes = {
        "pairwise": "Per-pair power of Tukey-Kramer for a pair whose true difference is the given one; "
                    "exact (noncentral t with the studentized-range critical value).",
        "control": "Power of Dunnett's test for one treatment whose true difference from the control is the "
                   "given one; exact (noncentral t with the many-to-one critical value).",
        "best": "Power that a group the given difference below the best (the others tied with it) is "
                f"excluded from the best by Hsu's MCB; simulated ({SIMULATION_REPLICATES} seeded replicates, "
                "standard error in power_standard_error).",
    }
    return Plan(
        target=family, method=method, k=k, alpha=alpha, power=power, n_per_group=n, total_n=k * n,
        achieved_power=achieved, cohens_f=None, difference=delta, sd=sd, unrounded_total_n=None,
        power_standard_error=error, method_note=notes[family],
    )


def _check(k: int, alpha: float, power: float) -> None:
    if k < 2:
        raise DataError("k", "at least two groups are needed", "/k")
    if k > MAX_GROUPS:
        raise DataError("k", f"planning covers at most {MAX_GROUPS} groups", "/k")
    if not 0.0 < alpha <= 0.5:
        raise DataError("alpha", "alpha must lie in (0, 0.5]", "/alpha")
    if not alpha < power < 1.0:
        raise DataError("power", "the target power must lie between alpha and 1", "/power")
