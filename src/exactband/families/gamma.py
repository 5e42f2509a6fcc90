"""Gamma totals: n units, each gamma with known shape k and mean theta; Y = the total.

Y ~ Gamma(shape A = n k, scale theta / k); X = k Y / theta ~ Gamma(A, 1), and
2 k Y / theta is chi-square with 2 n k degrees of freedom.  k = 1 is
exponential lifetimes (Y = total time on test).  k is passed as ``dispersion``.
Two independent laws:

* ``GammaFloat`` (scipy.special: gammainc, gammaincc and their inverses; the
  density in the saddle-point form of ``families._saddle`` so that a large
  shape keeps full double precision) for the fast continuous solver;
* ``GammaMp`` (mpmath arithmetic, loggamma and exp at the caller's working
  precision; the incomplete gamma function by its power series below the mode
  and, above it, the finite expansion from integration by parts with a proven
  remainder bound (Legendre's continued fraction for small shapes, where that
  expansion cannot reach the working precision), each on the smaller tail and
  summed in fixed point on Python integers, about 1 microsecond a term) for the
  high-precision solver.  Both sums need about sqrt(2 A (prec + 4) ln 2) terms
  near the mode (some 14,000 at A = 5e5 and 70 digits, ~13 ms), so the precise
  law declines A = n k > MAX_SHAPE (``TableTooLarge``, a one-line DesignError).
  (mpmath's own gammainc was not used: for some arguments beyond the mode it
  raises ComplexResult or NoConvergence.)

d/dtheta P(Y <= c) = -(A / theta) x^A e^-x / Gamma(A + 1) with x = k c / theta,
and the score d/dtheta log f(y) = (k / theta^2) (y - A theta / k).
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
from mpmath.libmp import to_fixed
from scipy import special as sp

from ..mpnum import dec
from ._saddle import bd0, stirlerr
from .continuous import ContinuousFamily
from .mptable import TableTooLarge

MAX_SHAPE = 1e6  # largest n k the mpmath law evaluates (series convergence)
# term-bits of one incomplete gamma sum near the mode: terms sqrt(2 A (prec + 4) ln 2) times
# their prec + 40 bits.  A design costs ~1.5 s of CPU at the limit (bench/bench_slow.py); the
# default 50 digits (at most ~100 working digits) stays below it up to MAX_SHAPE, so the limit
# only lowers the largest shape at a raised precision (about 2e5 at 200 digits, 2e3 at 1000)
MAX_WORK = 1e7
DEEP = 4.0  # standard deviations below the mean where GammaFloat integrates the lower tail
_LAG_X, _LAG_W = np.polynomial.laguerre.laggauss(60)


class GammaFloat:
    """Float law of the total: Gamma(A = n k, scale theta / k), vectorised over c, theta."""

    lower = 0.0
    floor_scale = False  # cutoffs compared relative to |c| (a scale family on (0, inf))

    def __init__(self, n, k):
        self.k = float(k)
        self.A = float(n) * float(k)
        self._log_norm = -0.5 * math.log(2.0 * math.pi * self.A) - float(stirlerr(self.A))

    def mean(self, theta):
        return self.A * np.asarray(theta, dtype=float) / self.k

    def sd(self, theta):
        return math.sqrt(self.A) * np.asarray(theta, dtype=float) / self.k

    def theta_sd(self, theta):
        """The change of theta worth one standard deviation of Y."""
        return np.asarray(theta, dtype=float) / math.sqrt(self.A)

    def _x(self, c, theta):
        return self.k * np.asarray(c, dtype=float) / np.asarray(theta, dtype=float)

    def _lower(self, x):
        """P(A, x) = scipy's gammainc, except in the deep lower tail of a large shape.

        There (x more than DEEP standard deviations below A, A > 200) scipy 1.17 sums the
        power series with at most 2000 terms, which is not enough once A passes about
        4e5: measured against the mpmath series, relative errors 2.5e-7 at A = 7e5, 3e-2
        at 1e7, 0.35 at 1e8 (5 sd below).  ``_deep_lower`` integrates the density instead.
        """
        x = np.asarray(x, dtype=float)
        out = np.asarray(sp.gammainc(self.A, x), dtype=float)
        if self.A > 200.0:
            deep = (x > 0) & (self.A - 1.0 - x > DEEP * math.sqrt(self.A))
            if np.any(deep):
                out = np.array(out, copy=True)
                with np.errstate(under="ignore"):
                    out[deep] = np.exp(self._log_deep(x[deep]))
        return out

    def _log_deep(self, x):
        """log P(A, x) for 0 < x < A - 1 by Gauss-Laguerre quadrature of the density.

        With g = log of the Gamma(A, 1) density and s = g'(x) = (A - 1)/x - 1 > 0,
        P = (e^g(x) / s) * integral_0^sx e^-w exp(g(x - w/s) - g(x) + w) dw; the last
        factor is smooth, concave in the exponent, 1 at w = 0 with zero slope, so the
        quadrature converges fast (the log densities come from bd0, without cancellation).
        """
        A = self.A
        s = (A - 1.0) / x - 1.0
        t = x[:, None] - _LAG_X[None, :] / s[:, None]
        ok = t > 0
        tt = np.where(ok, t, 1.0)
        gx = -np.log(x) + self._log_h(x)  # log A and the norm cancel in the difference
        gt = -np.log(tt) + self._log_h(tt.ravel()).reshape(tt.shape)
        with np.errstate(under="ignore"):
            e = np.where(ok, np.exp(gt - gx[:, None] + _LAG_X[None, :]), 0.0)
        return math.log(A) + gx - np.log(s) + np.log(e @ _LAG_W)

    def cdf(self, c, theta):
        return self._lower(np.maximum(self._x(c, theta), 0.0))

    def sf(self, c, theta):
        return sp.gammaincc(self.A, np.maximum(self._x(c, theta), 0.0))

    def logcdf(self, c, theta):
        with np.errstate(divide="ignore"):
            return np.log(self.cdf(c, theta))

    def logsf(self, c, theta):
        with np.errstate(divide="ignore"):
            return np.log(self.sf(c, theta))

    def _log_h(self, x):
        """log of x^A e^-x / Gamma(A + 1) (saddle-point form; -inf at 0 and inf)."""
        x = np.asarray(x, dtype=float)
        ok = (x > 0) & np.isfinite(x)
        out = np.full(x.shape, -np.inf)
        if np.any(ok):
            out[ok] = -bd0(self.A, x[ok]) + self._log_norm
        return out

    def logpdf(self, c, theta):
        x = self._x(c, theta)
        t = np.asarray(theta, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(x > 0, math.log(self.A) - np.log(x) + self._log_h(x)
                            + np.log(self.k / t), -np.inf)

    def ppf(self, p, theta):
        return np.asarray(theta, dtype=float) / self.k * sp.gammaincinv(self.A, p)

    def isf(self, q, theta):
        return np.asarray(theta, dtype=float) / self.k * sp.gammainccinv(self.A, q)

    def dcdf(self, c, theta):
        """d/dtheta P(Y <= c) = -(A / theta) x^A e^-x / Gamma(A + 1)."""
        with np.errstate(under="ignore"):
            return -self.A / np.asarray(theta, dtype=float) * np.exp(self._log_h(self._x(c, theta)))

    def score(self, y, theta):
        t = np.asarray(theta, dtype=float)
        return self.k / (t * t) * (np.asarray(y, dtype=float) - self.A * t / self.k)


MAX_TERMS = 10**6
BLOCK = 16  # terms summed between two checks of the remainder bound (terms only fall)


def _fixed(v, bits):
    """floor(v 2^bits) as an int (mpmath's fixed-point conversion)."""
    return to_fixed(mp.mpf(v)._mpf_, bits)


def _lower_sum(a, x):
    """sum_j x^j / ((a + 1) ... (a + j)) for 0 <= x < a + 1, summed in fixed point.

    Python integers carry 2^-bits units with bits = working precision + 40 (the truncation
    of each term, at most one unit, stays below the working precision for up to 2^30
    terms).  The terms fall by r_j = x / (a + j + 1) < 1, so the rest after term j is at
    most T_j r / (1 - r) = T_j x / (a + j + 1 - x); the sum stops when that is below
    2^-(prec + 4) of the sum (checked every BLOCK terms)."""
    bits, stop = mp.mp.prec + 40, mp.mp.prec + 4
    one = 1 << bits
    X, Aj = _fixed(x, bits), _fixed(a, bits)
    T = S = one
    for _ in range(0, MAX_TERMS, BLOCK):
        for _ in range(BLOCK):
            Aj += one
            T = T * X // Aj
            S += T
        if (T * X) << stop <= S * (Aj + one - X):
            return mp.mpf((S, -bits))
    raise TableTooLarge("the incomplete gamma series did not converge")


def _upper_sum(a, x):
    """sum_N t_N, t_N = (a - 1) ... (a - N) / x^N, for x >= a + 1 in fixed point, or None.

    Integration by parts gives Gamma(a, x) = x^(a-1) e^-x (t_0 + ... + t_N) + R_N with
    R_N = x^(a-1) e^-x t_(N+1) x^(1-b) e^x Gamma(b, x), b = a - N - 1; for b > 1,
    x^(1-b) e^x Gamma(b, x) = x int_0^inf (1 + s)^(b-1) e^(-x s) ds <= x / (x - b + 1),
    so R_N <= x^(a-1) e^-x t_N (a - N - 1) / (x - a + N + 2), a bound checked every BLOCK
    terms.  None when that bound has not fallen below 2^-(prec + 4) of the sum while
    b > 1 (a small shape near its mode: the caller uses the continued fraction)."""
    bits, stop = mp.mp.prec + 40, mp.mp.prec + 4
    one = 1 << bits
    X, B = _fixed(x, bits), _fixed(a, bits)
    T = S = one
    while True:
        for _ in range(BLOCK):
            B -= one  # a - N for the term t_N about to be made
            if B <= one:
                return None
            T = T * B // X
            S += T
        if B - one <= one:
            return None
        if (T * (B - one)) << stop <= S * (X - B + 2 * one):
            return mp.mpf((S, -bits))


def _lower_series(a, x):
    """P(a, x) = x^a e^-x / Gamma(a + 1) * sum_j x^j / ((a + 1) ... (a + j)), x < a + 1."""
    return _lower_sum(a, x) * mp.exp(a * mp.log(x) - x - mp.loggamma(a + 1))


def _upper_tail(a, x):
    """Q(a, x) for x >= a + 1: the fixed-point expansion of ``_upper_sum``, else Legendre's
    continued fraction."""
    s = _upper_sum(a, x)
    if s is None:
        return _upper_fraction(a, x)
    return s * mp.exp((a - 1) * mp.log(x) - x - mp.loggamma(a))


def _upper_fraction(a, x):
    """Q(a, x) by Legendre's continued fraction (modified Lentz), x >= a + 1."""
    tiny = mp.mpf(2) ** (-4 * mp.mp.prec)
    b = x + 1 - a
    c, d = 1 / tiny, 1 / b
    h = d
    for i in range(1, MAX_TERMS):
        an = -i * (i - a)
        b += 2
        d = an * d + b
        d = tiny if d == 0 else d
        c = b + an / c
        c = tiny if c == 0 else c
        d = 1 / d
        delta = d * c
        h *= delta
        if abs(delta - 1) < mp.eps:
            return h * mp.exp(a * mp.log(x) - x - mp.loggamma(a))
    raise TableTooLarge("the incomplete gamma continued fraction did not converge")


def sum_work(shape: float, prec: int) -> float:
    """Term-bits of one fixed-point incomplete gamma sum near the mode at ``prec`` bits."""
    return math.sqrt(2.0 * shape * (prec + 4) * math.log(2.0)) * (prec + 40)


def largest_shape(prec: int) -> float:
    """The largest shape whose sums stay within MAX_WORK at ``prec`` bits (and MAX_SHAPE)."""
    return min(MAX_SHAPE, (MAX_WORK / (prec + 40)) ** 2 / (2.0 * (prec + 4) * math.log(2.0)))


class GammaMp:
    """mpmath law of the total (call inside the caller's mp.workdps)."""

    lower = mp.mpf(0)

    def __init__(self, n, k):
        self.k = dec(k)
        self.A = dec(n) * self.k
        if self.A > MAX_SHAPE:
            raise TableTooLarge(f"shape n k = {mp.nstr(self.A, 6)} is above {MAX_SHAPE:g}, "
                                "the largest the high-precision incomplete gamma function takes")
        need = sum_work(float(self.A), mp.mp.prec)
        if need > MAX_WORK:
            raise TableTooLarge(
                f"shape n k = {mp.nstr(self.A, 6)} at {mp.mp.dps} working digits needs about "
                f"{need:.2g} term-bits per incomplete gamma value, limit {MAX_WORK:.0e} (shape "
                f"up to about {largest_shape(mp.mp.prec):.2g} at these digits; a lower "
                "precision allows more)")

    def mean(self, theta):
        return self.A * theta / self.k

    def sd(self, theta):
        return mp.sqrt(self.A) * theta / self.k

    @staticmethod
    def _tails(shape, x):
        """(P(X < x), P(X > x)) for X ~ Gamma(shape): the smaller tail by its own expansion
        (series below shape + 1, continued fraction above), the other as the complement,
        which then loses no digits."""
        if x <= 0:
            return mp.mpf(0), mp.mpf(1)
        if x == mp.inf:
            return mp.mpf(1), mp.mpf(0)
        if x < shape + 1:
            low = _lower_series(shape, x)
            return low, 1 - low
        up = _upper_tail(shape, x)
        return 1 - up, up

    def cdf(self, c, theta):
        return self._tails(self.A, self.k * c / theta)[0]

    def sf(self, c, theta):
        return self._tails(self.A, self.k * c / theta)[1]

    def pdf(self, c, theta):
        if c <= 0:
            return mp.mpf(0)
        x = self.k * c / theta
        return mp.exp((self.A - 1) * mp.log(x) - x - mp.loggamma(self.A)) * self.k / theta

    def mean_below(self, c, theta):
        """E[Y; Y < c] = (A theta / k) P(Gamma(A + 1) < x)."""
        return self.mean(theta) * self._tails(self.A + 1, self.k * c / theta)[0]

    def mean_above(self, c, theta):
        """E[Y; Y > c] = (A theta / k) P(Gamma(A + 1) > x), the tail computed directly."""
        return self.mean(theta) * self._tails(self.A + 1, self.k * c / theta)[1]


class Gamma(ContinuousFamily):
    """Total of n gamma units with known shape k (the dispersion) and mean theta."""

    def theta_ok(self, theta):
        return theta > 0 and math.isfinite(theta)

    def theta_allowed(self):
        return "the gamma mean per unit must be a finite number > 0"

    def theta_ok_array(self, theta):
        t = np.asarray(theta, dtype=float)
        return (t > 0) & np.isfinite(t)

    def theta_spread(self, theta, n, k):
        return theta / math.sqrt(float(n) * float(k))

    def continuous_float(self, n, k) -> GammaFloat:
        return GammaFloat(n, k)

    def continuous_mp(self, n, k) -> GammaMp:
        return GammaMp(n, k)

    def scipy_law(self, theta, n, k):
        """scipy.stats law of Y (frozen; theta may be an array)."""
        from scipy import stats

        return stats.gamma(a=float(n) * float(k), scale=np.asarray(theta, dtype=float) / float(k))


GAMMA = Gamma(
    name="gamma", theta_word="mean per unit", theta_unit="units of the measurement",
    axis_word="mean \u03b8", symbol="mean", theta_what="the mean of one unit (its mean "
    "lifetime when k = 1)", n_word="number of units n", n_what="the number of units",
    n_unit="units", y_word="the total over the n units (total time on test when k = 1)",
    y_inspected="the total over the n units tested", integer_n=True, uses_dispersion=True,
    dispersion_word="shape k of one unit (k = 1: exponential)",
)
