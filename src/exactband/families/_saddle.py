"""Saddle-point pieces for accurate float probability masses (vectorised).

The naive ``exp(y*log(mu) - mu - lgamma(y+1))`` loses about log10(mu) digits to
cancellation (measured: 4e-12 relative error at mu = 4000, 2e-9 at mu = 1e6).
The saddle-point form keeps full double precision.

References
----------
C. Loader (2000), "Fast and accurate computation of binomial probabilities",
technical note; the stirlerr / bd0 decomposition used here.
"""

from __future__ import annotations

import numpy as np
from scipy import special as sp

_LN_SQRT_2PI = 0.5 * np.log(2.0 * np.pi)
_S0, _S1, _S2, _S3, _S4 = 1 / 12, 1 / 360, 1 / 1260, 1 / 1680, 1 / 1188


def stirlerr(x):
    """log(x!) - log(sqrt(2 pi x) (x/e)^x) for real x > 0 (array)."""
    x = np.asarray(x, dtype=float)
    out = np.empty_like(x)
    small = x <= 15.0
    if np.any(small):
        xs = x[small]
        out[small] = sp.gammaln(xs + 1.0) - (xs + 0.5) * np.log(xs) + xs - _LN_SQRT_2PI
    big = ~small
    if np.any(big):
        xb = x[big]
        nn = xb * xb
        series = (_S0 - (_S1 - (_S2 - (_S3 - _S4 / nn) / nn) / nn) / nn) / xb
        out[big] = series
    return out


def bd0(x, m, d=None):
    """x*log(x/m) + m - x computed without cancellation (array, x >= 0, m > 0).

    ``d`` is x - m when the caller has it without cancellation (default x - m).
    """
    x, m = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(m, dtype=float))
    out = np.empty(x.shape, dtype=float)
    given = d is not None
    d = np.broadcast_to(np.asarray(d, dtype=float), x.shape) if given else x - m
    close = np.abs(d) < 0.1 * (x + m)
    if np.any(close):
        xc, dc, mc = x[close], d[close], m[close]
        v = dc / (xc + mc)
        s = dc * v
        ej = 2.0 * xc * v
        v2 = v * v
        for j in range(1, 14):  # |v| < 0.1: each term is 100 times smaller
            ej = ej * v2
            s = s + ej / (2 * j + 1)
        out[close] = s
    far = ~close
    if np.any(far):
        xf, mf = x[far], m[far]
        with np.errstate(divide="ignore", invalid="ignore"):
            if given:  # m - x = -d exactly
                out[far] = np.where(xf > 0, xf * np.log(xf / mf), 0.0) - d[far]
            else:
                out[far] = np.where(xf > 0, xf * np.log(xf / mf), 0.0) + mf - xf
    return out


def log_binom_raw(x, n, p, q):
    """log of C(n, x) p^x q^(n-x) for real 0 <= x <= n, with q = 1 - p given exactly."""
    x, n, p, q = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (x, n, p, q)))
    out = np.empty(x.shape, dtype=float)
    at0 = x == 0
    atn = (x == n) & ~at0
    mid = ~(at0 | atn)
    if np.any(at0):
        out[at0] = n[at0] * np.where(p[at0] < 0.1, np.log1p(-p[at0]), np.log(q[at0]))
    if np.any(atn):
        out[atn] = n[atn] * np.where(q[atn] < 0.1, np.log1p(-q[atn]), np.log(p[atn]))
    if np.any(mid):
        xm, nm, pm, qm = x[mid], n[mid], p[mid], q[mid]
        lc = (stirlerr(nm) - stirlerr(xm) - stirlerr(nm - xm)
              - bd0(xm, nm * pm) - bd0(nm - xm, nm * qm))
        lf = np.log(2.0 * np.pi) + np.log(xm) + np.log(nm - xm) - np.log(nm)
        out[mid] = lc - 0.5 * lf
    return out


def log_poisson_raw(x, mu):
    """log of exp(-mu) mu^x / x! for real x >= 0."""
    x, mu = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(mu, dtype=float))
    out = np.empty(x.shape, dtype=float)
    at0 = x == 0
    out[at0] = -mu[at0]
    pos = ~at0
    if np.any(pos):
        xp = x[pos]
        out[pos] = -stirlerr(xp) - bd0(xp, mu[pos]) - 0.5 * np.log(2.0 * np.pi * xp)
    return out
