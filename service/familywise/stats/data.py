"""One-way data, ingested exactly, and per-group summaries.

Every method in the statistics layer takes a :class:`OneWayData`. Values are
held as deviations from one common centre, computed exactly in decimal
arithmetic from the numbers' text and rounded once to double precision. All
spreads, sums of squares and test statistics are invariant to that shift, so
data with many constant leading digits (the NIST StRD "lower difficulty"
files SmLs07-09 carry 13) lose nothing to the float conversion; means are
the centre plus the mean deviation.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from decimal import Context, Decimal, DecimalException, localcontext
from functools import cached_property

import numpy as np
from numpy.typing import ArrayLike
from scipy import stats

from familywise.stats.errors import DataError

# 34 significant digits (IEEE decimal128) hold the difference of any two
# decimals that are not absurdly far apart exactly; beyond that the result is
# rounded once more, far below double precision.
_DECIMAL = Context(prec=34)

# Sums of many exact deviations need more digits than any one of them.
_WIDE = Context(prec=60)

#: Largest magnitude accepted for a value: squares and sums of squares of
#: values this large still fit in double precision.
MAX_MAGNITUDE = 1e150

#: Smallest spread accepted: values that differ (from one another, or within
#: the groups) by less than this have squared differences near or below the
#: bottom of double precision, and sums of squares would underflow to zero.
MIN_SPREAD = 1e-140


@dataclass(frozen=True)
class OneWayData:
    """Groups of replicate measurements, stored as deviations from ``centre``.

    When the data came as decimals, ``exact`` keeps the exact deviations, from
    which :attr:`exact_order` gives each group's mean, median, minimum and
    maximum computed in decimal and rounded once, so that a group written as
    40.9, 41.2 reports 40.9 as its minimum (not the float sum centre +
    deviation, 40.900000000000006).
    """

    labels: tuple[str, ...]
    deviations: tuple[np.ndarray, ...]
    centre: float
    exact: tuple[list[Decimal], ...] | None = None
    exact_centre: Decimal | None = None

    def __post_init__(self) -> None:
        if len(self.labels) != len(self.deviations):
            raise ValueError("one label per group")

    # -- construction -------------------------------------------------------

    @classmethod
    def from_decimals(
        cls, labels: Sequence[str], groups: Sequence[Sequence[Decimal | int]]
    ) -> OneWayData:
        """Exact ingestion: deviations from the first value, in decimal."""
        _check_shape(labels, groups)
        centre = Decimal(groups[0][0])
        if not centre.is_finite():
            raise DataError("finite", "values must be finite numbers", "/groups/0/values/0")
        try:
            with localcontext(_DECIMAL):
                exact = tuple([v - centre for v in values] for values in groups)
        except DecimalException:
            # An exponent beyond decimal's range: far outside the accepted magnitudes.
            _refuse_magnitude(groups)
            raise
        deviations = tuple(np.array(list(map(float, e))) for e in exact)
        _check_spread(_check_values(deviations, float(centre)))
        return cls(tuple(labels), deviations, float(centre), exact, centre)

    @classmethod
    def from_arrays(cls, labels: Sequence[str], groups: Sequence[ArrayLike]) -> OneWayData:
        """Ingestion of floating-point arrays, centred on the first value."""
        arrays = [np.asarray(g, dtype=float).ravel() for g in groups]
        _check_shape(labels, arrays)
        _check_values(arrays, 0.0)
        centre = float(arrays[0][0])
        deviations = tuple(a - centre for a in arrays)
        _check_spread(np.concatenate(deviations))
        return cls(tuple(labels), deviations, centre)

    # -- shape --------------------------------------------------------------

    @property
    def k(self) -> int:
        return len(self.labels)

    @cached_property
    def sizes(self) -> np.ndarray:
        return np.array([d.size for d in self.deviations], dtype=float)

    @property
    def n_total(self) -> int:
        return int(self.sizes.sum())

    @property
    def df_within(self) -> int:
        return self.n_total - self.k

    def index(self, label: str) -> int:
        try:
            return self.labels.index(label)
        except ValueError:
            raise DataError("unknown-group", f"no group is labelled {label!r}") from None

    # -- per-group moments (on the deviations) ------------------------------

    @cached_property
    def mean_deviations(self) -> np.ndarray:
        """Each group's mean deviation from the centre: correctly rounded from
        the exact decimals when there are any, so that a group whose values
        are equal has exactly that value as its mean (and no spread)."""
        exact = self.exact_mean_deviations
        if exact is not None:
            return np.array([float(m) for m in exact])
        return np.add.reduceat(self._pooled, self._starts) / self.sizes

    @cached_property
    def _pooled(self) -> np.ndarray:
        """All deviations in one array, groups one after another."""
        return np.concatenate(self.deviations)

    @cached_property
    def _starts(self) -> np.ndarray:
        return np.concatenate([[0], np.cumsum(self.sizes[:-1])]).astype(np.intp)

    @cached_property
    def exact_mean_deviations(self) -> tuple[Decimal, ...] | None:
        """Each group's mean deviation in decimal (None for float data)."""
        if self.exact is None:
            return None
        with localcontext(_WIDE):
            return tuple(sum(e, Decimal(0)) / len(e) for e in self.exact)

    def mean_differences(self, first: np.ndarray, second: np.ndarray) -> np.ndarray:
        """mean(first) - mean(second) for index arrays, correctly rounded from
        the exact decimals when there are any (the common centre cancels)."""
        exact = self.exact_mean_deviations
        if exact is None:
            return self.mean_deviations[first] - self.mean_deviations[second]
        with localcontext(_WIDE):
            return np.array([float(exact[i] - exact[j]) for i, j in zip(first, second, strict=True)])

    def contrast_estimates(self, matrix: np.ndarray) -> np.ndarray:
        """sum_i c_i mean_i for each row of ``matrix`` (coefficients sum to zero,
        so the centre cancels), from the exact decimals when there are any."""
        exact = self.exact_mean_deviations
        if exact is None:
            return np.asarray(matrix, dtype=float) @ self.mean_deviations
        with localcontext(_WIDE):
            return np.array([float(sum((Decimal(c) * m for c, m in zip(row, exact, strict=True)), Decimal(0)))
                             for row in np.asarray(matrix, dtype=float).tolist()])

    @cached_property
    def _exact_sorted(self) -> tuple[list[Decimal], ...]:
        """Each group's exact deviations in increasing order (requires exact data)."""
        return tuple(sorted(e) for e in self.exact)

    @cached_property
    def exact_median_deviations(self) -> tuple[Decimal, ...] | None:
        """Each group's median deviation in decimal (None for float data)."""
        if self.exact is None:
            return None
        with localcontext(_WIDE):
            return tuple(_median_of_sorted(ranked) for ranked in self._exact_sorted)

    def absolute_median_deviations(self) -> list[np.ndarray]:
        """|x - median| within each group, from the exact decimals when there
        are any (so that deviations equal in decimal are equal as floats)."""
        if self.exact is None:
            return [np.abs(d - np.median(d)) for d in self.deviations]
        with localcontext(_WIDE):
            return [np.array([float(abs(v - median)) for v in exact])
                    for exact, median in zip(self.exact, self.exact_median_deviations, strict=True)]

    @cached_property
    def exact_order(self) -> np.ndarray | None:
        """(k, 4) array of each group's mean, median, minimum and maximum from
        the exact decimals (None when the data came as floats)."""
        if self.exact is None:
            return None
        centre = self.exact_centre
        order = np.empty((self.k, 4))
        with localcontext(_WIDE):
            for g, (ranked, mean, median) in enumerate(zip(self._exact_sorted, self.exact_mean_deviations,
                                                           self.exact_median_deviations, strict=True)):
                order[g] = (float(centre + mean), float(centre + median), float(centre + ranked[0]),
                            float(centre + ranked[-1]))
        return order

    @cached_property
    def means(self) -> np.ndarray:
        if self.exact_order is not None:
            return self.exact_order[:, 0].copy()
        return self.centre + self.mean_deviations

    @cached_property
    def within_ss_by_group(self) -> np.ndarray:
        """Two-pass centred sums of squares of each group (exactly zero for a
        group whose values are all equal, whatever the rounding of its mean)."""
        centred = self._pooled - np.repeat(self.mean_deviations, self.sizes.astype(np.intp))
        ss = np.add.reduceat(centred * centred, self._starts)
        constant = np.maximum.reduceat(self._pooled, self._starts) == np.minimum.reduceat(self._pooled, self._starts)
        return np.where(constant, 0.0, ss)

    @cached_property
    def variances(self) -> np.ndarray:
        """Sample variances (nan for a group of one)."""
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(self.sizes > 1, self.within_ss_by_group / (self.sizes - 1), np.nan)

    @cached_property
    def within_ss(self) -> float:
        return float(np.sum(self.within_ss_by_group))

    @cached_property
    def grand_mean_deviation(self) -> float:
        return float(np.sum(self.sizes * self.mean_deviations) / self.n_total)

    @cached_property
    def between_ss(self) -> float:
        return float(np.sum(self.sizes * (self.mean_deviations - self.grand_mean_deviation) ** 2))

    @cached_property
    def pooled_variance(self) -> float:
        """Within-group mean square (requires df_within > 0)."""
        return self.within_ss / self.df_within

    def residuals(self) -> np.ndarray:
        return np.concatenate(
            [d - m for d, m in zip(self.deviations, self.mean_deviations, strict=True)]
        )

    def require_error_df(self) -> None:
        """Refuse designs without within-group degrees of freedom."""
        if self.df_within <= 0:
            raise DataError(
                "within-df",
                "no within-group degrees of freedom: at least one group needs two or more values",
                "/groups",
            )

    def require_pooled_variance(self) -> None:
        """Refuse designs whose pooled within-group variance is zero."""
        self.require_error_df()
        if not self.within_ss > 0.0:
            if any(np.ptp(d) > 0.0 for d in self.deviations):
                raise DataError(
                    "spread",
                    f"the values within the groups differ by less than about {MIN_SPREAD:g}: their squares "
                    "leave double precision, so no variance can be computed; rescale the data (change the unit)",
                    "/groups",
                )
            raise DataError(
                "zero-variance",
                "every group is constant (zero within-group variance): standard errors and "
                "test statistics are undefined",
                "/groups",
            )


