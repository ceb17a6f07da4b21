"""Construction and bounded caching of the tables of L(w) = log P(M > w)."""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from familywise.stats.distributions import _kernels as kernels
from familywise.stats.distributions._numerics import chebyshev_fit_matrix

_NODES, _FIT = chebyshev_fit_matrix(kernels.PANEL_NODES)

# Panels are narrow where the statistics change shape (their bulk lies below
# about 8) and wide in the Gaussian tail, where L(w) is close to quadratic.
_RANGE_EDGES = np.concatenate([np.arange(0.0, 16.0, 1.0), np.arange(16.0, 65.0, 4.0)])
# Past w = 8 the many-to-one tail is continued by the shape of the union
# bound (see table_log_sf); its relative error there is below 1e-5 and only
# reaches p-values under about 1e-14. Tables are filled in full when made:
# 28 panels for the range (once per k), 4 or 7 for the many-to-one.
_MAX_ABS_EDGES = np.array([0.0, 2.0, 4.0, 6.0, 8.0])
_MAX_EDGES = np.array([-8.0, -4.0, -2.0, 0.0, 2.0, 4.0, 6.0, 8.0])

Table = tuple  # (edges, coef, kind, params, tail_scale), see _kernels


def _new_table(kind: int, params: np.ndarray, edges: np.ndarray, tail_scale: float) -> Table:
    params = np.ascontiguousarray(params, dtype=np.float64)
    coef = kernels.fill_table(edges, kind, params, _FIT, _NODES)
    return (edges, coef, kind, params, float(tail_scale))


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
