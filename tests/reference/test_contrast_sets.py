"""Standard contrast sets and the contrast checks against outside references.

Sources, named at each check: Fisher and Yates (1938), Statistical Tables for
Biological, Agricultural and Medical Research, table of orthogonal polynomials
(equally spaced levels, equal n; the integer values below are written from
memory and cross-checked here against numpy and patsy); numpy.linalg.qr of the
Vandermonde matrix weighted by sqrt(n); patsy's ``Helmert`` and ``Poly``
contrast matrices; statsmodels OLS (cell-means fit: covariance of the
parameters, t_test of a contrast; sequential ANOVA of a polynomial regression,
anova_lm typ=1); scipy.stats.f_oneway for the between-groups SS.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from patsy.contrasts import Helmert, Poly
from scipy import stats
from statsmodels.stats.anova import anova_lm

from familywise.stats.contrasts import (
    StandardSpec,
    check_planned_set,
    coefficient_matrix,
    helmert_contrasts,
    polynomial_contrasts,
    validate_contrasts,
)
from familywise.stats.data import OneWayData

# Fisher and Yates (1938), orthogonal polynomials for k equally spaced levels
# (from memory): linear, quadratic, cubic, ... coefficients.
FISHER_YATES = {
    3: [(-1, 0, 1), (1, -2, 1)],
    4: [(-3, -1, 1, 3), (1, -1, -1, 1), (-1, 3, -3, 1)],
    5: [(-2, -1, 0, 1, 2), (2, -1, -2, -1, 2), (-1, 2, 0, -2, 1), (1, -4, 6, -4, 1)],
    6: [(-5, -3, -1, 1, 3, 5), (5, -1, -4, -4, -1, 5), (-5, 7, 4, -4, -7, 5), (1, -3, 2, 2, -3, 1),
        (-1, 5, -10, 10, -5, 1)],
    7: [(-3, -2, -1, 0, 1, 2, 3), (5, 0, -3, -4, -3, 0, 5), (-1, 1, 1, 0, -1, -1, 1),
        (3, -7, 1, 6, 1, -7, 3), (-1, 4, -5, 0, 5, -4, 1), (1, -6, 15, -20, 15, -6, 1)],
}


def _labels(k: int) -> list[str]:
    return [f"level {i}" for i in range(k)]


def _unit(rows: np.ndarray) -> np.ndarray:
    """Rows scaled to a largest |coefficient| of 1, sign fixed by the last group."""
    rows = np.asarray(rows, dtype=float)
    rows = rows / np.max(np.abs(rows), axis=1, keepdims=True)
    return rows * np.sign(rows[:, -1])[:, None]


def _numpy_trends(levels, sizes) -> np.ndarray:
    """Trend contrasts from numpy.linalg.qr of diag(sqrt(n)) V, V the Vandermonde
    matrix of the (centred, scaled) levels: c = sqrt(n) * Q[:, 1:]."""
    x = np.asarray(levels, dtype=float)
    x = (x - x.mean()) / np.ptp(x)
    root = np.sqrt(np.asarray(sizes, dtype=float))
    q, _ = np.linalg.qr(root[:, None] * np.vander(x, len(x), increasing=True))
    return (root[:, None] * q[:, 1:]).T


@pytest.mark.parametrize("k", sorted(FISHER_YATES))
def test_polynomial_equal_spacing_equal_n_is_the_published_table(k: int) -> None:
    names, matrix = polynomial_contrasts(_labels(k), [4] * k, list(range(1, k + 1)))
    # Fisher and Yates (1938) table (from memory): exactly the tabulated integers
    np.testing.assert_array_equal(matrix, np.array(FISHER_YATES[k], dtype=float))
    assert names[:2] == ("linear trend", "quadratic trend")
    # numpy: QR of the Vandermonde matrix (equal weights), same up to scale and sign
    np.testing.assert_allclose(_unit(matrix), _unit(_numpy_trends(range(k), [4] * k)), atol=1e-12)
    # patsy Poly: columns are the normalised orthogonal polynomials
    patsy_rows = Poly().code_without_intercept(list(range(k))).matrix.T
    np.testing.assert_allclose(_unit(matrix), _unit(patsy_rows), atol=1e-12)


@pytest.mark.parametrize(("levels", "sizes"), [
    ((0.0, 0.5, 1.0, 2.0, 4.0), (6, 3, 5, 4, 6)),       # dilution-like spacing, lost wells
    ((1.0, 2.0, 3.0, 4.0), (6, 3, 5, 4)),
    ((0.01, 0.1, 1.0, 10.0, 100.0, 1000.0), (3, 3, 2, 4, 3, 5)),
    ((7.0, 7.5, 8.0), (2, 9, 4)),
])
def test_polynomial_unequal_n_and_spacing_against_numpy_qr(levels, sizes) -> None:
    k = len(levels)
    _, matrix = polynomial_contrasts(_labels(k), sizes, levels)
    # numpy.linalg.qr of diag(sqrt(n)) V, V the Vandermonde matrix of the levels
    np.testing.assert_allclose(_unit(matrix), _unit(_numpy_trends(levels, sizes)), atol=1e-9)


def test_polynomial_unequal_spacing_equal_n_against_patsy_scores() -> None:
    levels = (0.0, 0.5, 1.0, 2.0, 4.0)
    _, matrix = polynomial_contrasts(_labels(5), [5] * 5, levels)
    # patsy Poly(scores=...) builds orthogonal polynomials at unequally spaced scores
    patsy_rows = Poly(scores=list(levels)).code_without_intercept(list(range(5))).matrix.T
    np.testing.assert_allclose(_unit(matrix), _unit(patsy_rows), atol=1e-10)


@pytest.mark.parametrize("k", [2, 3, 4, 5, 8])
def test_helmert_equal_n_is_patsys_helmert(k: int) -> None:
    _, matrix = helmert_contrasts(_labels(k), [6] * k)
    # patsy Helmert contrast matrix (levels x contrasts), transposed: exact
    np.testing.assert_array_equal(matrix, Helmert().code_without_intercept(list(range(k))).matrix.T)


def _random_unbalanced(seed: int, sizes):
    rng = np.random.default_rng(seed)
    groups = [rng.normal(40.0 + 3.0 * rng.standard_normal(), 2.0, n) for n in sizes]
    return groups, OneWayData.from_arrays(_labels(len(sizes)), groups)


def _between_ss(groups) -> float:
    # scipy.stats.f_oneway: F * MS_within * (k - 1) is the between-groups SS
    k, n = len(groups), sum(len(g) for g in groups)
    f = stats.f_oneway(*groups).statistic
    within = sum(((g - g.mean()) ** 2).sum() for g in groups) / (n - k)
    return f * within * (k - 1)


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
@pytest.mark.parametrize("kind", ["helmert", "polynomial"])
def test_ss_partition_of_a_complete_orthogonal_set(seed: int, kind: str) -> None:
    sizes = [(5, 9, 3, 7, 4), (2, 11, 6, 8, 3, 5), (4, 4, 10, 2), (12, 3, 7, 5, 9, 6, 2)][seed - 1]
    groups, data = _random_unbalanced(seed, sizes)
    levels = {label: float(2**i) for i, label in enumerate(data.labels)} if kind == "polynomial" else None
    r = check_planned_set([], data=data, standard=StandardSpec(kind, levels=levels))
    assert r.verdict == "orthogonal" and r.set.complete
    ss = sum(c.ss for c in r.contrasts)
    # SS partition (Scheffé 1959): the k - 1 orthogonal contrast SS add up to the
    # between-groups SS, here from scipy.stats.f_oneway
    assert ss == pytest.approx(_between_ss(groups), rel=1e-10)
    assert r.set.ss_partition_holds is True
    assert r.set.ss_contrasts_total == pytest.approx(r.set.ss_between, rel=1e-10)


def test_non_orthogonal_set_does_not_partition() -> None:
    groups, data = _random_unbalanced(9, (5, 9, 3, 7))
    # patsy's (unweighted) Helmert: orthogonal only for equal n
    rows = Helmert().code_without_intercept(list(range(4))).matrix.T
    names = ("h1", "h2", "h3")
    r = validate_contrasts(names, rows, data.sizes, data)
    assert r.verdict == "not_orthogonal" and not r.set.complete and r.set.ss_partition_holds is None
    assert sum(c.ss for c in r.contrasts) != pytest.approx(_between_ss(groups), rel=1e-6)


def test_orthogonal_for_equal_n_only_is_reported_not_orthogonal() -> None:
    # patsy's Helmert coding is orthogonal for equal sizes ...
    rows = Helmert().code_without_intercept(list(range(4))).matrix.T
    names = ("h1", "h2", "h3")
    labels = _labels(4)
    equal = validate_contrasts(names, rows, [5, 5, 5, 5], labels=labels)
    assert equal.verdict == "orthogonal" and equal.set.complete
    # ... and not for the sizes left after losing wells
    sizes = [5, 2, 4, 5]
    unequal = validate_contrasts(names, rows, sizes, labels=labels)
    assert unequal.verdict == "not_orthogonal"
    assert unequal.set.orthogonal_for_equal_sizes and not unequal.set.mutually_orthogonal
    assert any(s.startswith("Orthogonal only for equal group sizes") for s in unequal.consequences)
    # the correlations agree with the covariance of statsmodels' cell-means OLS fit
    rng = np.random.default_rng(0)
    frame = pd.DataFrame({"g": np.repeat(labels, sizes), "y": rng.normal(0.0, 1.0, sum(sizes))})
    fit = smf.ols("y ~ C(g) - 1", frame).fit()
    covariance = rows @ fit.cov_params().to_numpy() @ rows.T
    sd = np.sqrt(np.diag(covariance))
    expected = (covariance / np.outer(sd, sd))[np.triu_indices(3, 1)]
    assert [p.correlation for p in unequal.pairs] == pytest.approx(expected, abs=1e-12)


def test_contrast_ss_against_statsmodels_t_test() -> None:
    groups, data = _random_unbalanced(11, (6, 3, 5, 4, 6))
    labels = list(data.labels)
    names, matrix = coefficient_matrix(labels, [
        ("x", {labels[0]: 4, labels[1]: -1, labels[2]: -1, labels[3]: -1, labels[4]: -1}),
        ("y", {labels[1]: 1, labels[2]: 1, labels[3]: -1, labels[4]: -1}),
    ])
    r = validate_contrasts(names, matrix, data.sizes, data)
    frame = pd.DataFrame({"g": np.repeat(labels, [len(g) for g in groups]), "y": np.concatenate(groups)})
    fit = smf.ols("y ~ C(g) - 1", frame).fit()
    for check, row in zip(r.contrasts, matrix, strict=True):
        test = fit.t_test(row)
        # statsmodels: estimate of the contrast; SS = t^2 * MS_within
        assert check.estimate == pytest.approx(float(np.squeeze(test.effect)), rel=1e-10)
        assert check.ss == pytest.approx(float(np.squeeze(test.tvalue)) ** 2 * fit.mse_resid, rel=1e-10)


def test_trend_ss_is_the_sequential_regression_ss() -> None:
    levels = np.array([0.0, 1.0, 2.0, 4.0])
    groups, data = _random_unbalanced(5, (6, 3, 5, 4))
    r = check_planned_set([], data=data, standard=StandardSpec(
        "polynomial", levels=dict(zip(data.labels, levels.tolist(), strict=True))))
    frame = pd.DataFrame({"x": np.repeat(levels, [len(g) for g in groups]), "y": np.concatenate(groups)})
    table = anova_lm(smf.ols("y ~ x + I(x**2) + I(x**3)", frame).fit(), typ=1)
    # statsmodels anova_lm(typ=1): sequential SS of the linear, quadratic, cubic terms
    assert [c.ss for c in r.contrasts] == pytest.approx(table["sum_sq"].iloc[:3].tolist(), rel=1e-9)
