"""Compiled scalar helpers: normal distribution functions and piecewise
Chebyshev series.

Plain double-precision arithmetic compiled by numba; nothing random, no
fast-math, so the same input gives the same bits.

References
----------
Normal tail asymptotics: Abramowitz and Stegun (1964), 26.2.12.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)
SQRT_HALF = math.sqrt(0.5)


@njit(cache=True, inline="always")
def log_ndtr(x: float) -> float:
    """log Phi(x), relative-accurate over the whole real line."""
    if x > 6.0:
        return math.log1p(-0.5 * math.erfc(x * SQRT_HALF))
    if x > -37.0:
        return math.log(0.5 * math.erfc(-x * SQRT_HALF))
    # Asymptotic series (A&S 26.2.12): Phi(x) ~ phi(x)/|x| * (1 - 1/x^2 + 3/x^4 - ...)
    x2 = x * x
    series = 1.0 - 1.0 / x2 + 3.0 / (x2 * x2) - 15.0 / (x2 * x2 * x2) + 105.0 / (x2 * x2 * x2 * x2)
    return -0.5 * x2 - LOG_SQRT_2PI - math.log(-x) + math.log(series)


@njit(cache=True, inline="always")
def ndtr(x: float) -> float:
    """Phi(x)."""
    return 0.5 * math.erfc(-x * SQRT_HALF)


@njit(cache=True, inline="always")
def log_normal_pdf(z: float) -> float:
    return -0.5 * z * z - LOG_SQRT_2PI



@njit(cache=True, inline="always")
def find_panel(edges, x):
    """Index j with edges[j] <= x < edges[j + 1], clamped to the table."""
    n_panels = edges.size - 1
    if x <= edges[0]:
        return 0
    if x >= edges[n_panels]:
        return n_panels - 1
    lo = 0
    hi = n_panels
    while hi - lo > 1:
        m = (lo + hi) // 2
        if edges[m] <= x:
            lo = m
        else:
            hi = m
    return lo


@njit(cache=True, inline="always")
def cheb_panel(edges, coef, j, x):
    """Chebyshev series of panel j at x (Clenshaw recurrence)."""
    a = edges[j]
    b = edges[j + 1]
    u = (2.0 * x - (a + b)) / (b - a)
    u2 = 2.0 * u
    b1 = 0.0
    b2 = 0.0
    for i in range(coef.shape[1] - 1, 0, -1):
        b1, b2 = coef[j, i] + u2 * b1 - b2, b1
    return coef[j, 0] + u * b1 - b2


@njit(cache=True)
def cheb_eval(edges, coef, x):
    """Piecewise Chebyshev series at x, with x clamped to the table's span."""
    return cheb_panel(edges, coef, find_panel(edges, x), x)


def chebyshev_fit_matrix(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Chebyshev points of the first kind on [-1, 1] and the matrix that maps
    values at those points to series coefficients."""
    j = np.arange(n)
    x = np.cos(np.pi * (j + 0.5) / n)
    vander = np.polynomial.chebyshev.chebvander(x, n - 1)
    return x, np.linalg.inv(vander)
