"""The maximum of |T_i| for a multivariate t with any correlation.

Used for sets of contrasts whose correlation has no product structure (the
product case goes to :mod:`.many_to_one`, which is exact). P(max_i |T_i| <= c)
is estimated by the separation-of-variables integrand of Genz (1992) with
the chi variable as the first coordinate (Genz and Bretz 2002), on scrambled
Sobol points: ``shifts`` independent scramblings from a fixed seed give the
estimate (their mean) and its standard error. The reported error bound is
3.5 standard errors. Every evaluation reuses the same points, so the estimate
is a smooth, increasing function of c and the quantile found by root-finding
agrees with the p-values of the same call.

References
----------
Genz, A. (1992). Numerical computation of multivariate normal probabilities.
J. Computational and Graphical Statistics 1, 141-149.
Genz, A. and Bretz, F. (2002). Comparison of methods for the computation of
multivariate t probabilities. J. Computational and Graphical Statistics 11,
950-971.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from numpy.typing import ArrayLike
from scipy import special, stats
from scipy.stats import qmc

SEED = 20261201
ERROR_MULTIPLE = 3.5
#: Working memory of one evaluation, in doubles: the c values are taken a few
#: at a time so that a large set of contrasts needs tens of megabytes, not
#: gigabytes (each c needs points x shifts x (m - 1) doubles).
WORKING_DOUBLES = 8_000_000


class MaxAbsT:
    """P(max |T_i| <= c) for one correlation matrix and df, on fixed points."""

    def __init__(self, correlation: ArrayLike, df: float, points: int = 2**11, shifts: int = 8) -> None:
        corr = np.asarray(correlation, dtype=float)
        if corr.ndim != 2 or corr.shape[0] != corr.shape[1]:
            raise ValueError("the correlation must be a square matrix")
        self.correlation = corr
        self.df = float(df)
        self.shifts = shifts
        m = corr.shape[0]
        # A singular set of contrasts is refused by the caller; the tiny ridge
        # only guards the factorisation against round-off.
        self._chol = np.linalg.cholesky(corr + 1e-13 * np.eye(m))
        u = _sobol_points(m, points, shifts)
        self._scale = _chi_scale(m, self.df, points, shifts)
        self._u = u[..., 1:]

    def _estimates(self, c: np.ndarray) -> np.ndarray:
        """Per-scrambling estimates of P(max |T_i| <= c), shape (len(c), shifts)."""
        per_c = self._scale.size * max(self._chol.shape[0] - 1, 1)
        step = max(1, WORKING_DOUBLES // per_c)
        return np.concatenate([self._chunk(c[i : i + step]) for i in range(0, c.size, step)])

    def _chunk(self, c: np.ndarray) -> np.ndarray:
        chol = self._chol
        m = chol.shape[0]
        bound = np.asarray(c, dtype=float)[:, None, None] * self._scale  # c x shifts x points
        y = np.zeros((*bound.shape, max(m - 1, 0)))
        product = np.ones(bound.shape)
        for i in range(m):
            shift = y[..., :i] @ chol[i, :i] if i else 0.0
            lo = special.ndtr((-bound - shift) / chol[i, i])
            hi = special.ndtr((bound - shift) / chol[i, i])
            width = np.maximum(hi - lo, 0.0)
            product *= width
            if i < m - 1:
                y[..., i] = special.ndtri(np.clip(lo + self._u[..., i] * width, 1e-300, 1 - 1e-16))
        return product.mean(axis=2)

    def cdf(self, c: ArrayLike) -> tuple[np.ndarray, float]:
        """P(max |T_i| <= c) for each c, and the largest error bound."""
        c = np.atleast_1d(np.asarray(c, dtype=float))
        estimates = self._estimates(np.maximum(c, 0.0))
        errors = ERROR_MULTIPLE * estimates.std(axis=1, ddof=1) / math.sqrt(self.shifts)
        return np.where(c > 0.0, estimates.mean(axis=1), 0.0), float(errors.max())

    def sf(self, c: ArrayLike) -> tuple[np.ndarray, float]:
        """P(max |T_i| > c) for each c, and the largest error bound."""
        values, error = self.cdf(c)
        return np.clip(1.0 - values, 0.0, 1.0), error

    def isf(self, alpha: float) -> float:
        """c with P(max |T_i| > c) = alpha on these points, by secant steps from
        the Šidák quantile (an upper bound: Šidák 1967)."""
        m = self.correlation.shape[0]
        target = 1.0 - alpha
        x0 = float(stats.t.isf(-math.expm1(math.log1p(-alpha) / m) / 2.0, self.df))
        x1 = x0 * 0.98
        f0 = float(self.cdf(x0)[0][0]) - target
        f1 = float(self.cdf(x1)[0][0]) - target
        for _ in range(30):
            if f1 == f0:
                break
            x2 = max(x1 - f1 * (x1 - x0) / (f1 - f0), 0.5 * x1)
            x0, f0 = x1, f1
            x1 = x2
            f1 = float(self.cdf(x1)[0][0]) - target
            if abs(x1 - x0) <= 1e-12 * x1:
                break
        return float(x1)


@lru_cache(maxsize=32)
def _sobol_points(dimension: int, points: int, shifts: int) -> np.ndarray:
    """``shifts`` scramblings of the Sobol sequence from the fixed seed
    (cached: they depend only on the dimension)."""
    seeds = np.random.default_rng(SEED)
    u = np.stack([qmc.Sobol(d=dimension, scramble=True, seed=seeds).random(points) for _ in range(shifts)])
    u.setflags(write=False)
    return u


@lru_cache(maxsize=128)
def _chi_scale(dimension: int, df: float, points: int, shifts: int) -> np.ndarray:
    """s = sqrt(chi^2_df / df) at the first coordinate of the points."""
    u = _sobol_points(dimension, points, shifts)[..., 0]
    scale = np.ones(u.shape) if math.isinf(df) else np.sqrt(stats.chi2.ppf(u, df) / df)
    scale.setflags(write=False)
    return scale


def product_lambdas(correlation: np.ndarray, tolerance: float = 1e-12) -> np.ndarray | None:
    """lambda with correlation[i, j] = lambda_i lambda_j (i != j), if such exists.

    Then the exact many-to-one code applies. For m >= 3, lambda_i^2 =
    r_ij r_ik / r_jk for any j, k; the candidate is checked on every entry.
    """
    r = np.asarray(correlation, dtype=float)
    m = r.shape[0]
    if m == 1:
        return np.zeros(1)
    if m == 2:
        rho = r[0, 1]
        lam = math.sqrt(abs(rho))
        return np.array([lam, math.copysign(lam, rho)])
    off = r - np.diag(np.diag(r))
    if np.all(np.abs(off) <= tolerance):
        return np.zeros(m)
    lam = np.zeros(m)
    for i in range(m):
        others = [j for j in range(m) if j != i]
        best = None
        for a in range(len(others)):
            for b in range(a + 1, len(others)):
                j, k = others[a], others[b]
                if abs(r[j, k]) > tolerance and (best is None or abs(r[j, k]) > abs(best[2])):
                    best = (j, k, r[j, k])
        if best is None:
            return None
        j, k, rjk = best
        square = r[i, j] * r[i, k] / rjk
        if square < -tolerance:
            return None
        lam[i] = math.sqrt(max(square, 0.0))
    # Signs: fix the first non-zero lambda positive, the others from r[i, first].
    nonzero = np.flatnonzero(lam > tolerance)
    if nonzero.size:
        anchor = nonzero[0]
        for i in range(m):
            if i != anchor and r[i, anchor] < 0:
                lam[i] = -lam[i]
    implied = np.outer(lam, lam)
    np.fill_diagonal(implied, 1.0)
    if np.max(np.abs(implied - r)) > 1e-10 or np.any(np.abs(lam) >= 1.0):
        return None
    return lam
