"""Pairwise family against outside references.

Sources, named at each check: scipy.stats.tukey_hsd; statsmodels'
pairwise_tukeyhsd and OLS t_test_pairwise (pooled-variance t with holm,
bonferroni, sidak and fdr_bh adjustments); statsmodels multipletests; the
Games and Howell (1976) formula evaluated with scipy's studentized range;
Dunn's (1964) rank formula evaluated with scipy.stats.rankdata; Fisher's
protected LSD against scipy.stats.f_oneway and the pooled t formula.
"""

from __future__ import annotations

import importlib

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from scipy import stats
from statsmodels.stats.multicomp import pairwise_tukeyhsd
from statsmodels.stats.multitest import multipletests

from familywise.stats.data import OneWayData
from familywise.stats.distributions import studentized_range_isf
from familywise.stats.errors import DataError
from familywise.stats.families import pairwise
from familywise.stats.families._common import benjamini_hochberg, bonferroni, holm, sidak

pairwise_module = importlib.import_module("familywise.stats.families.pairwise")

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


# Invented plate readings (six buffers, four wells each): the omnibus F test is
# not significant (p about 0.25, checked below with scipy) while the last
# buffer against the fourth has an unadjusted pooled-t p-value about 0.02.
FLAT_PLATE = [[10.6, 10.9, 10.3, 9.2], [10.7, 9.5, 10.9, 8.9], [10.9, 10.0, 8.8, 9.7],
              [10.1, 10.3, 9.0, 8.9], [10.2, 9.5, 10.2, 10.8], [9.6, 11.5, 12.4, 10.9]]


def _pooled_t_p(groups, i, j):
    """Two-sided pooled-variance t p-value of groups i and j (N - k df), with scipy.stats.t."""
    k, n_total = len(groups), sum(len(g) for g in groups)
    s2 = sum(((g - g.mean()) ** 2).sum() for g in groups) / (n_total - k)
    t = (groups[i].mean() - groups[j].mean()) / np.sqrt(s2 * (1 / len(groups[i]) + 1 / len(groups[j])))
    return 2 * stats.t.sf(abs(t), n_total - k)


def _agree(result, alpha) -> None:
    """Where a row has an interval, it excludes zero exactly when the row is
    significant, which is exactly when p < alpha (design.md: one distribution
    code for both)."""
    for row in result.comparisons:
        assert row.significant == (row.p_value < alpha)
        if row.ci_low is not None:
            assert (row.ci_low > 0 or row.ci_high < 0) == row.significant, row


@pytest.mark.parametrize("plate", ["flat", "buffers"])
def test_protected_lsd_p_values_intervals_and_decisions_agree(plate) -> None:
    # Fisher (1935): the protected LSD declares a pair only when the omnibus F
    # test and the pair's t test both reject, so the smallest alpha at which it
    # declares the pair (its adjusted p-value; Wright 1992, Biometrics 48,
    # 1005-1013, recalled from memory) is max(p_F, p_pair). p_F from
    # scipy.stats.f_oneway; p_pair from the pooled t formula with scipy.stats.t.
    from familywise.api import examples

    alpha = 0.05
    raw_groups = FLAT_PLATE if plate == "flat" else [g["values"] for g in examples.BUFFER_PLATE["groups"]]
    groups = [np.array(g, dtype=float) for g in raw_groups]
    labels = [f"g{i}" for i in range(len(groups))]
    data = OneWayData.from_arrays(labels, groups)
    p_f = stats.f_oneway(*groups).pvalue
    ours = pairwise(data, "lsd", alpha, protected=True, omnibus_p_value=p_f)
    unprotected = pairwise(data, "lsd", alpha)
    for row in ours.comparisons:
        i, j = labels.index(row.first), labels.index(row.second)
        raw = _pooled_t_p(groups, i, j)
        assert row.unadjusted_p_value == pytest.approx(raw, rel=1e-9)
        assert row.p_value == pytest.approx(max(p_f, raw), rel=1e-9)
        assert row.p_value >= p_f
    _agree(ours, alpha)
    if plate == "flat":
        # the case of the review: unprotected, a pair is declared (p about 0.02)
        # and its t interval excludes zero; protected, nothing is declared and
        # no interval contradicts that
        assert p_f > alpha and any(r.significant for r in unprotected.comparisons)
        assert not any(r.significant for r in ours.comparisons)
        assert ours.interval == "none" and ours.critical_value is None
        assert all(r.ci_low is None and r.ci_high is None for r in ours.comparisons)
        assert any("not significant" in note for note in ours.notes)
    else:
        # a significant F test leaves the decisions and the per-comparison t
        # intervals of the unprotected LSD (scipy.stats.t quantile) unchanged
        assert p_f < alpha
        assert ours.interval == "per_comparison"
        df = sum(len(g) for g in groups) - len(groups)
        assert ours.critical_value == pytest.approx(stats.t.isf(alpha / 2, df), rel=1e-12)
        assert [r.significant for r in ours.comparisons] == [r.significant for r in unprotected.comparisons]
        assert [(r.ci_low, r.ci_high) for r in ours.comparisons] == [
            (r.ci_low, r.ci_high) for r in unprotected.comparisons]


