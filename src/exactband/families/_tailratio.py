"""Tail-to-mass ratios of the negative binomial in double precision (fast path only).

Far in a tail of a spread-out law the tail is many times the mass at its end
(P(Y > c) ~ 1e9 pmf(c) for a size r ~ 4e8 and a mean ~ 3e14 at alpha ~ 1e-65),
so a gamma = (alpha - P(Y > c)) / pmf(c) = alpha/pmf(c) - P(Y > c)/pmf(c)
inherits 1e9 times the relative error of the tail.  scipy's incomplete beta
carries up to ~7e-11 there; these ratios keep a few units of roundoff.

Both come from the beta integrals of the tails (docs/tolerances.md section 8):

    R+(c) = P(Y > c) / pmf(c) = (c + r) (m/r) J(c + 1, r - 1, m/r)
    R-(c) = P(Y < c) / pmf(c) = c ((r + m)/m) J(r, c - 1, r/m)

    J(A, B, rho) = int_0^inf exp(-A s + B log1p(rho (1 - e^-s))) ds

(substitute t = (1 - q) e^-s in P(Y > c) = I_{1-q}(c + 1, r), t = q e^-s in
P(Y < c) = I_q(r, c); q = r/(r + m)).  With lam = A - B rho > 0 the slope of the
exponent at 0 (given without cancellation: (c - m) + 1 + m/r on the right,
(r/m)(m - c + 1) on the left) and w = lam s,

    J = (1/lam) int_0^inf exp(-w + psi(w/lam)) dw,
    psi(s) = B [(log1p(x) - x) - rho (s + expm1(-s))],   x = rho (1 - e^-s) >= 0,

where both brackets have one sign and are computed from series where small, so
psi carries a relative error of a few units of roundoff.  The integral is
composite Gauss-Legendre on w in [0, 1], [1, 2], [2, 4], ..., [64, 128], 16 nodes
each.  It is used only where the integrand is smooth on that scale and its
tail beyond 128 is negligible (``usable``): a quadratic coefficient
|B| rho (1 + rho) / (2 lam^2) <= 1/8 (about 2 standard deviations out), and for
B < 0 a decay A/lam >= 1/2 (integrand <= exp(-w A/lam)).
"""

from __future__ import annotations

import numpy as np
from numpy.polynomial.legendre import leggauss

_X, _W = leggauss(16)
_EDGES = np.array([0.0, 1.0, 2.0, 4.0, 8.0, 16.0, 32.0, 64.0, 128.0])
_NODES = np.concatenate([lo + (hi - lo) * (_X + 1.0) / 2.0 for lo, hi in zip(_EDGES, _EDGES[1:])])
_WEIGHTS = np.concatenate([(hi - lo) * _W / 2.0 for lo, hi in zip(_EDGES, _EDGES[1:])])
MAX_QUAD = 0.125  # largest quadratic coefficient of the exponent in w (about 2 sd out)
MIN_DECAY = 0.5  # for B < 0: the integrand is <= exp(-w A/lam); A/lam at least this


def log1p_minus(x):
    """log1p(x) - x for x > -1 (<= 0), without cancellation.

    With v = x/(2 + x): log1p(x) - x = -sum_{j>=2} c_j v^j, c_j = 2 (j even),
    2 - 2/j (j odd); used for -1/2 < x < 1 (|v| < 1/3, the first term dominant,
    40 terms reach 1e-19 of it); outside, log1p(x) - x loses at most a factor 3.6.
    """
    x = np.asarray(x, dtype=float)
    v = x / (2.0 + x)
    inside = (x > -0.5) & (x < 1.0)
    acc = np.zeros_like(x)
    vj = v * v
    for j in range(2, 2 + _terms(v, inside, 40)):
        acc += (2.0 if j % 2 == 0 else 2.0 - 2.0 / j) * vj
        vj = vj * v
    if np.all(inside):
        return -acc
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(inside, -acc, np.log1p(x) - x)


def _terms(v, inside, most):
    """Powers of v past the first needed for 2^-64 of it where ``inside`` (at most ``most``)."""
    top = float(np.max(np.abs(np.where(inside, v, 0.0)), initial=0.0))
    if top == 0.0:
        return 1
    return int(min(most, np.ceil(64.0 / -np.log2(top)) + 1))


