"""Compiled kernels: the two statistics at infinite degrees of freedom, their
piecewise Chebyshev tables, and the scale mixture over the chi distribution.

Both follow-up distributions have the form

    P(M / s > c),   s = sqrt(chi^2_nu / nu) independent of M,

where M is the range of k independent standard normals (studentized range) or
the maximum of p correlated normals with product correlation (many-to-one).
Their upper tail at nu = infinity, L(w) = log P(M > w), is tabulated once per
shape on Chebyshev panels in w (filled lazily, panel by panel), and the finite
nu probability is the one-dimensional mixture

    P(M / s > c) = integral over t of g_nu(t) * exp(L(c e^t)) dt,    s = e^t,

computed by adaptive Gauss-Kronrod on a window found around the peak of the
log-concave integrand. All work is in logarithms, so that tail probabilities
far below 1e-300 keep their relative accuracy until they underflow.

References
----------
Copenhaver, M. D. and Holland, B. (1988). Computation of the distribution of
the maximum studentized range statistic with application to multiple
significance testing of simple effects. J. Statist. Comput. Simul. 30, 1-15
(the range integral and the chi mixture).
Dunnett, C. W. (1955). A multiple comparison procedure for comparing several
treatments with a control. JASA 50, 1096-1121; Dunnett, C. W. (1989).
Algorithm AS 251: multivariate normal probability integrals with product
correlation structure. Applied Statistics 38, 564-579 (the reduction of the
p-variate probability to one integral over the shared normal variable).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

# --------------------------------------------------------------------------
# Scalar helpers: normal distribution functions, piecewise Chebyshev series
# --------------------------------------------------------------------------
# (Kept in this module: numba's on-disk cache is keyed on the defining file of
# each compiled function, so helpers inlined from another module could leave a
# stale compiled kernel behind when only they change.)

LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)
SQRT_HALF = math.sqrt(0.5)


@njit(cache=True, inline="always")
def log_ndtr(x: float) -> float:
    """log Phi(x), relative-accurate over the whole real line (for x > 0 from
    the upper tail, log1p(-Phi(-x)), so that the small logarithm of a Phi
    close to 1 keeps its relative accuracy)."""
    if x > 0.0:
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


KIND_RANGE = 0
KIND_MAX_ABS = 1  # two-sided many-to-one: max_i |Y_i|
KIND_MAX = 2  # one-sided many-to-one: max_i Y_i

# Integrands of the adaptive quadrature, chosen by an integer so that the
# compiled code takes no function arguments and can be cached on disk.
INTEGRAND_RANGE = 0  # inner integral of the range, in z
INTEGRAND_MAX = 1  # inner integral of the many-to-one maximum, in z
INTEGRAND_UPPER = 2  # chi mixture of P(M > c s), in t = log s
INTEGRAND_LOWER = 3  # chi mixture of P(M <= c s)

PANEL_NODES = 16
MAX_PANELS = 400

# Gauss-Kronrod 21-point rule on [-1, 1] (QUADPACK qk21; Piessens et al. 1983):
# Kronrod abscissae (every second one is a 10-point Gauss node), weights.
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

def _hermite_rule(n: int) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """Gauss-Hermite nodes and log weights for the standard normal density.
    Tuples, not arrays: numba freezes them as constants and can cache the code."""
    z, w = np.polynomial.hermite_e.hermegauss(n)
    return tuple(float(x) for x in z), tuple(float(x) for x in np.log(w / math.sqrt(2.0 * math.pi)))


# 32 nodes for the smooth, centred P(inside) integrand; 64 for the upper tail,
# where the integrand's mass sits at |z| up to about 8.
HERMITE_Z, HERMITE_LOG_W = _hermite_rule(64)
CENTRED_Z, CENTRED_LOG_W = _hermite_rule(64)
# weight / phi(node) / sqrt(2 pi): the factor of each node of the centred rule
# when the integrand is written as exp(-z^2 / 2) times the product.
CENTRED_RATIO = tuple(
    math.exp(lw + 0.5 * x * x) for x, lw in zip(CENTRED_Z, CENTRED_LOG_W, strict=True)
)


# A table is a tuple (edges, coef, kind, params, tail_scale, done, fit, nodes):
# the piecewise Chebyshev series of L(w) on [edges[0], edges[-1]], how to
# continue it beyond, which panels are filled (the far upper tail is filled
# on first use), and the Chebyshev points and fitting matrix that fill a panel.
@njit(cache=True)
def _no_table():
    """A placeholder table for the integrands that read none (made at run
    time: a global tuple would be a read-only constant of another type)."""
    return (np.zeros(2), np.zeros((1, 1)), 0, np.zeros(1), 1.0, np.ones(1, dtype=np.bool_), np.zeros((1, 1)),
            np.zeros(1))


# --------------------------------------------------------------------------
# Adaptive Gauss-Kronrod over log integrands
# --------------------------------------------------------------------------


@njit(cache=True)
def _integrand(kind, x, params, table):
    """log of the integrand chosen by ``kind`` (see the INTEGRAND_ constants)."""
    if kind == INTEGRAND_RANGE:
        return _range_log_integrand(x, params)
    if kind == INTEGRAND_MAX:
        return _max_adaptive_integrand(x, params)
    return _mixture_log_integrand(x, params, table, kind == INTEGRAND_UPPER)


@njit(cache=True)
def _gk21_combine(fc, fv1, fv2, half):
    """Kronrod estimate and QUADPACK-style error from the 21 values of a panel
    of half-width ``half`` (centre fc, then the pairs fv1[j], fv2[j] at
    centre -/+ half * _XGK[j])."""
    resk = fc * _WGK[10]
    resg = 0.0
    resabs = abs(resk)
    for j in range(10):
        resk += _WGK[j] * (fv1[j] + fv2[j])
        resabs += _WGK[j] * (abs(fv1[j]) + abs(fv2[j]))
        if j % 2 == 1:
            resg += _WG[j // 2] * (fv1[j] + fv2[j])
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
def _gk21(kind, params, table, shift, a, b):
    """Kronrod estimate and QUADPACK-style error of the integral of
    exp(log integrand - shift) on [a, b]."""
    centre = 0.5 * (a + b)
    half = 0.5 * (b - a)
    fv1 = np.empty(10)
    fv2 = np.empty(10)
    fc = math.exp(_integrand(kind, centre, params, table) - shift)
    for j in range(10):
        dx = half * _XGK[j]
        fv1[j] = math.exp(_integrand(kind, centre - dx, params, table) - shift)
        fv2[j] = math.exp(_integrand(kind, centre + dx, params, table) - shift)
    return _gk21_combine(fc, fv1, fv2, half)


@njit(cache=True)
def adaptive_panels(kind, params, table, a, b, n_init, rtol, shift):
    """Adaptive Gauss-Kronrod of exp(log integrand - shift) on [a, b].

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
        val[i], err[i] = _gk21(kind, params, table, shift, lo[i], hi[i])
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
        val[worst], err[worst] = _gk21(kind, params, table, shift, lo[worst], hi[worst])
        val[n], err[n] = _gk21(kind, params, table, shift, lo[n], hi[n])
        n += 1
    log_total = shift + math.log(total) if total > 0.0 else -math.inf
    return log_total, lo, hi, n


