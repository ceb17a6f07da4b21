"""Simultaneous coverage by simulation (fixed seeds).

Each family's intervals must cover all the true values together with
probability at least 1 - alpha, within Monte Carlo error: with R replicates
the estimate's standard error is sqrt(alpha (1 - alpha) / R), and the test
allows three of them (reference: the definition of simultaneous coverage,
e.g. Hsu 1996, ch. 1). Under the null (equal means) for the pairwise,
control and contrast families; at spread means for Hsu's MCB, whose
constrained intervals always contain 0 under the null.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from familywise.stats.data import OneWayData
from familywise.stats.families import contrast_family, pairwise, versus_best, versus_control

ALPHA = 0.05
REPLICATES = 1500
ALLOWANCE = 3.0 * math.sqrt(ALPHA * (1 - ALPHA) / REPLICATES)
SIZES = (6, 8, 5, 9, 7)


def _simulate(seed, means, sds, covered, replicates=REPLICATES) -> float:
    rng = np.random.default_rng(seed)
    hits = 0
    labels = [f"g{i}" for i in range(len(SIZES))]
    for _ in range(replicates):
        groups = [rng.normal(m, s, n) for m, s, n in zip(means, sds, SIZES, strict=True)]
        hits += covered(OneWayData.from_arrays(labels, groups))
    return hits / replicates


def _pairs_cover(result, means) -> bool:
    truth = {f"g{i}": m for i, m in enumerate(means)}
    return all(r.ci_low <= truth[r.first] - truth[r.second] <= r.ci_high for r in result.comparisons)


NULL = (0.0,) * 5
EQUAL_SD = (1.0,) * 5


@pytest.mark.parametrize("method", ["tukey_kramer", "bonferroni", "sidak"])
def test_pairwise_coverage(method) -> None:
    coverage = _simulate(1, NULL, EQUAL_SD, lambda d: _pairs_cover(pairwise(d, method, ALPHA), NULL))
    assert coverage >= 1 - ALPHA - ALLOWANCE, coverage


def test_games_howell_coverage_with_unequal_variances() -> None:
    sds = (0.5, 1.0, 2.0, 1.0, 3.0)
    coverage = _simulate(2, NULL, sds, lambda d: _pairs_cover(pairwise(d, "games_howell", ALPHA), NULL))
    assert coverage >= 1 - ALPHA - ALLOWANCE, coverage


@pytest.mark.parametrize("alternative", ["two_sided", "greater", "less"])
def test_dunnett_coverage(alternative) -> None:
    def covered(d):
        result = versus_control(d, "g0", "dunnett", alternative, ALPHA)
        return all((r.ci_low is None or r.ci_low <= 0.0) and (r.ci_high is None or r.ci_high >= 0.0)
                   for r in result.comparisons)

    coverage = _simulate(3, NULL, EQUAL_SD, covered)
    assert coverage >= 1 - ALPHA - ALLOWANCE, coverage


CONTRASTS = np.array([[4, -1, -1, -1, -1], [0, 1, -1, 0, 0], [0, 1, 1, -1, -1], [1, 0, 0, 0, -1]], float)


@pytest.mark.parametrize("adjustment", ["scheffe", "bonferroni"])
def test_contrast_coverage(adjustment) -> None:
    def covered(d):
        result = contrast_family(d, ["a", "b", "c", "d"], CONTRASTS, adjustment, ALPHA)
        return all(r.ci_low <= 0.0 <= r.ci_high for r in result.comparisons)

    coverage = _simulate(4, NULL, EQUAL_SD, covered)
    assert coverage >= 1 - ALPHA - ALLOWANCE, coverage


#: Replicates of the multivariate-t coverage check: with 40,000 the estimate's
#: standard error is 0.0011 and the threshold 1 - alpha - 3 SE = 0.9467, so a
#: real coverage of 0.94 (a shortfall of 0.01) would have to be overestimated
#: by 5.6 standard errors to pass: it fails (probability of passing below 1e-7).
MVT_REPLICATES = 40_000
#: Replicates on which the family itself is run to tie the fast check to it.
MVT_LINKED = 120


def test_multivariate_t_contrast_coverage() -> None:
    # The multivariate-t interval of contrast c is estimate_c +- q se_c, with
    # q the family's multiplier, which depends on the sizes, the contrasts,
    # the error df and alpha only: the same in every replicate. The family
    # costs tens of milliseconds a call (quasi-Monte Carlo p-values), so it is
    # run on the first MVT_LINKED replicates only, to check that its rows are
    # exactly those intervals with one q; the coverage of those intervals is
    # then counted over all replicates at once with numpy.
    rng = np.random.default_rng(4)
    sizes = np.array(SIZES)
    bounds = np.concatenate([[0], np.cumsum(sizes)])
    values = rng.normal(0.0, 1.0, (MVT_REPLICATES, int(sizes.sum())))
    means = np.stack([values[:, bounds[g]:bounds[g + 1]].mean(axis=1) for g in range(len(SIZES))], axis=1)
    ss = sum(((values[:, bounds[g]:bounds[g + 1]] - means[:, g:g + 1]) ** 2).sum(axis=1)
             for g in range(len(SIZES)))
    s = np.sqrt(ss / (sizes.sum() - len(SIZES)))
    estimate = means @ CONTRASTS.T
    se = s[:, None] * np.sqrt((CONTRASTS**2 / sizes).sum(axis=1))[None, :]
    labels = [f"g{i}" for i in range(len(SIZES))]
    multipliers = set()
    for r in range(MVT_LINKED):
        data = OneWayData.from_arrays(labels, [values[r, bounds[g]:bounds[g + 1]] for g in range(len(SIZES))])
        result = contrast_family(data, ["a", "b", "c", "d"], CONTRASTS, "multivariate_t", ALPHA)
        multipliers.add(result.critical_value)
        for c, row in enumerate(result.comparisons):
            assert row.difference == pytest.approx(estimate[r, c], rel=1e-9, abs=1e-12)
            assert row.se == pytest.approx(se[r, c], rel=1e-9)
            assert row.ci_low == pytest.approx(estimate[r, c] - result.critical_value * se[r, c], rel=1e-9,
                                               abs=1e-12)
            assert row.ci_high == pytest.approx(estimate[r, c] + result.critical_value * se[r, c], rel=1e-9,
                                                abs=1e-12)
    assert len(multipliers) == 1, multipliers
    q = multipliers.pop()
    coverage = float(np.mean(np.all(np.abs(estimate) <= q * se, axis=1)))
    allowance = 3.0 * math.sqrt(ALPHA * (1 - ALPHA) / MVT_REPLICATES)
    assert coverage >= 1 - ALPHA - allowance, coverage
    # The check has the power it claims: the family's own multiplier at
    # alpha + 0.01 (coverage 0.94, a shortfall of 0.01) fails it on the same replicates.
    short = contrast_family(data, ["a", "b", "c", "d"], CONTRASTS, "multivariate_t", ALPHA + 0.01).critical_value
    assert float(np.mean(np.all(np.abs(estimate) <= short * se, axis=1))) < 1 - ALPHA - allowance


def test_mcb_coverage_at_spread_means() -> None:
    means = (0.0, 0.3, 0.6, 0.9, 1.0)

    def covered(d):
        result = versus_best(d, "highest", ALPHA)
        truth = [means[i] - max(m for j, m in enumerate(means) if j != i) for i in range(len(means))]
        return all(r.ci_low - 1e-12 <= t <= r.ci_high + 1e-12
                   for r, t in zip(result.comparisons, truth, strict=True))

    coverage = _simulate(5, means, EQUAL_SD, covered)
    assert coverage >= 1 - ALPHA - ALLOWANCE, coverage
