"""Binomial proportions: p in (0, 1), n >= 1 trials, Y ~ Binomial(n, p)."""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
from scipy import special as sp

from ..mpnum import dec, dec_complement, frac
from . import _saddle
from . import mptable as mt
from .base import Family
from .floatlaw import (
    FloatLaw,
    as_float,
    binomial_head,
    exact_mean_width,
    sum_is_better,
    x_minus_log1p,
)

FEW_SUM = 39  # scipy's betaincc(a, b, x) is off for a <= 39 at a large b: sum these
FEW_MIN_N = 1e4  # below this n that error (2.5e-20 n) is under the unit roundoff
BETAINCC_LOSS = 2.5e-20  # its relative error per unit of n there (measured against mpmath)


class BinomialLaw(FloatLaw):
    """Y ~ Binomial(n, p), P = (n, p, q) with q = 1 - p, t = p."""

    @staticmethod
    def make(theta, n, k):
        p = as_float(theta)
        n = as_float(n) + 0.0 * p
        return (n, p + 0.0 * n, 1.0 - p + 0.0 * n)

    @staticmethod
    def t(P):
        return P[1]

    @staticmethod
    def with_t(P, t):
        return (P[0], t, 1.0 - t)

    @staticmethod
    def supmax(P):
        return P[0]

    @staticmethod
    def mode(P):
        return np.minimum(np.floor((P[0] + 1.0) * P[1]), P[0])

    @staticmethod
    def moments(P):
        n, p, q = P
        var = n * p * q
        return n * p, var, (q - p) / np.sqrt(var)

    @staticmethod
    def _tails(c, P):
        """(cdf, sf) at integer c, 0 <= c < n, using the small one of p, q as x.

        The tail of the few smallest counts of the small side (P(Y <= c) for p <= 1/2,
        P(Y > c) above) at a large n is a sum of masses (``floatlaw.binomial_head``): scipy's
        complemented incomplete beta betaincc(a, b, x) with a <= 39 and a huge b
        loses about 2.5e-20 b relative (5e-11 at n = 2.1e9; docs/tolerances.md
        section 1), the sum a few units of roundoff per term.
        """
        n, p, q = P
        a, b = c + 1.0, n - c
        lowp = p <= 0.5
        sf = np.where(lowp, sp.betainc(a, b, p), sp.betaincc(b, a, q))
        cdf = np.where(lowp, sp.betaincc(a, b, p), sp.betainc(b, a, q))
        j = np.where(lowp, c, n - c - 1.0)  # the count on the small side
        few = (j < FEW_SUM) & (n >= FEW_MIN_N)
        if np.any(few):
            n, p, q, j, lowp = np.broadcast_arrays(n, p, q, j, lowp)
            x, y = np.where(lowp, p, q)[few], np.where(lowp, q, p)[few]
            lm = _saddle.log_binom_raw(j[few], n[few], x, y)
            small = binomial_head(j[few], n[few], x, y, lm)
            use = sum_is_better(BETAINCC_LOSS * n[few], j[few], lm)
            cdf, sf = cdf.copy(), sf.copy()
            cdf[few] = np.where(lowp[few] & use, small, cdf[few])
            sf[few] = np.where(~lowp[few] & use, small, sf[few])
        return cdf, sf

    @classmethod
    def cdf(cls, c, P):
        c = as_float(c)
        n = P[0]
        inside = (c >= 0) & (c < n)
        cdf, _ = cls._tails(np.where(inside, c, 0.0), P)
        return np.where(c < 0, 0.0, np.where(c >= n, 1.0, cdf))

    @classmethod
    def sf(cls, c, P):
        c = as_float(c)
        n = P[0]
        inside = (c >= 0) & (c < n)
        _, sf = cls._tails(np.where(inside, c, 0.0), P)
        return np.where(c < 0, 1.0, np.where(c >= n, 0.0, sf))

    @staticmethod
    def logpmf(y, P):
        y = as_float(y)
        n, p, q = P
        ok = (y >= 0) & (y <= n)
        return np.where(ok, _saddle.log_binom_raw(np.where(ok, y, 0.0), n, p, q), -np.inf)

    @staticmethod
    def weight(c, P):
        n, p, q = P
        return (n - as_float(c)) / q

    @staticmethod
    def dlogw(c, P):
        n, p, q = P
        c = as_float(c)
        return c / p - (n - 1.0 - c) / q

    @staticmethod
    def dlogpmf(y, P):
        n, p, q = P
        return (as_float(y) - n * p) / (p * q)

    @staticmethod
    def logratio(y, P, dt):
        n, p, q = P
        y = as_float(y)
        return y * np.log1p(dt / p) + (n - y) * np.log1p(-dt / q)

_ZERO = mp.mpf(0)
_ONE = mp.mpf(1)


