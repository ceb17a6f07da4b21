"""Control, best and contrast families against outside references.

Sources, named at each check: scipy.stats.dunnett (Monte Carlo, fixed
random_state; its error is about 1e-4); scipy.stats.multivariate_t (Genz's
quasi-Monte Carlo) for step-down, MCB critical values and general contrast
sets; statsmodels OLS t_test on cell means for contrasts; the Scheffé (1953)
multiplier from scipy.stats.f; the definitions of Hsu (1996, ch. 4) for the
constrained MCB intervals.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from scipy import optimize, stats

from familywise.stats.data import OneWayData
from familywise.stats.families import contrast_family, versus_best, versus_control

SIZES = (8, 7, 9, 8, 6, 10)
MC = 5e-4  # allowance for scipy's quasi-Monte Carlo error


def _data(seed: int, sizes=SIZES, spread=0.5):
    rng = np.random.default_rng(seed)
    groups = [rng.normal(10 + spread * i, 1.0, n) for i, n in enumerate(sizes)]
    return groups, OneWayData.from_arrays([f"g{i}" for i in range(len(sizes))], groups)


@pytest.mark.parametrize("alternative", ["two_sided", "greater", "less"])
@pytest.mark.parametrize("seed", [0, 1])
def test_dunnett_matches_scipy_within_its_error(alternative, seed) -> None:
    groups, data = _data(seed)
    ours = versus_control(data, "g0", "dunnett", alternative, 0.05)
    # reference: scipy.stats.dunnett (randomised QMC, fixed random_state)
    ref = stats.dunnett(*groups[1:], control=groups[0], alternative=alternative.replace("_", "-"),
                        random_state=7)
    assert [r.statistic for r in ours.comparisons] == pytest.approx(ref.statistic, rel=1e-10)
    assert [r.p_value for r in ours.comparisons] == pytest.approx(ref.pvalue, abs=MC)
    ci = ref.confidence_interval(0.95)
    for row, low, high in zip(ours.comparisons, ci.low, ci.high, strict=True):
        if alternative in ("two_sided", "greater"):
            assert row.ci_low == pytest.approx(low, abs=2e-3)
        else:
            assert row.ci_low is None and np.isinf(low)
        if alternative in ("two_sided", "less"):
            assert row.ci_high == pytest.approx(high, abs=2e-3)
        else:
            assert row.ci_high is None and np.isinf(high)


def test_single_comparison_with_control_is_student_t() -> None:
    # One treatment: Dunnett reduces to the pooled t test (scipy.stats.t).
    _groups, data = _data(3, sizes=(6, 9))
    ours = versus_control(data, "g0")
    row = ours.comparisons[0]
    assert row.p_value == pytest.approx(2 * stats.t.sf(abs(row.statistic), 13), rel=1e-12)
    assert ours.critical_value == pytest.approx(stats.t.isf(0.025, 13), rel=1e-12)


def _mvt_sf(c, lam, df, two_sided=True, seed=11):
    """P(max |T| > c) (or max T) by scipy.stats.multivariate_t (Genz QMC)."""
    corr = np.outer(lam, lam)
    np.fill_diagonal(corr, 1.0)
    dist = stats.multivariate_t(shape=corr, df=df, seed=seed)
    upper = np.full(lam.size, c)
    lower = -upper if two_sided else np.full(lam.size, -np.inf)
    return 1.0 - dist.cdf(upper, lower_limit=lower, maxpts=200_000)


def test_dunnett_stepdown_by_closed_testing() -> None:
    # Dunnett and Tamhane (1991): step r compares the r-th largest |t| with the
    # maximum over the hypotheses not yet rejected; adjusted p made monotone.
    _groups, data = _data(5, spread=0.4)
    ours = versus_control(data, "g0", "dunnett_stepdown")
    single = versus_control(data, "g0", "dunnett")
    n = np.array(SIZES, dtype=float)
    lam = np.sqrt(n[1:] / (n[1:] + n[0]))
    t = np.array([r.statistic for r in ours.comparisons])
    order = np.argsort(-np.abs(t))
    running, expected = 0.0, np.empty(t.size)
    for step, index in enumerate(order):
        running = max(running, _mvt_sf(abs(t[index]), lam[order[step:]], sum(SIZES) - 6))
        expected[index] = running
    assert [r.p_value for r in ours.comparisons] == pytest.approx(expected, abs=MC)
    for s, d in zip(ours.comparisons, single.comparisons, strict=True):
        assert s.p_value <= d.p_value + 1e-12  # step-down never loses power


def test_mcb_from_the_definition() -> None:
    # Hsu (1996), ch. 4: d_i is the one-sided many-to-one quantile with group i
    # as reference, lambda_j = sqrt(n_j / (n_i + n_j)); here found by root
    # finding on scipy.stats.multivariate_t, then the constrained intervals
    # D_i+ = (min_j m_i - m_j + d_i se_ij)^+, D_i- = -(min_{j in G} m_i - m_j - d_j se_ij)^-.
    groups, data = _data(8, spread=0.35)
    ours = versus_best(data, "highest", 0.05)
    k, n = len(SIZES), np.array(SIZES, dtype=float)
    df = sum(SIZES) - k
    m = np.array([g.mean() for g in groups])
    s = np.sqrt(sum(((g - g.mean()) ** 2).sum() for g in groups) / df)
    d = np.empty(k)
    for i in range(k):
        others = [j for j in range(k) if j != i]
        lam = np.sqrt(n[others] / (n[i] + n[others]))
        d[i] = optimize.brentq(lambda c, lam=lam: _mvt_sf(c, lam, df, two_sided=False) - 0.05, 1.0, 4.0,
                               xtol=1e-6)
    assert [r.critical_value for r in ours.comparisons] == pytest.approx(d, abs=3e-3)
    d = np.array([r.critical_value for r in ours.comparisons])  # the formulas on our d
    se = s * np.sqrt(1 / n[:, None] + 1 / n[None, :])
    upper = [max(0.0, min(m[i] - m[j] + d[i] * se[i, j] for j in range(k) if j != i)) for i in range(k)]
    best = [i for i in range(k) if upper[i] > 0]
    lower = [0.0 if best == [i] else min(0.0, min(m[i] - m[j] - d[j] * se[i, j] for j in best if j != i))
             for i in range(k)]
    for i, row in enumerate(ours.comparisons):
        assert row.ci_high == pytest.approx(upper[i], abs=1e-10)
        assert row.ci_low == pytest.approx(lower[i], abs=1e-10)
        assert row.may_be_best == (i in best)
    assert list(ours.best_set) == [f"g{i}" for i in best]


def test_mcb_lowest_mirrors_highest() -> None:
    # Hsu (1996): "lowest is best" is MCB on the negated responses.
    groups, data = _data(9)
    flipped = OneWayData.from_arrays(data.labels, [-g for g in groups])
    low = versus_best(data, "lowest")
    high = versus_best(flipped, "highest")
    for a, b in zip(low.comparisons, high.comparisons, strict=True):
        assert a.difference == pytest.approx(-b.difference, rel=1e-12)
        assert (a.ci_low, a.ci_high) == pytest.approx((-b.ci_high, -b.ci_low), rel=1e-12, abs=1e-12)
        assert a.may_be_best == b.may_be_best


CONTRASTS = np.array([[5, -1, -1, -1, -1, -1], [0, 1, -1, 0, 0, 0], [0, 0, 0, 1, 1, -2]], dtype=float)


def test_contrasts_match_statsmodels_ols() -> None:
    # reference: statsmodels OLS on cell means, t_test(contrast matrix)
    groups, data = _data(10)
    frame = pd.DataFrame({"g": np.repeat(data.labels, SIZES), "y": np.concatenate(groups)})
    fit = smf.ols("y ~ C(g) - 1", frame).fit()
    ref = fit.t_test(CONTRASTS)
    ours = contrast_family(data, ["a", "b", "c"], CONTRASTS, "none")
    for r, row in enumerate(ours.comparisons):
        assert row.difference == pytest.approx(ref.effect[r], rel=1e-10)
        assert row.se == pytest.approx(ref.sd[r], rel=1e-10)
        assert row.p_value == pytest.approx(ref.pvalue[r], rel=1e-8)
        assert row.f == pytest.approx(row.statistic**2, rel=1e-12)


def test_scheffe_multiplier() -> None:
    # Scheffé (1953): sqrt((k - 1) F_{alpha; k-1, N-k}), p = P(F > t²/(k-1)) (scipy.stats.f)
    _, data = _data(11)
    ours = contrast_family(data, ["a", "b", "c"], CONTRASTS, "scheffe", 0.05)
    df = sum(SIZES) - 6
    assert ours.critical_value == pytest.approx(np.sqrt(5 * stats.f.isf(0.05, 5, df)), rel=1e-12)
    for row in ours.comparisons:
        assert row.p_value == pytest.approx(stats.f.sf(row.statistic**2 / 5, 5, df), rel=1e-12)


def test_multivariate_t_adjustment_matches_scipy() -> None:
    # reference: scipy.stats.multivariate_t with the contrasts' own correlation
    _, data = _data(12)
    ours = contrast_family(data, ["a", "b", "c"], CONTRASTS, "multivariate_t", 0.05)
    weighted = CONTRASTS / np.array(SIZES)
    cov = weighted @ CONTRASTS.T
    corr = cov / np.sqrt(np.outer(np.diag(cov), np.diag(cov)))
    df = sum(SIZES) - 6
    dist = stats.multivariate_t(shape=corr, df=df, seed=3)
    for row in ours.comparisons:
        c = abs(row.statistic)
        ref = 1 - dist.cdf(np.full(3, c), lower_limit=np.full(3, -c), maxpts=300_000)
        assert row.p_value == pytest.approx(ref, abs=MC + ours.probability_error)
    ref_crit = optimize.brentq(
        lambda c: dist.cdf(np.full(3, c), lower_limit=np.full(3, -c), maxpts=300_000) - 0.95,
        1.5, 4.0, xtol=1e-6)
    assert ours.critical_value == pytest.approx(ref_crit, abs=5e-3)


def test_product_correlated_contrasts_are_exact() -> None:
    # Treatments against one reference as contrasts: the correlation has
    # product structure, and the multivariate t adjustment must equal Dunnett.
    _, data = _data(13)
    matrix = np.zeros((5, 6))
    matrix[:, 0] = -1.0
    matrix[np.arange(5), np.arange(1, 6)] = 1.0
    ours = contrast_family(data, [f"g{i} vs g0" for i in range(1, 6)], matrix, "multivariate_t")
    dunnett = versus_control(data, "g0")
    assert ours.probability_error is None
    assert [r.p_value for r in ours.comparisons] == pytest.approx(
        [r.p_value for r in dunnett.comparisons], rel=1e-9, abs=1e-13)
    assert ours.critical_value == pytest.approx(dunnett.critical_value, rel=1e-9)
