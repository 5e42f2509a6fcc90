"""The shared base of the float laws of Y (numpy/scipy), used by the fast solver.

Each family's module defines its own float law (a ``FloatLaw`` subclass, e.g.
``poisson.PoissonLaw``); this module holds only what they share.  A law works
on a parameter tuple ``P`` of equally shaped float arrays (made by
``make(theta, n, k)``) and a working parameter ``t`` (``t(P)``, ``with_t(P, t)``:
Poisson mean mu = n*theta; binomial p; negative binomial mean m = n*theta).
Probabilities come from scipy.special (incomplete gamma and beta functions) and
from the saddle-point masses in ``_saddle``.

What a discrete law defines (all on arrays, all static or class methods):

* ``make(theta, n, k)``, ``t(P)``, ``with_t(P, t)``;
* ``supmax(P)`` (largest support point, inf if unbounded), ``mode(P)`` (a mode of
  the mass function), ``moments(P)`` (mean, variance, skewness);
* ``cdf(c, P)`` = P(Y <= c), ``sf(c, P)`` = P(Y > c), ``logpmf(y, P)``;
* ``weight(c, P)`` with dF(c)/dt = -weight(c) * pmf(c)       (closed form per family);
* ``dlogw(c, P)``   = d log(-dF(c)/dt)/dt                     (to bound quadrature error);
* ``dlogpmf(y, P)`` = d log pmf(y)/dt;
* ``logratio(y, P, dt)`` = log pmf(y; t + dt) - log pmf(y; t), without cancellation;
* ``elementwise``: False when an entry's result depends on the other entries of
  the arrays (its last bit, e.g. a sum whose width is set by the largest mean).

The base class supplies ``pmf``, ``dcdf`` and ``quantile_guess`` from those.
"""

from __future__ import annotations

import numpy as np
from scipy import special as sp


def as_float(a):
    """``a`` as a float numpy array (the laws' one conversion)."""
    return np.asarray(a, dtype=float)


class FloatLaw:
    """Common pieces; subclasses (one per family module) define the formulas."""

    elementwise = True  # each entry's result depends on that entry alone

    # -- to override -------------------------------------------------------
    @staticmethod
    def make(theta, n, k):  # pragma: no cover
        raise NotImplementedError

    # -- shared ----------------------------------------------------------------
    @classmethod
    def pmf(cls, y, P):
        return np.exp(cls.logpmf(y, P))

    @classmethod
    def dcdf(cls, c, P):
        """dF(c)/dt; zero below the support and at or above its top."""
        c = as_float(c)
        inside = (c >= 0) & (c < cls.supmax(P))
        cc = np.where(inside, c, 0.0)
        return np.where(inside, -cls.weight(cc, P) * cls.pmf(cc, P), 0.0)

    @classmethod
    def quantile_guess(cls, prob, P):
        """Cornish-Fisher guess of min{c : F(c) > prob} (any error is corrected later)."""
        return cls._cf_guess(sp.ndtri(np.clip(prob, 1e-300, 1 - 1e-16)), P)

    @classmethod
    def upper_quantile_guess(cls, tail, P):
        """Cornish-Fisher guess of min{c : S(c) <= tail}, from the right tail's own mass.

        1 - tail rounds to 1 below tail ~ 1e-16, so quantile_guess(1 - tail) cannot
        place a right tail of size 1e-20 (it stopped at 8 sd, and the two-tailed
        search of a band at a tiny alpha then started from an empty left tail).
        """
        return cls._cf_guess(-sp.ndtri(np.clip(tail, 1e-300, 1 - 1e-16)), P)

    @classmethod
    def _cf_guess(cls, z, P):
        mean, var, skew = cls.moments(P)
        sd = np.sqrt(var)
        x = mean + sd * (z + skew * (z * z - 1.0) / 6.0)
        g = np.floor(np.nan_to_num(x, nan=0.0, posinf=1e15, neginf=0.0))
        return np.clip(g, 0.0, np.minimum(cls.supmax(P), 1e15))