@njit(cache=True)
def integrate_exp(kind, params, table, a, b, n_init, rtol):
    """log of the integral of exp(log integrand) over [a, b].

    The log integrand keeps integrands far below the smallest double (tail
    probabilities) from underflowing: it is scaled by its largest value on a
    starting grid before exponentiation.
    """
    shift = -math.inf
    n_probe = 8 * n_init + 1
    for i in range(n_probe):
        v = _integrand(kind, a + (b - a) * i / (n_probe - 1), params, table)
        if v > shift:
            shift = v
    if shift == -math.inf:
        return -math.inf
    return adaptive_panels(kind, params, table, a, b, n_init, rtol, shift)[0]


@njit(cache=True)
def fixed_panels(kind, params, table, lo, hi, n, offset, shift):
    """log of the Kronrod sum over given panels, each moved by ``offset``: a
    fixed rule, smooth in the integrand's parameters."""
    total = 0.0
    for i in range(n):
        total += _gk21(kind, params, table, shift, lo[i] + offset, hi[i] + offset)[0]
    return shift + math.log(total) if total > 0.0 else -math.inf


# --------------------------------------------------------------------------
# The statistics at nu = infinity
# --------------------------------------------------------------------------


@njit(cache=True)
def _range_log_integrand(z, params):
    """log of k phi(z) [B(z)^(k-1) - (B(z) - B(z+w))^(k-1)], B the upper normal
    tail: the density that the smallest of k normals is z and the largest
    exceeds z + w."""
    k = params[0]
    w = params[1]
    log_b = log_ndtr(-z)
    ratio = math.exp(log_ndtr(-(z + w)) - log_b)
    if ratio >= 1.0:
        return log_normal_pdf(z) + math.log(k) + (k - 1.0) * log_b
    term = -math.expm1((k - 1.0) * math.log1p(-ratio))
    if term <= 0.0:
        return -math.inf
    return math.log(k) + log_normal_pdf(z) + (k - 1.0) * log_b + math.log(term)


@njit(cache=True)
def range_log_sf(k, w):
    """log P(R > w) for the range R of k independent standard normals."""
    if w <= 0.0:
        return 0.0
    params = np.array([float(k), w])
    lower = min(-0.5 * w, -3.0) - 10.0
    return integrate_exp(INTEGRAND_RANGE, params, _no_table(), lower, 9.0, 12, 1e-13)


@njit(cache=True, inline="always")
def _log_inside(two_sided, lam, tau, w, z):
    """log P(|Y| <= w | Z0 = z) (two-sided) or log P(Y <= w | Z0 = z), for
    Y = lam Z0 + tau Z."""
    hi = (w - lam * z) / tau
    if not two_sided:
        return log_ndtr(hi)
    lo = (-w - lam * z) / tau
    if lo > 0.0:
        inside = ndtr(-lo) - ndtr(-hi)
    elif hi < 0.0:
        inside = ndtr(hi) - ndtr(lo)
    else:
        outside = ndtr(-hi) + ndtr(lo)
        if outside < 0.5:
            return math.log1p(-outside)
        inside = ndtr(hi) - ndtr(lo)
    return math.log(inside) if inside > 0.0 else -math.inf


