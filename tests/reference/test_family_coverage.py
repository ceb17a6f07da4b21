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


@pytest.mark.parametrize("adjustment", ["scheffe", "multivariate_t", "bonferroni"])
def test_contrast_coverage(adjustment) -> None:
    def covered(d):
        result = contrast_family(d, ["a", "b", "c", "d"], CONTRASTS, adjustment, ALPHA)
        return all(r.ci_low <= 0.0 <= r.ci_high for r in result.comparisons)

    # The quasi-Monte Carlo path costs tens of milliseconds a call: fewer
    # replicates, and a correspondingly wider allowance.
    replicates = 250 if adjustment == "multivariate_t" else REPLICATES
    coverage = _simulate(4, NULL, EQUAL_SD, covered, replicates)
    allowance = 3.0 * math.sqrt(ALPHA * (1 - ALPHA) / replicates)
    assert coverage >= 1 - ALPHA - allowance, coverage


def test_mcb_coverage_at_spread_means() -> None:
    means = (0.0, 0.3, 0.6, 0.9, 1.0)

    def covered(d):
        result = versus_best(d, "highest", ALPHA)
        truth = [means[i] - max(m for j, m in enumerate(means) if j != i) for i in range(len(means))]
        return all(r.ci_low - 1e-12 <= t <= r.ci_high + 1e-12
                   for r, t in zip(result.comparisons, truth, strict=True))

    coverage = _simulate(5, means, EQUAL_SD, covered)
    assert coverage >= 1 - ALPHA - ALLOWANCE, coverage
