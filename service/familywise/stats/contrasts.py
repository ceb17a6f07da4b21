"""Contrast validation and standard contrast sets, for any group sizes.

A contrast of the group means is ``L_c = sum_i c_i ybar_i`` with coefficients
``c`` that sum to zero. In the one-way model ``y_ij = mu + alpha_i + e_ij``
with independent errors of common variance sigma^2 (notation of Scheffé 1959,
ch. 1 and 3), the group means are independent with ``Var(ybar_i) =
sigma^2 / n_i``, so that

    (1)  Var(L_c)      = sigma^2 * sum_i c_i^2 / n_i
    (2)  Cov(L_c, L_d) = sigma^2 * sum_i c_i d_i / n_i
    (3)  corr(L_c, L_d) = sum c_i d_i / n_i / sqrt(sum c_i^2 / n_i * sum d_i^2 / n_i)

Two contrasts are *orthogonal* when (2) is zero, i.e. when the weighted inner
product ``sum c_i d_i / n_i`` vanishes; the unweighted ``sum c_i d_i = 0`` is
the same condition only when every n_i is equal (Scheffé 1959, ch. 3; the
weighted form is the one given for unequal n in textbooks of experimental
design, for example Kirk 2013 -- chapter references from memory). The sum of
squares of a contrast is

    (4)  SS_c = L_c^2 / sum_i (c_i^2 / n_i)

and for k - 1 mutually orthogonal contrasts the SS_c add up to the
between-groups sum of squares sum n_i (ybar_i - ybar)^2 (Scheffé 1959,
ch. 3, from memory): with ``u = c / sqrt(n)`` the contrasts become Euclidean-orthogonal
vectors orthogonal to ``sqrt(n)``, and (4) is the squared length of the
projection of ``z = sqrt(n) * ybar`` on ``u``, so the projections on a basis
of the complement of ``sqrt(n)`` add up to ``|z|^2 - (z . sqrt(n))^2 / N``.

Estimability: ``sum c_i alpha_i`` is estimable in the one-way model exactly
when ``sum c_i = 0`` (Searle 1971, Linear Models, ch. 5, estimable functions)
and every group with a nonzero coefficient has at least one observation. Every
group given here has n_i >= 1 (sizes below one are refused), so a contrast is
reported estimable exactly when its coefficients sum to zero.

Tolerances. Coefficients are double-precision numbers (eps = 2^-52).
The sum of a contrast is computed with ``math.fsum`` (Shewchuk 1997: the
correctly rounded sum), so it counts as zero when
``|sum c_i| <= RELATIVE_TOLERANCE * sum |c_i|`` with ``RELATIVE_TOLERANCE =
64 eps`` (about 1.4e-14), a few dozen times the rounding of the terms
themselves and far below anything a caller could mean. Inner products of all
pairs are computed as one matrix product, whose rounding error in any
summation order is at most gamma_{k+1} sum |c_i d_i| / n_i with gamma_j ~
j eps / 2 (Higham 2002, sec. 3.1, from memory; one more rounding for the division by n_i);
a pair counts as orthogonal when
``|sum c_i d_i / n_i| <= pair_tolerance(k) * sum |c_i d_i| / n_i`` with
``pair_tolerance(k) = 64 eps + 2 (k + 1) eps``: the sum tolerance plus four
times that worst case, so that a pair whose exact product is zero is always
recognised. Both tests are invariant to scaling a contrast (rows are first
scaled by a power of two, which is exact). Coefficients written as integers
(or as decimals whose float sum is exact) are judged exactly.

References
----------
Scheffé, H. (1959). The Analysis of Variance. Wiley (contrasts, eq. 1-4).
Searle, S. R. (1971). Linear Models. Wiley, ch. 5 (estimable functions).
Kirk, R. E. (2013). Experimental Design, 4th ed. Sage (orthogonality with unequal n).
Helmert, F. R. (1876); Helmert coding as in patsy's ``Helmert`` contrast.
Fisher, R. A. and Yates, F. (1938). Statistical Tables for Biological, Agricultural
and Medical Research, table of orthogonal polynomials (equal spacing, equal n).
Forsythe, G. E. (1957). Generation and use of orthogonal polynomials for
data-fitting with a digital computer. J. SIAM 5, 74-88 (three-term recurrence).
Dunnett, C. W. (1955). JASA 50, 1096-1121 (comparisons with a control).
Šidák, Z. (1967). JASA 62, 626-633. Holm, S. (1979). Scand. J. Statist. 6, 65-70.
Scheffé, H. (1953). Biometrika 40, 87-104 (all contrasts).
Hothorn, T., Bretz, F. and Westfall, P. (2008). Biometrical Journal 50, 346-363
(simultaneous inference with the multivariate t).
Shewchuk, J. R. (1997). Discrete Comput. Geom. 18, 305-363 (exact summation).
Higham, N. J. (2002). Accuracy and Stability of Numerical Algorithms, 2nd ed. SIAM.
Giraud, L., Langou, J. and Rozložník, M. (2005). The loss of orthogonality in the
Gram-Schmidt orthogonalization process. Comput. Math. Appl. 50, 1069-1075.
Press, W. H. et al. (2007). Numerical Recipes, 3rd ed., sec. 2.6 (rank by SVD).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike

from familywise.stats.data import MAX_MAGNITUDE, OneWayData
from familywise.stats.errors import DataError

EPS = float(np.finfo(float).eps)
#: The sum of a contrast counts as zero below this fraction of the sum of the
#: absolute coefficients (see the module docstring and :func:`pair_tolerance`).
RELATIVE_TOLERANCE = 64.0 * EPS
#: Largest magnitude of a coefficient: products of two still fit in a double.
MAX_COEFFICIENT = MAX_MAGNITUDE
#: The contrast sums of squares of a complete orthogonal set must match the
#: between-groups SS to this relative precision (both are computed from the
#: same centred means; the identity is exact in exact arithmetic).
PARTITION_TOLERANCE = 1e-9
#: Correlations below this are reported as "almost orthogonal" (rounded
#: coefficients) in the consequences. Common practice, no source.
NEGLIGIBLE_CORRELATION = 1e-6
#: Bits allowed for the integer form of polynomial levels (relative to their
#: spacing); about 77 decimal digits.
MAX_LEVEL_BITS = 256
#: Above this many bits per integer the exact trend computation gives way to
#: floating point (levels written with many significant digits).
EXACT_TREND_BITS = 2048

StandardKind = Literal["helmert", "polynomial", "versus_reference", "versus_first", "pairwise"]
Verdict = Literal["orthogonal", "not_orthogonal", "invalid"]
GIVEN = "given"


# -- results ------------------------------------------------------------------


@dataclass(frozen=True)
class GroupSize:
    label: str
    n: int


@dataclass(frozen=True)
class ContrastCheck:
    """One contrast: its coefficients and the checks on it alone.

    ``normalised_coefficients`` are scaled so that the absolute values add up to
    two: for a contrast that sums to zero the positive coefficients then add up
    to 1 and the negative ones to -1, and the estimate is a difference between
    two weighted averages of group means. ``variance_factor`` is eq. (1) over
    sigma^2. ``estimate`` and ``ss`` (eq. 4) need data; ``ss`` is null for a
    coefficient set that does not sum to zero (it would depend on the overall
    level of the data).
    """

    name: str
    origin: str
    coefficients: dict[str, float]
    sum: float
    sum_tolerance: float
    sums_to_zero: bool
    estimable: bool
    normalised_coefficients: dict[str, float]
    variance_factor: float
    estimate: float | None
    ss: float | None


@dataclass(frozen=True)
class ContrastPair:
    """Two contrasts: eq. (2) over sigma^2, eq. (3), and the equal-n product."""

    first: str
    second: str
    weighted_product: float
    unweighted_product: float
    correlation: float
    orthogonal: bool
    orthogonal_for_equal_sizes: bool


@dataclass(frozen=True)
class SetSummary:
    count: int
    between_df: int
    all_sum_to_zero: bool
    mutually_orthogonal: bool
    orthogonal_for_equal_sizes: bool
    linearly_independent: bool
    rank: int
    exceeds_between_df: bool
    complete: bool
    max_abs_correlation: float | None
    ss_between: float | None
    ss_contrasts_total: float | None
    ss_partition_holds: bool | None


@dataclass(frozen=True)
class StandardSpec:
    """A request for a standard set (see :func:`standard_contrasts`)."""

    kind: StandardKind
    levels: Mapping[str, float] | None = None
    reference: str | None = None
    degree: int | None = None


@dataclass(frozen=True)
class StandardSetInfo:
    kind: str
    reference: str | None
    names: tuple[str, ...]
    orthogonal_by_construction: bool
    description: str


@dataclass(frozen=True)
class ContrastValidation:
    alpha: float
    groups: tuple[GroupSize, ...]
    balanced: bool
    relative_tolerance: float
    pair_tolerance: float
    standard: StandardSetInfo | None
    contrasts: tuple[ContrastCheck, ...]
    pairs: tuple[ContrastPair, ...]
    set: SetSummary
    verdict: Verdict
    consequences: tuple[str, ...]


# -- coefficients ---------------------------------------------------------------


def pointer_token(key: str) -> str:
    """One JSON-pointer reference token (RFC 6901: ``~`` -> ``~0``, ``/`` -> ``~1``)."""
    return key.replace("~", "~0").replace("/", "~1")


def coefficient_matrix(
    labels: Sequence[str], contrasts: Sequence[tuple[str, Mapping[str, float]]]
) -> tuple[tuple[str, ...], np.ndarray]:
    """Contrast names and their (m, k) coefficient matrix, columns in ``labels`` order.

    A label a contrast leaves out has coefficient 0. Refused, with a JSON pointer
    into ``/contrasts/<i>``: an empty or repeated name (``/name``), a label that
    is not a group (``/coefficients/<label>``), a coefficient that is not finite
    or exceeds ``MAX_COEFFICIENT`` in magnitude (``/coefficients/<label>``), and
    a contrast whose coefficients are all zero (``/coefficients``).
    """
    column = {label: j for j, label in enumerate(labels)}
    matrix = np.zeros((len(contrasts), len(labels)))
    names: list[str] = []
    seen: dict[str, int] = {}
    for i, (name, coefficients) in enumerate(contrasts):
        if not name or not name.strip():
            raise DataError("contrast-name-empty", "contrast names must not be empty", f"/contrasts/{i}/name")
        if name in seen:
            raise DataError("contrast-name-duplicate",
                            f"contrast name {name!r} is used by contrasts {seen[name]} and {i}",
                            f"/contrasts/{i}/name")
        seen[name] = i
        names.append(name)
        for label, value in coefficients.items():
            where = f"/contrasts/{i}/coefficients/{pointer_token(label)}"
            if label not in column:
                raise DataError("unknown-group",
                                f"contrast {name!r} has a coefficient for {label!r}, which is not a group",
                                where)
            number = float(value)
            if not math.isfinite(number) or abs(number) > MAX_COEFFICIENT:
                raise DataError("finite", f"coefficients must be finite numbers within ±{MAX_COEFFICIENT:g}",
                                where)
            matrix[i, column[label]] = number
        if not np.any(matrix[i]):
            raise DataError("contrast-zero", f"contrast {name!r} has no nonzero coefficient",
                            f"/contrasts/{i}/coefficients")
    return tuple(names), matrix


def pair_tolerance(k: int) -> float:
    """Relative tolerance of the orthogonality test for k groups (module docstring)."""
    return RELATIVE_TOLERANCE + 2.0 * (k + 1) * EPS


def sum_tolerance(row: np.ndarray) -> float:
    """``RELATIVE_TOLERANCE * sum |c_i|``: the largest |sum| that counts as zero."""
    return RELATIVE_TOLERANCE * math.fsum(np.abs(row).tolist())


def sums_to_zero(row: np.ndarray) -> bool:
    """Whether the coefficients sum to zero: ``|fsum(c)| <= 64 eps * sum |c_i|``.

    The sum is correctly rounded (``math.fsum``, Shewchuk 1997), so a set of
    coefficients whose exact sum is zero passes whatever their number; the
    test is invariant to scaling the row.
    """
    row = np.asarray(row, dtype=float)
    return abs(math.fsum(row.tolist())) <= sum_tolerance(row)


def require_contrasts_sum_to_zero(names: Sequence[str], matrix: np.ndarray) -> None:
    """Refuse, at ``/contrasts/<i>/coefficients``, the first row that does not sum to zero."""
    for i, (name, row) in enumerate(zip(names, matrix, strict=True)):
        if not sums_to_zero(row):
            raise DataError(
                "sum-to-zero",
                f"the coefficients of contrast {name!r} sum to {math.fsum(row.tolist()):.6g}, not zero: "
                "it is not a comparison among the groups",
                f"/contrasts/{i}/coefficients",
            )


def variance_factors(matrix: np.ndarray, sizes: ArrayLike) -> np.ndarray:
    """``sum_i c_i^2 / n_i`` of each row: Var(L_c) / sigma^2, eq. (1)."""
    n = np.asarray(sizes, dtype=float)
    return np.array([math.fsum((row * row / n).tolist()) for row in np.asarray(matrix, dtype=float)])


def estimate_correlations(matrix: np.ndarray, sizes: ArrayLike) -> np.ndarray:
    """The (m, m) correlation matrix of the contrast estimates, eq. (3).

    This is the correlation of the multivariate t (or normal) vector of the
    contrast statistics under a common variance (Hothorn, Bretz and Westfall
    2008, sec. 2).
    """
    c = np.asarray(matrix, dtype=float)
    n = np.asarray(sizes, dtype=float)
    scaled = c / np.max(np.abs(c), axis=1, keepdims=True)
    covariance = (scaled / n) @ scaled.T
    d = np.sqrt(np.diag(covariance))
    out = covariance / np.outer(d, d)
    np.fill_diagonal(out, 1.0)
    return np.clip(out, -1.0, 1.0)


# -- sizes ----------------------------------------------------------------------


def group_sizes(sizes: Mapping[str, float]) -> tuple[tuple[str, ...], np.ndarray]:
    """Labels and sizes of a design given as label -> n (pointers into ``/sizes``)."""
    if len(sizes) < 2:
        raise DataError("min-groups", "at least two groups are needed", "/sizes")
    labels = tuple(sizes)
    for label, n in sizes.items():
        if not label.strip():
            raise DataError("label-empty", "group labels must not be empty", f"/sizes/{pointer_token(label)}")
        _check_size(n, f"/sizes/{pointer_token(label)}")
    return labels, np.array([float(sizes[label]) for label in labels])


def _check_size(n: float, pointer: str) -> None:
    value = float(n)
    if not (math.isfinite(value) and value >= 1.0 and value == math.floor(value)):
        raise DataError("group-size", "a group size must be a whole number of at least 1", pointer)


def _integer_sizes(sizes: np.ndarray) -> list[int]:
    for i, n in enumerate(sizes):
        _check_size(n, f"/sizes/{i}")
    return [int(n) for n in sizes]


# -- standard sets ----------------------------------------------------------------


def helmert_contrasts(labels: Sequence[str], sizes: ArrayLike) -> tuple[tuple[str, ...], np.ndarray]:
    """Helmert contrasts, weighted by the group sizes so that they stay orthogonal.

    Contrast j (j = 1 .. k-1) compares group j with the mean of groups 0 .. j-1
    in the given order, as patsy's ``Helmert`` coding does. The earlier groups
    are averaged with weights n_i / N_j (N_j = n_0 + ... + n_{j-1}): the
    coefficients are ``-n_i / g`` for i < j and ``N_j / g`` for group j, g the
    greatest common divisor of n_0 .. n_{j-1}, so that they are integers. With
    equal sizes they are patsy's -1, ..., -1, j. Orthogonality for any sizes:
    for l > j, ``sum_i c_i d_i / n_i = -(1 / g') sum_{i<=j} c_i = 0``.
    """
    n = _integer_sizes(np.asarray(sizes, dtype=float))
    k = len(labels)
    matrix = np.zeros((k - 1, k))
    names = []
    for j in range(1, k):
        g = math.gcd(*n[:j])
        matrix[j - 1, :j] = [-m / g for m in n[:j]]
        matrix[j - 1, j] = sum(n[:j]) / g
        names.append(f"{labels[j]} vs {labels[0]}" if j == 1 else f"{labels[j]} vs the {j} groups before it")
    return tuple(names), matrix


_TREND_NAMES = {1: "linear", 2: "quadratic", 3: "cubic", 4: "quartic", 5: "quintic"}


def polynomial_contrasts(
    labels: Sequence[str], sizes: ArrayLike, levels: Mapping[str, float] | Sequence[float],
    degree: int | None = None,
) -> tuple[tuple[str, ...], np.ndarray]:
    """Orthogonal polynomial trend contrasts in numeric levels, for these group sizes.

    With weights w_i = n_i, let p_0 = 1, p_1, ..., p_d be the polynomials in the
    level x orthogonal under ``sum_i w_i p_a(x_i) p_b(x_i)`` (Forsythe 1957). The
    trend-a contrast is ``c_i = w_i p_a(x_i)``: it sums to zero (orthogonal to
    p_0), any two are orthogonal in the sense ``sum c_i d_i / n_i = 0``, and its
    SS (eq. 4) is the extra between-groups SS of the degree-a term of a
    polynomial regression of the observations on the level. With equal n and
    equally spaced levels they are Fisher and Yates' tabulated coefficients.

    Computation is exact where it can be: the levels are read as the shortest
    decimal that rounds to each double (the number as written in a request),
    reduced to integers, and the three-term recurrence
    ``p_{a+1} = x p_a - (<x p_a, p_a>/<p_a, p_a>) p_a - (<x p_a, p_{a-1}>/<p_{a-1}, p_{a-1}>) p_{a-1}``
    is run in integer arithmetic, each vector divided by the gcd of its entries.
    The coefficients are the smallest integers when they fit in a double
    exactly (below 2^53), otherwise the exact values scaled to a largest
    magnitude of 1 and rounded once (so that sums and weighted products are
    zero to within a few units of eps, inside the validation tolerance). When
    the integers outgrow ``EXACT_TREND_BITS`` (levels with many significant
    digits) the floating-point Stieltjes procedure of :func:`_float_trends` is
    used and its result checked. Signs: the group with the highest level has
    a positive coefficient in every trend, as in the published tables.
    ``degree`` (default k - 1) is the highest trend.
    """
    n = _integer_sizes(np.asarray(sizes, dtype=float))
    k = len(labels)
    x = _levels(labels, levels)
    top = k - 1 if degree is None else degree
    if not 1 <= top <= k - 1:
        raise DataError("degree", f"the highest trend degree must lie between 1 and k - 1 = {k - 1}",
                        "/standard/degree")
    rows = _exact_trends(n, _integer_levels(x), top)
    if rows is not None:
        matrix = np.array([_as_floats(r) for r in rows])
    else:
        matrix = _float_trends(np.asarray(n, dtype=float), np.asarray(x), top)
    names = tuple(f"{_TREND_NAMES.get(a, f'degree {a}')} trend" for a in range(1, top + 1))
    return names, matrix


def _exact_trends(n: list[int], reduced: list[int], top: int) -> list[list[int]] | None:
    """Trend contrasts in integer arithmetic (three-term recurrence); None when the
    integers outgrow ``EXACT_TREND_BITS`` (levels with many significant digits)."""
    k = len(n)

    def inner(u: list[int], v: list[int]) -> int:
        return sum(w * a * b for w, a, b in zip(n, u, v, strict=True))

    highest = max(range(k), key=lambda i: reduced[i])
    previous: list[int] = [0] * k
    current: list[int] = [1] * k
    rows: list[list[int]] = []
    for _ in range(top):
        v = [xi * p for xi, p in zip(reduced, current, strict=True)]
        cc, pp = inner(current, current), inner(previous, previous)
        vc, vp = inner(v, current), inner(v, previous)
        if pp == 0:
            new = [cc * a - vc * b for a, b in zip(v, current, strict=True)]
        else:
            new = [cc * pp * a - vc * pp * b - vp * cc * e
                   for a, b, e in zip(v, current, previous, strict=True)]
        new = _primitive(new)
        if new[highest] < 0:  # never with this recurrence (positive leading term); kept as a guard
            new = [-p for p in new]
        if max(abs(p) for p in new).bit_length() > EXACT_TREND_BITS:
            return None
        previous, current = current, new
        rows.append(_primitive([w * p for w, p in zip(n, current, strict=True)]))
    return rows


def _float_trends(n: np.ndarray, x: np.ndarray, top: int) -> np.ndarray:
    """Trend contrasts in floating point: the Stieltjes procedure written as
    Gram-Schmidt on the vectors sqrt(n) p_a(x), each new vector orthogonalised
    twice against all earlier ones ("twice is enough", Giraud, Langou and
    Rozložník 2005), then c = sqrt(n) q. The result is checked with the same
    tolerances the validation uses, and refused if it fails them."""
    big = np.max(np.abs(x))
    t = x / big
    t = (t - np.min(t)) / (np.max(t) - np.min(t)) * 2.0 - 1.0
    root = np.sqrt(n)
    q = np.zeros((x.size, top + 1))
    q[:, 0] = root / np.linalg.norm(root)
    for a in range(1, top + 1):
        v = t * q[:, a - 1]
        for _ in range(2):
            v -= q[:, :a] @ (q[:, :a].T @ v)
        q[:, a] = v / np.linalg.norm(v)
    matrix = (root[:, None] * q[:, 1:]).T
    highest = int(np.argmax(x))
    matrix *= np.sign(matrix[:, highest])[:, None]
    matrix /= np.max(np.abs(matrix), axis=1, keepdims=True)
    scaled, exponents = _unit_rows(matrix)
    pairs, _ = _products(scaled, exponents, n, [str(i) for i in range(top)])
    if not (all(sums_to_zero(row) for row in matrix) and all(p.orthogonal for p in pairs)):
        raise DataError("levels-conditioning", "the levels are too unevenly spread to build trends of "
                        f"degree {top} accurately; ask for fewer (standard degree) or rescale the levels",
                        "/standard/levels")
    return matrix


def _levels(labels: Sequence[str], levels: Mapping[str, float] | Sequence[float]) -> list[float]:
    if isinstance(levels, Mapping):
        for label in levels:
            if label not in labels:
                raise DataError("unknown-group", f"a level is given for {label!r}, which is not a group",
                                f"/standard/levels/{pointer_token(label)}")
        missing = [label for label in labels if label not in levels]
        if missing:
            raise DataError("levels-missing", f"polynomial contrasts need a level for every group; missing: "
                            f"{', '.join(repr(m) for m in missing[:5])}", "/standard/levels")
        values = [float(levels[label]) for label in labels]
    else:
        values = [float(v) for v in levels]
        if len(values) != len(labels):
            raise DataError("levels-missing", "one level per group", "/standard/levels")
    seen: dict[float, str] = {}
    for label, value in zip(labels, values, strict=True):
        where = f"/standard/levels/{pointer_token(label)}"
        if not math.isfinite(value) or abs(value) > MAX_MAGNITUDE:
            raise DataError("finite", f"levels must be finite numbers within ±{MAX_MAGNITUDE:g}", where)
        if value in seen:
            raise DataError("levels-distinct", f"groups {seen[value]!r} and {label!r} have the same level "
                            f"{value:g}: trends need distinct levels", where)
        seen[value] = label
    return values


def _integer_levels(values: list[float]) -> list[int]:
    """The levels as integers: subtract the smallest, clear denominators, divide by the gcd."""
    exact = [Fraction(repr(v)) for v in values]
    low = min(exact)
    shifted = [e - low for e in exact]
    denominator = math.lcm(*(s.denominator for s in shifted))
    integers = [int(s * denominator) for s in shifted]
    integers = _primitive(integers)
    if max(integers).bit_length() > MAX_LEVEL_BITS:
        raise DataError("levels-resolution", "the levels span too many orders of magnitude relative to "
                        "their spacing to build trends from them; round or rescale them", "/standard/levels")
    return integers


def _primitive(values: list[int]) -> list[int]:
    g = math.gcd(*values)
    return [v // g for v in values] if g > 1 else list(values)


def _as_floats(values: list[int]) -> list[float]:
    big = max(abs(v) for v in values)
    if big < 2**53:
        return [float(v) for v in values]
    return [v / big for v in values]  # int / int is correctly rounded


def reference_contrasts(
    labels: Sequence[str], sizes: ArrayLike, reference: str | None = None
) -> tuple[tuple[str, ...], np.ndarray]:
    """Each group against one reference group (the first when ``reference`` is None).

    Coefficient +1 for the group, -1 for the reference. Any two share the
    reference mean, so by eq. (3) their correlation is
    ``1 / sqrt((1 + n_r / n_i)(1 + n_r / n_j)) > 0`` (Dunnett 1955): the set is
    never orthogonal when it has two or more contrasts.
    """
    _integer_sizes(np.asarray(sizes, dtype=float))
    if reference is None:
        reference = labels[0]
    if reference not in labels:
        raise DataError("unknown-group", f"the reference {reference!r} is not a group", "/standard/reference")
    r = list(labels).index(reference)
    others = [j for j in range(len(labels)) if j != r]
    matrix = np.zeros((len(others), len(labels)))
    for row, j in enumerate(others):
        matrix[row, j], matrix[row, r] = 1.0, -1.0
    return tuple(f"{labels[j]} vs {reference}" for j in others), matrix


def pairwise_contrasts(labels: Sequence[str], sizes: ArrayLike) -> tuple[tuple[str, ...], np.ndarray]:
    """Every pair of groups: +1 for the earlier group in the given order, -1 for the later."""
    _integer_sizes(np.asarray(sizes, dtype=float))
    k = len(labels)
    pairs = [(i, j) for i in range(k) for j in range(i + 1, k)]
    matrix = np.zeros((len(pairs), k))
    for row, (i, j) in enumerate(pairs):
        matrix[row, i], matrix[row, j] = 1.0, -1.0
    return tuple(f"{labels[i]} vs {labels[j]}" for i, j in pairs), matrix


def standard_set_size(kind: str, k: int, degree: int | None = None) -> int:
    """How many contrasts a standard set of ``kind`` has for k groups."""
    if kind == "pairwise":
        return k * (k - 1) // 2
    if kind == "polynomial" and degree is not None:
        return max(0, min(degree, k - 1))
    return k - 1


def standard_contrasts(
    spec: StandardSpec, labels: Sequence[str], sizes: ArrayLike
) -> tuple[StandardSetInfo, np.ndarray]:
    """The standard set ``spec`` asks for, with what the caller should know about it."""
    k = len(labels)
    if spec.kind == "helmert":
        names, matrix = helmert_contrasts(labels, sizes)
        reference = None
        orthogonal = True
        description = (
            "Helmert contrasts in the order the groups are given: each group against the mean of the "
            "groups before it, that mean weighted by the group sizes so that the set is orthogonal for "
            "these sizes (with equal sizes these are the classical Helmert contrasts).")
    elif spec.kind == "polynomial":
        if spec.levels is None:
            raise DataError("levels-missing", "polynomial contrasts need a numeric level for every group",
                            "/standard/levels")
        names, matrix = polynomial_contrasts(labels, sizes, spec.levels, spec.degree)
        reference = None
        orthogonal = True
        description = (
            "Orthogonal polynomial trends in the numeric levels, orthogonal for these group sizes: the "
            "sum of squares of each trend is the between-groups variation its degree adds to a "
            "polynomial regression on the level. Trends assume the response varies smoothly with the "
            "level; with unequal spacing they are not the tabulated equal-spacing coefficients.")
    elif spec.kind in ("versus_reference", "versus_first"):
        if spec.kind == "versus_first" and spec.reference is not None and spec.reference != labels[0]:
            raise DataError("reference", "versus_first compares with the first group; use versus_reference "
                            "to name another reference", "/standard/reference")
        if spec.kind == "versus_reference" and spec.reference is None:
            raise DataError("reference-missing", "versus_reference needs the label of the reference group",
                            "/standard/reference")
        names, matrix = reference_contrasts(labels, sizes, spec.reference)
        reference = spec.reference or labels[0]
        orthogonal = k == 2
        description = (
            f"Each group against {reference!r}. These comparisons share the reference mean, so their "
            "estimates are positively correlated and the set is not orthogonal whatever the group "
            "sizes; Dunnett's method (POST /v1/followup/control) allows for exactly this correlation.")
    elif spec.kind == "pairwise":
        names, matrix = pairwise_contrasts(labels, sizes)
        reference = None
        orthogonal = k == 2
        description = (
            "Every pair of groups, earlier minus later in the given order. For three or more groups "
            "there are more pairs than the k - 1 between-groups degrees of freedom, so the set is "
            "linearly dependent and not orthogonal; Tukey-Kramer (POST /v1/followup/pairwise) is the "
            "usual simultaneous method for all pairs.")
    else:
        raise DataError("standard-kind", f"unknown standard set {spec.kind!r}", "/standard/kind")
    return StandardSetInfo(spec.kind, reference, names, orthogonal, description), matrix


# -- validation -------------------------------------------------------------------


def _unit_rows(matrix: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rows scaled by a power of two (exactly) so that the largest |c| lies in [0.5, 1),
    and the exponents that undo the scaling."""
    exponents = np.frexp(np.max(np.abs(matrix), axis=1))[1]
    return np.ldexp(matrix, -exponents[:, None]), exponents


def _rank(scaled: np.ndarray) -> int:
    """Numerical rank of the matrix with rows scaled to unit length (numpy.linalg.matrix_rank's
    default tolerance, S_max * max(m, k) * eps, Press et al. 2007, sec. 2.6); ``scaled``
    comes from :func:`_unit_rows`, so that no norm underflows."""
    if scaled.shape[0] == 0:
        return 0
    rows = scaled / np.linalg.norm(scaled, axis=1, keepdims=True)
    return int(np.linalg.matrix_rank(rows))


def _products(scaled: np.ndarray, exponents: np.ndarray, n: np.ndarray, names: Sequence[str]):
    """Every pair's eq. (2), unweighted product and eq. (3), and the variance factors,
    from rows scaled by powers of two (``exponents`` undo the scaling exactly)."""
    m, k = scaled.shape
    tolerance = pair_tolerance(k)
    weighted = (scaled / n) @ scaled.T
    weighted_abs = (np.abs(scaled) / n) @ np.abs(scaled).T
    unweighted = scaled @ scaled.T
    unweighted_abs = np.abs(scaled) @ np.abs(scaled).T
    factors = np.array([math.fsum((row * row / n).tolist()) for row in scaled])
    orthogonal = np.abs(weighted) <= tolerance * weighted_abs
    equal_n = np.abs(unweighted) <= tolerance * unweighted_abs
    correlation = np.clip(weighted / np.sqrt(np.outer(factors, factors)), -1.0, 1.0)
    correlation[orthogonal] = 0.0
    first, second = np.triu_indices(m, 1)
    pairs = tuple(
        ContrastPair(
            first=names[i], second=names[j],
            weighted_product=math.ldexp(float(weighted[i, j]), int(exponents[i] + exponents[j])),
            unweighted_product=math.ldexp(float(unweighted[i, j]), int(exponents[i] + exponents[j])),
            correlation=float(correlation[i, j]), orthogonal=bool(orthogonal[i, j]),
            orthogonal_for_equal_sizes=bool(equal_n[i, j]),
        )
        for i, j in zip(first.tolist(), second.tolist(), strict=True)
    )
    return pairs, factors.tolist()


def validate_contrasts(
    names: Sequence[str],
    matrix: np.ndarray,
    sizes: ArrayLike | None,
    data: OneWayData | None = None,
    *,
    labels: Sequence[str] | None = None,
    origins: Sequence[str] | None = None,
    standard: StandardSetInfo | None = None,
    alpha: float = 0.05,
) -> ContrastValidation:
    """Validate a set of contrasts for the actual group sizes, before any test.

    Per contrast: the sum and whether it is zero (``sums_to_zero``), estimability
    (see the module docstring), normalised coefficients, eq. (1); with data the
    estimate and eq. (4). Per pair: eq. (2) and (3) and orthogonality under the
    actual sizes and under equal sizes. For the set: mutual orthogonality,
    numerical rank, linear independence, whether it exceeds the k - 1
    between-groups degrees of freedom, completeness (k - 1 mutually orthogonal
    contrasts that sum to zero), and with data the SS partition check. Then a
    verdict -- ``invalid`` (a contrast does not sum to zero), ``orthogonal``, or
    ``not_orthogonal`` -- and plain-language consequences.

    ``sizes`` may be None when ``data`` is given (its sizes are used);
    ``labels`` default to the data's; ``origins`` name where each contrast came
    from ("given" or a standard kind).
    """
    if data is not None:
        labels = data.labels if labels is None else labels
        if sizes is None:
            sizes = data.sizes
        elif not np.array_equal(np.asarray(sizes, dtype=float), data.sizes):
            raise ValueError("sizes disagree with the data")
    if labels is None or sizes is None:
        raise ValueError("give labels and sizes, or data")
    labels = tuple(labels)
    n = np.asarray(sizes, dtype=float)
    c = np.asarray(matrix, dtype=float)
    m, k = c.shape
    if k != len(labels) or n.shape != (k,) or len(names) != m:
        raise ValueError("one column per group, one size per group, one name per contrast")
    if m == 0:
        raise DataError("no-contrasts", "give at least one contrast or a standard set", "/contrasts")
    if not np.all(np.isfinite(c)) or np.any(np.abs(c) > MAX_COEFFICIENT):
        raise DataError("finite", f"coefficients must be finite numbers within ±{MAX_COEFFICIENT:g}",
                        "/contrasts")
    zero = np.flatnonzero(~np.any(c != 0.0, axis=1))
    if zero.size:
        raise DataError("contrast-zero", f"contrast {names[zero[0]]!r} has no nonzero coefficient",
                        f"/contrasts/{zero[0]}/coefficients")
    sizes_int = _integer_sizes(n)
    origins = tuple(origins) if origins is not None else (GIVEN,) * m

    scaled, exponents = _unit_rows(c)
    pairs, factors = _products(scaled, exponents, n, names)
    zero_sums = [sums_to_zero(row) for row in c]

    estimates: list[float | None] = [None] * m
    ss: list[float | None] = [None] * m
    if data is not None:
        dev = data.mean_deviations
        for i in range(m):
            if zero_sums[i]:
                estimates[i] = float(data.contrast_estimates(c[i : i + 1])[0])
            else:
                estimates[i] = math.fsum((c[i] * dev).tolist()) + data.centre * math.fsum(c[i].tolist())
            if zero_sums[i]:
                ss[i] = math.fsum((scaled[i] * dev).tolist()) ** 2 / factors[i]

    checks = []
    for i in range(m):
        row = c[i]
        half = math.fsum(np.abs(scaled[i]).tolist()) / 2.0  # scaled: no underflow
        checks.append(ContrastCheck(
            name=names[i], origin=origins[i],
            coefficients={label: float(v) for label, v in zip(labels, row, strict=True)},
            sum=math.fsum(row.tolist()), sum_tolerance=sum_tolerance(row),
            sums_to_zero=zero_sums[i], estimable=zero_sums[i] and bool(np.all(n[row != 0] >= 1)),
            normalised_coefficients={label: float(v / half)
                                     for label, v in zip(labels, scaled[i], strict=True)},
            variance_factor=math.ldexp(factors[i], 2 * int(exponents[i])),
            estimate=estimates[i], ss=ss[i],
        ))

    rank = _rank(scaled)
    all_zero_sum = all(zero_sums)
    orthogonal = all(p.orthogonal for p in pairs)
    equal_n = all(p.orthogonal_for_equal_sizes for p in pairs)
    complete = all_zero_sum and orthogonal and m == k - 1
    ss_between = ss_total = None
    partition: bool | None = None
    if data is not None:
        ss_between = data.between_ss
        if all_zero_sum:
            ss_total = math.fsum(ss)  # type: ignore[arg-type]
        if complete:
            scale = math.fsum((n * data.mean_deviations**2).tolist())
            partition = abs(ss_total - ss_between) <= (
                PARTITION_TOLERANCE * max(ss_total, ss_between) + RELATIVE_TOLERANCE * scale)
    summary = SetSummary(
        count=m, between_df=k - 1, all_sum_to_zero=all_zero_sum, mutually_orthogonal=orthogonal,
        orthogonal_for_equal_sizes=equal_n, linearly_independent=rank == m, rank=rank,
        exceeds_between_df=m > k - 1, complete=complete,
        max_abs_correlation=max((abs(p.correlation) for p in pairs), default=None),
        ss_between=ss_between, ss_contrasts_total=ss_total, ss_partition_holds=partition,
    )
    groups = tuple(GroupSize(label, size) for label, size in zip(labels, sizes_int, strict=True))
    balanced = len(set(sizes_int)) == 1
    verdict: Verdict = "invalid" if not all_zero_sum else "orthogonal" if orthogonal else "not_orthogonal"
    consequences = _consequences(verdict, checks, pairs, summary, groups, balanced, origins, standard, alpha)
    return ContrastValidation(
        alpha=alpha, groups=groups, balanced=balanced, relative_tolerance=RELATIVE_TOLERANCE,
        pair_tolerance=pair_tolerance(k), standard=standard, contrasts=tuple(checks), pairs=pairs,
        set=summary, verdict=verdict, consequences=consequences,
    )


def check_planned_set(
    contrasts: Sequence[tuple[str, Mapping[str, float]]],
    *,
    data: OneWayData | None = None,
    sizes: Mapping[str, float] | None = None,
    standard: StandardSpec | None = None,
    alpha: float = 0.05,
) -> ContrastValidation:
    """The whole ``POST /v1/contrasts/validate`` computation: the caller's
    contrasts (pointers ``/contrasts/<i>``) followed by the standard set, if
    asked for, validated by :func:`validate_contrasts`. Give exactly one of
    ``data`` and ``sizes`` (label -> n)."""
    if (data is None) == (sizes is None):
        raise ValueError("give exactly one of data and sizes")
    if data is not None:
        labels, n = data.labels, data.sizes
    else:
        labels, n = group_sizes(sizes)  # type: ignore[arg-type]
    if not contrasts and standard is None:
        raise DataError("no-contrasts", "give contrasts, a standard set, or both", "/contrasts")
    names, matrix = coefficient_matrix(labels, contrasts)
    origins = [GIVEN] * len(names)
    info = None
    if standard is not None:
        info, generated = standard_contrasts(standard, labels, n)
        given = {name: i for i, name in enumerate(names)}
        for name in info.names:
            if name in given:
                raise DataError("contrast-name-duplicate",
                                f"contrast name {name!r} is also the name of a contrast of the "
                                f"{standard.kind} set: rename it", f"/contrasts/{given[name]}/name")
        if len(set(info.names)) != len(info.names):
            raise DataError("contrast-name-duplicate", "the generated contrast names collide (group labels "
                            "containing ' vs ' can do this): relabel the groups", "/standard")
        names = names + info.names
        matrix = np.vstack([matrix, generated])
        origins += [standard.kind] * len(info.names)
    return validate_contrasts(names, matrix, n, data, labels=labels, origins=origins, standard=info,
                              alpha=alpha)


# -- plain-language consequences ------------------------------------------------


def _quoted(names: Sequence[str], limit: int = 4) -> str:
    shown = ", ".join(repr(x) for x in names[:limit])
    return shown + (f" and {len(names) - limit} more" if len(names) > limit else "")


def _consequences(
    verdict: Verdict,
    checks: Sequence[ContrastCheck],
    pairs: Sequence[ContrastPair],
    summary: SetSummary,
    groups: Sequence[GroupSize],
    balanced: bool,
    origins: Sequence[str],
    standard: StandardSetInfo | None,
    alpha: float,
) -> tuple[str, ...]:
    m, between_df = summary.count, summary.between_df
    sizes_text = ", ".join(str(g.n) for g in groups)
    out: list[str] = []
    if verdict == "invalid":
        for check in [c for c in checks if not c.sums_to_zero][:5]:
            out.append(
                f"{check.name!r}: the coefficients sum to {check.sum:.6g}, not zero, so it is not a "
                "comparison among the groups (it also measures their overall level) and is not "
                "estimable as a contrast of group effects. Correct it so that the coefficients sum to "
                "zero.")
        out.append("Invalid set: do not test it until every contrast sums to zero.")
    elif verdict == "orthogonal":
        if m == 1:
            out.append(f"A single planned contrast: test it at alpha = {alpha:g}.")
        else:
            familywise = 1.0 - (1.0 - alpha) ** m
            out.append(
                f"Orthogonal planned set: test each at alpha = {alpha:g}. Under these group sizes the "
                f"{m} estimates are uncorrelated, so none carries information about another.")
            out.append(
                f"Testing each at alpha controls the error rate of each contrast; the chance of at least "
                f"one false positive among the {m} is then up to about 1 - (1 - alpha)^{m} = "
                f"{familywise:.3g}. If the set as a whole must be held at alpha, use Šidák's adjustment "
                "(adjustment sidak), which is close to exact for uncorrelated estimates.")
        if not balanced and m > 1 and not summary.orthogonal_for_equal_sizes:
            out.append(
                f"The set is orthogonal for these group sizes (n = {sizes_text}) and would not be for "
                "equal sizes: if the sizes change (more lost wells), check it again.")
        if summary.complete:
            text = (f"Complete: the {between_df} contrasts partition the between-groups variation "
                    f"into {between_df} independent parts")
            if summary.ss_partition_holds is True:
                text += (f"; their sums of squares add up to the between-groups SS "
                         f"({summary.ss_between:.6g})")
            elif summary.ss_partition_holds is False:
                text += (f"; but their sums of squares ({summary.ss_contrasts_total:.6g}) do not add up to "
                         f"the between-groups SS ({summary.ss_between:.6g}), a numerical failure to report")
            out.append(text + ".")
        elif m < between_df:
            out.append(
                f"{m} of the {between_df} possible orthogonal contrasts: the set does not account for all "
                "of the between-groups variation, which is fine for a planned set.")
    else:
        worst = max(pairs, key=lambda p: abs(p.correlation))
        if not balanced and summary.orthogonal_for_equal_sizes:
            out.append(
                f"Orthogonal only for equal group sizes: the unweighted products sum c_i d_i are zero for "
                f"every pair, but with these sizes (n = {sizes_text}) the weighted products "
                f"sum c_i d_i / n_i are not, and the estimates of {worst.first!r} and {worst.second!r} "
                f"have correlation {worst.correlation:.3g}.")
        out.append(
            "Not orthogonal under these group sizes: use a multiplicity adjustment. Holm's step-down "
            "method (adjustment holm) is valid for any correlation; the multivariate t family "
            "(adjustment multivariate_t) uses the correlations reported here and is less conservative; "
            "Bonferroni and Šidák are valid but more conservative. Contrasts chosen after looking at the "
            "data need Scheffé's method (adjustment scheffe).")
        if summary.exceeds_between_df:
            out.append(
                f"{m} contrasts exceed the k - 1 = {between_df} between-groups degrees of freedom: such a "
                f"set can never be mutually orthogonal, and it is linearly dependent (rank {summary.rank}).")
        elif not summary.linearly_independent:
            out.append(
                f"The set is linearly dependent (rank {summary.rank} for {m} contrasts): at least one "
                "contrast is a combination of the others and adds no information of its own.")
        if 0.0 < abs(worst.correlation) < NEGLIGIBLE_CORRELATION:
            out.append(
                f"The largest correlation is only {worst.correlation:.2g}: the coefficients look like "
                "rounded orthogonal values. Write them exactly (for example as integers, multiplying "
                "through by a common denominator) to have the set recognised as orthogonal.")
        if not balanced and summary.orthogonal_for_equal_sizes:
            out.append(
                "Versions weighted by the group sizes restore orthogonality: for example the Helmert set "
                "(standard kind helmert) or orthogonal polynomial trends (kind polynomial).")
        kinds = set(origins)
        if kinds == {"pairwise"}:
            out.append("For all pairs of groups, Tukey-Kramer (POST /v1/followup/pairwise) is the usual "
                       "simultaneous method.")
        elif kinds <= {"versus_reference", "versus_first"}:
            out.append("For every group against one reference, Dunnett's method (POST /v1/followup/control) "
                       "is the multivariate t family built for exactly this correlation.")
    out.append(
        "Orthogonality decides only whether a multiplicity adjustment may be waived for a planned set, and "
        "it assumes a common within-group variance; whether the contrasts answer the study's question, "
        "and were fixed before the data were seen, is for the study plan and a qualified statistician "
        "to confirm.")
    return tuple(out)