@njit(cache=True)
def _sum_log_inside(two_sided, params, w, z):
    u = int(params[0])
    total = 0.0
    for i in range(u):
        lam = params[1 + i]
        total += params[1 + u + i] * _log_inside(two_sided, lam, math.sqrt(1.0 - lam * lam), w, z)
    return total


@njit(cache=True, inline="always")
def _prod_inside(two_sided, lam, tau, mult, w, z):
    """prod_i P(inside_i | z)^m_i without logarithms (the bulk, not the tail)."""
    prod = 1.0
    for i in range(lam.size):
        hi = (w - lam[i] * z) / tau[i]
        if two_sided:
            lo = (-w - lam[i] * z) / tau[i]
            inside = ndtr(-lo) - ndtr(-hi) if lo > 0.0 else ndtr(hi) - ndtr(lo)
        else:
            inside = ndtr(hi)
        for _ in range(mult[i]):
            prod *= inside
    return prod


@njit(cache=True, inline="always")
def _log_prod_inside_tail(two_sided, lam, tau, mult, w, z):
    """log prod_i P(inside_i | z)^m_i from the small outside probabilities,
    accurate when the product is close to 1 (the upper tail)."""
    total = 0.0
    for i in range(lam.size):
        hi = (w - lam[i] * z) / tau[i]
        outside = ndtr(-hi)
        if two_sided:
            outside += ndtr((-w - lam[i] * z) / tau[i])
        if outside < 1e-5:
            log_inside = -outside * (1.0 + outside * (0.5 + outside / 3.0))
        elif outside < 1.0:
            log_inside = math.log1p(-outside)
        else:
            return -math.inf
        total += mult[i] * log_inside
    return total


@njit(cache=True)
def _inside_peak(two_sided, params, w):
    """Mode and curvature scale of the log-concave integrand
    phi(z) prod_i P(inside_i | z), found by Newton steps on its log."""
    if two_sided:
        # Even in z: the mode is 0; curvature from the closed form of
        # -d^2/dz^2 log(Phi(a) - Phi(-a)) at z = 0, a = w / tau.
        u = int(params[0])
        curvature = 1.0
        for i in range(u):
            lam = params[1 + i]
            tau = math.sqrt(1.0 - lam * lam)
            a = w / tau
            inside = 2.0 * ndtr(a) - 1.0 if a > 1e-8 else 2.0 * a * 0.3989422804014327
            ratio = a * math.exp(log_normal_pdf(a)) / inside if a > 1e-8 else 0.5
            curvature += params[1 + u + i] * 2.0 * (lam / tau) ** 2 * ratio
        return 0.0, 1.0 / math.sqrt(curvature)
    u = int(params[0])
    z = 0.0
    curvature = 1.0
    for _ in range(30):
        slope = -z
        curvature = 1.0
        for i in range(u):
            lam = params[1 + i]
            m = params[1 + u + i]
            tau = math.sqrt(1.0 - lam * lam)
            a = (w - lam * z) / tau
            mills = math.exp(log_normal_pdf(a) - log_ndtr(a))
            slope -= m * (lam / tau) * mills
            curvature += m * (lam / tau) ** 2 * mills * (a + mills)
        step = slope / curvature
        z += step
        if abs(step) < 1e-10:
            break
    return z, 1.0 / math.sqrt(curvature)