def test_protected_is_refused_for_other_methods() -> None:
    # design.md: nothing silently dropped; the protection belongs to the LSD.
    _groups, data = _data(1, (5, 5, 5))
    with pytest.raises(DataError) as refused:
        pairwise(data, "tukey_kramer", protected=True, omnibus_p_value=0.01)
    assert refused.value.pointer == "/protected"


def _welch(groups, i, j):
    a, b = groups[i], groups[j]
    va, vb = a.var(ddof=1) / a.size, b.var(ddof=1) / b.size
    return (va + vb) ** 2 / (va**2 / (a.size - 1) + vb**2 / (b.size - 1))


@pytest.mark.parametrize(("k", "sizes"), [(36, (4, 4)), (45, (2, 40)), (40, (3, 300))])
def test_games_howell_many_groups(k, sizes) -> None:
    # Many pairs, each with its own Welch df: the critical values come from the
    # interpolant over df (range_quantiles), which must match the studentized
    # range quantile at each row's df: against scipy.stats.studentized_range
    # (its ppf is accurate to about 1e-8; a sample of rows, as it is slow),
    # and against our own root-finder at each df to 1e-12 relative (the
    # interpolant is not to change the numbers). p-values: Games and Howell
    # (1976) with scipy.stats.studentized_range.sf.
    rng = np.random.default_rng(k)
    n = rng.integers(sizes[0], sizes[1] + 1, k)
    sds = rng.uniform(0.3, 3.0, k)
    groups = [rng.normal(0.2 * i, sds[i], n[i]) for i in range(k)]
    data = OneWayData.from_arrays([f"g{i}" for i in range(k)], groups)
    ours = pairwise(data, "games_howell", 0.05)
    df = np.array([row.df for row in ours.comparisons])
    assert np.unique(df).size > pairwise_module.EXACT_QUANTILES  # the interpolated path
    exact = np.array([studentized_range_isf(0.05, k, float(v)) for v in df]) / np.sqrt(2)
    critical = np.array([row.critical_value for row in ours.comparisons])
    evidence = np.abs([row.statistic for row in ours.comparisons])
    moved = np.abs(critical - evidence) <= 1e-10 * evidence  # nudged to agree with p (a few ulps)
    assert np.all(np.abs(critical[~moved] / exact[~moved] - 1) <= 1e-12)
    for r in np.linspace(0, df.size - 1, 12).astype(int):
        row = ours.comparisons[r]
        i, j = int(row.first[1:]), int(row.second[1:])
        assert row.df == pytest.approx(_welch(groups, i, j), rel=1e-12)
        assert row.critical_value == pytest.approx(stats.studentized_range.ppf(0.95, k, row.df) / np.sqrt(2),
                                                   rel=1e-7)
        assert row.p_value == pytest.approx(
            stats.studentized_range.sf(abs(row.statistic) * np.sqrt(2), k, row.df), rel=1e-6, abs=1e-9)
        assert row.unadjusted_p_value == pytest.approx(2 * stats.t.sf(abs(row.statistic), row.df), rel=1e-12)
    _agree(ours, 0.05)


@pytest.mark.parametrize(("k", "alpha", "low", "high"), [(60, 1e-6, 1.0, 1e5), (200, 0.01, 2.0, 40.0),
                                                        (500, 0.05, 3.0, 6.0), (25, 0.5, 1.0, 1e6)])
def test_interpolated_range_quantiles_equal_the_root_finder(k, alpha, low, high) -> None:
    # range_quantiles with many distinct df (the interpolant) against the
    # root-finder studentized_range_isf at each df, to 1e-12 relative (its
    # numbers are checked against independent references in
    # test_studentized_range.py); a few against scipy.stats.studentized_range
    # where its ppf is accurate to 1e-7 (not at alpha 1e-6, nor at 1e5 df).
    rng = np.random.default_rng(k)
    df = np.exp(rng.uniform(np.log(low), np.log(high), 3000))
    df[:2] = low, high
    q = pairwise_module.range_quantiles(alpha, k, df)
    for r in np.linspace(0, df.size - 1, 40).astype(int):
        assert q[r] == pytest.approx(studentized_range_isf(alpha, k, float(df[r])), rel=1e-12)
    if alpha >= 1e-3:
        for r in [r for r in range(12) if df[r] < 1000][:3]:
            assert q[r] == pytest.approx(stats.studentized_range.ppf(1 - alpha, k, df[r]), rel=1e-7)
