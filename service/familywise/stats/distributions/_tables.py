"""Construction and bounded caching of the tables of L(w) = log P(M > w)."""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy import optimize

from familywise.stats.distributions import _kernels as kernels

_NODES, _FIT = (np.ascontiguousarray(a) for a in kernels.chebyshev_fit_matrix(kernels.PANEL_NODES))

# Panels are narrow where the statistics change shape (their bulk lies below
# about 8) and wide in the Gaussian tail, where L(w) is close to quadratic.
_RANGE_EDGES = np.concatenate([np.arange(0.0, 16.0, 1.0), np.arange(16.0, 65.0, 4.0)])
# The many-to-one: panels one unit wide across the bulk keep the
# interpolation error of L below about 1e-10 (3e-9 for 19 comparisons;
# measured against direct evaluation); in the far tail, from w = 8 to 40,
# panels four wide, filled on first use (they are reached only by p-values
# below about 1e-14, or by the chi mixture at very few df). Beyond w = 40 L
# follows the Gaussian tail of one comparison, matched at the edge: the
# overlap of the comparisons it then neglects is below exp(-40^2 (1 - rho) /
# (2 (1 + rho))) relative, rho the largest correlation, and the probabilities
# there (below 1e-340) are beyond double precision anyway.
_FAR_EDGES = np.arange(12.0, 41.0, 4.0)
_MAX_ABS_EDGES = np.concatenate([[0.0, 1.0, 2.0, 3.0, 4.0, 6.0, 8.0], _FAR_EDGES])
_MAX_EDGES = np.concatenate([[-8.0, -4.0, -2.0, -1.0, 0.0, 1.0, 2.0, 3.0, 4.0, 6.0, 8.0], _FAR_EDGES])

Table = tuple  # (edges, coef, kind, params, tail_scale, done, fit, nodes), see _kernels


def _new_table(kind: int, params: np.ndarray, edges: np.ndarray, tail_scale: float) -> Table:
    params = np.ascontiguousarray(params, dtype=np.float64)
    n_panels = edges.size - 1
    table = (edges, np.zeros((n_panels, kernels.PANEL_NODES)), kind, params, float(tail_scale),
             np.zeros(n_panels, dtype=np.bool_), _FIT, _NODES)
    kernels.fill_table(table, kernels.FAR_TAIL if kind != kernels.KIND_RANGE else np.inf)
    return table


def _median(table: Table, lo: float, hi: float) -> float:
    """w with P(M > w) = 1/2 at nu = infinity (locates the bulk for the mixture)."""
    return float(kernels.table_quantile(table, math.log(0.5), lo, hi))


@lru_cache(maxsize=512)
def range_table(k: int) -> tuple[Table, float]:
    """Table of log P(R > w) for the range of k standard normals, and its median."""
    table = _new_table(kernels.KIND_RANGE, np.array([float(k)]), _RANGE_EDGES, math.sqrt(2.0))
    return table, _median(table, 0.0, 16.0)


@lru_cache(maxsize=1024)
def max_table(lambdas: tuple[float, ...], counts: tuple[int, ...], two_sided: bool) -> tuple[Table, float]:
    """Table of log P(max |Y_i| > w) (two-sided) or log P(max Y_i > w) for the
    product-correlated normals with these distinct lambdas and multiplicities."""
    u = len(lambdas)
    params = np.empty(1 + 2 * u)
    params[0] = u
    params[1 : 1 + u] = lambdas
    params[1 + u :] = counts
    if two_sided:
        table = _new_table(kernels.KIND_MAX_ABS, params, _MAX_ABS_EDGES, 1.0)
        return table, _median(table, 0.0, 8.0)
    table = _new_table(kernels.KIND_MAX, params, _MAX_EDGES, 1.0)
    return table, _median(table, -8.0, 8.0)


# The mixture curves, log P(M / s > c) in c, per (statistic, nu): panels of
# width 1 where the p-values of real data fall, wider beyond, and of width
# 1/2 below 4: there, with few df and many comparisons, log P(M / s > c) of
# the maximum modulus bends too sharply for 16 nodes on a panel of width 1
# (errors up to 1.6e-7 at c < 1, nu = 1, 20 comparisons; below 2e-10 on the
# half-width panels).
_CURVE_EDGES = np.concatenate([np.arange(0.0, 4.0, 0.5), np.arange(4.0, 16.0, 1.0), np.arange(16.0, 65.0, 4.0)])
Curve = tuple  # (edges, coef, done, fit, nodes)


@lru_cache(maxsize=2048)
def mixture_curve(table_key: tuple, df: float) -> Curve:
    """The (lazily filled) curve of one statistic at df degrees of freedom.

    ``table_key`` identifies the statistic's table: ("range", k) or
    ("max", lambdas, counts, two_sided). At most 2048 curves are kept, each
    32 panels of 16 coefficients (4.1 kB): a bounded cache.
    """
    n_panels = _CURVE_EDGES.size - 1
    return (_CURVE_EDGES, np.zeros((n_panels, kernels.PANEL_NODES)), np.zeros(n_panels, dtype=np.bool_),
            _FIT, _NODES)


class TabulatedDistribution:
    """P(M / s > c) of one statistic at one df, read from its mixture curve.

    The fast path of the follow-up families: after the first request for a
    design, a p-value costs about a microsecond. Values agree with the direct
    (adaptive) functions to about 1e-12 relative.
    """

    def __init__(self, table: Table, median: float, curve: Curve, df: float) -> None:
        self._table = table
        self._median = median
        self._curve = curve
        self.df = float(df)

    def logsf(self, c: np.ndarray) -> np.ndarray:
        c = np.ascontiguousarray(np.atleast_1d(c), dtype=float)
        log_sf = kernels.curve_log_sf_many(self._curve, self._table, self.df, self._median, c)
        return np.minimum(log_sf, 0.0, out=log_sf)  # a probability, whatever the interpolation's rounding

    def sf(self, c: np.ndarray) -> np.ndarray:
        return np.exp(self.logsf(c))

    def isf(self, alpha: float) -> float:
        if not 0.0 < alpha <= 0.5:
            raise ValueError("alpha must lie in (0, 0.5]")
        return float(kernels.curve_quantile(self._curve, self._table, self.df, self._median, math.log(alpha)))


def lower_quantile(log_cdf, p: float, median: float, floor: float | None) -> float:
    """c with P(M / s <= c) = p for p < 1/2: a bracketed root-finder
    (scipy's brentq, to the last bits) on the log of the lower tail, which the
    distribution code integrates directly (relative-accurate however small).
    ``floor`` bounds c from below (0 for a maximum modulus); without one the
    bracket is widened downwards by doubling."""
    target = math.log(p)

    def gap(c: float) -> float:
        return float(log_cdf(c)) - target

    hi = median
    if floor is not None:
        lo = floor
    else:
        lo = median - 1.0
        while gap(lo) > 0.0:
            lo = median - 2.0 * (median - lo)
    if gap(lo) >= 0.0:
        return lo
    return float(optimize.brentq(gap, lo, hi, xtol=1e-300, rtol=4.0 * np.finfo(float).eps, maxiter=400))
