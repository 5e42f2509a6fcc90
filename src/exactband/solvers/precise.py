"""High-precision solver (mpmath), independent of the fast solver.

Distribution code: ``families.mptable`` fills tables of probability masses by
recurrence from mpmath's loggamma/exp, with a proven truncation bound; no scipy.

Algorithm: integer bisection over breakpoints.  For two-tailed kinds the left
cutoff c1 is the largest j whose breakpoint (left tail exactly {Y < j} at the
first constraint point, right tail taking the rest of the size) still has a
non-negative second condition; then the right cutoff c2 is found by a second
bisection inside that segment; finally the two side conditions, written in
their original form (sizes at both band ends, or E[Y phi] = alpha E[Y] for the
point design), are solved as a 2x2 linear system in mpmath.  Working precision
is the requested number of digits plus guard digits, plus the digits a narrow
band costs (the two size equations are then nearly the same).

Reference: E. L. Lehmann and J. P. Romano, Testing Statistical Hypotheses,
3rd ed., Springer 2005, sections 3.4, 3.7, 4.2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import mpmath as mp

_ZERO = mp.mpf(0)
_ONE = mp.mpf(1)

from ..families.mptable import MpTable
from ..mpnum import dec

GUARD_DIGITS = 15


class PreciseFailure(RuntimeError):
    """The precise solver could not produce a valid design (never silent)."""


@dataclass(frozen=True)
class PreciseDesign:
    """Result of the precise solver; gammas and sizes are mpf at working precision."""

    c1: int | None
    gamma1: object
    c2: int | None
    gamma2: object
    sizes: tuple  # E phi at each constraint point
    extra: object  # point design: E[Y phi] - alpha E[Y]; otherwise None
    dps: int
    truncation: object  # bound on the probability mass left out of the tables
    tables: tuple = field(default=(), repr=False, compare=False)  # one per constraint point


def working_dps(precision: int, kind: str, low=None, high=None, alpha=None) -> int:
    """Digits to work with: requested + guard + what a narrow band costs.

    An equivalence design works with its complement of size 1 - alpha, which
    needs -log10(alpha) more digits to keep alpha itself.
    """
    extra = 0
    if kind == "equivalence" and alpha is not None and alpha < 0.1:
        extra += int(math.ceil(-math.log10(alpha)))
    if kind in ("band", "equivalence") and low is not None:
        rel = (high - low) / high
        if rel < 1:
            extra += int(math.ceil(-math.log10(rel))) if rel > 0 else 0
    return int(precision) + GUARD_DIGITS + extra


def _table(family, theta, n, k, precision, alpha, moments=False):
    """Table whose truncated mass is below alpha * 10**-(precision + 12)."""
    thr = min(dec(alpha), mp.mpf(1) / 2) * mp.mpf(10) ** (-(precision + 12))
    return MpTable(family.mp_law(theta, n, k), thr, moments=moments)


class _Band:
    """Size at the high end minus s (the second condition of band designs)."""

    def __init__(self, Th, s):
        self.Th, self.s = Th, s

    def residual(self, c1, g1, c2, g2):
        T = self.Th
        return T.cdf(c1 - 1) + g1 * T.pmf(c1) + g2 * T.pmf(c2) + T.sf(c2) - self.s

    def row(self, c1, c2):
        T = self.Th
        return T.pmf(c1), T.pmf(c2), self.s - T.cdf(c1 - 1) - T.sf(c2)


class _Moment:
    """E[Y phi] - s E[Y] at the point (second condition of the point design)."""

    def __init__(self, T, s):
        self.T, self.s = T, s
        self.target = s * T.law.mean

    def residual(self, c1, g1, c2, g2):
        T = self.T
        return (T.moment_below(c1 - 1) + g1 * c1 * T.pmf(c1) + g2 * c2 * T.pmf(c2)
                + T.moment_above(c2) - self.target)

    def row(self, c1, c2):
        T = self.T
        return (c1 * T.pmf(c1), c2 * T.pmf(c2),
                self.target - T.moment_below(c1 - 1) - T.moment_above(c2))


def _largest(pred, lo, hi):
    """Largest j in [lo, hi] with pred(j) True, given pred(lo) True and pred monotone."""
    if pred(hi):
        return hi
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if pred(mid):
            lo = mid
        else:
            hi = mid
    return lo


def _smallest(pred, lo, hi):
    """Smallest k in [lo, hi] with pred(k) True, given pred(hi) True and pred monotone."""
    if pred(lo):
        return lo
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if pred(mid):
            hi = mid
        else:
            lo = mid
    return hi


def _two_tailed(Tl, cond, s, tol):
    """Band-form test of size s at the first point; second condition `cond`."""

    def right_for(a):
        rr = s - a
        k = Tl.first_sf_at_most(rr)
        return k, (rr - Tl.sf(k)) / Tl.pmf(k)

    def q_left(j):  # second condition at the breakpoint "left tail = {Y < j}"
        k, g2 = right_for(Tl.cdf(j - 1))
        return cond.residual(j, _ZERO, k, g2)

    j_top = Tl.first_cdf_above(s)  # largest j with P(Y < j) <= s
    j_lo = Tl.lo
    if q_left(j_lo) < 0:
        raise PreciseFailure("second condition negative at the smallest left tail")
    j = _largest(lambda x: q_left(x) >= 0, j_lo, j_top)
    a_j = Tl.cdf(j - 1)
    a_next = min(Tl.cdf(j), s)
    k_lo, _ = right_for(a_j)
    k_hi = Tl.first_sf_at_most(s - a_next) if a_next < s else Tl.hi

    rest = s - a_next  # right-tail mass at the end of the segment (0 when a_next = s)

    def right_end_negative(k):
        # compare right-tail masses, not s - mass: a tail far below 10**-dps * s
        # would round away in the difference
        if Tl.sf(k) <= rest:
            return True
        b = s - Tl.sf(k)
        return cond.residual(j, (b - a_j) / Tl.pmf(j), k, _ZERO) <= 0

    k = _smallest(right_end_negative, k_lo, max(k_lo, k_hi))
    f1, f2 = Tl.pmf(j), Tl.pmf(k)
    r1 = s - Tl.cdf(j - 1) - Tl.sf(k)
    if j == k:  # flat piece: any split of the one gamma satisfies both conditions
        g1, g2 = r1 / f1, _ZERO
    else:
        e1, e2, r2 = cond.row(j, k)
        det = f1 * e2 - f2 * e1
        g1 = (r1 * e2 - f2 * r2) / det
        g2 = (f1 * r2 - e1 * r1) / det
    for g in (g1, g2):
        if g < -tol or g > 1 + tol:
            raise PreciseFailure(f"gamma {mp.nstr(g, 8)} outside [0, 1] at cutoffs ({j}, {k})")
    g1 = min(max(g1, _ZERO), _ONE)
    g2 = min(max(g2, _ZERO), _ONE)
    if g1 == 1:
        j, g1 = j + 1, _ZERO
    if g2 == 1:
        k, g2 = k - 1, _ZERO
    return j, g1, k, g2


def band_expectation(T, c1, g1, c2, g2):
    return T.cdf(c1 - 1) + g1 * T.pmf(c1) + g2 * T.pmf(c2) + T.sf(c2)


def equivalence_expectation(T, c1, g1, c2, g2):
    mid = T.cdf(c2 - 1) - T.cdf(c1) if c2 > c1 + 1 else _ZERO
    return mid + g1 * T.pmf(c1) + g2 * T.pmf(c2)


def solve(family, kind, n, alpha, low=None, high=None, value=None, dispersion=None,
          precision: int = 50) -> PreciseDesign:
    """Solve one design at ``precision`` significant digits (plus guard digits)."""
    dps = working_dps(precision, kind, low, high, alpha)
    with mp.workdps(dps):
        tol = mp.mpf(10) ** (-(dps - 8))
        A = dec(alpha)
        k = dispersion
        if kind in ("upper", "lower"):
            T = _table(family, value, n, k, precision, alpha)
            if kind == "upper":
                c2 = T.first_sf_at_most(A)
                g2 = (A - T.sf(c2)) / T.pmf(c2)
                size = T.sf(c2) + g2 * T.pmf(c2)
                return PreciseDesign(None, None, c2, g2, (size,), None, dps, T.truncated, (T,))
            c1 = T.first_cdf_above(A)
            g1 = (A - T.cdf(c1 - 1)) / T.pmf(c1)
            size = T.cdf(c1 - 1) + g1 * T.pmf(c1)
            return PreciseDesign(c1, g1, None, None, (size,), None, dps, T.truncated, (T,))
        if kind == "point":
            T = _table(family, value, n, k, precision, alpha, moments=True)
            cond = _Moment(T, A)
            c1, g1, c2, g2 = _two_tailed(T, cond, A, tol)
            size = band_expectation(T, c1, g1, c2, g2)
            return PreciseDesign(c1, g1, c2, g2, (size,), cond.residual(c1, g1, c2, g2), dps,
                                 T.truncated, (T,))
        if kind in ("band", "equivalence"):
            Tl = _table(family, low, n, k, precision, alpha)
            Th = _table(family, high, n, k, precision, alpha)
            # each table must also cover where the other end's law lives
            both = (min(Tl.lo, Th.lo), max(Tl.hi, Th.hi))
            Tl.extend(*both)
            Th.extend(*both)
            s = A if kind == "band" else 1 - A
            c1, g1, c2, g2 = _two_tailed(Tl, _Band(Th, s), s, tol)
            if kind == "band":
                sizes = (band_expectation(Tl, c1, g1, c2, g2), band_expectation(Th, c1, g1, c2, g2))
            else:
                c1, g1, c2, g2 = _complement(c1, g1, c2, g2)
                sizes = (equivalence_expectation(Tl, c1, g1, c2, g2),
                         equivalence_expectation(Th, c1, g1, c2, g2))
            return PreciseDesign(c1, g1, c2, g2, sizes, None, dps, Tl.truncated + Th.truncated,
                                 (Tl, Th))
    raise ValueError(f"unknown kind {kind!r}")


def _complement(c1, g1, c2, g2):
    """Equivalence test = 1 - band-form test of size 1 - alpha, canonical form."""
    if c1 >= c2:
        return c1, 1 - g1 - g2, c1 + 1, _ZERO
    e1, e2 = 1 - g1, 1 - g2
    if e1 == 1:
        c1, e1 = c1 - 1, _ZERO
    if e2 == 1:
        c2, e2 = c2 + 1, _ZERO
    return c1, e1, c2, e2
