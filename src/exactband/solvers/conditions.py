"""The second side condition of the two-tailed kinds, for the fast solver.

Point design: the derivative d/dt E_t phi = 0 (``Derivative``).  Band designs:
the difference quotient [E_high phi - E_low phi] / (t_high - t_low) = 0
(``Difference``), whose ingredients are computed without cancellation (pmf
differences through expm1 of the log-ratio; tail differences by Gauss-Legendre
quadrature of dF/dt when the band is narrow), so it tends smoothly to the
derivative condition of the point design.
"""

from __future__ import annotations

import numpy as np
from numpy.polynomial.legendre import leggauss

from .search import sub

_GL_X, _GL_W = leggauss(20)
_GL_NODES = (_GL_X + 1.0) / 2.0  # on [0, 1]
_GL_WEIGHTS = _GL_W / 2.0  # sum to 1
GL_MAX_SPREAD = 4.0  # quadrature used while |d log(-dF/dt)/dt| * dt <= this


class Derivative:
    """d/dt E_t phi = 0 at one point (point design).

    ``line``: the point's line (``lineform.PointLine``: slope 0 at the mean) or None."""

    def __init__(self, L, P, line=None):
        self.L, self.P, self.line = L, P, line

    def subset(self, j):
        return Derivative(self.L, sub(self.P, j),
                          None if self.line is None else self.line.subset(j))

    def line_scale(self, j):
        """The line form's residual sum f (y - mean) phi times this is this condition's
        (d log f / dt is linear in y: this is its change per unit of y)."""
        Pj = sub(self.P, j)
        m = self.L.moments(Pj)[0]
        return self.L.dlogpmf(m + 1.0, Pj) - self.L.dlogpmf(m, Pj)

    def dpmf(self, c, f):
        return f * self.L.dlogpmf(c, self.P)

    def dcdf(self, c):
        return self.L.dcdf(c, self.P)


class Difference:
    """[E_h phi - E_l phi] / dt = 0 between two points (band designs).

    ``line``: the bands' log-ratio lines (``lineform.Line``) or None.
    """

    def __init__(self, L, Pl, Ph, dt, line=None):
        self.L, self.Pl, self.Ph, self.dt, self.line = L, Pl, Ph, dt, line

    def subset(self, j):
        line = None if self.line is None else self.line.subset(j)
        return Difference(self.L, sub(self.Pl, j), sub(self.Ph, j), self.dt[j], line)

    def line_scale(self, j):
        """The line form's residual sum f_low u phi times this is this condition's
        (f_high - f_low = f_low s_ u)."""
        return self.line.at(j)[0] / self.dt[j]

    def dpmf(self, c, f):
        lr = self.L.logratio(c, self.Pl, self.dt)
        small = np.abs(lr) < 1.0
        with np.errstate(over="ignore", invalid="ignore"):
            near = f * np.expm1(np.where(small, lr, 0.0))
        # far apart (|log ratio| >= 1) the plain difference loses at most a factor e/(e-1)
        far = self.L.pmf(c, self.Ph) - f if not np.all(small) else 0.0
        return np.where(small, near, far) / self.dt

    def spread(self, c):
        """How many e-folds dF(c)/dt varies over the band (bounds the quadrature error)."""
        L, Pl, Ph, dt = self.L, self.Pl, self.Ph, self.dt
        Pm = L.with_t(Pl, L.t(Pl) + 0.5 * dt)
        return dt * np.maximum.reduce(
            [np.abs(L.dlogw(c, Pl)), np.abs(L.dlogw(c, Pm)), np.abs(L.dlogw(c, Ph))])

    def dcdf(self, c):
        L, Pl, Ph, dt = self.L, self.Pl, self.Ph, self.dt
        spread = self.spread(c)
        inside = (c >= 0) & (c < L.supmax(Pl))
        quad = inside & (spread <= GL_MAX_SPREAD)
        out = np.zeros_like(dt)
        direct = inside & ~quad
        if np.any(direct):
            j = np.nonzero(direct)[0]
            Plj, Phj, cj = sub(Pl, j), sub(Ph, j), c[j]
            sl = L.sf(cj, Plj)
            right = sl < 0.5
            diff_sf = -(L.sf(cj, Phj) - sl)
            diff_cdf = L.cdf(cj, Phj) - L.cdf(cj, Plj)
            out[j] = np.where(right, diff_sf, diff_cdf) / dt[j]
        if np.any(quad):
            j = np.nonzero(quad)[0]
            Plj, cj, dtj = sub(Pl, j), c[j], dt[j]
            t0 = L.t(Plj)
            acc = np.zeros(j.size)
            for x, w in zip(_GL_NODES, _GL_WEIGHTS):
                acc += w * L.dcdf(cj, L.with_t(Plj, t0 + x * dtj))
            out[j] = acc
        return out
