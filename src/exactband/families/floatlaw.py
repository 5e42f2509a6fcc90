"""Vectorised float laws of Y (numpy/scipy), used by the fast solver.

Each law works on a parameter tuple ``P`` of equally shaped float arrays and a
working parameter ``t`` (Poisson: mean mu = n*theta; binomial: p; negative
binomial: mean m = n*theta).  Probabilities come from scipy.special (incomplete
gamma and beta functions) and from the saddle-point masses in ``_saddle``.

Besides the mass, distribution and survival functions a law supplies the
derivatives the side conditions need:

* ``dcdf(c, P)``   = dF(c)/dt = -w(c) * pmf(c)           (closed form per family)
* ``dlogpmf(y, P)`` = d log pmf(y)/dt
* ``dlogw(c, P)``  = d log(-dF(c)/dt)/dt                 (to bound quadrature error)
* ``logratio(y, P, dt)`` = log pmf(y; t + dt) - log pmf(y; t), without cancellation.
"""

from __future__ import annotations

import numpy as np
from scipy import special as sp

from . import _saddle

_INF = np.inf
_SUM_TOP = 6000  # largest support point summed term by term (negative binomial, huge r)


def _f(a):
    return np.asarray(a, dtype=float)


class FloatLaw:
    """Common pieces; subclasses define the family-specific formulas."""

    nparams = 1

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
        c = _f(c)
        inside = (c >= 0) & (c < cls.supmax(P))
        cc = np.where(inside, c, 0.0)
        return np.where(inside, -cls.weight(cc, P) * cls.pmf(cc, P), 0.0)

    @classmethod
    def quantile_guess(cls, prob, P):
        """Cornish-Fisher guess of min{c : F(c) > prob} (any error is corrected later)."""
        z = sp.ndtri(np.clip(prob, 1e-300, 1 - 1e-16))
        mean, var, skew = cls.moments(P)
        sd = np.sqrt(var)
        x = mean + sd * (z + skew * (z * z - 1.0) / 6.0)
        g = np.floor(np.nan_to_num(x, nan=0.0, posinf=1e15, neginf=0.0))
        return np.clip(g, 0.0, np.minimum(cls.supmax(P), 1e15))


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
        return (_f(n) * _f(theta),)

    @staticmethod
    def t(P):
        return P[0]

    @staticmethod
    def with_t(P, t):
        return (t,)

    @staticmethod
    def supmax(P):
        return np.full(np.shape(P[0]), _INF)

    @staticmethod
    def moments(P):
        mu = P[0]
        return mu, mu, 1.0 / np.sqrt(mu)

    @classmethod
    def cdf(cls, c, P):
        c = _f(c)
        mu = P[0] + 0.0 * c
        cc = np.maximum(c, 0.0) + 0.0 * mu
        out = sp.gammaincc(cc + 1.0, mu)
        far = (mu > 1e5) & (cc + 1.0 - mu >= 4.0 * np.sqrt(mu))  # see sf
        if np.any(far):
            out[far] = 1.0 - cls.sf(cc[far], (mu[far],))
        return np.where(c < 0, 0.0, out)

    @classmethod
    def sf(cls, c, P):
        c = _f(c)
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
        y = _f(y)
        ok = y >= 0
        return np.where(ok, _saddle.log_poisson_raw(np.where(ok, y, 0.0), P[0]), -_INF)

    @staticmethod
    def weight(c, P):
        return np.ones_like(_f(c) + P[0])

    @staticmethod
    def dlogw(c, P):
        return _f(c) / P[0] - 1.0

    @staticmethod
    def dlogpmf(y, P):
        return _f(y) / P[0] - 1.0

    @staticmethod
    def logratio(y, P, dt):
        mu = P[0]
        return _f(y) * np.log1p(dt / mu) - dt


