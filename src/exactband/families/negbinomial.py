"""Overdispersed counts: mean theta > 0 per unit, known dispersion k > 0.

Each unit's count has variance theta + theta^2/k; the total over n units is
Y ~ NB(size r = n*k, mean m = n*theta), i.e. with q = r/(r+m)
pmf(y) = Gamma(y+r) / (Gamma(r) y!) q^r (1-q)^y.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
from scipy import special as sp

from ..mpnum import dec, frac
from . import _saddle, _tailratio
from . import mptable as mt
from .base import Family
from .floatlaw import FloatLaw, as_float, exact_mean_width, x_minus_log1p
from .nbfloat import (
    INT_SIZE_MAX,
    SUM_TOP,
    far_tail,
    mean_residual,
    residual_of,
    saddle_logpmf,
    whole_size_tails,
)


class NegBinomialLaw(FloatLaw):
    """Y ~ NB(size r = n*k, mean m = n*theta), P = (r, m), t = m.

    With q = r/(r+m): pmf(y) = Gamma(y+r)/(Gamma(r) y!) q^r (1-q)^y and
    F(c) = I_q(r, c+1) (regularised incomplete beta function).
    """

    elementwise = False  # the summed tails' width follows the largest mean in the arrays

    @staticmethod
    def make(theta, n, k):
        r = as_float(n) * as_float(k)
        m = as_float(n) * as_float(theta)
        r, m = r + 0.0 * m, m + 0.0 * r
        return (r, m, mean_residual(theta, n, m))

    @staticmethod
    def t(P):
        return P[1]

    @staticmethod
    def with_t(P, t):
        return (P[0], t)  # a mean between the inputs: no decimal behind it

    @staticmethod
    def supmax(P):
        return np.full(np.shape(P[0]), np.inf)

    @staticmethod
    def mode(P):
        r, mean = P[0], P[1]
        return np.where(r > 1.0, np.floor((r - 1.0) * mean / r), 0.0)

    @staticmethod
    def moments(P):
        r, m = P[0], P[1]
        var = m + m * m / r
        return m, var, (r + 2.0 * m) / np.sqrt(r * m * (r + m))

    @classmethod
    def _tails(cls, c, P):
        r, m = P[0], P[1]
        q = r / (r + m)
        qc = m / (r + m)  # 1 - q, computed without cancellation
        a = c + 1.0
        use_q = q <= 0.5
        cdf = np.where(use_q, sp.betainc(r, a, q), sp.betaincc(a, r, qc))
        sf = np.where(use_q, sp.betaincc(r, a, q), sp.betainc(a, r, qc))
        # scipy's incomplete beta loses ~1e-20 * r relative for a huge size r (2e-9 at
        # r = 1e9); there, with a small mean, the masses are summed (all positive)
        r_, m_, c_ = np.broadcast_arrays(r, m, c)
        top = np.ceil(m_ + 40.0 * np.sqrt(m_) + 60.0)
        summed = (r_ > 1e5) & (top <= SUM_TOP)
        if np.any(summed):
            j = np.nonzero(summed.ravel())[0]
            cdf, sf = (np.array(np.broadcast_to(x, r_.shape), dtype=float) for x in (cdf, sf))
            rs, ms, cs = r_.ravel()[j], m_.ravel()[j], c_.ravel()[j]
            y = np.arange(int(top.ravel()[j].max()) + 1, dtype=float)
            f = np.exp(cls.logpmf(y[None, :], (rs[:, None], ms[:, None])))
            below = y[None, :] <= cs[:, None]
            cdf.ravel()[j] = np.where(below, f, 0.0).sum(axis=1)
            sf.ravel()[j] = np.where(below, 0.0, f).sum(axis=1)
        whole = (r_ >= 2.0) & (r_ <= INT_SIZE_MAX) & (np.floor(r_) == r_) & (c_ >= 0)
        if np.any(whole):
            cdf, sf = whole_size_tails(cdf, sf, r_, m_, c_, whole)
        lo = np.broadcast_to(residual_of(P), r_.shape)
        return cls._far_tails(cdf, sf, r_, m_, c_, summed, lo)

    @classmethod
    def _far_tails(cls, cdf, sf, r, m, c, summed, lo):
        """Far tails as mass x (tail/mass ratio) where that ratio is large.

        There a gamma = (alpha - tail)/mass has a condition number ~ the ratio
        (1e9 at a size r ~ 4e8, mean ~ 3e14, alpha ~ 1e-65) and the incomplete
        beta's relative error (up to ~7e-11) would reach it; the ratio of
        ``_tailratio`` keeps a few units of roundoff (docs/tolerances.md section 8).
        """
        far_r, far_l = far_tail(c, r, m)
        far_r &= ~summed
        far_l &= ~summed
        if not (np.any(far_r) or np.any(far_l)):
            return cdf, sf
        right = far_r & _tailratio.right_usable(c, r, m)
        left = far_l & _tailratio.left_usable(c, r, m)
        cdf, sf = (np.array(np.broadcast_to(x, r.shape), dtype=float) for x in (cdf, sf))
        for mask, out, ratio, add in ((right, sf, _tailratio.right_ratio, 0.0),
                                      (left, cdf, _tailratio.left_ratio, 1.0)):
            if np.any(mask):
                j = np.nonzero(mask.ravel())[0]
                rs, ms, cs, ls = r.ravel()[j], m.ravel()[j], c.ravel()[j], lo.ravel()[j]
                f = np.exp(cls.logpmf(cs, (rs, ms, ls)))
                out.ravel()[j] = f * (add + ratio(cs, rs, ms, ls))
        return cdf, sf

    @classmethod
    def cdf(cls, c, P):
        c = as_float(c)
        cdf, _ = cls._tails(np.maximum(c, 0.0), P)
        return np.where(c < 0, 0.0, cdf)

    @classmethod
    def sf(cls, c, P):
        c = as_float(c)
        _, sf = cls._tails(np.maximum(c, 0.0), P)
        return np.where(c < 0, 1.0, sf)

    @staticmethod
    def logpmf(y, P):
        y = as_float(y)
        r, m = P[0], P[1]
        ok = y >= 0
        yy = np.where(ok, y, 0.0)
        qc = m / (r + m)
        at0 = -r * np.log1p(m / r)
        far = np.logical_or(*far_tail(yy, r, m)) & (yy > 0)
        if np.all(far):  # every point in a far tail: only the far form is needed
            out = _tailratio.far_logpmf(yy, r, m, residual_of(P))
        else:
            out = saddle_logpmf(yy, r, m, qc, at0)
        # far tails (a large tail/mass ratio, where a gamma's condition number is about
        # that ratio): the deviance terms from relative deviations (_tailratio.far_logpmf)
        if np.any(far) and not np.all(far):
            yb, rb, mb, lb = np.broadcast_arrays(yy, r, m, residual_of(P))
            j = np.nonzero(far.ravel())[0]
            out = np.array(np.broadcast_to(out, yb.shape), dtype=float)
            out.ravel()[j] = _tailratio.far_logpmf(yb.ravel()[j], rb.ravel()[j], mb.ravel()[j],
                                                   lb.ravel()[j])
        # a huge size r (y + r rounds to r): the Poisson mass times the exact correction
        #   log pmf = log Pois(y; m) + r (x - log1p x) - y log1p x + sum_{i<y} log1p(i/r),
        # x = m/r; the series of the last sum is exact to (y^2/r)^3 relative
        big = (yy + 1.0) ** 2 < 1e-4 * r
        if np.any(big):
            x = m / r
            small = x < 1e-4
            g = np.where(small, x * x * (0.5 - x / 3.0 + x * x / 4.0), x - np.log1p(x))
            corr = (r * g - yy * np.log1p(x) + yy * (yy - 1.0) / (2.0 * r)
                    - yy * (yy - 1.0) * (2.0 * yy - 1.0) / (12.0 * r * r))
            lim = _saddle.log_poisson_raw(yy, m + 0.0 * yy) + corr
            out = np.where(big, lim, out)
        return np.where(ok, out, -np.inf)

    @staticmethod
    def weight(c, P):
        r, m = P[0], P[1]
        return (r + as_float(c)) / (r + m)

    @staticmethod
    def dlogw(c, P):
        r, m = P[0], P[1]
        c = as_float(c)
        # c/m - (r + c + 1)/(r + m), without the cancellation of r against r + m
        return c / m - 1.0 - (c + 1.0 - m) / (r + m)

    @staticmethod
    def dlogpmf(y, P):
        r, m = P[0], P[1]
        return r * (as_float(y) - m) / (m * (r + m))

    @staticmethod
    def logratio(y, P, dt):
        r, m = P[0], P[1]
        y = as_float(y)
        return -r * np.log1p(dt / (r + m)) + y * np.log1p(dt * r / (m * (r + m + dt)))

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

    def affine(self, up: bool) -> tuple:
        """(u0, u1, v0, v1): up_int(y) (or down_int) = (u0 + u1 y, v0 + v1 y)."""
        ra, rb, ma, rm = self._ra, self._rb, self._ma, self._rm
        return ((ra * ma, rb * ma, rm, rm) if up else (0, rm, (ra - rb) * ma, rb * ma))

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

    def mp_law(self, theta, n, k):
        return NegBinomialMp(theta, n, k)

    def scipy_law(self, theta, n, k):
        from scipy import stats

        r, m = n * k, n * theta
        return stats.nbinom(r, r / (r + m))

    def theta_spread(self, theta, n, k):
        return math.sqrt((theta + theta * theta / k) / n)

    def natural_delta(self, lo, hi, n, k):
        return n * (hi - lo)

    def log_ratio_line(self, lo, hi, n, k):
        """eta = log(m / (r + m)), A = r log1p(m / r) (size r = n k, mean m = n lo).

        With dm = n (hi - lo), a = dm / (r + m), b = r dm / (m (r + m + dm)):
        s = log1p(b) and y* - m = (r log1p a - m s) / s, where
        r log1p a - m s = r dm^2 / ((r + m)(r + m + dm)) - r (a - log1p a) + m (b - log1p b)
        (since r a - m b is the first term): no cancellation beyond a factor ~2.
        m and dm from the decimals (``exact_mean_width``).
        """
        whole, rest, dm = exact_mean_width(n, lo, hi)
        m = whole + rest
        r = np.asarray(n, dtype=float) * np.asarray(k, dtype=float)
        a = dm / (r + m)
        b = r * dm / (m * (r + m + dm))
        s = np.log1p(b)
        top = r * dm * dm / ((r + m) * (r + m + dm)) - r * x_minus_log1p(a) + m * x_minus_log1p(b)
        return s, whole, rest + top / s

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
    name="negative-binomial", theta_word="mean per unit", theta_unit="mean count per unit",
    axis_word="mean \u03b8", symbol="mean", theta_what="the expected count per unit",
    n_word="number of units n", n_what="the number of units inspected", n_unit="units",
    y_word="the total count over the sample",
    y_inspected="the total count over the n inspected units",
    integer_n=True, uses_dispersion=True,
)
