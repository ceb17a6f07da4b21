"""The many-to-one multivariate t distribution (product correlation).

T_i = Y_i / s, i = 1..p, with Y standard normal, corr(Y_i, Y_j) = lam_i lam_j
(|lam_i| < 1), and s^2 an independent chi-square over nu. This covers, exactly
and for any group sizes,

* Dunnett's comparisons with a control: lam_i = sqrt(n_i / (n_i + n_0));
* Dunnett's step-down procedure: the same lambdas of the hypotheses left;
* Hsu's multiple comparisons with the best, for group i as the reference:
  lam_j = sqrt(n_j / (n_i + n_j)), j != i;
* equivalence against a reference (one-sided).

Method
------
Writing Y_i = lam_i Z0 + sqrt(1 - lam_i^2) Z_i with independent standard
normals, the p-variate probability conditional on Z0 is a product, so that
(Dunnett 1955, section 5; Dunnett 1989)::

    P(max |Y_i| <= w) = integral phi(z) prod_i [Phi((w - lam_i z) / tau_i)
                                                - Phi((-w - lam_i z) / tau_i)] dz,

tau_i = sqrt(1 - lam_i^2) (one-sided: drop the second term). A single
comparison is Student's t itself, taken from scipy.special.stdtr/stdtrit
(exactly 1/2 at c = 0 one-sided, which the quadrature would miss by ulps).
The integral is evaluated by Gauss-Hermite quadrature (adaptive
Gauss-Kronrod when some |lam_i| > 0.9) up to w = 8, and beyond, where each
comparison's excess needs Z0 near lam_i w, by a composite Gauss-Kronrod rule
on a window around those points, the union of tiny conditional excesses
added in logarithms; the upper tail P(max > w) is kept in logarithms
throughout. The finite-nu probability mixes over s exactly as for the
studentized range (see studentized_range). Tables are cached per set of
lambdas (bounded; their far-tail panels are filled on first use).

Accuracy (tests/reference/test_many_to_one.py): within 1e-9 absolute of
independent high-precision references, and 1e-6 relative in the upper tail,
for p from 1e-200 to 1 - 1e-12, two- and one-sided, equal and unequal
lambdas (including |lam| > 0.9), nu = 2..1000 and infinity.

References
----------
Dunnett, C. W. (1955). JASA 50, 1096-1121.
Dunnett, C. W. (1989). Algorithm AS 251. Applied Statistics 38, 564-579.
Hsu, J. C. (1996). Multiple Comparisons: Theory and Methods. Chapman & Hall.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike
from scipy import special

from familywise.stats.distributions import _kernels as kernels
from familywise.stats.distributions._tables import TabulatedDistribution, lower_quantile, max_table, mixture_curve

ALTERNATIVES = ("two_sided", "one_sided")


def _validated(lambdas: ArrayLike, alternative: str) -> np.ndarray:
    lam = np.asarray(lambdas, dtype=float).ravel()
    if lam.size == 0:
        raise ValueError("at least one comparison is needed")
    if np.any(~np.isfinite(lam)) or np.any(np.abs(lam) >= 1.0):
        raise ValueError("each lambda must satisfy |lambda| < 1")
    if alternative not in ALTERNATIVES:
        raise ValueError(f"alternative must be one of {ALTERNATIVES}")
    return lam


def _table(lambdas: ArrayLike, alternative: str) -> tuple[tuple, float]:
    lam = _validated(lambdas, alternative)
    two_sided = alternative == "two_sided"
    if two_sided:
        # The two-sided probability depends on the lambdas only up to sign.
        lam = np.abs(lam)
    distinct, counts = np.unique(lam, return_counts=True)
    return max_table(*_key(distinct, counts, two_sided))


def _key(distinct: np.ndarray, counts: np.ndarray, two_sided: bool) -> tuple:
    return tuple(distinct.tolist()), tuple(counts.tolist()), two_sided


def _validate_df(df: ArrayLike) -> np.ndarray:
    df = np.asarray(df, dtype=float)
    if np.any(~(df > 0)):
        raise ValueError("degrees of freedom must be positive (inf allowed)")
    return df


def _log_tails(c: ArrayLike, lambdas: ArrayLike, df: ArrayLike, alternative: str):
    table, median = _table(lambdas, alternative)
    c, df = np.broadcast_arrays(np.asarray(c, dtype=float), _validate_df(df))
    shape = c.shape
    flat = np.ascontiguousarray(c, dtype=float).ravel()
    flat_df = np.ascontiguousarray(df, dtype=float).ravel()
    if np.any(np.isnan(flat)):
        raise ValueError("c must not be NaN")
    if alternative == "two_sided":
        flat = np.maximum(flat, 0.0)
    upper, lower = kernels.mixture_log_sf_many(table, flat, flat_df, median)
    if np.size(lambdas) == 1:
        upper, lower = _student_log_tails(flat, flat_df, alternative == "two_sided", upper, lower)
    # Quadrature rounding may leave a log-probability a few ulps above 0.
    return np.minimum(upper, 0.0).reshape(shape), np.minimum(lower, 0.0).reshape(shape)


def _student_log_tails(c: np.ndarray, df: np.ndarray, two_sided: bool, upper: np.ndarray,
                       lower: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """log P(|T| > c) or log P(T > c) and their complements for Student's t,
    keeping the quadrature's values where the tail leaves double range."""
    p_upper = _student_sf(c, df, two_sided)
    if two_sided:
        # P(|T| <= c) = I_{c^2 / (nu + c^2)}(1/2, nu/2), erf(c / sqrt 2) at nu = infinity: no
        # cancellation for small c, where 1 - 2 P(T > c) would lose the digits
        with np.errstate(invalid="ignore", divide="ignore"):
            x = np.where(np.isinf(df), 0.0, c * c / (df + c * c))
            p_lower = np.where(np.isinf(df), special.erf(np.abs(c) / math.sqrt(2.0)),
                               special.betainc(0.5, np.where(np.isinf(df), 1.0, df / 2.0), x))
    else:
        p_lower = special.stdtr(df, c)
    with np.errstate(divide="ignore"):
        exact_upper = np.where(p_upper > 1e-300, np.log(p_upper), upper)
        exact_lower = np.where(p_lower > 1e-300, np.log(p_lower), lower)
    return exact_upper, exact_lower


