"""Poisson counts: rate theta > 0 per unit, exposure n > 0, Y ~ Poisson(n*theta)."""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
from scipy import special as sp

from ..mpnum import dec, frac
from . import _saddle
from . import mptable as mt
from .base import Family
from .floatlaw import FloatLaw, as_float, exact_mean_width, x_minus_log1p


def _lower_gamma_cf(a, x, nmax: int = 300):
    """T with gamma(a, x) = x^a e^-x / T, for x < a (DLMF 8.9.2, modified Lentz).

    T = a - a x/(a+1 + x/(a+2 - (a+1) x/(a+3 + 2x/(a+4 - ...)))); four or more
    standard deviations into the right tail it converges in under 60 terms, and
    loses about log10(a / (a - x)) digits to the first subtraction.
    """
    tiny = 1e-300
    f = a.astype(float).copy()
    C = f.copy()
    D = np.zeros_like(f)
    for n in range(1, nmax):
        k = (n - 1) // 2 if n % 2 else n // 2
        an = -(a + k) * x if n % 2 else k * x
        bn = a + n
        D = bn + an * D
        D = 1.0 / np.where(D == 0.0, tiny, D)
        C = bn + an / C
        C = np.where(C == 0.0, tiny, C)
        delta = C * D
        f = f * delta
        if np.all(np.abs(delta - 1.0) < 1e-16):
            break
    return f


class PoissonLaw(FloatLaw):
    """Y ~ Poisson(mu), P = (mu,), t = mu."""

    @staticmethod
    def make(theta, n, k):
        return (as_float(n) * as_float(theta),)

    @staticmethod
    def t(P):
        return P[0]

    @staticmethod
    def with_t(P, t):
        return (t,)

    @staticmethod
    def supmax(P):
        return np.full(np.shape(P[0]), np.inf)

    @staticmethod
    def mode(P):
        return np.floor(P[0])

    @staticmethod
    def moments(P):
        mu = P[0]
        return mu, mu, 1.0 / np.sqrt(mu)

    @classmethod
    def cdf(cls, c, P):
        c = as_float(c)
        mu = P[0] + 0.0 * c
        cc = np.maximum(c, 0.0) + 0.0 * mu
        out = sp.gammaincc(cc + 1.0, mu)
        far = (mu > 1e5) & (cc + 1.0 - mu >= 4.0 * np.sqrt(mu))  # see sf
        if np.any(far):
            out[far] = 1.0 - cls.sf(cc[far], (mu[far],))
        return np.where(c < 0, 0.0, out)

    @classmethod
    def sf(cls, c, P):
        c = as_float(c)
        mu = P[0] + 0.0 * c
        cc = np.maximum(c, 0.0) + 0.0 * mu
        out = sp.gammainc(cc + 1.0, mu)
        # scipy's P(a, x) loses up to 6 digits in the far right tail of a large mean
        # (mu > 1e5, 4 or more sd above it); there the continued fraction is used
        far = (mu > 1e5) & (cc + 1.0 - mu >= 4.0 * np.sqrt(mu))
        if np.any(far):
            a, x = cc[far] + 1.0, mu[far]
            out[far] = np.exp(cls.logpmf(a, (x,))) * a / _lower_gamma_cf(a, x)
        return np.where(c < 0, 1.0, out)

    @staticmethod
    def logpmf(y, P):
        y = as_float(y)
        ok = y >= 0
        return np.where(ok, _saddle.log_poisson_raw(np.where(ok, y, 0.0), P[0]), -np.inf)

    @staticmethod
    def weight(c, P):
        return np.ones_like(as_float(c) + P[0])

    @staticmethod
    def dlogw(c, P):
        return as_float(c) / P[0] - 1.0

    @staticmethod
    def dlogpmf(y, P):
        return as_float(y) / P[0] - 1.0

    @staticmethod
    def logratio(y, P, dt):
        mu = P[0]
        return as_float(y) * np.log1p(dt / mu) - dt


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

    def tails(self):
        """Tails at single points (incomplete gamma, families.mptails): for laws too wide to tabulate."""
        from fractions import Fraction

        from .mptails import PoissonTails

        return PoissonTails(Fraction(self._a, self._b))

    def up_int(self, y):
        """pmf(y+1)/pmf(y) = mu/(y+1) as an exact (numerator, denominator)."""
        return self._a, self._b * (y + 1)

    def down_int(self, y):
        """pmf(y-1)/pmf(y) = y/mu exactly."""
        return self._b * y, self._a

    def affine(self, up: bool) -> tuple:
        """(u0, u1, v0, v1): up_int(y) (or down_int) = (u0 + u1 y, v0 + v1 y)."""
        return (self._a, 0, self._b, self._b) if up else (0, self._b, self._a, 0)

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

    def mp_law(self, theta, n, k):
        return PoissonMp(theta, n, k)

    def scipy_law(self, theta, n, k):
        from scipy import stats

        return stats.poisson(n * theta)

    def theta_spread(self, theta, n, k):
        return math.sqrt(theta / n)

    def natural_delta(self, lo, hi, n, k):
        return n * (hi - lo)

    def log_ratio_line(self, lo, hi, n, k):
        """eta = log mu, A = mu: s = log1p(a), y* - mu = mu (a - log1p a) / s, a = dmu / mu.

        mu = n lo and dmu = n (hi - lo) from the decimals (``exact_mean_width``).
        """
        whole, rest, dmu = exact_mean_width(n, lo, hi)
        mu = whole + rest
        a = dmu / mu
        s = np.log1p(a)
        return s, whole, rest + mu * x_minus_log1p(a) / s


POISSON = Poisson(
    name="poisson", theta_word="rate per unit", theta_unit="counts per unit of exposure",
    axis_word="rate \u03b8", symbol="rate", theta_what="the expected count per unit of exposure",
    n_word="exposure n", n_what="the exposure (units inspected)", n_unit="exposure units",
    y_word="the total count over the sample",
    y_inspected="the total count over the inspected exposure n",
    integer_n=False, uses_dispersion=False,
)
