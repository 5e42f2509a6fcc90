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

from ..mpnum import dec
from .continuous import ContinuousFamily

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

    def theta_sd(self, theta):
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


class Normal(ContinuousFamily):
    """Sample mean of n observations with known sigma (the dispersion)."""

    def theta_ok(self, theta):
        return math.isfinite(theta)

    def theta_allowed(self):
        return "the normal mean must be a finite number"

    def theta_ok_array(self, theta):
        return np.isfinite(np.asarray(theta, dtype=float))

    def theta_scale(self):
        """The mean is already on an unbounded scale: identity both ways."""
        return (lambda t: t), (lambda u: u)

    def theta_spread(self, theta, n, k):
        return float(k) / math.sqrt(float(n))

    def continuous_float(self, n, k) -> NormalFloat:
        return NormalFloat(n, k)

    def continuous_mp(self, n, k) -> NormalMp:
        return NormalMp(n, k)

    def scipy_law(self, theta, n, k):
        """scipy.stats law of Y (frozen; theta may be an array)."""
        from scipy import stats

        return stats.norm(loc=theta, scale=float(k) / math.sqrt(float(n)))


NORMAL = Normal(
    name="normal", theta_word="mean", theta_unit="units of the measurement",
    axis_word="mean \u03b8", symbol="mean", theta_what="the mean of one observation",
    n_word="number of observations n", n_what="the number of observations",
    n_unit="observations", y_word="the mean of the n observations",
    y_inspected="the mean of the n observations measured", integer_n=True,
    uses_dispersion=True, dispersion_word="standard deviation sigma of one observation",
    theta_min=-math.inf, theta_max=math.inf,
)
