"""Compiled scalar kernels shared by the distribution functions.

Everything here is plain double-precision arithmetic compiled by numba, so that
adaptive quadrature and root-finding run without per-step interpreter cost.
Nothing random, no fast-math: the same input gives the same bits.

References
----------
Kronrod nodes and weights: Piessens, de Doncker-Kapenga, Überhuber and Kahaner
(1983), QUADPACK, the 21-point rule of ``qk21``.
Normal tail asymptotics: Abramowitz and Stegun (1964), 26.2.12.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)
SQRT_HALF = math.sqrt(0.5)

# Gauss-Kronrod 21-point rule on [-1, 1] (QUADPACK qk21): Kronrod abscissae
# (the odd-indexed ones are the 10-point Gauss nodes) and both weight sets.
_XGK = (
    0.995657163025808080735527280689003, 0.973906528517171720077964012084452,
    0.930157491355708226001207180059508, 0.865063366688984510732096688423493,
    0.780817726586416897063717578345042, 0.679409568299024406234327365114874,
    0.562757134668604683339000099272694, 0.433395394129247190799265943165784,
    0.294392862701460198131126603103866, 0.148874338981631210884826001129720,
    0.000000000000000000000000000000000,
)
_WGK = (
    0.011694638867371874278064396062192, 0.032558162307964727478818972459390,
    0.054755896574351996031381300244580, 0.075039674810919952767043140916190,
    0.093125454583697605535065465083366, 0.109387158802297641899210590325805,
    0.123491976262065851077600725055197, 0.134709217311473325928054001771707,
    0.142775938577060080797094273138717, 0.147739104901338491374841515972068,
    0.149445554002916905664936468389821,
)
_WG = (
    0.066671344308688137593568809893332, 0.149451349150580593145776339657697,
    0.219086362515982043995534934228163, 0.269266719309996355091226921569469,
    0.295524224714752870173892994651338,
)

MAX_PANELS = 400


@njit(cache=True, inline='always')
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


@njit(cache=True)
def ndtr(x: float) -> float:
    """Phi(x)."""
    return 0.5 * math.erfc(-x * SQRT_HALF)


@njit(cache=True)
def log_normal_pdf(z: float) -> float:
    return -0.5 * z * z - LOG_SQRT_2PI


@njit(cache=True)
def _gk21(h, params, shift, a, b):
    """Kronrod estimate and QUADPACK-style error of the integral of
    exp(h(x) - shift) on [a, b]."""
    centre = 0.5 * (a + b)
    half = 0.5 * (b - a)
    fv1 = np.empty(10)
    fv2 = np.empty(10)
    fc = math.exp(h(centre, params) - shift)
    resk = fc * _WGK[10]
    resg = 0.0
    resabs = abs(resk)
    for j in range(10):
        dx = half * _XGK[j]
        f1 = math.exp(h(centre - dx, params) - shift)
        f2 = math.exp(h(centre + dx, params) - shift)
        fv1[j] = f1
        fv2[j] = f2
        resk += _WGK[j] * (f1 + f2)
        resabs += _WGK[j] * (abs(f1) + abs(f2))
        if j % 2 == 1:
            resg += _WG[j // 2] * (f1 + f2)
    mean = 0.5 * resk
    resasc = _WGK[10] * abs(fc - mean)
    for j in range(10):
        resasc += _WGK[j] * (abs(fv1[j] - mean) + abs(fv2[j] - mean))
    err = abs((resk - resg) * half)
    resasc *= abs(half)
    if resasc != 0.0 and err != 0.0:
        err = resasc * min(1.0, (200.0 * err / resasc) ** 1.5)
    floor = 50.0 * 2.220446049250313e-16 * resabs * abs(half)
    if err < floor:
        err = floor
    return resk * half, err


@njit(cache=True)
def integrate_exp(h, params, a, b, n_init, rtol):
    """log of the integral of exp(h(x)) over [a, b], by adaptive Gauss-Kronrod.

    ``h`` returns the logarithm of a positive integrand, so integrands far below
    the smallest double (tail probabilities) are integrated without underflow:
    the integrand is scaled by its largest value on a starting grid.
    """
    shift = -math.inf
    n_probe = 8 * n_init + 1
    for i in range(n_probe):
        v = h(a + (b - a) * i / (n_probe - 1), params)
        if v > shift:
            shift = v
    if shift == -math.inf:
        return -math.inf
    return integrate_exp_scaled(h, params, a, b, n_init, rtol, shift)


@njit(cache=True)
def integrate_exp_scaled(h, params, a, b, n_init, rtol, shift):
    """As integrate_exp, with the scale (about the largest log value) given."""
    return adaptive_panels(h, params, a, b, n_init, rtol, shift)[0]


@njit(cache=True)
def adaptive_panels(h, params, a, b, n_init, rtol, shift):
    """Adaptive Gauss-Kronrod of exp(h(x) - shift) on [a, b].

    Panels are bisected, largest error first, until the error estimate falls
    below ``rtol`` times the integral or the panel budget is spent. Returns
    the log of the integral and the final panels (lo, hi, count), which a
    caller may reuse as a fixed rule for nearby integrands.
    """
    lo = np.empty(MAX_PANELS)
    hi = np.empty(MAX_PANELS)
    val = np.empty(MAX_PANELS)
    err = np.empty(MAX_PANELS)
    n = n_init
    for i in range(n):
        lo[i] = a + (b - a) * i / n
        hi[i] = a + (b - a) * (i + 1) / n
        val[i], err[i] = _gk21(h, params, shift, lo[i], hi[i])
    total = 0.0
    while True:
        total = 0.0
        total_err = 0.0
        worst = 0
        for i in range(n):
            total += val[i]
            total_err += err[i]
            if err[i] > err[worst]:
                worst = i
        if total_err <= rtol * total or n + 1 >= MAX_PANELS:
            break
        mid = 0.5 * (lo[worst] + hi[worst])
        lo[n] = mid
        hi[n] = hi[worst]
        hi[worst] = mid
        val[worst], err[worst] = _gk21(h, params, shift, lo[worst], hi[worst])
        val[n], err[n] = _gk21(h, params, shift, lo[n], hi[n])
        n += 1
    log_total = shift + math.log(total) if total > 0.0 else -math.inf
    return log_total, lo, hi, n


@njit(cache=True)
def fixed_panels(h, params, lo, hi, n, offset, shift):
    """log of the Kronrod sum of exp(h(x) - shift) over given panels, each
    moved by ``offset``: a fixed rule, smooth in the integrand's parameters."""
    total = 0.0
    for i in range(n):
        total += _gk21(h, params, shift, lo[i] + offset, hi[i] + offset)[0]
    return shift + math.log(total) if total > 0.0 else -math.inf


@njit(cache=True, inline='always')
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


@njit(cache=True, inline='always')
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