# -- the log-likelihood-ratio line of two parameter values (families' log_ratio_line) --
def x_minus_log1p(z):
    """z - log1p(z) for z >= 0, to a few units of roundoff (no cancellation near 0).

    With t = z / (2 + z), log1p(z) = 2 atanh(t) = 2 (t + t^3/3 + t^5/5 + ...) and
    z = 2 t / (1 - t), so z - log1p(z) = 2 t^2 / (1 - t) - 2 t^3 (1/3 + t^2/5 + ...):
    the second term is below a third of the first for t < 1/5 (z < 1/2), where
    16 terms of the series reach 1e-22 relative.  From z = 1/2 on the plain
    difference loses at most 2 bits.
    """
    z = as_float(z)
    small = z < 0.5
    zs = np.where(small, z, 0.0)
    t = zs / (2.0 + zs)
    t2 = t * t
    acc = np.zeros_like(t)
    for k in range(16, 0, -1):
        acc = 1.0 / (2 * k + 1) + t2 * acc
    series = 2.0 * t2 / (1.0 - t) - 2.0 * t2 * t * acc
    with np.errstate(invalid="ignore"):
        direct = z - np.log1p(z)
    return np.where(small, series, direct)


def exact_mean_width(n, lo, hi):
    """For each design, n lo and n (hi - lo) from the decimals the doubles print as.

    Returns (whole, rest, width): n lo = whole + rest with whole = floor(n lo) (a
    double, exact up to 2^53) and rest in [0, 1) rounded once; width = n (hi - lo)
    rounded once (the doubles' own difference would carry an error of about
    u hi / (hi - lo) relative, 1e-7 for a band of relative width 1e-9).
    """
    import math

    from ..mpnum import frac

    whole, rest, width = [], [], []
    for nn, a, b in zip(np.ravel(n), np.ravel(lo), np.ravel(hi)):
        N, A = frac(nn), frac(a)
        x = N * A
        w = math.floor(x)
        whole.append(float(w))
        rest.append(float(x - w))
        width.append(float(N * (frac(b) - A)))
    return np.array(whole), np.array(rest), np.array(width)


def binomial_head(j, n, x, y, log_mass):
    """P(X <= j) for X ~ Binomial(n, x), y = 1 - x, j a small count (arrays of one shape),
    log_mass = log pmf(j).

    pmf(j) times 1 + r_j (1 + r_(j-1) (1 + ... (1 + r_1))), r_k = pmf(k-1)/pmf(k)
    = k y / ((n - k + 1) x), evaluated from the inside out: all terms are positive,
    so each level adds at most ~4 units of roundoff (<= 4 j u relative on top of the
    mass's own error).  Used where scipy's incomplete beta with a small integer first
    parameter and a huge second one loses digits (binomial.py, negbinomial.py).
    """
    w = y / x
    acc = np.ones_like(x)
    top = int(np.max(j, initial=0.0))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for k in range(1, top + 1):
            on = k <= j  # rows past their own j (where n - k + 1 may be 0) keep acc
            r = (k / (n - k + 1.0)) * w
            acc = np.where(on, 1.0 + r * acc, acc)
    return np.exp(log_mass) * acc


def sum_is_better(scipy_loss, terms, log_mass):
    """Where a summed tail is more accurate than scipy's: scipy's predicted relative loss
    above the sum's, u (2 max(1, |log pmf|) + 4 terms) (the mass exp(log pmf) carries the
    rounding of log pmf; deep in a tail of a moderate law scipy's value is the better)."""
    u = 2.0 ** -53
    return scipy_loss > u * (2.0 * np.maximum(1.0, np.abs(log_mass)) + 4.0 * terms)


HEAD_MAX_TERMS = 2000  # binomial_rest: the most terms summed (a mean below j + 1)


def binomial_rest(j, n, x, y, log_mass):
    """P(X >= j) for X ~ Binomial(n, x), y = 1 - x, where n x < j + 1 (the terms past j
    fall: pmf(k+1)/pmf(k) = (n - k) x / ((k + 1) y) < 1); log_mass = log pmf(j).

    Summed upward until a term is below 2^-60 of the sum, at most HEAD_MAX_TERMS
    terms; each term carries ~3 units of roundoff per step from j (the terms that
    matter are within a few sqrt(j) of j).  Returns NaN where the sum did not
    settle (the caller keeps its other value there).
    """
    w = x / y
    acc = np.ones_like(x)
    term = np.ones_like(x)
    settled = np.zeros(x.shape, dtype=bool)
    with np.errstate(over="ignore", invalid="ignore"):
        for i in range(HEAD_MAX_TERMS):
            k = j + i
            term = term * (np.maximum(n - k, 0.0) / (k + 1.0)) * w
            acc = np.where(settled, acc, acc + term)
            settled |= term <= acc * 2.0 ** -60
            if np.all(settled):
                break
        return np.where(settled, np.exp(log_mass) * acc, np.nan)
