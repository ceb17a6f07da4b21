"""The contrast rules on their own: coefficient matrices, tolerances, the set
checks, the verdict, and invariances (hypothesis).

Sources, named at each check: the definitions of Scheffé (1959, The Analysis
of Variance, ch. 1 and 3): a contrast's coefficients sum to zero, Cov(L_c, L_d)
= sigma^2 sum c_i d_i / n_i, SS_c = L_c^2 / sum c_i^2 / n_i; Dunnett (1955) for
the correlation of comparisons with one reference; numpy.linalg for ranks.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from familywise.stats.contrasts import (
    StandardSpec,
    check_planned_set,
    coefficient_matrix,
    estimate_correlations,
    pair_tolerance,
    polynomial_contrasts,
    reference_contrasts,
    require_contrasts_sum_to_zero,
    sums_to_zero,
    validate_contrasts,
    variance_factors,
)
from familywise.stats.data import OneWayData
from familywise.stats.errors import DataError

LABELS = ("a", "b", "c", "d")


# -- coefficient_matrix -----------------------------------------------------------


def test_matrix_orders_columns_by_label_and_fills_zeros() -> None:
    names, matrix = coefficient_matrix(LABELS, [("x", {"c": 1.0, "a": -1.0}), ("y", {"d": 2, "b": -2})])
    assert names == ("x", "y")
    np.testing.assert_array_equal(matrix, [[-1, 0, 1, 0], [0, -2, 0, 2]])


@pytest.mark.parametrize(("contrasts", "rule", "pointer"), [
    ([("x", {"a": 1, "e": -1})], "unknown-group", "/contrasts/0/coefficients/e"),
    ([("x", {"a": 1, "b": -1}), ("x", {"c": 1, "d": -1})], "contrast-name-duplicate", "/contrasts/1/name"),
    ([("x", {"a": 1, "b": -1}), ("y", {"a": 0, "b": 0})], "contrast-zero", "/contrasts/1/coefficients"),
    ([("x", {})], "contrast-zero", "/contrasts/0/coefficients"),
    ([("x", {"a": math.inf, "b": -1})], "finite", "/contrasts/0/coefficients/a"),
    ([("x", {"a": math.nan, "b": -1})], "finite", "/contrasts/0/coefficients/a"),
    ([("x", {"a": 1e200, "b": -1e200})], "finite", "/contrasts/0/coefficients/a"),
    ([("  ", {"a": 1, "b": -1})], "contrast-name-empty", "/contrasts/0/name"),
    ([("x", {"a/b~": 1})], "unknown-group", "/contrasts/0/coefficients/a~1b~0"),  # RFC 6901 escaping
])
def test_matrix_refusals_name_the_field(contrasts, rule, pointer) -> None:
    with pytest.raises(DataError) as caught:
        coefficient_matrix(LABELS, contrasts)
    assert (caught.value.rule, caught.value.pointer) == (rule, pointer)


# -- sums to zero -------------------------------------------------------------------


def test_sum_to_zero_tolerance_is_scaled_to_the_coefficients() -> None:
    # exact integer sums (definition, Scheffé 1959)
    assert sums_to_zero(np.array([3.0, -1.0, -1.0, -1.0]))
    assert not sums_to_zero(np.array([3.0, -1.0, -1.0, -0.999]))
    # 0.1 + 0.2 - 0.3 is 5.6e-17 in doubles: rounding of the decimals, not a real sum
    assert sums_to_zero(np.array([0.1, 0.2, -0.3]))
    # thirds written with six digits do not sum to zero (the caller should write 1, 1, 1, -3)
    assert not sums_to_zero(np.array([0.333333, 0.333333, 0.333333, -1.0]))
    # invariant to the scale of the row, however large or small
    for scale in (1e-120, 1e-6, 1e6, 1e120):
        assert sums_to_zero(np.array([0.1, 0.2, -0.3]) * scale)
        assert not sums_to_zero(np.array([1.0, -1.0 + 1e-12]) * scale)
    # the boundary is 64 eps relative to sum |c_i| (here sum |c_i| = 2, so 128 eps)
    eps = np.finfo(float).eps
    assert sums_to_zero(np.array([1.0, -1.0 + 100 * eps]))
    assert not sums_to_zero(np.array([1.0, -1.0 + 200 * eps]))


def test_require_sum_to_zero_points_at_the_contrast() -> None:
    names, matrix = coefficient_matrix(LABELS, [("x", {"a": 1, "b": -1}), ("y", {"a": 1, "b": 1})])
    with pytest.raises(DataError) as caught:
        require_contrasts_sum_to_zero(names, matrix)
    assert (caught.value.rule, caught.value.pointer) == ("sum-to-zero", "/contrasts/1/coefficients")
    require_contrasts_sum_to_zero(names[:1], matrix[:1])  # no refusal


# -- the set checks -------------------------------------------------------------------


def _check(contrasts, sizes, **kw):
    return check_planned_set(contrasts, sizes=dict(zip(LABELS, sizes, strict=True)), **kw)


def test_weighted_product_and_correlation_follow_the_definitions() -> None:
    sizes = (6, 3, 5, 4)
    c, d = np.array([1.0, -1.0, 0.0, 0.0]), np.array([1.0, 1.0, -2.0, 0.0])
    r = _check([("c", dict(zip(LABELS, c, strict=True))), ("d", dict(zip(LABELS, d, strict=True)))], sizes)
    n = np.array(sizes, dtype=float)
    pair = r.pairs[0]
    # Cov / sigma^2 = sum c d / n, corr = Cov / sqrt(Var Var) (Scheffé 1959)
    assert pair.weighted_product == pytest.approx(np.sum(c * d / n), rel=1e-15)
    assert pair.unweighted_product == 0.0
    expected = np.sum(c * d / n) / math.sqrt(np.sum(c * c / n) * np.sum(d * d / n))
    assert pair.correlation == pytest.approx(expected, rel=1e-14)
    assert not pair.orthogonal and pair.orthogonal_for_equal_sizes
    assert r.contrasts[0].variance_factor == pytest.approx(1 / 6 + 1 / 3, rel=1e-15)
    # Var / sigma^2 = sum c^2 / n (Scheffé 1959)
    assert variance_factors(np.vstack([c, d]), sizes) == pytest.approx(
        [np.sum(c * c / n), np.sum(d * d / n)], rel=1e-15)
    assert r.verdict == "not_orthogonal"
    # the same set with equal sizes is orthogonal
    assert _check([("c", {"a": 1, "b": -1}), ("d", {"a": 1, "b": 1, "c": -2})], (5, 5, 5, 5)).verdict == \
        "orthogonal"


def test_normalised_coefficients_and_estimability() -> None:
    r = _check([("x", {"a": 3, "b": -1, "c": -1, "d": -1})], (2, 2, 2, 2))
    check = r.contrasts[0]
    assert check.normalised_coefficients == {"a": 1.0, "b": -1 / 3, "c": -1 / 3, "d": -1 / 3}
    assert check.estimable and check.sums_to_zero and check.sum == 0.0
    bad = _check([("x", {"a": 1, "b": 1})], (2, 2, 2, 2))
    assert bad.verdict == "invalid" and not bad.contrasts[0].estimable
    assert "sum to 2" in bad.consequences[0]


def test_counting_rank_and_completeness() -> None:
    # more than k - 1 contrasts: dependent, cannot be orthogonal
    r = _check([], (4, 4, 4, 4), standard=StandardSpec("pairwise"))
    assert r.set.count == 6 and r.set.rank == 3 and r.set.exceeds_between_df
    assert not r.set.linearly_independent and not r.set.mutually_orthogonal and not r.set.complete
    assert r.set.rank == np.linalg.matrix_rank(np.array([[c.coefficients[x] for x in LABELS]
                                                         for c in r.contrasts]))  # numpy.linalg
    # a repeated contrast (scaled) within k - 1: dependent
    r = _check([("x", {"a": 1, "b": -1}), ("y", {"a": -2, "b": 2})], (3, 3, 3, 3))
    assert r.set.rank == 1 and not r.set.linearly_independent and r.pairs[0].correlation == -1.0
    assert any("linearly dependent" in s for s in r.consequences)
    # orthogonal but incomplete
    r = _check([("x", {"a": 1, "b": -1}), ("y", {"c": 1, "d": -1})], (3, 5, 2, 7))
    assert r.verdict == "orthogonal" and not r.set.complete and r.set.rank == 2


def test_versus_reference_correlation_is_dunnetts() -> None:
    sizes = (8, 4, 6, 5)
    r = _check([], sizes, standard=StandardSpec("versus_reference", reference="a"))
    assert r.verdict == "not_orthogonal" and not r.standard.orthogonal_by_construction
    n_r = sizes[0]
    for pair in r.pairs:
        i, j = (LABELS.index(p.split(" vs ")[0]) for p in (pair.first, pair.second))
        # Dunnett (1955): rho_ij = 1 / sqrt((1 + n_r / n_i)(1 + n_r / n_j))  (from memory)
        rho = 1.0 / math.sqrt((1 + n_r / sizes[i]) * (1 + n_r / sizes[j]))
        assert pair.correlation == pytest.approx(rho, rel=1e-14)
    assert any("Dunnett" in s for s in r.consequences)


def test_estimate_correlations_agree_with_pairs() -> None:
    r = _check([], (3, 7, 2, 9), standard=StandardSpec("pairwise"))
    matrix = np.array([[c.coefficients[x] for x in LABELS] for c in r.contrasts])
    corr = estimate_correlations(matrix, [3, 7, 2, 9])
    first, second = np.triu_indices(len(r.contrasts), 1)
    assert [p.correlation for p in r.pairs] == pytest.approx(corr[first, second], abs=1e-15)


def test_rounded_orthogonal_coefficients_are_flagged_as_such() -> None:
    # weighted Helmert for n = 6, 3: the group before is weighted 6/9 and 3/9; written
    # with six digits, the contrast is almost but not exactly orthogonal
    sizes = (6, 3, 5, 4)
    r = _check([("x", {"a": -1, "b": 1}), ("y", {"a": -0.666667, "b": -0.333333, "c": 1})], sizes)
    assert r.verdict == "not_orthogonal" and 0 < r.set.max_abs_correlation < 1e-6
    assert any("rounded orthogonal values" in s for s in r.consequences)
    r = _check([("x", {"a": -1, "b": 1}), ("y", {"a": -2, "b": -1, "c": 3})], sizes)
    assert r.verdict == "orthogonal"


def test_ss_with_data_follow_the_definition() -> None:
    rng = np.random.default_rng(3)
    groups = [rng.normal(10 + i, 1.0, n) for i, n in enumerate((5, 8, 3, 6))]
    data = OneWayData.from_arrays(LABELS, groups)
    names, matrix = coefficient_matrix(LABELS, [("x", {"a": 1, "b": -1}), ("y", {"a": 1, "c": 1, "d": -2})])
    r = validate_contrasts(names, matrix, data.sizes, data)
    means = np.array([g.mean() for g in groups])
    n = np.array([g.size for g in groups])
    for check, c in zip(r.contrasts, matrix, strict=True):
        estimate = float(c @ means)
        # L = sum c_i ybar_i, SS = L^2 / sum c_i^2 / n_i (Scheffé 1959)
        assert check.estimate == pytest.approx(estimate, rel=1e-12)
        assert check.ss == pytest.approx(estimate**2 / np.sum(c * c / n), rel=1e-12)
    assert r.set.ss_partition_holds is None  # not a complete set
    grand = np.sum(n * means) / n.sum()
    assert r.set.ss_between == pytest.approx(np.sum(n * (means - grand) ** 2), rel=1e-12)


def test_name_clash_with_a_generated_contrast() -> None:
    with pytest.raises(DataError) as caught:
        _check([("a vs b", {"a": 1, "b": -1})], (2, 2, 2, 2), standard=StandardSpec("pairwise"))
    assert caught.value.pointer == "/contrasts/0/name"


def test_polynomial_refusals() -> None:
    with pytest.raises(DataError) as caught:
        polynomial_contrasts(LABELS, [2, 2, 2, 2], {"a": 1, "b": 2, "c": 3})
    assert caught.value.rule == "levels-missing"
    with pytest.raises(DataError) as caught:
        polynomial_contrasts(LABELS, [2, 2, 2, 2], {"a": 1, "b": 2, "c": 3, "d": 2})
    assert (caught.value.rule, caught.value.pointer) == ("levels-distinct", "/standard/levels/d")
    with pytest.raises(DataError) as caught:
        polynomial_contrasts(LABELS, [2, 2, 2, 2], {"a": 1, "b": 2, "c": 3, "d": 4, "e": 5})
    assert caught.value.pointer == "/standard/levels/e"
    with pytest.raises(DataError) as caught:
        reference_contrasts(LABELS, [2, 2, 2, 2], "z")
    assert caught.value.pointer == "/standard/reference"


def test_polynomial_with_many_digit_levels_uses_floats_and_stays_orthogonal() -> None:
    # levels with 16 significant digits outgrow the exact integer path
    rng = np.random.default_rng(5)
    k = 40
    labels = [f"dose {i}" for i in range(k)]
    levels = dict(zip(labels, np.sort(rng.uniform(0.0, 100.0, k)).tolist(), strict=True))
    sizes = dict(zip(labels, rng.integers(1, 12, k).tolist(), strict=True))
    r = check_planned_set([], sizes=sizes, standard=StandardSpec("polynomial", levels=levels))
    # orthogonality and sums to zero are the defining properties (Forsythe 1957)
    assert r.verdict == "orthogonal" and r.set.complete and r.set.rank == k - 1
    assert pair_tolerance(k) < 1e-13


# -- invariances (hypothesis) ---------------------------------------------------------

coefficient = st.integers(-4, 4)


@st.composite
def designs(draw):
    k = draw(st.integers(2, 5))
    sizes = draw(st.lists(st.integers(1, 12), min_size=k, max_size=k))
    m = draw(st.integers(1, 5))
    rows = []
    for _ in range(m):
        row = draw(st.lists(coefficient, min_size=k, max_size=k).filter(any))
        if draw(st.booleans()):  # mostly proper contrasts
            row[-1] -= sum(row)
            if not any(row):
                row[0], row[-1] = 1, -1
        rows.append(row)
    return k, sizes, rows


def _run(labels, sizes, rows):
    contrasts = [(f"contrast {i}", dict(zip(labels, map(float, row), strict=True)))
                 for i, row in enumerate(rows)]
    return check_planned_set(contrasts, sizes=dict(zip(labels, sizes, strict=True)))


def _flags(r):
    return (r.verdict, r.set.rank, r.set.complete, r.set.mutually_orthogonal, r.set.linearly_independent,
            [c.sums_to_zero for c in r.contrasts], [p.orthogonal for p in r.pairs],
            [p.orthogonal_for_equal_sizes for p in r.pairs])


FAST = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@FAST
@given(designs(), st.data())
def test_invariant_to_scaling_a_contrast(design, data) -> None:
    k, sizes, rows = design
    labels = [f"g{i}" for i in range(k)]
    base = _run(labels, sizes, rows)
    j = data.draw(st.integers(0, len(rows) - 1))
    factor = data.draw(st.sampled_from([-1.0, 0.37, 2.5, -1e-3, 1e4, 3.0e-7]))
    scaled = [list(map(float, r)) for r in rows]
    scaled[j] = [factor * v for v in scaled[j]]
    other = _run(labels, sizes, scaled)
    assert _flags(other) == _flags(base)
    sign = math.copysign(1.0, factor)
    for p, q in zip(base.pairs, other.pairs, strict=True):
        flip = sign if j in (int(p.first.split()[-1]), int(p.second.split()[-1])) else 1.0
        assert q.correlation == pytest.approx(flip * p.correlation, abs=1e-12)
    for c, d in zip(base.contrasts, other.contrasts, strict=True):
        expected = {x: sign * v for x, v in c.normalised_coefficients.items()} if c.name.endswith(str(j)) \
            else c.normalised_coefficients
        assert d.normalised_coefficients == pytest.approx(expected, abs=1e-14)


@FAST
@given(designs(), st.data())
def test_invariant_to_relabelling_and_reordering_groups(design, data) -> None:
    k, sizes, rows = design
    labels = [f"g{i}" for i in range(k)]
    base = _run(labels, sizes, rows)
    order = data.draw(st.permutations(range(k)))
    new_labels = [f"buffer {labels[i]} ✓" for i in order]
    other = _run(new_labels, [sizes[i] for i in order], [[row[i] for i in order] for row in rows])
    assert _flags(other) == _flags(base)
    rename = {f"buffer {x} ✓": x for x in labels}
    for c, d in zip(base.contrasts, other.contrasts, strict=True):
        assert {rename[x]: v for x, v in d.coefficients.items()} == c.coefficients
        assert d.sum == c.sum and d.variance_factor == pytest.approx(c.variance_factor, rel=1e-15)
    for p, q in zip(base.pairs, other.pairs, strict=True):
        assert q.correlation == pytest.approx(p.correlation, abs=1e-13)
        assert q.weighted_product == pytest.approx(p.weighted_product, rel=1e-13, abs=1e-15)