@njit(cache=True)
def _max_log_sf_hermite(two_sided, params, w):
    """Gauss-Hermite evaluation (see max_log_sf)."""
    u = int(params[0])
    lam = params[1 : 1 + u].copy()
    tau = np.sqrt(1.0 - lam * lam)
    mult = np.empty(u, dtype=np.int64)
    bonferroni = 0.0
    for i in range(u):
        mult[i] = int(params[1 + u + i])
        bonferroni += mult[i] * (2.0 if two_sided else 1.0) * ndtr(-w)
    if bonferroni < 0.05:
        return _max_log_sf_upper_tail(two_sided, lam, tau, mult, w)
    centre, scale = _inside_peak(two_sided, params, w)
    n = len(CENTRED_Z)
    # P(inside) by Gauss-Hermite centred on the mode and scaled to the
    # curvature of the log-concave integrand (adaptive Gauss-Hermite).
    inside = 0.0
    if two_sided:
        # The integrand is even: the 32 positive nodes, counted twice.
        for j in range(n // 2):
            x = CENTRED_Z[j]
            z = scale * x
            inside += 2.0 * CENTRED_RATIO[j] * math.exp(-0.5 * z * z) * _prod_inside(
                two_sided, lam, tau, mult, w, z
            )
    else:
        for j in range(n):
            x = CENTRED_Z[j]
            z = centre + scale * x
            inside += CENTRED_RATIO[j] * math.exp(-0.5 * z * z) * _prod_inside(
                two_sided, lam, tau, mult, w, z
            )
    inside *= scale
    if inside <= 0.9:
        return math.log1p(-min(inside, 1.0))
    return _max_log_sf_upper_tail(two_sided, lam, tau, mult, w)


@njit(cache=True)
def _max_log_sf_upper_tail(two_sided, lam, tau, mult, w):
    """log P(outside) by plain Gauss-Hermite, for relative accuracy in the
    upper tail."""
    n = len(HERMITE_Z)
    m = n // 2 if two_sided else n
    logs = np.empty(m)
    best = -math.inf
    for j in range(m):
        outside = -math.expm1(_log_prod_inside_tail(two_sided, lam, tau, mult, w, HERMITE_Z[j]))
        logs[j] = HERMITE_LOG_W[j] + (math.log(outside) if outside > 0.0 else -math.inf)
        best = max(best, logs[j])
    if best == -math.inf:
        return -math.inf
    acc = 0.0
    for j in range(m):
        acc += math.exp(logs[j] - best)
    if two_sided:
        acc *= 2.0
    return best + math.log(acc)


@njit(cache=True, inline="always")
def _log_outside(two_sided, lam, w, z):
    """log P(|Y| > w | Z0 = z) (two-sided) or log P(Y > w | Z0 = z), for
    Y = lam Z0 + tau Z, relative-accurate however small."""
    tau = math.sqrt(1.0 - lam * lam)
    log_out = log_ndtr((lam * z - w) / tau)
    if two_sided:
        other = log_ndtr((-w - lam * z) / tau)
        top = max(log_out, other)
        if top > -math.inf:
            log_out = top + math.log1p(math.exp(min(log_out, other) - top))
    return log_out


@njit(cache=True)
def _max_adaptive_integrand(z, params):
    """log of phi(z) P(some |Y_i| > w | Z0 = z) (two-sided) or of
    phi(z) P(some Y_i > w | Z0 = z); params = [two_sided, w, u, lam.., m..].

    When every comparison's conditional outside probability is below 1e-13,
    the union is their sum to within that relative error and is added in
    logarithms: the probabilities themselves may lie below the smallest
    double (the far tail, w up to 40 and beyond)."""
    two_sided = params[0] > 0.5
    w = params[1]
    u = int(params[2])
    largest = -math.inf
    for i in range(u):
        largest = max(largest, _log_outside(two_sided, params[3 + i], w, z))
    if largest < -30.0:
        total = 0.0
        for i in range(u):
            total += params[3 + u + i] * math.exp(_log_outside(two_sided, params[3 + i], w, z) - largest)
        if total <= 0.0:
            return -math.inf
        return log_normal_pdf(z) + largest + math.log(total)
    outside = -math.expm1(_sum_log_inside(two_sided, params[2:], w, z))
    if outside <= 0.0:
        return -math.inf
    return log_normal_pdf(z) + math.log(outside)


#: Beyond this w the many-to-one tail is integrated adaptively on a window
#: around where each comparison's excess lies (the Gauss-Hermite nodes do not
#: reach there), and its table panels are filled on first use.
FAR_TAIL = 8.0


@njit(cache=True)
def _far_edges(two_sided, params, w):
    """Panel edges for max_far_log_sf: half a unit apart across the window
    [min lam_i w - 10, max lam_i w + 10] (from 0 when two-sided), and, where a
    comparison's conditional excess P(Y_i > w | z) = Phi((lam_i z - w) / tau_i)
    rises as a steep step (at z = w / lam_i, over a width s = tau_i / |lam_i|
    below half a unit), 40 panels of width s / 2 across it."""
    u = int(params[0])
    lo = math.inf
    hi = -math.inf
    for i in range(u):
        lam = abs(params[1 + i]) if two_sided else params[1 + i]
        lo = min(lo, lam * w)
        hi = max(hi, lam * w)
    a = 0.0 if two_sided else lo - 10.0
    b = hi + 10.0
    n = math.ceil((b - a) / 0.5)
    edges = np.empty(n + 1 + 41 * u)
    edges[: n + 1] = a + (b - a) * np.arange(n + 1) / n
    used = n + 1
    for i in range(u):
        lam = abs(params[1 + i]) if two_sided else params[1 + i]
        if lam == 0.0:
            continue
        step = math.sqrt(1.0 - lam * lam) / abs(lam)
        if step < 0.5:
            fine = w / lam + step * np.linspace(-10.0, 10.0, 41)
            edges[used : used + 41] = np.minimum(np.maximum(fine, a), b)
            used += 41
    return np.unique(edges[:used])


@njit(cache=True)
def max_far_log_sf(two_sided, params, w):
    """log P(max > w) for large w: composite Gauss-Kronrod over Z0.

    Given Z0 = z, comparison i exceeds w mostly when z is near lam_i w (its
    conditional mean lam_i z then reaches w at the cheapest cost), within a
    few units of it, or, for lam_i close to 1, at the steep step of its
    conditional excess near z = w / lam_i: the panels of _far_edges cover
    both (the integrand falls by e^-50 ten units outside the window). A fixed
    rule, without adaptation, because this evaluation also fills the tables
    that the adaptive mixture integral reads (no recursion into it). The
    two-sided integrand is even in z: half the line, doubled.
    """
    full = np.empty(params.size + 2)
    full[0] = 1.0 if two_sided else 0.0
    full[1] = w
    full[2:] = params
    edges = _far_edges(two_sided, params, w)
    shift = -math.inf
    for j in range(edges.size - 1):
        shift = max(shift, _max_adaptive_integrand(edges[j], full),
                    _max_adaptive_integrand(0.5 * (edges[j] + edges[j + 1]), full))
    if shift == -math.inf:
        return -math.inf
    fv1 = np.empty(10)
    fv2 = np.empty(10)
    total = 0.0
    for j in range(edges.size - 1):
        centre = 0.5 * (edges[j] + edges[j + 1])
        half = 0.5 * (edges[j + 1] - edges[j])
        fc = math.exp(_max_adaptive_integrand(centre, full) - shift)
        for r in range(10):
            dx = half * _XGK[r]
            fv1[r] = math.exp(_max_adaptive_integrand(centre - dx, full) - shift)
            fv2[r] = math.exp(_max_adaptive_integrand(centre + dx, full) - shift)
        total += _gk21_combine(fc, fv1, fv2, half)[0]
    if total <= 0.0:
        return -math.inf
    return shift + math.log(total) + (math.log(2.0) if two_sided else 0.0)


@njit(cache=True)
def max_log_sf(two_sided, params, w):
    """log P(max_i |Y_i| > w) or log P(max_i Y_i > w) for standard normals
    Y_i = lam_i Z0 + sqrt(1 - lam_i^2) Z_i (product correlation lam_i lam_j).

    ``params`` = [u, lam_1..lam_u, m_1..m_u]: the distinct lambdas and how many
    comparisons share each. With no |lam| above 0.9, Gauss-Hermite
    over the shared variable Z0: adaptive (centred and scaled on the
    log-concave integrand) for P(inside), plain for P(outside) in the upper
    tail. Larger |lam| give sharper integrands and go to adaptive
    Gauss-Kronrod.
    """
    if two_sided and w <= 0.0:
        return 0.0
    if w > FAR_TAIL:
        return max_far_log_sf(two_sided, params, w)
    u = int(params[0])
    lam_max = 0.0
    for i in range(u):
        lam_max = max(lam_max, abs(params[1 + i]))
    if lam_max <= 0.9:
        return _max_log_sf_hermite(two_sided, params, w)
    full = np.empty(params.size + 2)
    full[0] = 1.0 if two_sided else 0.0
    full[1] = w
    full[2:] = params
    reach = lam_max * abs(w) + 12.0
    return integrate_exp(INTEGRAND_MAX, full, _no_table(), -reach, reach, 24, 1e-12)


@njit(cache=True)
def statistic_log_sf(kind, params, w):
    """L(w) = log P(M > w) of a statistic at nu = infinity, computed afresh."""
    if kind == KIND_RANGE:
        return range_log_sf(params[0], w)
    return max_log_sf(kind == KIND_MAX_ABS, params, w)



# --------------------------------------------------------------------------
# Piecewise Chebyshev tables of L(w) = log P(M > w)
# --------------------------------------------------------------------------


@njit(cache=True)
def _fit_panel(table, j, values):
    """Chebyshev coefficients of panel j from L at its Chebyshev points."""
    coef, fit = table[1], table[6]
    n = values.size
    for r in range(n):
        acc = 0.0
        for i in range(n):
            acc += fit[r, i] * values[i]
        coef[j, r] = acc
    table[5][j] = True


@njit(cache=True)
def _panel_points(table, j):
    edges, nodes = table[0], table[7]
    a = edges[j]
    b = edges[j + 1]
    return 0.5 * (a + b) + 0.5 * (b - a) * nodes


@njit(cache=True)
def fill_table_panel(table, j):
    """Fill panel j from the statistic's direct evaluation."""
    points = _panel_points(table, j)
    values = np.empty(points.size)
    for i in range(points.size):
        values[i] = statistic_log_sf(table[2], table[3], points[i])
    _fit_panel(table, j, values)


@njit(cache=True)
def _fill_far_panel(table, j):
    """Fill a far-tail panel of a many-to-one table, on first use (from
    table_log_sf: by max_far_log_sf only, which reads no table)."""
    points = _panel_points(table, j)
    values = np.empty(points.size)
    for i in range(points.size):
        values[i] = max_far_log_sf(table[2] == KIND_MAX_ABS, table[3], points[i])
    _fit_panel(table, j, values)


@njit(cache=True)
def fill_table(table, upto):
    """Fill every panel that ends at or below ``upto`` (the rest on first use)."""
    edges = table[0]
    for j in range(edges.size - 1):
        if edges[j + 1] <= upto and not table[5][j]:
            fill_table_panel(table, j)


@njit(cache=True, inline="always")
def table_log_sf(table, w):
    """L(w) = log P(M > w) from the table.

    Beyond the last edge L follows the Gaussian tail of the statistic's
    widest single comparison (scale ``tail_scale``), matched at the edge;
    below the first edge (one-sided statistics only) the lower tail
    P(M <= w) is at most Phi(w) and is continued in proportion to it.
    """
    edges = table[0]
    coef = table[1]
    done = table[5]
    last = edges.size - 1
    if w >= edges[last]:
        if not done[last - 1]:
            _fill_far_panel(table, last - 1)
        tail_scale = table[4]
        edge_value = cheb_panel(edges, coef, last - 1, edges[last])
        return edge_value + log_ndtr(-w / tail_scale) - log_ndtr(-edges[last] / tail_scale)
    if w <= edges[0]:
        edge_value = cheb_panel(edges, coef, 0, edges[0])
        return edge_value * math.exp(log_ndtr(w) - log_ndtr(edges[0]))
    j = find_panel(edges, w)
    if not done[j]:
        _fill_far_panel(table, j)
    return cheb_panel(edges, coef, j, w)


@njit(cache=True)
def table_quantile(table, log_alpha, lo, hi):
    """w with L(w) = log alpha at nu = infinity, by bisection on the table
    within [lo, hi]: first bracketed by doubling from lo + 1, so that the
    search reads the table no further out than the quantile needs (its far
    panels are filled only on first use)."""
    step = 1.0
    while lo + step < hi and table_log_sf(table, lo + step) > log_alpha:
        lo, step = lo + step, 2.0 * step
    hi = min(hi, lo + step)
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if table_log_sf(table, mid) > log_alpha:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-15 * max(abs(hi), 1e-300):
            break
    return 0.5 * (lo + hi)


# --------------------------------------------------------------------------
# The chi mixture
# --------------------------------------------------------------------------


@njit(cache=True)
def _stirling_remainder(x):
    """lgamma(x) - [(x - 1/2) log x - x + log sqrt(2 pi)]."""
    if x < 8.0:
        return math.lgamma(x) - ((x - 0.5) * math.log(x) - x + LOG_SQRT_2PI)
    inv = 1.0 / x
    inv2 = inv * inv
    return inv * (1.0 / 12.0 - inv2 * (1.0 / 360.0 - inv2 * (1.0 / 1260.0 - inv2 / 1680.0)))


@njit(cache=True)
def _chi_log_peak(nu):
    """log density of t = log s at t = 0, s = sqrt(chi^2_nu / nu)."""
    return 0.5 * math.log(nu / math.pi) - _stirling_remainder(0.5 * nu)


@njit(cache=True, inline="always")
def _chi_drop(t):
    """(e^{2t} - 1 - 2t) / 2: the log density of t falls by nu times this."""
    if abs(t) < 1e-3:
        return t * t * (1.0 + t * (2.0 / 3.0 + t / 3.0))
    return 0.5 * (math.expm1(2.0 * t) - 2.0 * t)


@njit(cache=True)
def _chi_drop_inverse(level, side):
    """t on the given side of 0 (side = -1 or +1) where _chi_drop(t) = level."""
    # Starting points from the asymptotes: e^{2t}/2 for t > 0, -t - 1/2 for t < 0.
    t = 0.5 * math.log1p(2.0 * level) + 0.5 if side > 0 else -level - 0.5
    for _ in range(60):
        f = _chi_drop(t) - level
        step = f / math.expm1(2.0 * t)
        t -= step
        if side > 0 and t <= 0.0:
            t = 1e-6
        if side < 0 and t >= 0.0:
            t = -1e-6
        if abs(step) <= 1e-12 * (1.0 + abs(t)):
            break
    return t


@njit(cache=True, inline="always")
def _mixture_log_integrand(t, params, table, upper):
    """log of g_nu(t) P(M > c e^t) (upper) or g_nu(t) P(M <= c e^t);
    params = [c, nu, log of the chi peak]."""
    value = params[2] - params[1] * _chi_drop(t)
    tail = table_log_sf(table, params[0] * math.exp(t))
    if upper:
        return value + tail
    if tail >= 0.0:
        return -math.inf
    return value + math.log(-math.expm1(tail))


DROP = 40.0  # nats below the peak at which the integration window ends
RTOL = 1e-11
SCAN = 24


@njit(cache=True)
def _golden_max(kind, params, table, a, b):
    """Maximum of the unimodal log integrand on [a, b] by golden section."""
    ratio = 0.5 * (math.sqrt(5.0) - 1.0)
    x1 = b - ratio * (b - a)
    x2 = a + ratio * (b - a)
    f1 = _integrand(kind, x1, params, table)
    f2 = _integrand(kind, x2, params, table)
    for _ in range(48):
        if f1 < f2:
            a = x1
            x1 = x2
            f1 = f2
            x2 = a + ratio * (b - a)
            f2 = _integrand(kind, x2, params, table)
        else:
            b = x2
            x2 = x1
            f2 = f1
            x1 = b - ratio * (b - a)
            f1 = _integrand(kind, x1, params, table)
        if b - a < 1e-4 * (1.0 + abs(a)):
            break
    if f1 > f2:
        return x1, f1
    return x2, f2


@njit(cache=True)
def _bracket_max(kind, params, table, t, value, step):
    """An interval around the maximum of the unimodal log integrand, grown
    by doubling steps from a point ``t`` toward higher values."""
    right = _integrand(kind, t + step, params, table)
    left = _integrand(kind, t - step, params, table)
    if right <= value and left <= value:
        return t - step, t + step
    direction = 1.0 if right > left else -1.0
    previous = t
    current = t + direction * step
    current_value = max(right, left)
    for _ in range(200):
        step *= 2.0
        probe = current + direction * step
        probe_value = _integrand(kind, probe, params, table)
        if probe_value <= current_value:
            return (previous, probe) if direction > 0 else (probe, previous)
        previous = current
        current = probe
        current_value = probe_value
    return (previous, current) if direction > 0 else (current, previous)


@njit(cache=True)
def _edge(kind, params, table, peak_t, peak, first_step, limit):
    """Point beyond which the integrand stays below exp(-DROP) of its peak
    (log-concavity): doubling steps bracket it, a few bisections tighten it."""
    inner = peak_t
    outer = peak_t + first_step
    while _integrand(kind, outer, params, table) > peak - DROP:
        if (first_step < 0.0 and outer < limit) or (first_step > 0.0 and outer > limit):
            return outer
        inner = outer
        outer = peak_t + 2.0 * (outer - peak_t)
    for _ in range(4):
        mid = 0.5 * (inner + outer)
        if _integrand(kind, mid, params, table) > peak - DROP:
            inner = mid
        else:
            outer = mid
    return outer


@njit(cache=True)
def _mixture_window(table, c, nu, upper, w_median):
    """The log-concave mixture integrand in t: its peak, and the interval
    outside which it stays below exp(-DROP) of the peak."""
    log_peak = _chi_log_peak(nu)
    params = np.array([c, nu, log_peak])
    kind = INTEGRAND_UPPER if upper else INTEGRAND_LOWER
    sigma = 1.0 / math.sqrt(2.0 * nu)
    t_lo = _chi_drop_inverse(DROP / nu, -1)
    t_hi = _chi_drop_inverse(DROP / nu, 1)
    if c != 0.0:
        # where c s meets the statistic's bulk; the median of a single one-sided
        # comparison is 0 (the table gives it to rounding, perhaps below 0), and
        # the bulk of every statistic here lies at w of order one
        t_c = math.log(max(w_median, 0.5) / abs(c))
        t_lo = min(t_lo, t_c - 4.0 - DROP / nu)
        t_hi = max(t_hi, min(t_c + 4.0, _chi_drop_inverse((DROP + 40.0) / nu, 1)))
    # A coarse scan (uniform, plus a few points across the chi peak at t = 0)
    # brackets the maximum; golden section refines it.
    best_t = 0.0
    best = -math.inf
    spacing = (t_hi - t_lo) / (SCAN - 1)
    step = spacing
    for i in range(SCAN + 9):
        t = t_lo + spacing * i if i < SCAN else sigma * (i - SCAN - 4)
        if log_peak - nu * _chi_drop(t) < best - DROP:
            continue
        v = _integrand(kind, t, params, table)
        if v > best:
            best = v
            best_t = t
            step = spacing if i < SCAN else sigma
    if best == -math.inf:
        return params, kind, 0.0, -math.inf, 0.0, 0.0
    a, b = _bracket_max(kind, params, table, best_t, best, min(step, sigma))
    peak_t, peak = _golden_max(kind, params, table, a, b)
    if peak < best:
        peak_t = best_t
        peak = best
    left = _edge(kind, params, table, peak_t, peak, -step / 4.0, t_lo - 200.0)
    right = _edge(kind, params, table, peak_t, peak, step / 4.0, t_hi + 50.0)
    return params, kind, peak_t, peak, left, right


@njit(cache=True)
def _mixture_log(table, c, nu, upper, w_median):
    """log of the mixture integral of P(M > c s) (upper) or P(M <= c s)."""
    params, kind, peak_t, peak, left, right = _mixture_window(table, c, nu, upper, w_median)
    if peak == -math.inf:
        return -math.inf
    lower_part = adaptive_panels(kind, params, table, left, peak_t, 1, RTOL, peak)[0]
    upper_part = adaptive_panels(kind, params, table, peak_t, right, 1, RTOL, peak)[0]
    return peak + math.log(math.exp(lower_part - peak) + math.exp(upper_part - peak))


@njit(cache=True)
def mixture_log_sf(table, c, nu, w_median):
    """log P(M / s > c) and log P(M / s <= c) (nu = inf: no mixing).

    The smaller of the two is integrated (the other follows from it), which
    keeps the upper tail relative-accurate and the bulk accurate in absolute
    terms; the nu = infinity value at c tells which is likely smaller.
    """
    if nu == math.inf:
        upper = table_log_sf(table, c)
        return upper, math.log(-math.expm1(upper)) if upper < 0.0 else -math.inf
    if table_log_sf(table, c) < math.log(0.5):
        upper = _mixture_log(table, c, nu, True, w_median)
        if upper < math.log(0.5):
            return upper, math.log1p(-math.exp(upper))
    lower = _mixture_log(table, c, nu, False, w_median)
    if lower < math.log(0.5):
        return math.log1p(-math.exp(lower)), lower
    upper = _mixture_log(table, c, nu, True, w_median)
    return upper, math.log1p(-math.exp(upper))


@njit(cache=True)
def mixture_log_sf_many(table, c, nu, w_median):
    n = c.size
    upper = np.empty(n)
    lower = np.empty(n)
    for i in range(n):
        upper[i], lower[i] = mixture_log_sf(table, c[i], nu[i], w_median)
    return upper, lower


@njit(cache=True)
def _planned_log_sf(plan, table, c, nu, log_peak):
    """log P(M / s > c) by the fixed rule of a plan made at c0: the panels,
    moved by log(c0 / c) so that w = c e^t meets the same table points."""
    c0, lo, hi, n, shift = plan
    params = np.array([c, nu, log_peak])
    return fixed_panels(INTEGRAND_UPPER, params, table, lo, hi, n, math.log(c0 / c), shift)


@njit(cache=True)
def _make_plan(table, c0, nu, w_median):
    params, kind, peak_t, peak, left, right = _mixture_window(table, c0, nu, True, w_median)
    _, lo1, hi1, n1 = adaptive_panels(kind, params, table, left, peak_t, 2, 1e-13, peak)
    _, lo2, hi2, n2 = adaptive_panels(kind, params, table, peak_t, right, 2, 1e-13, peak)
    lo = np.concatenate((lo1[:n1], lo2[:n2]))
    hi = np.concatenate((hi1[:n1], hi2[:n2]))
    return (c0, lo, hi, n1 + n2, peak)


@njit(cache=True)
def mixture_quantile(table, log_alpha, nu, w_median, upper_start):
    """c >= 0 with P(M / s > c) = alpha (alpha <= 1/2).

    The starting value is the nu = infinity quantile inflated by the familiar
    first-order t correction. The adaptive rule of one evaluation near the
    root is then frozen (its panels moved with c, see _planned_log_sf), which
    makes log P a smooth function of c, and secant steps on log c converge
    to full precision; a new plan is made if the root wanders far from c0.
    """
    w_alpha = table_quantile(table, log_alpha, 0.0, upper_start)
    if nu == math.inf:
        return w_alpha
    if w_alpha < 1e-3:
        # A quantile at (or next to) zero: plain bisection in c.
        lo = 0.0
        hi = 1.0
        while mixture_log_sf(table, hi, nu, w_median)[0] > log_alpha:
            hi *= 2.0
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            if mixture_log_sf(table, mid, nu, w_median)[0] > log_alpha:
                lo = mid
            else:
                hi = mid
            if hi - lo <= 1e-15 * hi:
                break
        return 0.5 * (lo + hi)
    c = w_alpha * (1.0 + (0.5 * w_alpha * w_alpha + 1.0) / (4.0 * nu))
    log_peak = _chi_log_peak(nu)
    plan = _make_plan(table, c, nu, w_median)
    x0 = math.log(c)
    f0 = _planned_log_sf(plan, table, c, nu, log_peak) - log_alpha
    x1 = x0 + (0.01 if f0 > 0.0 else -0.01)
    for _ in range(60):
        c1 = math.exp(x1)
        if abs(math.log(c1 / plan[0])) > 0.05:
            plan = _make_plan(table, c1, nu, w_median)
            f0 = _planned_log_sf(plan, table, math.exp(x0), nu, log_peak) - log_alpha
        f1 = _planned_log_sf(plan, table, c1, nu, log_peak) - log_alpha
        if f1 == f0:
            break
        x2 = x1 - f1 * (x1 - x0) / (f1 - f0)
        step = x2 - x1
        if abs(step) > 0.5:
            x2 = x1 + (0.5 if step > 0 else -0.5)
        x0 = x1
        f0 = f1
        x1 = x2
        if abs(x1 - x0) < 1e-15:
            break
    return math.exp(x1)


# --------------------------------------------------------------------------
# Tables of the mixture itself, log P(M / s > c) in c, for recurring designs
# --------------------------------------------------------------------------
# A follow-up family evaluates the same distribution (one statistic, one nu)
# at many c, and laboratories run the same design again and again. The
# mixture is therefore also tabulated, per (statistic, nu), on Chebyshev
# panels in c, each panel filled from 16 adaptive evaluations the first time
# a c falls in it; the same request gives the same numbers whichever request
# filled the panel. Beyond the table's span the adaptive evaluation is used.


@njit(cache=True)
def _fill_mixture_panel(curve, base, nu, w_median, j):
    edges, coef, done, fit, nodes = curve
    a = edges[j]
    b = edges[j + 1]
    n = nodes.size
    values = np.empty(n)
    for i in range(n):
        values[i] = mixture_log_sf(base, 0.5 * (a + b) + 0.5 * (b - a) * nodes[i], nu, w_median)[0]
    for r in range(n):
        acc = 0.0
        for i in range(n):
            acc += fit[r, i] * values[i]
        coef[j, r] = acc
    done[j] = True


@njit(cache=True)
def curve_log_sf(curve, base, nu, w_median, c):
    """log P(M / s > c) from the mixture table ``curve`` (filled on demand)."""
    edges = curve[0]
    if c < edges[0] or c >= edges[edges.size - 1]:
        return mixture_log_sf(base, c, nu, w_median)[0]
    j = find_panel(edges, c)
    if not curve[2][j]:
        _fill_mixture_panel(curve, base, nu, w_median, j)
    return cheb_panel(edges, curve[1], j, c)


@njit(cache=True)
def curve_log_sf_many(curve, base, nu, w_median, c):
    out = np.empty(c.size)
    for i in range(c.size):
        out[i] = curve_log_sf(curve, base, nu, w_median, c[i])
    return out


@njit(cache=True)
def curve_quantile(curve, base, nu, w_median, log_alpha):
    """c with log P(M / s > c) = log alpha on the tabulated curve: bracket by
    doubling, then bisection to the last bits (the curve is monotone)."""
    lo = 0.0
    hi = 1.0
    while curve_log_sf(curve, base, nu, w_median, hi) > log_alpha:
        lo = hi
        hi *= 2.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if curve_log_sf(curve, base, nu, w_median, mid) > log_alpha:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 4e-16 * hi:
            break
    return hi
