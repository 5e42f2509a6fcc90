"""Normal means: n observations with known sigma, theta the mean, Y = the sample mean.

Y ~ N(theta, s^2) with s = sigma / sqrt(n); sigma is passed as ``dispersion``.
theta may be any real number.  Two independent laws:

* ``NormalFloat`` (numpy / scipy.special: ndtr, log_ndtr, ndtri, erf) for the
  fast continuous solver;
* ``NormalMp`` (mpmath: erfc, exp, sqrt, pi at the caller's working
  precision) for the high-precision solver.

Both give cdf, sf, density and the derivative of the cdf in theta;
d/dtheta P(Y <= c) = -f(c), and the score d/dtheta log f(y) = (y - theta) / s^2.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
from scipy import special as sp

from ..errors import invalid
from ..mpnum import dec
from .base import Family, as_real

_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)


class NormalFloat:
    """Float law of the sample mean: N(theta, s^2), vectorised over c and theta."""

    lower = -math.inf  # support of Y
    floor_scale = True  # cutoffs are compared relative to |c| + sd (a location family)

    def __init__(self, n, k):
        self.s = float(k) / math.sqrt(float(n))

    def mean(self, theta):
        return np.asarray(theta, dtype=float)

    def sd(self, theta):
        return self.s + 0.0 * np.asarray(theta, dtype=float)

    def theta_scale(self, theta):
        """The change of theta worth one standard deviation of Y."""
        return self.sd(theta)

    def _z(self, c, theta):
        return (np.asarray(c, dtype=float) - np.asarray(theta, dtype=float)) / self.s

    def cdf(self, c, theta):
        return sp.ndtr(self._z(c, theta))

    def sf(self, c, theta):
        return sp.ndtr(-self._z(c, theta))

    def logcdf(self, c, theta):
        return sp.log_ndtr(self._z(c, theta))

    def logsf(self, c, theta):
        return sp.log_ndtr(-self._z(c, theta))

    def logpdf(self, c, theta):
        z = self._z(c, theta)
        return -0.5 * z * z - _LOG_SQRT_2PI - math.log(self.s)

    def ppf(self, p, theta):
        """Lower-tail quantile: P(Y <= c) = p (accurate for tiny p)."""
        return np.asarray(theta, dtype=float) + self.s * sp.ndtri(p)

    def isf(self, q, theta):
        """Upper-tail quantile: P(Y > c) = q (accurate for tiny q)."""
        return np.asarray(theta, dtype=float) - self.s * sp.ndtri(q)

    def dcdf(self, c, theta):
        """d/dtheta P(Y <= c) = -f(c)."""
        with np.errstate(under="ignore"):
            return -np.exp(self.logpdf(c, theta))

    def score(self, y, theta):
        """d/dtheta log f(y) = (y - theta) / s^2."""
        return (np.asarray(y, dtype=float) - np.asarray(theta, dtype=float)) / (self.s * self.s)


class NormalMp:
    """mpmath law of the sample mean (call inside the caller's mp.workdps)."""

    lower = -mp.inf

    def __init__(self, n, k):
        self.s = dec(k) / mp.sqrt(dec(n))
        self._r2 = mp.sqrt(2)

    def mean(self, theta):
        return mp.mpf(theta)

    def sd(self, theta):
        return self.s

    def cdf(self, c, theta):
        return mp.erfc(-(c - theta) / (self.s * self._r2)) / 2

    def sf(self, c, theta):
        return mp.erfc((c - theta) / (self.s * self._r2)) / 2

    def pdf(self, c, theta):
        z = (c - theta) / self.s
        return mp.exp(-z * z / 2) / (self.s * mp.sqrt(2 * mp.pi))

    def mean_below(self, c, theta):
        """E[Y; Y < c] = theta P(Y < c) - s^2 f(c)."""
        return theta * self.cdf(c, theta) - self.s ** 2 * self.pdf(c, theta)

    def mean_above(self, c, theta):
        """E[Y; Y > c] = theta P(Y > c) + s^2 f(c)."""
        return theta * self.sf(c, theta) + self.s ** 2 * self.pdf(c, theta)


class Normal(Family):
    """Sample mean of n observations with known sigma (the dispersion)."""

    discrete = False
    float_law = None  # the discrete float law interface does not apply

    def theta_ok(self, theta):
        return math.isfinite(theta)

    def theta_allowed(self):
        return "the normal mean must be a finite number"

    def theta_ok_array(self, theta):
        return np.isfinite(np.asarray(theta, dtype=float))

    def check_dispersion(self, k):
        allowed = ("the normal family needs the known standard deviation sigma of one "
                   "observation as dispersion, a finite number > 0")
        if k is None:
            raise invalid("dispersion", k, allowed)
        x = as_real("dispersion", k)
        if not x > 0:
            raise invalid("dispersion", k, allowed)
        return x

    def natural_delta(self, lo, hi, n, k):
        return (hi - lo) * math.sqrt(n) / k

    def continuous_float(self, n, k) -> NormalFloat:
        return NormalFloat(n, k)

    def continuous_mp(self, n, k) -> NormalMp:
        return NormalMp(n, k)

    def scipy_law(self, theta, n, k):
        """scipy.stats law of Y (frozen; theta may be an array)."""
        from scipy import stats

        return stats.norm(loc=theta, scale=float(k) / math.sqrt(float(n)))

    def y_words(self) -> str:
        return "Y = the mean of the n observations."


NORMAL = Normal(
    name="normal", theta_word="mean", theta_unit="per observation",
    n_word="number of observations n", integer_n=True, uses_dispersion=True,
)
