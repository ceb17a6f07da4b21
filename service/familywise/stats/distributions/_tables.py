"""Construction and bounded caching of the lazily filled tables of L(w)."""

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
# reaches p-values under about 1e-14.
_MAX_ABS_EDGES = np.array([0.0, 2.0, 4.0, 6.0, 8.0])
_MAX_EDGES = np.array([-8.0, -4.0, -2.0, 0.0, 2.0, 4.0, 6.0, 8.0])

Table = tuple  # (edges, coef, done, kind, params, fit, nodes, tail_scale)


def _new_table(kind: int, params: np.ndarray, edges: np.ndarray, tail_scale: float) -> Table:
    n_panels = edges.size - 1
    return (
        edges,
        np.zeros((n_panels, kernels.PANEL_NODES)),
        np.zeros(n_panels, dtype=np.bool_),
        kind,
        np.ascontiguousarray(params, dtype=np.float64),
        _FIT,
        _NODES,
        float(tail_scale),
    )


def _median(table: Table, lo: float, hi: float) -> float:
    """w with P(M > w) = 1/2, by bisection on the table (fills the panels
    around the bulk, which every later call needs anyway)."""
    target = math.log(0.5)
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if kernels.table_log_sf(table, mid) > target:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


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
