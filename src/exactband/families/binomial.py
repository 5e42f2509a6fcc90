"""Binomial proportions: p in (0, 1), n >= 1 trials, Y ~ Binomial(n, p)."""

from __future__ import annotations

import mpmath as mp
import numpy as np

from ..mpnum import dec, dec_complement, frac
from . import mptable as mt
from .base import Family
from .floatlaw import BinomialLaw

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

    def up_int(self, y):
        """pmf(y+1)/pmf(y) = (n - y) p / ((y + 1) q) exactly."""
        return (self.n - y) * self._a, (y + 1) * self._c

    def down_int(self, y):
        """pmf(y-1)/pmf(y) = y q / ((n - y + 1) p) exactly."""
        return y * self._c, (self.n - y + 1) * self._a

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

    def float_params(self, theta, n, k):
        return BinomialLaw.make(theta, n, k)

    def mp_law(self, theta, n, k):
        return BinomialMp(theta, n, k)

    def natural_delta(self, lo, hi, n, k):
        return hi - lo


BINOMIAL = Binomial(
    name="binomial", theta_word="p", theta_unit="per trial", n_word="number of trials n",
    integer_n=True, uses_dispersion=False,
)
