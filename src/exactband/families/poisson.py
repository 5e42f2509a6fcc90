"""Poisson counts: rate theta > 0 per unit, exposure n > 0, Y ~ Poisson(n*theta)."""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np

from ..mpnum import dec, frac
from . import mptable as mt
from .base import Family
from .floatlaw import PoissonLaw


class PoissonMp:
    """mpmath law of Poisson(mu) for MpTable."""

    supmax = None

    def __init__(self, theta, n, k):
        self.mu = dec(n) * dec(theta)
        self.mode = int(mp.floor(self.mu))
        self.mean = self.mu
        self.variance = self.mu
        self._mu = mt.raw(self.mu)
        q = frac(n) * frac(theta)  # exact rational mean a/b
        self._a, self._b = q.numerator, q.denominator

    def up_int(self, y):
        """pmf(y+1)/pmf(y) = mu/(y+1) as an exact (numerator, denominator)."""
        return self._a, self._b * (y + 1)

    def down_int(self, y):
        """pmf(y-1)/pmf(y) = y/mu exactly."""
        return self._b * y, self._a

    def log_pmf(self, y):
        return y * mp.log(self.mu) - self.mu - mp.loggamma(y + 1)

    def up(self, p, y, prec):
        return mt.div_int(mt.mul(p, self._mu, prec), y + 1, prec)

    def down(self, p, y, prec):
        return mt.div(mt.mul_int(p, y, prec), self._mu, prec)

    def ratio(self, y):
        return self.mu / (y + 1)

    def down_ratio(self, y):
        return y / self.mu

    def right_bound(self, y):  # ratios decrease to the right
        return self.mu / (y + 1)

    def left_bound(self, y):  # down-ratios decrease to the left
        return y / self.mu


class Poisson(Family):
    float_law = PoissonLaw

    def theta_ok(self, theta):
        return theta > 0 and math.isfinite(theta)

    def theta_allowed(self):
        return "the Poisson rate per unit must be a finite number > 0"

    def theta_ok_array(self, theta):
        t = np.asarray(theta, dtype=float)
        return (t > 0) & np.isfinite(t)

    def float_params(self, theta, n, k):
        return PoissonLaw.make(theta, n, k)

    def mp_law(self, theta, n, k):
        return PoissonMp(theta, n, k)

    def natural_delta(self, lo, hi, n, k):
        return n * (hi - lo)


POISSON = Poisson(
    name="poisson", theta_word="rate per unit", theta_unit="per unit", n_word="exposure n",
    integer_n=False, uses_dispersion=False,
)