def _student_sf(c: np.ndarray, df: np.ndarray | float, two_sided: bool) -> np.ndarray:
    """P(|T| > c) or P(T > c) for Student's t (one comparison)."""
    tail = special.stdtr(df, -np.abs(c) if two_sided else -c)
    return 2.0 * tail if two_sided else tail


def many_to_one_logsf(c: ArrayLike, lambdas: ArrayLike, df: ArrayLike, alternative: str = "two_sided") -> np.ndarray:
    """log P(max_i |T_i| > c) (two-sided) or log P(max_i T_i > c) (one-sided)."""
    return _log_tails(c, lambdas, df, alternative)[0]


def many_to_one_sf(c: ArrayLike, lambdas: ArrayLike, df: ArrayLike, alternative: str = "two_sided") -> np.ndarray:
    """P(max_i |T_i| > c) (two-sided) or P(max_i T_i > c) (one-sided)."""
    return np.exp(many_to_one_logsf(c, lambdas, df, alternative))


def many_to_one_cdf(c: ArrayLike, lambdas: ArrayLike, df: ArrayLike, alternative: str = "two_sided") -> np.ndarray:
    """P(max_i |T_i| <= c) (two-sided) or P(max_i T_i <= c) (one-sided)."""
    return np.exp(_log_tails(c, lambdas, df, alternative)[1])


def many_to_one_isf(
    alpha: float, lambdas: ArrayLike, df: float, alternative: str = "two_sided"
) -> float:
    """The critical value c with P(max > c) = alpha, 0 < alpha <= 1/2."""
    if not 0.0 < alpha <= 0.5:
        raise ValueError("alpha must lie in (0, 0.5]")
    df = float(_validate_df(df))
    if _validated(lambdas, alternative).size == 1:  # Student's t: no table to build
        return _student_isf(alpha, df, alternative == "two_sided")
    table, median = _table(lambdas, alternative)
    return float(kernels.mixture_quantile(table, math.log(alpha), df, median, 40.0))


def many_to_one_ppf(p: float, lambdas: ArrayLike, df: float, alternative: str = "two_sided") -> float:
    """c with P(max |T_i| <= c) = p (two-sided) or P(max T_i <= c) = p, for any
    0 < p < 1 (the lower tail by a bracketed root-finder on the directly
    integrated cdf; one-sided, c may be negative)."""
    if not 0.0 < p < 1.0:
        raise ValueError("p must lie in (0, 1)")
    if p >= 0.5:
        return many_to_one_isf(1.0 - p, lambdas, df, alternative)
    median = many_to_one_isf(0.5, lambdas, df, alternative)
    floor = 0.0 if alternative == "two_sided" else None
    return lower_quantile(lambda c: _log_tails(c, lambdas, df, alternative)[1], p, median, floor)


def _student_isf(alpha: float, df: float, two_sided: bool) -> float:
    return float(-special.stdtrit(df, alpha / 2.0 if two_sided else alpha))


def many_to_one_curve(lambdas: ArrayLike, df: float, alternative: str = "two_sided") -> TabulatedDistribution:
    """The many-to-one maximum for these lambdas and df as a tabulated curve
    (the families' fast path for recurring designs)."""
    df = float(_validate_df(df))
    table, median = _table(lambdas, alternative)
    lam = np.asarray(lambdas, dtype=float).ravel()
    if alternative == "two_sided":
        lam = np.abs(lam)
    distinct, counts = np.unique(lam, return_counts=True)
    key = ("max", *_key(distinct, counts, alternative == "two_sided"))
    curve = TabulatedDistribution(table, median, mixture_curve(key, df), df)
    if lam.size == 1:
        return _SingleComparison(curve, alternative == "two_sided")
    return curve


class _SingleComparison:
    """The curve interface for one comparison: Student's t (see the module docstring)."""

    def __init__(self, curve: TabulatedDistribution, two_sided: bool) -> None:
        self._curve = curve
        self._two_sided = two_sided
        self.df = curve.df

    def logsf(self, c: np.ndarray) -> np.ndarray:
        c = np.ascontiguousarray(np.atleast_1d(c), dtype=float)
        if self._two_sided:
            c = np.maximum(c, 0.0)
        p = _student_sf(c, self.df, self._two_sided)
        out = np.log(np.maximum(p, 1e-300))
        beyond = p <= 1e-300
        if np.any(beyond):
            out[beyond] = self._curve.logsf(c[beyond])
        return out

    def sf(self, c: np.ndarray) -> np.ndarray:
        return np.exp(self.logsf(c))

    def isf(self, alpha: float) -> float:
        if not 0.0 < alpha <= 0.5:
            raise ValueError("alpha must lie in (0, 0.5]")
        return _student_isf(alpha, self.df, self._two_sided)