class BinomialMp:
    """mpmath law of Binomial(n, p) for MpTable."""

    def __init__(self, theta, n, k):
        self.n = int(n)
        self.p = dec(theta)
        self.q = dec_complement(theta)  # exact: keeps 1 - p accurate near p = 1
        self.supmax = self.n
        self.mode = int(mp.floor((self.n + 1) * self.p))
        if self.mode > self.n:
            self.mode = self.n
        self.mean = self.n * self.p
        self.variance = self.n * self.p * self.q
        self._odds = self.p / self.q
        self._o = mt.raw(self._odds)
        self._io = mt.raw(self.q / self.p)
        f = frac(theta)  # p = a/b exactly, q = (b - a)/b
        self._a, self._c = f.numerator, f.denominator - f.numerator

    def tails(self):
        """Tails at single points (incomplete beta, families.mptails): for laws too wide to tabulate."""
        from fractions import Fraction

        from .mptails import BinomialTails

        return BinomialTails(self.n, Fraction(self._a, self._a + self._c))

    def up_int(self, y):
        """pmf(y+1)/pmf(y) = (n - y) p / ((y + 1) q) exactly."""
        return (self.n - y) * self._a, (y + 1) * self._c

    def down_int(self, y):
        """pmf(y-1)/pmf(y) = y q / ((n - y + 1) p) exactly."""
        return y * self._c, (self.n - y + 1) * self._a

    def affine(self, up: bool) -> tuple:
        """(u0, u1, v0, v1): up_int(y) (or down_int) = (u0 + u1 y, v0 + v1 y)."""
        a, c, n = self._a, self._c, self.n
        return (n * a, -a, c, c) if up else (0, c, (n + 1) * a, -a)

    def log_pmf(self, y):
        n = self.n
        return (mp.loggamma(n + 1) - mp.loggamma(y + 1) - mp.loggamma(n - y + 1)
                + y * mp.log(self.p) + (n - y) * mp.log(self.q))

    def up(self, p, y, prec):
        return mt.div_int(mt.mul_int(mt.mul(p, self._o, prec), self.n - y, prec), y + 1, prec)

    def down(self, p, y, prec):
        return mt.div_int(mt.mul_int(mt.mul(p, self._io, prec), y, prec), self.n - y + 1, prec)

    def ratio(self, y):
        return (self.n - y) * self._odds / (y + 1)

    def down_ratio(self, y):
        return y / ((self.n - y + 1) * self._odds)

    def right_bound(self, y):
        return self.ratio(y) if y < self.n else _ZERO

    def left_bound(self, y):
        return self.down_ratio(y) if y > 0 else _ZERO


class Binomial(Family):
    float_law = BinomialLaw
    reflects = True  # Y -> n - Y, p -> 1 - p maps the family onto itself

    def theta_ok(self, theta):
        return 0.0 < theta < 1.0

    def theta_allowed(self):
        return "the binomial proportion p must lie strictly between 0 and 1"

    def theta_ok_array(self, theta):
        t = np.asarray(theta, dtype=float)
        return (t > 0) & (t < 1)

    def mp_law(self, theta, n, k):
        return BinomialMp(theta, n, k)

    def scipy_law(self, theta, n, k):
        from scipy import stats

        return stats.binom(int(n), theta)

    def theta_scale(self):
        """logit and back: the proportion's (0, 1) onto the real line."""
        return (lambda p: math.log(p) - math.log1p(-p),
                lambda u: 1.0 / (1.0 + math.exp(-u)) if u > -700 else 0.0)

    def theta_spread(self, theta, n, k):
        return math.sqrt(theta * (1 - theta) / n)

    def support_max(self, n):
        return n

    def natural_delta(self, lo, hi, n, k):
        return hi - lo

    def log_ratio_line(self, lo, hi, n, k):
        """eta = log(p/q), A = -n log q: with dp = hi - lo, a = dp / q_hi, b = a / lo,
        s = log1p(b) and y* - n lo = n (lo (b - log1p b) - (a - log1p a)) / s.

        n lo and dp from the decimals (``exact_mean_width``); the difference loses
        about log2(1 / (1 - lo)) bits, at most one with the fast solver's mirror
        image (lo <= 1/2).
        """
        from ..mpnum import frac

        whole, rest, ndp = exact_mean_width(n, lo, hi)
        nf = np.asarray(n, dtype=float)
        p = np.asarray(lo, dtype=float)
        qh = np.array([float(1 - frac(x)) for x in np.ravel(hi)])
        dp = ndp / nf
        a = dp / qh
        b = a / p
        s = np.log1p(b)
        return s, whole, rest + nf * (p * x_minus_log1p(b) - x_minus_log1p(a)) / s


BINOMIAL = Binomial(
    name="binomial", theta_word="p", theta_unit="probability per trial", axis_word="proportion p",
    symbol="p", theta_what="the proportion of units with the attribute",
    n_word="number of trials n", n_what="the number of units inspected", n_unit="trials",
    y_word="the number of units with the attribute among the n inspected",
    y_inspected="the number of units with the attribute among the n inspected",
    integer_n=True, uses_dispersion=False, theta_min=0.0, theta_max=1.0,
)
