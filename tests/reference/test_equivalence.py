"""Equivalence and non-inferiority against outside references.

Sources, named at each check: statsmodels.stats.weightstats.ttost_ind
(pooled-variance TOST, Schuirmann 1987) and CompareMeans.tconfint_diff for a
single comparison; scipy.stats.multivariate_t.cdf (fixed seed) for the
many-to-one probabilities with signed lambdas and for the worst-sign-pattern
critical value; the control family's one-sided and two-sided Dunnett
quantiles; seeded simulations for the familywise error at the margin boundary
and for the coverage of the intervals (the definitions of familywise error
and of simultaneous coverage; Berger and Hsu 1996).

Monte Carlo checks state their standard error sqrt(p (1 - p) / R) and allow
three of them (common practice, no source).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.weightstats import CompareMeans, DescrStatsW, ttost_ind

from familywise.api import examples
from familywise.stats.data import OneWayData
from familywise.stats.distributions import many_to_one_isf, many_to_one_sf
from familywise.stats.errors import DataError
from familywise.stats.families import versus_control
from familywise.stats.families.equivalence import (
    MAX_SIGN_PATTERNS,
    equivalence_family,
    sign_pattern_count,
    sign_patterns,
)

FLAGS = {"equivalence": "equivalent", "non_inferiority": "non_inferior", "non_superiority": "non_superior"}


def design(sizes, seed: int = 0) -> OneWayData:
    """Data of these group sizes (the first is the reference "g0"); the values
    do not matter for the critical value, which depends on the design only."""
    rng = np.random.default_rng(seed)
    return OneWayData.from_arrays([f"g{i}" for i in range(len(sizes))], [rng.normal(0.0, 1.0, n) for n in sizes])


def mc_se(p: float, replicates: int) -> float:
    return math.sqrt(p * (1.0 - p) / replicates)


# --------------------------------------------------------------------------
# a single comparison: statsmodels
# --------------------------------------------------------------------------

def test_single_comparison_matches_statsmodels_ttost() -> None:
    rng = np.random.default_rng(3)
    reference, candidate = rng.normal(10, 1, 9), rng.normal(10.3, 1, 11)
    data = OneWayData.from_arrays(["ref", "new"], [reference, candidate])
    for kind in ("equivalence", "non_inferiority", "non_superiority"):
        for method in ("tost", "dunnett_tost", "bonferroni_tost"):  # one candidate: the three coincide
            result = equivalence_family(data, "ref", 1.2, kind=kind, method=method)
            ours = result.comparisons[0]
            # reference: statsmodels ttost_ind(x1, x2, low, upp, usevar="pooled"): new - ref in (-1.2, 1.2)
            p, lower, upper = ttost_ind(candidate, reference, -1.2, 1.2, usevar="pooled")
            assert ours.p_lower == pytest.approx(lower[1], rel=1e-10)
            assert ours.p_upper == pytest.approx(upper[1], rel=1e-10)
            expected = {"equivalence": p, "non_inferiority": lower[1], "non_superiority": upper[1]}[kind]
            assert ours.p_value == pytest.approx(expected, rel=1e-10)
            # the flag of the kind, and only it, carries the decision
            assert getattr(ours, FLAGS[kind]) is ours.significant is bool(expected < 0.05)
            assert all(getattr(ours, flag) is None for k, flag in FLAGS.items() if k != kind)


def test_single_comparison_interval_is_statsmodels_interval_at_the_implied_level() -> None:
    # reference: statsmodels CompareMeans.tconfint_diff(alpha, usevar="pooled"); TOST at alpha matches
    # the 1 - 2 alpha two-sided interval (Schuirmann 1987; Berger and Hsu 1996, section 2), one-sided
    # kinds the 1 - alpha one-sided bound.
    rng = np.random.default_rng(5)
    reference, candidate = rng.normal(20, 2, 7), rng.normal(20.5, 2, 10)
    data = OneWayData.from_arrays(["ref", "new"], [reference, candidate])
    compare = CompareMeans(DescrStatsW(candidate), DescrStatsW(reference))
    alpha = 0.05
    for method in ("tost", "dunnett_tost", "bonferroni_tost"):
        both = equivalence_family(data, "ref", 2.0, method=method, alpha=alpha)
        assert both.extra["interval_level"] == pytest.approx(1 - 2 * alpha)
        low, high = compare.tconfint_diff(alpha=2 * alpha, usevar="pooled")
        row = both.comparisons[0]
        assert (row.ci_low, row.ci_high) == pytest.approx((low, high), rel=1e-12)
        assert row.equivalent is bool(low > -2.0 and high < 2.0)
        lower = equivalence_family(data, "ref", 2.0, kind="non_inferiority", method=method, alpha=alpha)
        assert lower.extra["interval_level"] == pytest.approx(1 - alpha)
        bound, _ = compare.tconfint_diff(alpha=alpha, alternative="larger", usevar="pooled")
        assert lower.comparisons[0].ci_low == pytest.approx(bound, rel=1e-12)
        assert lower.comparisons[0].ci_high is None
        assert lower.comparisons[0].non_inferior is bool(bound > -2.0)


def test_tost_interval_is_the_one_minus_two_alpha_interval() -> None:
    # Schuirmann (1987): TOST at alpha concludes equivalence exactly when the
    # 1 - 2 alpha interval lies inside the margin.
    rng = np.random.default_rng(4)
    groups = [rng.normal(10, 1, 8), rng.normal(10.2, 1, 8), rng.normal(11.5, 1, 8)]
    data = OneWayData.from_arrays(["ref", "a", "b"], groups)
    result = equivalence_family(data, "ref", 1.0, method="tost", alpha=0.05)
    q = stats.t.isf(0.05, 21)  # reference: scipy's Student t quantile
    assert result.extra["interval_level"] == pytest.approx(0.9)
    for row in result.comparisons:
        assert (row.ci_low, row.ci_high) == pytest.approx((row.difference - q * row.se, row.difference + q * row.se))
        assert row.significant == (row.ci_low > -1.0 and row.ci_high < 1.0) == (row.p_value < 0.05)
        assert row.equivalent is row.significant


# --------------------------------------------------------------------------
# the dunnett_tost critical value
# --------------------------------------------------------------------------

def _signed_correlation(signed: np.ndarray) -> np.ndarray:
    corr = np.outer(signed, signed)
    np.fill_diagonal(corr, 1.0)
    return corr


def _scipy_upper_tail(c: float, signed: np.ndarray, df: float) -> float:
    """P(max_i T_i > c) for the many-to-one t with these signed lambdas, by
    scipy.stats.multivariate_t.cdf (randomised quasi-Monte Carlo, seed 1;
    across seeds its values at 200 000 points spread by about 2e-6)."""
    mvt = stats.multivariate_t(loc=np.zeros(signed.size), shape=_signed_correlation(signed), df=df)
    return 1.0 - float(mvt.cdf(np.full(signed.size, c), maxpts=200_000, random_state=1))


def test_one_sided_many_to_one_accepts_signed_lambdas() -> None:
    # reference: scipy.stats.multivariate_t.cdf with the correlation s_i s_j lambda_i lambda_j
    sizes = np.array([8, 7, 9, 8])
    lam = np.sqrt(sizes / (sizes + 8.0))
    for signs in ([1, 1, 1, 1], [1, 1, -1, -1], [1, -1, 1, 1], [-1, 1, -1, 1]):
        signed = lam * np.array(signs)
        c = many_to_one_isf(0.05, signed, 28.0, "one_sided")
        assert _scipy_upper_tail(c, signed, 28.0) == pytest.approx(0.05, abs=2e-5)
        assert float(many_to_one_sf(1.7, signed, 28.0, "one_sided")) == pytest.approx(
            _scipy_upper_tail(1.7, signed, 28.0), abs=2e-5)


def test_sign_patterns_are_the_distinct_patterns_up_to_exchange_and_mirror() -> None:
    # reference: brute force over all 2^p sign vectors; two vectors give the same probability when
    # they have the same multiset of signed lambdas (exchangeable candidates), or the mirror's
    # (T -> -T leaves the centred multivariate t unchanged).
    for sizes in ([5, 5, 5, 5], [5, 5, 5, 5, 5], [5, 6, 5, 6, 7], [3, 4, 5, 6, 7, 8], [4, 4, 6, 6, 6]):
        lam = np.sqrt(np.array(sizes, dtype=float) / (np.array(sizes) + 5.0))
        seen = set()
        for signs in itertools.product((1, -1), repeat=len(sizes)):
            signed = lam * np.array(signs)
            key = min(tuple(sorted(signed.tolist())), tuple(sorted((-signed).tolist())))
            seen.add(key)
        ours = sign_patterns(lam)
        assert sign_pattern_count(lam) == len(ours) == len(seen), sizes
        keys = {min(tuple(sorted(p.tolist())), tuple(sorted((-p).tolist()))) for p in ours}
        assert keys == seen
        assert np.all(ours[0] > 0)  # the same-side pattern comes first


def test_balanced_critical_value_against_scipy_multivariate_t() -> None:
    # Reference: scipy.stats.multivariate_t.cdf (seed 1, error about 2e-6). Balanced design,
    # reference and 4 candidates of 8: lambda = sqrt(1/2), 35 df. The critical value must be the
    # largest one-sided quantile over the sign patterns: its tail is alpha for the worst pattern and
    # at most alpha for the others; the same-side quantile leaves the mixed patterns above alpha.
    result = equivalence_family(design([8] * 5), "g0", 1.0, alpha=0.05)
    c = result.critical_value
    assert result.extra["critical_value_basis"] == "worst_sign_pattern"
    lam = np.full(4, math.sqrt(0.5))
    tails = {positives: _scipy_upper_tail(c, lam * np.array([1] * positives + [-1] * (4 - positives)), 35.0)
             for positives in (4, 3, 2)}
    assert max(tails.values()) == pytest.approx(0.05, abs=2e-5)
    assert all(t <= 0.05 + 2e-5 for t in tails.values())
    assert tails[2] == pytest.approx(0.05, abs=2e-5)  # two on each side is the worst here
    same_side = equivalence_family(design([8] * 5), "g0", 1.0, kind="non_inferiority").critical_value
    assert same_side < c
    assert _scipy_upper_tail(same_side, lam * np.array([1, 1, -1, -1]), 35.0) > 0.055


def test_one_sided_kinds_keep_the_same_side_quantile(client) -> None:
    # Cross-check through the control endpoint: non-inferiority and non-superiority test one side
    # only, so their multiplier is the one-sided Dunnett critical value of the control family for the
    # same data (Dunnett 1955); equivalence needs at least as much.
    body = {**examples.UNBALANCED_PLATE, "reference": "reference buffer", "margin": 3.0}
    control = client.post("/v1/followup/control", json={
        **examples.UNBALANCED_PLATE, "control": "reference buffer", "alternative": "greater"}).json()
    for kind in ("non_inferiority", "non_superiority"):
        one_side = client.post("/v1/followup/equivalence", json={**body, "kind": kind}).json()
        assert one_side["critical_value"] == pytest.approx(control["critical_value"], rel=1e-12)
        assert one_side["extra"]["critical_value_basis"] == "same_side"
        for e, c in zip(one_side["comparisons"], control["comparisons"], strict=True):
            assert e["se"] == pytest.approx(c["se"], rel=1e-14)
            bound = e["ci_low"] if kind == "non_inferiority" else e["ci_high"]
            sign = -1 if kind == "non_inferiority" else 1
            assert bound == pytest.approx(e["difference"] + sign * one_side["critical_value"] * e["se"])
    both = client.post("/v1/followup/equivalence", json=body).json()
    assert both["critical_value"] > control["critical_value"]
    assert both["extra"]["critical_value_basis"] == "worst_sign_pattern"
    for e in both["comparisons"]:
        assert e["ci_low"] == pytest.approx(e["difference"] - both["critical_value"] * e["se"])


def test_too_many_patterns_fall_back_to_the_two_sided_quantile() -> None:
    # 8 candidates of 8 different sizes: 2^8 / 2 = 128 patterns > 64. The two-sided many-to-one
    # quantile bounds every pattern (P(max s_i T_i > c) <= P(max |T_i| > c)); reference: the control
    # family's two-sided Dunnett critical value for the same data.
    data = design([9, 3, 4, 5, 6, 7, 8, 10, 11])
    lam = np.sqrt(data.sizes[1:] / (data.sizes[1:] + data.sizes[0]))
    assert sign_pattern_count(lam) == 128 > MAX_SIGN_PATTERNS
    result = equivalence_family(data, "g0", 1.0, alpha=0.05)
    two_sided = versus_control(data, "g0", alternative="two_sided", alpha=0.05)
    assert result.extra["critical_value_basis"] == "two_sided_bound"
    assert result.critical_value == pytest.approx(two_sided.critical_value, rel=1e-12)
    # the intervals are then the two-sided Dunnett intervals: simultaneous at 1 - alpha
    assert result.extra["interval_level"] == pytest.approx(0.95)
    assert any("upper bound" in note and "conservative" in note for note in result.notes)
    for row, control_row in zip(result.comparisons, two_sided.comparisons, strict=True):
        assert (row.ci_low, row.ci_high) == pytest.approx((control_row.ci_low, control_row.ci_high), rel=1e-12)
    # 7 candidates of different sizes: 64 patterns, still searched
    assert equivalence_family(design([9, 3, 4, 5, 6, 7, 8, 10]), "g0", 1.0).extra[
        "critical_value_basis"] == "worst_sign_pattern"


def test_p_values_and_intervals_agree_under_the_worst_pattern() -> None:
    # An interval inside the margin exactly when the adjusted p-value is below alpha (Berger and Hsu
    # 1996, the interval-inclusion form of the intersection-union test).
    rng = np.random.default_rng(9)
    sizes = [7, 5, 6, 8, 9, 4]
    for _ in range(20):
        groups = [rng.normal(rng.uniform(-1.5, 1.5), 1.0, n) for n in sizes]
        result = equivalence_family(OneWayData.from_arrays([f"g{i}" for i in range(6)], groups), "g0", 1.2)
        for row in result.comparisons:
            inside = row.ci_low > -1.2 and row.ci_high < 1.2
            assert inside == row.equivalent == (row.p_value < 0.05)


# --------------------------------------------------------------------------
# familywise error at the margin boundary: seeded simulations
# --------------------------------------------------------------------------

def _simulate_claims(sizes, thetas, critical: float, delta: float, replicates: int, seed: int):
    """Raw normal data (sd 1, reference mean 0, candidate means ``thetas``),
    and for each replicate whether each candidate's interval
    d -/+ critical * SE lies inside (-delta, delta)."""
    rng = np.random.default_rng(seed)
    sizes = np.asarray(sizes)
    groups = [rng.normal(theta, 1.0, (replicates, n)) for theta, n in zip([0.0, *thetas], sizes, strict=True)]
    means = np.stack([g.mean(axis=1) for g in groups], axis=1)
    df = sizes.sum() - sizes.size
    s = np.sqrt(sum(((g - g.mean(axis=1, keepdims=True)) ** 2).sum(axis=1) for g in groups) / df)
    d = means[:, 1:] - means[:, :1]
    se = s[:, None] * np.sqrt(1.0 / sizes[1:] + 1.0 / sizes[0])
    return groups, (d - critical * se > -delta) & (d + critical * se < delta)


def test_familywise_error_with_candidates_beyond_both_sides_of_the_margin() -> None:
    # Least favourable configuration with mixed signs: reference and 4 candidates of 8, two at +margin
    # and two at -margin (none equivalent). Definition of familywise error: P(any called equivalent)
    # <= alpha. 200 000 replicates: Monte Carlo SE 0.00049 at 0.05, so the bound allowed is 0.0515; the
    # same-side quantile's excess (about 0.057, 15 SE) fails it, which the last check shows.
    sizes, delta, alpha, replicates = (8, 8, 8, 8, 8), 5.0, 0.05, 200_000
    thetas = (delta, delta, -delta, -delta)
    labels = [f"g{i}" for i in range(5)]
    result = equivalence_family(design(sizes), "g0", delta, alpha=alpha)
    groups, claims = _simulate_claims(sizes, thetas, result.critical_value, delta, replicates, seed=1)
    se = mc_se(alpha, replicates)
    rate = claims.any(axis=1).mean()
    assert rate <= alpha + 3 * se, rate
    assert rate >= alpha - 4 * se, rate  # the configuration is least favourable: the bound is reached
    # the function's own flags on the first replicates are the interval rule simulated above
    for r in range(150):
        one = equivalence_family(OneWayData.from_arrays(labels, [g[r] for g in groups]), "g0", delta, alpha=alpha)
        assert [row.equivalent for row in one.comparisons] == claims[r].tolist()
    same_side = equivalence_family(design(sizes), "g0", delta, kind="non_inferiority", alpha=alpha).critical_value
    _, old_claims = _simulate_claims(sizes, thetas, same_side, delta, replicates, seed=1)
    assert old_claims.any(axis=1).mean() > alpha + 3 * se  # the defect this test guards against


@pytest.mark.parametrize("thetas", [(5.0, -5.0, 5.0, -5.0), (5.0, 5.0, -5.0, -5.0), (5.0, 5.0, 5.0, -5.0)])
def test_familywise_error_mixed_signs_unequal_sizes(thetas) -> None:
    # As above with unequal sizes (10 reference; 4, 6, 8, 12): every sign pattern is searched.
    # 200 000 replicates, Monte Carlo SE 0.00049 at alpha = 0.05.
    sizes, delta, alpha, replicates = (10, 4, 6, 8, 12), 5.0, 0.05, 200_000
    critical = equivalence_family(design(sizes), "g0", delta, alpha=alpha).critical_value
    _, claims = _simulate_claims(sizes, thetas, critical, delta, replicates, seed=2)
    assert claims.any(axis=1).mean() <= alpha + 3 * mc_se(alpha, replicates)


@pytest.mark.parametrize("method", ["dunnett_tost", "bonferroni_tost"])
def test_familywise_error_at_the_margin_boundary(method) -> None:
    # Every candidate sits exactly at +margin (not equivalent, same side): the
    # chance that any is called equivalent must be at most alpha, within
    # three Monte Carlo standard errors (2000 replicates: SE 0.0049).
    rng = np.random.default_rng(11)
    sizes, margin, alpha, replicates = (8, 7, 9, 8), 1.0, 0.05, 2000
    labels = ["ref", "a", "b", "c"]
    wrong = 0
    for _ in range(replicates):
        groups = [rng.normal(0.0 if i == 0 else margin, 1.0, n) for i, n in enumerate(sizes)]
        result = equivalence_family(OneWayData.from_arrays(labels, groups), "ref", margin, method=method,
                                    alpha=alpha)
        wrong += any(r.equivalent for r in result.comparisons)
    rate = wrong / replicates
    assert rate <= alpha + 3 * mc_se(alpha, replicates), rate


@pytest.mark.parametrize("kind", ["non_inferiority", "non_superiority"])
def test_one_sided_familywise_error_at_the_margin(kind) -> None:
    # All candidates at the margin on the side the kind tests (-margin for non-inferiority): the
    # same-side quantile is exact there (Dunnett 1955). 200 000 replicates, SE 0.00049.
    sizes, delta, alpha, replicates = (10, 4, 6, 8, 12), 1.0, 0.05, 200_000
    theta = -delta if kind == "non_inferiority" else delta
    result = equivalence_family(design(sizes), "g0", delta, kind=kind, alpha=alpha)
    rng = np.random.default_rng(3)
    sizes_a = np.asarray(sizes)
    means = [rng.normal(0.0 if i == 0 else theta, 1.0 / math.sqrt(n), replicates) for i, n in enumerate(sizes)]
    df = sizes_a.sum() - sizes_a.size
    s = np.sqrt(rng.chisquare(df, replicates) / df)
    d = np.stack(means[1:], axis=1) - means[0][:, None]
    se = s[:, None] * np.sqrt(1.0 / sizes_a[1:] + 1.0 / sizes_a[0])
    bound = d - result.critical_value * se if kind == "non_inferiority" else d + result.critical_value * se
    claims = bound > -delta if kind == "non_inferiority" else bound < delta
    rate = claims.any(axis=1).mean()
    se_mc = mc_se(alpha, replicates)
    assert alpha - 4 * se_mc <= rate <= alpha + 3 * se_mc, rate


# --------------------------------------------------------------------------
# the interval level
# --------------------------------------------------------------------------

@pytest.mark.parametrize("method", ["dunnett_tost", "bonferroni_tost", "tost"])
def test_interval_level_is_reported_and_reached(method) -> None:
    # Two-sided equivalence intervals use one-sided critical values: level 1 - 2 alpha (Berger and Hsu
    # 1996), per candidate for tost, at least that simultaneously for the familywise methods.
    # Derivation: simultaneous coverage = 1 - P(max |T_i| > c) (two-sided many-to-one tail, checked
    # against the control family's quantile elsewhere) >= 1 - 2 alpha. Simulation: 100 000 replicates
    # of normal data, Monte Carlo SE 0.00095 at 0.9.
    sizes, alpha, replicates = (10, 4, 6, 8, 12), 0.05, 100_000
    data = design(sizes)
    result = equivalence_family(data, "g0", 1.0, method=method, alpha=alpha)
    assert result.extra["interval_level"] == pytest.approx(1 - 2 * alpha)
    level_note = [n for n in result.notes if n.startswith("Intervals:")]
    assert len(level_note) == 1 and "0.9" in level_note[0] and "0.95" not in level_note[0]
    c, df = result.critical_value, data.df_within
    lam = np.sqrt(data.sizes[1:] / (data.sizes[1:] + data.sizes[0]))
    thetas = (0.3, -0.2, 0.0, 0.5)
    rng = np.random.default_rng(21)
    means = [rng.normal(t, 1.0 / math.sqrt(n), replicates) for t, n in zip((0.0, *thetas), sizes, strict=True)]
    s = np.sqrt(rng.chisquare(df, replicates) / df)
    d = np.stack(means[1:], axis=1) - means[0][:, None]
    se = s[:, None] * np.sqrt(1.0 / np.asarray(sizes[1:]) + 1.0 / sizes[0])
    covered = np.abs(d - np.array(thetas)) <= c * se
    tolerance = 3 * mc_se(1 - 2 * alpha, replicates)
    if method == "tost":
        assert result.interval == "per_comparison"
        # each interval alone: 4 candidates, so up to 4 SE
        assert np.abs(covered.mean(axis=0) - (1 - 2 * alpha)).max() <= 4 * mc_se(1 - 2 * alpha, replicates)
        assert "per candidate, not simultaneous" in level_note[0]
    else:
        assert result.interval == "simultaneous"
        exact = 1.0 - float(many_to_one_sf(c, lam, df, "two_sided"))
        assert exact >= 1 - 2 * alpha
        assert covered.all(axis=1).mean() >= 1 - 2 * alpha - tolerance
        assert covered.all(axis=1).mean() == pytest.approx(exact, abs=tolerance)
        assert "simultaneous" in level_note[0] and "at least 0.9" in level_note[0]


def test_one_sided_interval_level() -> None:
    for method in ("dunnett_tost", "bonferroni_tost", "tost"):
        for kind in ("non_inferiority", "non_superiority"):
            result = equivalence_family(design([6, 6, 7]), "g0", 1.0, kind=kind, method=method, alpha=0.1)
            assert result.extra["interval_level"] == pytest.approx(0.9)  # 1 - alpha, one-sided
            assert any(n.startswith("Intervals:") and "one-sided at level 0.9" in n for n in result.notes)


# --------------------------------------------------------------------------
# wording, refusals, margins
# --------------------------------------------------------------------------

SENTENCE_DATA = OneWayData.from_arrays(
    ["ref", "close", "far"], [np.array([10.0, 10.4, 9.6, 10.2, 9.8]), np.array([10.1, 10.5, 9.7, 10.3, 9.9]),
                              np.array([13.0, 13.4, 12.6, 13.2, 12.8])])


def test_summary_sentences_of_one_sided_kinds_are_neutral() -> None:
    # Wording is ours (common practice, no source): one-sided kinds say on which side the margin lies,
    # with -delta or +delta, and never judge which direction is better.
    lower = equivalence_family(SENTENCE_DATA, "ref", 1.0, kind="non_inferiority", method="tost")
    upper = equivalence_family(SENTENCE_DATA, "ref", 1.0, kind="non_superiority", method="tost")
    for result in (lower, upper):
        text = " ".join([result.summary, *result.notes, *(r.conclusion for r in result.comparisons)])
        assert "±" not in text
        for judgement in ("worse", "better"):
            assert judgement not in result.summary
            assert all(judgement not in r.conclusion for r in result.comparisons)
    close, far = lower.comparisons
    assert close.non_inferior and far.non_inferior  # 13 is far above 10: not lower by 1 or more
    assert "not lower than the reference by 1 or more" in close.conclusion and "above −1" in close.conclusion
    assert f"{close.ci_low:+.4g}".replace("-", "−") in close.conclusion  # the interval's end, signed
    assert "−1" in lower.summary and "not lower" in lower.summary
    assert any(n.startswith("Margin: −1 ") for n in lower.notes)
    close, far = upper.comparisons
    assert close.non_superior and not far.non_superior
    assert "not higher than the reference by 1 or more" in close.conclusion and "below +1" in close.conclusion
    assert far.conclusion.startswith("far: cannot conclude non-superiority") and "+1" in far.conclusion
    assert "+1" in upper.summary and "not higher" in upper.summary
    assert any(n.startswith("Margin: +1 ") for n in upper.notes)


def test_summary_sentences_of_equivalence() -> None:
    # Wording from the specification (issue 9): "is within ±δ of the reference", or "cannot conclude
    # equivalence: the interval reaches ..." with the end farthest out.
    result = equivalence_family(SENTENCE_DATA, "ref", 1.0, method="tost")
    close, far = result.comparisons
    assert close.equivalent and close.conclusion == "close is within ±1 of the reference."
    assert not far.equivalent
    assert far.conclusion.startswith("far: cannot conclude equivalence: the interval reaches +")
    assert f"{far.ci_high:+.4g}" in far.conclusion  # positive: no minus sign to map
    assert "within ±1" in result.summary


@pytest.mark.parametrize("alpha", [0.5])
def test_alpha_of_one_half_is_refused(alpha) -> None:
    # At alpha = 0.5 the one-sided critical value is 0 and the level 1 - 2 alpha is 0 (rule of ours).
    for kind in ("equivalence", "non_inferiority"):
        with pytest.raises(DataError) as caught:
            equivalence_family(SENTENCE_DATA, "ref", 1.0, kind=kind, method="tost", alpha=alpha)
        assert (caught.value.rule, caught.value.pointer) == ("alpha-below-half", "/alpha")
    assert equivalence_family(SENTENCE_DATA, "ref", 1.0, method="tost", alpha=0.49).critical_value > 0


def test_relative_margin_is_stated_in_data_units() -> None:
    data = OneWayData.from_arrays(["ref", "a"], [np.array([40.0, 42.0, 44.0]), np.array([41.0, 43.0, 45.0])])
    result = equivalence_family(data, "ref", 0.1, relative=True, method="tost")
    assert result.extra["margin"] == pytest.approx(4.2)  # 0.1 * mean(40, 42, 44), arithmetic
    assert result.extra["margin_kind"] == "relative"
    assert "the margin is ±4.2" in result.comparisons[0].conclusion  # a 1-unit shift, n = 3: not shown
    assert any("estimated reference mean" in n and "sampling error is not taken into account" in n
               for n in result.notes)
    absolute = equivalence_family(data, "ref", 4.2, method="tost")
    assert not any("sampling error" in n for n in absolute.notes)


BAD = [
    ({"margin": 0}, "/margin"),
    ({"margin": -1.5}, "/margin"),
    ({"reference": "not a buffer"}, "/reference"),
    ({"margin": {"relative": 0.1}, "groups": [{"label": "reference buffer", "values": [-1.0, 1.0]},
                                              {"label": "b", "values": [0.5, 1.5]}]}, "/margin/relative"),
    ({"kind": "superiority"}, "/kind"),
    ({"method": "dunnett"}, "/method"),
    ({"alpha": 0.5}, "/alpha"),
]


@pytest.mark.parametrize(("change", "pointer"), BAD)
def test_bad_input(client, change, pointer) -> None:
    body = {**examples.BUFFER_PLATE, "reference": "reference buffer", "margin": 2.0, **change}
    response = client.post("/v1/followup/equivalence", json=body)
    assert response.status_code == 422, response.text
    assert response.headers["content-type"] == "application/problem+json"
    assert response.json()["pointer"] == pointer


def test_recommendation_routes_equivalence_questions(client) -> None:
    body = {**examples.BUFFER_PLATE, "question": {"reference": "control", "control": "reference buffer",
                                                  "goal": "equivalence", "margin": 2.0}}
    recommendation = client.post("/v1/recommendation", json=body).json()
    assert (recommendation["family"], recommendation["method"]) == ("equivalence", "dunnett_tost")
    assert recommendation["options"]["margin"] == 2.0
    analysis = client.post("/v1/analysis", json=body).json()
    direct = client.post("/v1/followup/equivalence", json={
        **examples.BUFFER_PLATE, "reference": "reference buffer", "margin": 2.0}).json()
    assert analysis["followup"]["comparisons"] == direct["comparisons"]


def test_versus_control_and_equivalence_share_the_estimates() -> None:
    rng = np.random.default_rng(6)
    data = OneWayData.from_arrays(["r", "a", "b"], [rng.normal(0, 1, 6), rng.normal(0.2, 1, 7),
                                                     rng.normal(-0.1, 1, 5)])
    control = versus_control(data, "r")
    equivalence = equivalence_family(data, "r", 1.0)
    for c, e in zip(control.comparisons, equivalence.comparisons, strict=True):
        assert (c.difference, c.se) == (e.difference, e.se)