def deviance(e):
    """(1 + e) log1p(e) - e for e > -1 (>= 0), without cancellation.

    With v = e/(2 + e) (so 1 + e = (1 + v)/(1 - v), log1p(e) = 2 atanh v):
    (1 - v) times it is 2 v^2 + sum_{k>=1} 2/(2k+1) v^(2k+1) (1 + v), the first term
    dominant for |v| < 1/3 (-1/2 < e < 1, 40 powers); outside,
    (log1p(e) - e) + e log1p(e) loses at most a factor 3.5.
    """
    e = np.asarray(e, dtype=float)
    v = e / (2.0 + e)
    inside = (e > -0.5) & (e < 1.0)
    acc = 2.0 * v * v
    vk = v * v * v
    for k in range(1, 1 + (_terms(v, inside, 40) + 1) // 2):
        acc += 2.0 / (2 * k + 1) * vk * (1.0 + v)
        vk = vk * v * v
    if np.all(inside):
        return acc / (1.0 - v)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(inside, acc / (1.0 - v), log1p_minus(e) + e * np.log1p(e))


def expm1_plus(s):
    """s + expm1(-s) for s >= 0 (>= 0), without cancellation.

    For s < 1 the alternating series s^2/2 - s^3/6 + ... (terms falling at least
    3x each, 24 of them reach 1e-24 of the first); above, s + expm1(-s) >= s/2.7.
    """
    s = np.asarray(s, dtype=float)
    acc = np.zeros_like(s)
    term = s * s / 2.0
    for k in range(3, 3 + _terms(s, s < 1.0, 24)):
        acc += term
        term = -term * s / k
    return np.where(s < 1.0, acc, s + np.expm1(-s))


def _integral(A, B, rho, lam):
    """J(A, B, rho) (module doc) for arrays of equal shape, lam = A - B rho > 0."""
    w = _NODES
    s = w / lam[..., None]
    x = -rho[..., None] * np.expm1(-s)
    psi = B[..., None] * (log1p_minus(x) - rho[..., None] * expm1_plus(s))
    with np.errstate(under="ignore"):
        vals = np.exp(psi - w)
    return (vals @ _WEIGHTS) / lam


def _usable(A, B, rho, lam):
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        quad = np.abs(B) * rho * (1.0 + rho) / (2.0 * lam * lam)
        decay = A / lam
    return (lam > 0) & np.isfinite(quad) & (quad <= MAX_QUAD) & ((B >= 0) | (decay >= MIN_DECAY))


def _right_terms(c, r, m, lo=0.0):
    A, B, rho = c + 1.0, r - 1.0, m / r
    lam = ((c - m) - lo) + 1.0 + rho
    return A, B, rho, lam


def _left_terms(c, r, m, lo=0.0):
    A, B, rho = r, c - 1.0, r / m
    lam = rho * (((m - c) + lo) + 1.0)
    return A, B, rho, lam


def right_usable(c, r, m):
    """Where right_ratio applies (module doc): beyond the bulk on the right."""
    c, r, m = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (c, r, m)))
    return _usable(*_right_terms(c, r, m))


def left_usable(c, r, m):
    """Where left_ratio applies (module doc): below the bulk on the left, c >= 1."""
    c, r, m = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (c, r, m)))
    return (c >= 1.0) & _usable(*_left_terms(c, r, m))


def right_ratio(c, r, m, lo=0.0):
    """P(Y > c) / pmf(c) for Y ~ NB(size r, mean m + lo), where right_usable (module doc).

    ``lo`` is a residual of the mean far below m (the decimal mean minus its double):
    it enters only the deviation c - m, where the rounding of m would be amplified.
    """
    c, r, m, lo = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (c, r, m, lo)))
    A, B, rho, lam = _right_terms(c, r, m, lo)
    return (c + r) * rho * _integral(A, B, rho, lam)


def left_ratio(c, r, m, lo=0.0):
    """P(Y < c) / pmf(c) for Y ~ NB(size r, mean m + lo), where left_usable (module doc)."""
    c, r, m, lo = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (c, r, m, lo)))
    A, B, rho, lam = _left_terms(c, r, m, lo)
    return c * ((r + m) / m) * _integral(A, B, rho, lam)


def far_logpmf(y, r, m, lo=0.0):
    """log pmf(y), y >= 1, of NB(size r, mean m) with both deviance terms from relative deviations.

    The saddle-point form of negbinomial.NegBinomialLaw.logpmf with
    bd0(r, r (1 + delta)) = -r (log1p(delta) - delta), delta = (y - m)/(r + m), and
    bd0(y, M) = M deviance(d/M), M = (y + r) m/(r + m), d = r delta = y - M:
    every piece of log pmf then has one sign or is small, so its relative error
    is a few units of roundoff (bd0(x, M) from a rounded ratio x/M lost up to
    ~80 units where the deviation is large; docs/tolerances.md section 8).
    """
    from ._saddle import stirlerr

    y, r, m, lo = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (y, r, m, lo)))
    delta = ((y - m) - lo) / (r + m)  # lo: the mean's residual, as in right_ratio
    t1 = -r * log1p_minus(delta)
    big_m = (y + r) * (m / (r + m))
    t2 = big_m * deviance(r * delta / big_m)
    return (stirlerr(y + r) - stirlerr(r) - stirlerr(y) - t1 - t2
            - 0.5 * np.log(2.0 * np.pi * y) - 0.5 * np.log1p(y / r))
