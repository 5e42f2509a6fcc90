"""Float solver for continuous families (numpy, scipy.special, scipy.optimize.brentq).

The statistic Y has a continuous law with monotone likelihood ratio in Y, so the
optimal rules of Lehmann & Romano (Testing Statistical Hypotheses, 3rd ed.,
3.4, 3.7, 4.2) need no randomisation: the cutoffs are real numbers.  A law
(``families.normal.NormalFloat``, ``families.gamma.GammaFloat``) gives cdf, sf,
their logs, the log density, tail quantiles, d/dtheta of the cdf and the score.

* upper / lower: the quantile of mass alpha at the value.
* band / point: the left tail's mass ``a = r alpha`` at the first point fixes
  c1; the right tail is fixed by the size at the second point (point: at the
  value itself), so one condition is left, strictly increasing in r (monotone
  likelihood ratio): the size at low minus alpha.  While the band is narrow
  (width <= NARROW standard deviations of Y, in theta) that condition is
  computed as the difference quotient (E_low phi - E_high phi) / (high - low)
  = mean over theta in [low, high] of dF(c2)/dtheta - dF(c1)/dtheta, by
  20-point Gauss-Legendre quadrature of the closed-form derivatives; it tends
  to the point design's condition E[(Y - EY) phi] = 0 and never subtracts two
  nearly equal sizes.  Wide bands use log(size at low) - log(alpha).
* band / point with alpha > 1/2: the acceptance window of mass 1 - alpha (the
  equivalence search below, with 1 - alpha formed exactly from alpha's decimal).
* equivalence: the rejection window (c1, c2); p = P_low(Y > c1) fixes c1, the
  window's mass alpha at high fixes c2, and the balance log P_low(W) -
  log P_high(W) (narrow: minus the quadrature of d/dtheta P_theta(W)) is
  strictly increasing in p.  Window masses come from ``interval``, which
  integrates the density when a difference of tails would cancel.

Quantiles from scipy are polished by Newton steps on the log tail, so a tail
quantile keeps its digits where scipy's inverse loses some.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from ..mpnum import float_complement

NARROW = 0.5  # band width (in standard deviations of Y, measured in theta) below which the
# side condition is taken as a difference quotient
_X, _W = np.polynomial.legendre.leggauss(20)
_RTOL = 4.0 * np.finfo(float).eps
_BIG = 1e300
LOG_NOISE = 64 * np.finfo(float).eps  # rounding of a log-ratio side condition


@dataclass(frozen=True)
class ContinuousSolution:
    """Cutoffs (None where the kind has none) and sizes at the constraint points (float law)."""

    c1: float | None
    c2: float | None
    sizes: tuple
    conditioning: float  # relative change of the size per relative change of the cutoffs
    cut_conditioning: tuple = (None, None)  # (elasticity, tail) of c1 and of c2
    cut_weights: tuple = (None, None)  # max over the points of f(c) (|c| + floor), c1 and c2


def _f(x) -> float:
    return float(np.asarray(x, dtype=float))


def _clip(v: float) -> float:
    if math.isnan(v):
        raise FloatingPointError("side condition is not a number")
    return max(-_BIG, min(_BIG, v))


def q_low(law, p: float, theta: float) -> float:
    """c with P_theta(Y <= c) = p, polished by Newton steps on log P(Y <= c)."""
    if p <= 0.0:
        return float(law.lower)
    if p > 0.5:
        return q_high(law, 1.0 - p, theta)
    c = _f(law.ppf(p, theta))
    lp = math.log(p)
    for _ in range(3):
        g = _f(law.logcdf(c, theta)) - lp
        if not math.isfinite(g) or abs(g) < 1e-16:
            break
        step = g * math.exp(_f(law.logcdf(c, theta)) - _f(law.logpdf(c, theta)))
        nc = c - step
        if nc <= law.lower:
            nc = 0.5 * (c + law.lower) if math.isfinite(law.lower) else c - abs(step)
        if abs(_f(law.logcdf(nc, theta)) - lp) >= abs(g):
            break
        c = nc
    return c


def q_high(law, q: float, theta: float) -> float:
    """c with P_theta(Y > c) = q, polished by Newton steps on log P(Y > c)."""
    if q <= 0.0:
        return math.inf
    if q > 0.5:
        return q_low(law, 1.0 - q, theta)
    c = _f(law.isf(q, theta))
    lq = math.log(q)
    for _ in range(3):
        g = _f(law.logsf(c, theta)) - lq
        if not math.isfinite(g) or abs(g) < 1e-16:
            break
        nc = c + g * math.exp(_f(law.logsf(c, theta)) - _f(law.logpdf(c, theta)))
        if abs(_f(law.logsf(nc, theta)) - lq) >= abs(g):
            break
        c = nc
    return c


def interval(law, c1: float, c2: float, theta: float) -> float:
    """P_theta(c1 < Y < c2) with relative accuracy (the density is integrated when
    a difference of two tails would lose digits)."""
    if not c2 > c1:
        return 0.0
    F1, F2 = _f(law.cdf(c1, theta)), _f(law.cdf(c2, theta))
    S1, S2 = _f(law.sf(c1, theta)), _f(law.sf(c2, theta))
    if F2 <= 0.5:
        d, big = F2 - F1, F2
    elif S1 <= 0.5:
        d, big = S1 - S2, S1
    else:
        d, big = (1.0 - F1) - S2, 1.0
    if d >= big / 8.0 or not (math.isfinite(c1) and math.isfinite(c2)):
        return max(d, 0.0)
    h = 0.5 * (c2 - c1)
    y = c1 + h * (_X + 1.0)
    with np.errstate(under="ignore"):
        return float(h * np.sum(_W * np.exp(law.logpdf(y, theta))))


def window_slope(law, c1: float, c2: float, theta: float) -> float:
    """d/dtheta P_theta(c1 < Y < c2): the score integrated over a short window, else
    the difference of the closed-form derivatives of the cdf."""
    short = math.isfinite(c1) and math.isfinite(c2) and c2 - c1 <= _f(law.sd(theta))
    if not short:
        return _f(law.dcdf(c2, theta)) - _f(law.dcdf(c1, theta))
    h = 0.5 * (c2 - c1)
    y = c1 + h * (_X + 1.0)
    with np.errstate(under="ignore"):
        return float(h * np.sum(_W * np.exp(law.logpdf(y, theta)) * law.score(y, theta)))


def _nodes(lo: float, hi: float):
    if hi == lo:
        return np.array([lo]), np.array([1.0])
    return lo + 0.5 * (hi - lo) * (_X + 1.0), 0.5 * _W


def narrow(law, lo: float, hi: float) -> bool:
    """Whether the band [lo, hi] is narrow: width <= NARROW standard deviations of Y."""
    return hi - lo <= NARROW * _f(law.theta_sd(lo))


def _two_tail(law, alpha: float, lo: float, hi: float):
    thetas, weights = _nodes(lo, hi)
    slim = narrow(law, lo, hi)

    def cuts(r):
        a = r * alpha
        c1 = q_low(law, a, lo)
        b = alpha - a if hi == lo else alpha - _f(law.cdf(c1, hi))
        return a, c1, q_high(law, b, hi)

    def cond(r):
        a, c1, c2 = cuts(r)
        if slim:
            with np.errstate(under="ignore", invalid="ignore"):
                d = law.dcdf(c2, thetas) - law.dcdf(c1, thetas)
            return _clip(float(np.sum(weights * np.nan_to_num(d))) / alpha)
        s = a + _f(law.sf(c2, lo))
        return _clip(math.log(s) - math.log(alpha)) if s > 0 else -_BIG

    r = _root(cond, 0.0, 1.0, 0.0 if slim else lambda r: _noise(law, *cuts(r)[1:], alpha, lo, hi))
    _, c1, c2 = cuts(r)
    return c1, c2


def _window(law, alpha: float, lo: float, hi: float):
    thetas, weights = _nodes(lo, hi)
    slim = narrow(law, lo, hi)

    def cuts(p):
        c1 = q_high(law, p, lo)
        F = _f(law.cdf(c1, hi))
        if alpha + F <= 0.5:
            c2 = q_low(law, alpha + F, hi)
        else:
            c2 = q_high(law, _f(law.sf(c1, hi)) - alpha, hi)
        return c1, _refine_end(law, c1, c2, alpha, hi)

    def cond(p):
        c1, c2 = cuts(p)
        if slim:
            d = sum(w * window_slope(law, c1, c2, t) for t, w in zip(thetas, weights))
            return _clip(-d / alpha)
        pl, ph = interval(law, c1, c2, lo), interval(law, c1, c2, hi)
        if pl <= 0.0:
            return -_BIG
        return _clip(math.log(pl) - math.log(ph)) if ph > 0 else _BIG

    p = _root(cond, alpha, 1.0, 0.0 if slim else lambda p: _noise(law, *cuts(p), alpha, lo, hi))
    return cuts(p)


def _refine_end(law, c1: float, c2: float, alpha: float, theta: float) -> float:
    """Newton steps on log P_theta(c1 < Y < c2) = log alpha in c2: the window's mass from
    the window itself (the tails it was first taken from may have lost its digits)."""
    if not (math.isfinite(c1) and math.isfinite(c2)) or c2 <= c1:
        return c2
    la = math.log(alpha)
    for _ in range(4):
        m = interval(law, c1, c2, theta)
        if not m > 0:
            break
        g = math.log(m) - la
        if abs(g) < 1e-15:
            break
        dens = math.exp(_f(law.logpdf(c2, theta)))
        if not dens > 0:
            break
        nc = c2 - g * m / dens
        if not nc > c1 or abs(math.log(max(interval(law, c1, nc, theta), 1e-320)) - la) >= abs(g):
            break
        c2 = nc
    return c2


def _noise(law, c1, c2, alpha, lo, hi) -> float:
    """What rounding alone can put in a log-ratio side condition at cutoffs (c1, c2): the
    ratio's own rounding (LOG_NOISE) plus half an ulp of each cutoff, which moves a size of
    alpha by conditioning * 2**-53 relative (2 ulps allowed at each of the two points)."""
    kappa = conditioning(law, c1, c2, alpha, (lo, hi))
    return LOG_NOISE + 4.0 * np.finfo(float).eps * kappa if math.isfinite(kappa) else LOG_NOISE


def _root(fn, lo: float, hi: float, noise=0.0) -> float:
    """Root of an increasing fn on [lo, hi]; an end where fn is within ``noise`` of 0 (on
    the wrong side by rounding) is the root.  ``noise``: a number, or a function of the end."""
    flo, fhi = fn(lo), fn(hi)
    nlo = noise(lo) if callable(noise) else noise
    if flo == 0.0 or (flo > 0 and flo <= nlo):
        return lo
    nhi = noise(hi) if callable(noise) else noise
    if fhi == 0.0 or (fhi < 0 and -fhi <= nhi):
        return hi
    if flo > 0 or fhi < 0:
        raise FloatingPointError("side condition does not change sign over its bracket")
    return brentq(fn, lo, hi, xtol=1e-300, rtol=_RTOL, maxiter=400)


def expectation(law, kind, c1, c2, theta):
    """E_theta phi(Y) for real cutoffs (vectorised over theta); no randomisation.

    ``kind`` is a kinds.Kind: its tails (P(Y < c1), P(Y > c2)) or its middle
    P(c1 < Y < c2); a continuous Y puts no mass on a cutoff."""
    t = np.asarray(theta, dtype=float)
    if kind.rejects_inside:
        return np.vectorize(lambda x: interval(law, c1, c2, float(x)), otypes=[float])(t)
    out = law.cdf(c1, t) if kind.uses_c1 else 0.0
    return out + (law.sf(c2, t) if kind.uses_c2 else 0.0)


def cut_conditioning(law, c1, c2, points) -> tuple:
    """For c1 and for c2 (None if absent or infinite): (e, T), the largest over the points
    of e = f(c) (|c| + floor) / T, the relative change of the smaller tail T at c per
    relative change of c (its elasticity), with that tail T."""
    out = []
    for c in (c1, c2):
        best = None
        if c is not None and math.isfinite(c):
            for t in points:
                tail = min(_f(law.cdf(c, t)), _f(law.sf(c, t)))
                if not tail > 0:
                    continue
                floor = _f(law.sd(t)) if law.floor_scale else 0.0
                with np.errstate(under="ignore", divide="ignore"):
                    e = math.exp(_f(law.logpdf(c, t))) * (abs(c) + floor) / tail
                if best is None or e > best[0]:
                    best = (e, tail)
        out.append(best)
    return tuple(out)


def cut_weights(law, c1, c2, points) -> tuple:
    """For c1 and for c2 (None if absent or infinite): the largest over the points of
    f(c) (|c| + floor), the change of a size per relative change of that cutoff."""
    out = []
    for c in (c1, c2):
        best = None
        if c is not None and math.isfinite(c):
            for t in points:
                floor = _f(law.sd(t)) if law.floor_scale else 0.0
                with np.errstate(under="ignore", divide="ignore"):
                    w = math.exp(_f(law.logpdf(c, t))) * (abs(c) + floor)
                best = w if best is None else max(best, w)
        out.append(best)
    return tuple(out)


def conditioning(law, c1, c2, alpha, points) -> float:
    """max over the constraint points of sum_i f(c_i) (|c_i| + floor_i) / alpha: the relative
    change of the size per relative change of the cutoffs (floor_i = sd of Y for a
    location family, 0 for a scale family)."""
    worst = 0.0
    for t in points:
        tot = 0.0
        for c in (c1, c2):
            if c is None or not math.isfinite(c):
                continue
            floor = _f(law.sd(t)) if law.floor_scale else 0.0
            with np.errstate(under="ignore", divide="ignore"):
                tot += math.exp(_f(law.logpdf(c, t))) * (abs(c) + floor)
        worst = max(worst, tot / alpha)
    return worst


def solve(law, kind, alpha: float, low=None, high=None, value=None) -> ContinuousSolution:
    """The optimal rule of ``kind`` (a kinds.Kind) for a continuous float law."""
    alpha = float(alpha)
    points = kind.points(low, high, value)
    lo, hi = points[0], points[-1]
    c1 = c2 = None
    # alpha > 1/2: 1 - alpha is formed exactly from alpha's decimal (1.0 - alpha would carry
    # alpha's rounding, relative 1e-16 / (1 - alpha)), and the rule is found from it
    if kind.rejects_inside and alpha > 0.5:
        # a window of mass alpha at both points is accepting two tails of mass 1 - alpha at
        # both: the two-tailed search on the complement keeps the small tails' digits
        c1, c2 = _two_tail(law, float_complement(alpha), lo, hi)
    elif kind.rejects_inside:
        c1, c2 = _window(law, alpha, lo, hi)
    elif kind.two_tailed and alpha > 0.5:
        # rejecting outside [c1, c2] with size alpha at both points is accepting a window
        # of mass 1 - alpha at both: the equivalence search keeps the short window's digits
        c1, c2 = _window(law, float_complement(alpha), lo, hi)
    elif kind.two_tailed:
        c1, c2 = _two_tail(law, alpha, lo, hi)
    elif kind.uses_c2:
        c2 = q_low(law, float_complement(alpha), lo) if alpha > 0.5 else q_high(law, alpha, lo)
    else:
        c1 = q_high(law, float_complement(alpha), lo) if alpha > 0.5 else q_low(law, alpha, lo)
    sizes = tuple(_f(expectation(law, kind, c1, c2, t)) for t in points)
    return ContinuousSolution(c1, c2, sizes, conditioning(law, c1, c2, alpha, points),
                              cut_conditioning(law, c1, c2, points),
                              cut_weights(law, c1, c2, points))
