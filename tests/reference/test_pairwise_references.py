"""Pairwise family against outside references.

Sources, named at each check: scipy.stats.tukey_hsd; statsmodels'
pairwise_tukeyhsd and OLS t_test_pairwise (pooled-variance t with holm,
bonferroni, sidak and fdr_bh adjustments); statsmodels multipletests; the
Games and Howell (1976) formula evaluated with scipy's studentized range;
Dunn's (1964) rank formula evaluated with scipy.stats.rankdata.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from scipy import stats
from statsmodels.stats.multicomp import pairwise_tukeyhsd
from statsmodels.stats.multitest import multipletests

from familywise.stats.data import OneWayData
from familywise.stats.families import pairwise
from familywise.stats.families._common import benjamini_hochberg, bonferroni, holm, sidak

DESIGNS = [(6, 6, 6, 6, 6, 6), (8, 7, 9, 8, 6, 10), (3, 12, 5), (4, 4)]


def _data(seed: int, sizes, spread=0.7, sds=None):
    rng = np.random.default_rng(seed)
    sds = sds or [1.0] * len(sizes)
    groups = [rng.normal(10 + spread * i, sd, n) for i, (n, sd) in enumerate(zip(sizes, sds, strict=True))]
    labels = [f"g{i}" for i in range(len(sizes))]
    return groups, OneWayData.from_arrays(labels, groups)


def _frame(groups):
    return pd.DataFrame({"g": np.repeat([f"g{i}" for i in range(len(groups))], [len(g) for g in groups]),
                         "y": np.concatenate(groups)})


@pytest.mark.parametrize("sizes", DESIGNS)
@pytest.mark.parametrize("seed", [0, 1])
def test_tukey_kramer_matches_scipy_tukey_hsd(sizes, seed) -> None:
    groups, data = _data(seed, sizes)
    ours = pairwise(data, "tukey_kramer", 0.05)
    ref = stats.tukey_hsd(*groups)  # reference: scipy.stats.tukey_hsd
    ci = ref.confidence_interval(0.95)
    for row in ours.comparisons:
        i, j = int(row.first[1:]), int(row.second[1:])
        assert row.difference == pytest.approx(ref.statistic[i, j], rel=1e-12, abs=1e-12)
        assert row.p_value == pytest.approx(ref.pvalue[i, j], rel=1e-7, abs=1e-9)
        assert row.ci_low == pytest.approx(ci.low[i, j], rel=1e-9, abs=1e-9)
        assert row.ci_high == pytest.approx(ci.high[i, j], rel=1e-9, abs=1e-9)


@pytest.mark.parametrize("sizes", DESIGNS[:3])
def test_tukey_kramer_matches_statsmodels(sizes) -> None:
    groups, data = _data(3, sizes)
    ours = pairwise(data, "tukey_kramer", 0.05)
    frame = _frame(groups)
    ref = pairwise_tukeyhsd(frame.y, frame.g, alpha=0.05)  # reference: statsmodels pairwise_tukeyhsd
    # statsmodels reports group2 - group1 and takes its quantile from an
    # interpolated table (qsturng), accurate to about three digits.
    for row, meandiff, low, high, reject in zip(ours.comparisons, ref.meandiffs, ref.confint[:, 0],
                                                ref.confint[:, 1], ref.reject, strict=True):
        assert -row.difference == pytest.approx(meandiff, rel=1e-12)
        assert -row.ci_high == pytest.approx(low, rel=2e-3, abs=2e-3)
        assert -row.ci_low == pytest.approx(high, rel=2e-3, abs=2e-3)
        if abs(row.p_value - 0.05) > 0.005:
            assert row.significant == bool(reject)


METHODS = {"holm": "holm", "bonferroni": "bonferroni", "sidak": "sidak", "benjamini_hochberg": "fdr_bh"}


@pytest.mark.parametrize("sizes", DESIGNS[:3])
def test_pooled_t_methods_match_statsmodels_ols(sizes) -> None:
    groups, data = _data(4, sizes, spread=0.5)
    frame = _frame(groups)
    fit = smf.ols("y ~ C(g)", frame).fit()
    # reference: statsmodels OLS t_test_pairwise (pooled residual variance, N - k df)
    table = fit.t_test_pairwise("C(g)", method=list(METHODS.values())).result_frame
    lsd = pairwise(data, "lsd")
    for row in lsd.comparisons:
        ref = table.loc[f"{row.second}-{row.first}"]  # statsmodels: later level minus earlier
        assert -row.difference == pytest.approx(ref["coef"], rel=1e-10)
        assert row.se == pytest.approx(ref["std err"], rel=1e-10)
        assert row.p_value == pytest.approx(ref["P>|t|"], rel=1e-8)
    for ours_name, sm_name in METHODS.items():
        result = pairwise(data, ours_name)
        for row in result.comparisons:
            ref = table.loc[f"{row.second}-{row.first}"]
            assert row.p_value == pytest.approx(ref[f"pvalue-{sm_name}"], rel=1e-8, abs=1e-12)
            assert row.significant == bool(ref[f"reject-{sm_name}"])


@pytest.mark.parametrize("seed", range(5))
def test_adjustments_match_multipletests(seed) -> None:
    rng = np.random.default_rng(seed)
    p = np.concatenate([rng.uniform(0, 1, 12), rng.uniform(0, 0.01, 4), [0.02, 0.02]])
    # reference: statsmodels.stats.multitest.multipletests
    for ours, name in ((bonferroni, "bonferroni"), (sidak, "sidak"), (holm, "holm"),
                       (benjamini_hochberg, "fdr_bh")):
        assert ours(p) == pytest.approx(multipletests(p, method=name)[1], rel=1e-12, abs=1e-15)


def test_bonferroni_and_sidak_intervals() -> None:
    # Bonferroni (Dunn 1961) and Šidák (1967) multipliers: t quantiles at
    # alpha/(2m) and (1 - (1 - alpha)^(1/m))/2 (scipy.stats.t).
    groups, data = _data(5, (5, 6, 7, 5))
    m, df = 6, sum(len(g) for g in groups) - 4
    b = pairwise(data, "bonferroni", 0.05)
    s = pairwise(data, "sidak", 0.05)
    assert b.critical_value == pytest.approx(stats.t.isf(0.05 / (2 * m), df), rel=1e-12)
    assert s.critical_value == pytest.approx(stats.t.isf((1 - 0.95 ** (1 / m)) / 2, df), rel=1e-12)
    for row in b.comparisons:
        assert row.ci_high - row.ci_low == pytest.approx(2 * b.critical_value * row.se, rel=1e-12)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_games_howell_formula(seed) -> None:
    # Games and Howell (1976): t = d / sqrt(s_i²/n_i + s_j²/n_j), Welch df,
    # p = P(Q_{k, df} > |t| sqrt 2) with scipy.stats.studentized_range.
    groups, data = _data(seed, (5, 9, 7, 12), sds=[1.0, 3.0, 0.5, 2.0])
    ours = pairwise(data, "games_howell", 0.05)
    k = len(groups)
    for row in ours.comparisons:
        a, b = groups[int(row.first[1:])], groups[int(row.second[1:])]
        va, vb = a.var(ddof=1) / a.size, b.var(ddof=1) / b.size
        se = np.sqrt(va + vb)
        df = (va + vb) ** 2 / (va**2 / (a.size - 1) + vb**2 / (b.size - 1))
        t = (a.mean() - b.mean()) / se
        assert row.se == pytest.approx(se, rel=1e-12)
        assert row.df == pytest.approx(df, rel=1e-12)
        assert row.p_value == pytest.approx(stats.studentized_range.sf(abs(t) * np.sqrt(2), k, df),
                                            rel=1e-6, abs=1e-9)
        q = stats.studentized_range.ppf(0.95, k, df) / np.sqrt(2)
        assert row.critical_value == pytest.approx(q, rel=1e-7)


@pytest.mark.parametrize("adjustment", ["holm", "bonferroni", "none"])
def test_dunn_formula(adjustment) -> None:
    # Dunn (1964): z = (Rbar_i - Rbar_j) / sqrt([N(N+1)/12 - sum(t^3 - t)/(12(N-1))] (1/n_i + 1/n_j)),
    # ranks by scipy.stats.rankdata, ties kept by rounding to one decimal.
    rng = np.random.default_rng(9)
    groups = [np.round(rng.normal(m, 1.0, n), 1) for m, n in ((0, 6), (0.8, 7), (1.5, 5), (0.3, 8))]
    data = OneWayData.from_arrays([f"g{i}" for i in range(4)], groups)
    ours = pairwise(data, "dunn", 0.05, dunn_adjustment=adjustment)
    pooled_values = np.concatenate(groups)
    n = pooled_values.size
    ranks = stats.rankdata(pooled_values)
    _, t = np.unique(pooled_values, return_counts=True)
    var = n * (n + 1) / 12 - np.sum(t**3 - t) / (12 * (n - 1))
    bounds = np.cumsum([0] + [len(g) for g in groups])
    rbar = [ranks[bounds[i]:bounds[i + 1]].mean() for i in range(4)]
    raw = []
    for row in ours.comparisons:
        i, j = int(row.first[1:]), int(row.second[1:])
        z = (rbar[i] - rbar[j]) / np.sqrt(var * (1 / len(groups[i]) + 1 / len(groups[j])))
        assert row.statistic == pytest.approx(z, rel=1e-12)
        raw.append(2 * stats.norm.sf(abs(z)))
    expected = raw if adjustment == "none" else multipletests(raw, method=adjustment)[1]
    assert [r.p_value for r in ours.comparisons] == pytest.approx(expected, rel=1e-12)


def test_letters_follow_the_decisions() -> None:
    # Compact letter display (Piepho 2004): groups share a letter exactly when
    # the method does not separate them; 'a' goes to the highest mean.
    _groups, data = _data(2, (8, 7, 9, 8, 6, 10))
    result = pairwise(data, "tukey_kramer")
    letters = result.letters
    for row in result.comparisons:
        share = bool(set(letters[row.first]) & set(letters[row.second]))
        assert share == (not row.significant)
    top = data.labels[int(np.argmax(data.means))]
    assert "a" in letters[top]