class BinomialLaw(FloatLaw):
    """Y ~ Binomial(n, p), P = (n, p, q) with q = 1 - p, t = p."""

    @staticmethod
    def make(theta, n, k):
        p = _f(theta)
        n = _f(n) + 0.0 * p
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
    def moments(P):
        n, p, q = P
        var = n * p * q
        return n * p, var, (q - p) / np.sqrt(var)

    @staticmethod
    def _tails(c, P):
        """(cdf, sf) at integer c, 0 <= c < n, using the small one of p, q as x."""
        n, p, q = P
        a, b = c + 1.0, n - c
        lowp = p <= 0.5
        sf = np.where(lowp, sp.betainc(a, b, p), sp.betaincc(b, a, q))
        cdf = np.where(lowp, sp.betaincc(a, b, p), sp.betainc(b, a, q))
        return cdf, sf

    @classmethod
    def cdf(cls, c, P):
        c = _f(c)
        n = P[0]
        inside = (c >= 0) & (c < n)
        cdf, _ = cls._tails(np.where(inside, c, 0.0), P)
        return np.where(c < 0, 0.0, np.where(c >= n, 1.0, cdf))

    @classmethod
    def sf(cls, c, P):
        c = _f(c)
        n = P[0]
        inside = (c >= 0) & (c < n)
        _, sf = cls._tails(np.where(inside, c, 0.0), P)
        return np.where(c < 0, 1.0, np.where(c >= n, 0.0, sf))

    @staticmethod
    def logpmf(y, P):
        y = _f(y)
        n, p, q = P
        ok = (y >= 0) & (y <= n)
        return np.where(ok, _saddle.log_binom_raw(np.where(ok, y, 0.0), n, p, q), -_INF)

    @staticmethod
    def weight(c, P):
        n, p, q = P
        return (n - _f(c)) / q

    @staticmethod
    def dlogw(c, P):
        n, p, q = P
        c = _f(c)
        return c / p - (n - 1.0 - c) / q

    @staticmethod
    def dlogpmf(y, P):
        n, p, q = P
        return (_f(y) - n * p) / (p * q)

    @staticmethod
    def logratio(y, P, dt):
        n, p, q = P
        y = _f(y)
        return y * np.log1p(dt / p) + (n - y) * np.log1p(-dt / q)


class NegBinomialLaw(FloatLaw):
    """Y ~ NB(size r = n*k, mean m = n*theta), P = (r, m), t = m.

    With q = r/(r+m): pmf(y) = Gamma(y+r)/(Gamma(r) y!) q^r (1-q)^y and
    F(c) = I_q(r, c+1) (regularised incomplete beta function).
    """

    @staticmethod
    def make(theta, n, k):
        r = _f(n) * _f(k)
        m = _f(n) * _f(theta)
        return (r + 0.0 * m, m + 0.0 * r)

    @staticmethod
    def t(P):
        return P[1]

    @staticmethod
    def with_t(P, t):
        return (P[0], t)

    @staticmethod
    def supmax(P):
        return np.full(np.shape(P[0]), _INF)

    @staticmethod
    def moments(P):
        r, m = P
        var = m + m * m / r
        return m, var, (r + 2.0 * m) / np.sqrt(r * m * (r + m))

    @classmethod
    def _tails(cls, c, P):
        r, m = P
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
        summed = (r_ > 1e5) & (top <= _SUM_TOP)
        if np.any(summed):
            j = np.nonzero(summed.ravel())[0]
            cdf, sf = (np.array(np.broadcast_to(x, r_.shape), dtype=float) for x in (cdf, sf))
            rs, ms, cs = r_.ravel()[j], m_.ravel()[j], c_.ravel()[j]
            y = np.arange(int(top.ravel()[j].max()) + 1, dtype=float)
            f = np.exp(cls.logpmf(y[None, :], (rs[:, None], ms[:, None])))
            below = y[None, :] <= cs[:, None]
            cdf.ravel()[j] = np.where(below, f, 0.0).sum(axis=1)
            sf.ravel()[j] = np.where(below, 0.0, f).sum(axis=1)
        return cdf, sf

    @classmethod
    def cdf(cls, c, P):
        c = _f(c)
        cdf, _ = cls._tails(np.maximum(c, 0.0), P)
        return np.where(c < 0, 0.0, cdf)

    @classmethod
    def sf(cls, c, P):
        c = _f(c)
        _, sf = cls._tails(np.maximum(c, 0.0), P)
        return np.where(c < 0, 1.0, sf)

    @staticmethod
    def logpmf(y, P):
        y = _f(y)
        r, m = P
        ok = y >= 0
        yy = np.where(ok, y, 0.0)
        q = r / (r + m)
        qc = m / (r + m)
        at0 = -r * np.log1p(m / r)
        # pmf(y) = r/(r+y) * C(y+r, r) q^r (1-q)^y   (y > 0), as in Loader's note
        with np.errstate(divide="ignore", invalid="ignore"):
            pos = _saddle.log_binom_raw(r + 0.0 * yy, yy + r, q, qc) + np.log(r / (r + yy))
        out = np.where(yy == 0, at0, pos)
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
        return np.where(ok, out, -_INF)

    @staticmethod
    def weight(c, P):
        r, m = P
        return (r + _f(c)) / (r + m)

    @staticmethod
    def dlogw(c, P):
        r, m = P
        c = _f(c)
        # c/m - (r + c + 1)/(r + m), without the cancellation of r against r + m
        return c / m - 1.0 - (c + 1.0 - m) / (r + m)

    @staticmethod
    def dlogpmf(y, P):
        r, m = P
        return r * (_f(y) - m) / (m * (r + m))

    @staticmethod
    def logratio(y, P, dt):
        r, m = P
        y = _f(y)
        return -r * np.log1p(dt / (r + m)) + y * np.log1p(dt * r / (m * (r + m + dt)))