def _check_shape(labels: Sequence[str], groups: Sequence[Sequence]) -> None:
    if len(groups) < 2:
        raise DataError("min-groups", "at least two groups are needed", "/groups")
    if len(labels) != len(groups):
        raise DataError("labels", "one label per group", "/groups")
    seen: dict[str, int] = {}
    for g, label in enumerate(labels):
        if not label or not label.strip():
            raise DataError("label-empty", "group labels must not be empty", f"/groups/{g}/label")
        if label in seen:
            raise DataError(
                "label-duplicate",
                f"label {label!r} is used by groups {seen[label]} and {g}",
                f"/groups/{g}/label",
            )
        seen[label] = g
    for g, values in enumerate(groups):
        if len(values) == 0:
            raise DataError("group-empty", "every group needs at least one value", f"/groups/{g}/values")


def _median_of_sorted(ranked: list[Decimal]) -> Decimal:
    """The median of sorted decimals (call inside ``localcontext(_WIDE)``)."""
    n = len(ranked)
    return ranked[n // 2] if n % 2 else (ranked[n // 2 - 1] + ranked[n // 2]) / 2


def _refuse_magnitude(groups: Sequence[Sequence[Decimal | int]]) -> None:
    """Name the first decimal whose magnitude exceeds MAX_MAGNITUDE (if any)."""
    limit = Decimal(repr(MAX_MAGNITUDE))
    for g, values in enumerate(groups):
        for i, value in enumerate(values):
            if Decimal(value).copy_abs() > limit:  # copy_abs: no context, so no overflow
                raise DataError("finite", f"values must be finite numbers within ±{MAX_MAGNITUDE:g}",
                                f"/groups/{g}/values/{i}")


def _check_spread(deviations: np.ndarray) -> None:
    """Refuse data whose every difference is below MIN_SPREAD (``deviations``
    from the first value, all groups: the largest is at least half the range)."""
    spread = float(np.max(np.abs(deviations)))
    if 0.0 < spread < MIN_SPREAD:
        raise DataError("spread", f"the values differ from one another by less than {MIN_SPREAD:g}: their "
                        "squared differences leave double precision; rescale the data (change the unit)",
                        "/groups")


def _check_values(arrays: Sequence[np.ndarray], centre: float) -> np.ndarray:
    """Refuse non-finite values and magnitudes beyond MAX_MAGNITUDE; return all
    the arrays as one."""
    everything = np.concatenate(arrays)
    if np.all(np.isfinite(everything)) and np.max(np.abs(everything + centre)) <= MAX_MAGNITUDE:
        return everything
    for g, values in enumerate(arrays):
        with np.errstate(invalid="ignore", over="ignore"):
            bad = np.flatnonzero(~np.isfinite(values) | (np.abs(values + centre) > MAX_MAGNITUDE))
        if bad.size:
            raise DataError(
                "finite",
                f"values must be finite numbers within ±{MAX_MAGNITUDE:g}",
                f"/groups/{g}/values/{bad[0]}",
            )


@dataclass(frozen=True)
class GroupSummary:
    label: str
    n: int
    mean: float
    sd: float | None
    se: float | None
    ci_low: float | None
    ci_high: float | None
    median: float
    minimum: float
    maximum: float


def summarise(data: OneWayData, alpha: float = 0.05) -> tuple[GroupSummary, ...]:
    """n, mean, SD, SE and the t interval of each group mean (own variance).

    A group of one value has no SD: its SD, SE and interval are None.
    """
    out = []
    orders = data.exact_order if data.exact_order is not None else [None] * data.k
    for label, d, n, m, var, order in zip(
        data.labels, data.deviations, data.sizes, data.means, data.variances, orders, strict=True
    ):
        n = int(n)
        if n > 1:
            sd = math.sqrt(var)
            se = sd / math.sqrt(n)
            half = stats.t.isf(alpha / 2.0, n - 1) * se
            ci = (m - half, m + half)
        else:
            sd = se = None
            ci = (None, None)
        out.append(
            GroupSummary(
                label=label,
                n=n,
                mean=float(m),
                sd=sd,
                se=se,
                ci_low=ci[0],
                ci_high=ci[1],
                median=float(order[1]) if order is not None else float(data.centre + np.median(d)),
                minimum=float(order[2]) if order is not None else float(data.centre + d.min()),
                maximum=float(order[3]) if order is not None else float(data.centre + d.max()),
            )
        )
    return tuple(out)
