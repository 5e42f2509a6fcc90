"""Overdispersed counts: mean theta > 0 per unit, known dispersion k > 0.

Each unit's count has variance theta + theta^2/k; the total over n units is
Y ~ NB(size r = n*k, mean m = n*theta), i.e. with q = r/(r+m)
pmf(y) = Gamma(y+r) / (Gamma(r) y!) q^r (1-q)^y.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np

from ..mpnum import dec, frac
from . import mptable as mt
from .base import Family
from .floatlaw import NegBinomialLaw

_ZERO = mp.mpf(0)


class NegBinomialMp:
    """mpmath law of NB(size r, mean m) for MpTable."""

    supmax = None

    def __init__(self, theta, n, k):
        self.r = dec(n) * dec(k)
        self.m = dec(n) * dec(theta)
        self.q = self.r / (self.r + self.m)
        self.qc = self.m / (self.r + self.m)  # 1 - q
        self.mean = self.m
        self.variance = self.m + self.m * self.m / self.r
        self._qc = mt.raw(self.qc)
        r, m = frac(n) * frac(k), frac(n) * frac(theta)  # exact rationals
        self._ra, self._rb = r.numerator, r.denominator
        self._ma, self._mb = m.numerator, m.denominator
        self._rm = self._ra * self._mb + self._ma * self._rb  # (r + m) rb mb
        if self.r > 1:
            self.mode = int(mp.floor((self.r - 1) * self.qc / self.q))
        else:
            self.mode = 0

    @property
    def float_extra_eps(self) -> float:
        """Relative error scipy's incomplete beta adds for a size r (~1e-20 r, measured).

        Used by crosscheck.tolerances for the float side; below r = 1e5 it is nil,
        above it (mean < ~5000) the float law sums masses instead.
        """
        return 3e-20 * float(self.r)

    def tails(self):
        """Tails at single points (incomplete beta, families.mptails): for laws too wide to tabulate."""
        from fractions import Fraction

        from .mptails import NegBinomialTails

        return NegBinomialTails(Fraction(self._ra, self._rb), Fraction(self._ma, self._mb))

    def up_int(self, y):
        """pmf(y+1)/pmf(y) = (y + r) m / ((r + m)(y + 1)) exactly."""
        return (y * self._rb + self._ra) * self._ma, self._rm * (y + 1)

    def down_int(self, y):
        """pmf(y-1)/pmf(y) = y (r + m) / ((y - 1 + r) m) exactly."""
        return y * self._rm, ((y - 1) * self._rb + self._ra) * self._ma

    def log_pmf(self, y):
        r = self.r
        # loggamma(y + r) - loggamma(r) cancels about log10(r log r) digits: add them
        extra = int(mp.log10(r * abs(mp.log(r)) + 10)) + 5
        with mp.workdps(mp.mp.dps + extra):
            out = (mp.loggamma(y + r) - mp.loggamma(r) - mp.loggamma(y + 1)
                   + r * mp.log1p(-self.qc) + y * mp.log(self.qc))
        return +out

    def up(self, p, y, prec):
        # pmf(y+1) = pmf(y) * (y + r) (1 - q) / (y + 1)
        t = mt.mul(mt.mul(p, self._qc, prec), mt.raw(self.r + y), prec)
        return mt.div_int(t, y + 1, prec)

    def down(self, p, y, prec):
        # pmf(y-1) = pmf(y) * y / ((y - 1 + r) (1 - q))
        t = mt.mul_int(p, y, prec)
        return mt.div(t, mt.mul(mt.raw(self.r + (y - 1)), self._qc, prec), prec)

    def ratio(self, y):
        return (y + self.r) * self.qc / (y + 1)

    def down_ratio(self, y):
        return y / ((y - 1 + self.r) * self.qc)

    def right_bound(self, y):
        # ratios tend to 1-q: from above when r > 1, from below when r < 1
        return max(self.ratio(y), self.qc)

    def left_bound(self, y):
        # only reached when r > 1 (otherwise the mode is 0): down-ratios decrease
        return self.down_ratio(y) if y > 0 else _ZERO


class NegBinomial(Family):
    float_law = NegBinomialLaw

    def theta_ok(self, theta):
        return theta > 0 and math.isfinite(theta)

    def theta_allowed(self):
        return "the negative-binomial mean per unit must be a finite number > 0"

    def theta_ok_array(self, theta):
        t = np.asarray(theta, dtype=float)
        return (t > 0) & np.isfinite(t)

    def float_params(self, theta, n, k):
        return NegBinomialLaw.make(theta, n, k)

    def mp_law(self, theta, n, k):
        return NegBinomialMp(theta, n, k)

    def natural_delta(self, lo, hi, n, k):
        return n * (hi - lo)

    @staticmethod
    def poisson_limit(n, k, theta_max) -> bool:
        """True when NB(n k, n theta) equals Poisson(n theta) to double precision.

        log(pmf_NB / pmf_Poisson)(y) = m - r log1p(m/r) - y log1p(m/r) + sum_{i<y} log1p(i/r)
        (m = n theta, r = n k) is at most (y + m)**2 / r in size; over the support
        that matters (y <= 2 (m + 10 sqrt(m) + 10)) this is below 2**-53.
        """
        m = n * theta_max
        y = 2.0 * (m + 10.0 * math.sqrt(m) + 10.0)
        return (y + m) ** 2 / (n * k) < 2.0 ** -53

    def law_note(self, problem):
        top = max(t for t in problem.points if t is not None)
        if problem.dispersion is not None and self.poisson_limit(problem.n, problem.dispersion, top):
            return ("The dispersion is so large that the law of Y is Poisson(n x mean) to double "
                    "precision (the Poisson limit); the design equals the Poisson design.")
        return None


NEGBINOMIAL = NegBinomial(
    name="negative-binomial", theta_word="mean per unit", theta_unit="per unit", n_word="number of units n",
    integer_n=True, uses_dispersion=True,
)
