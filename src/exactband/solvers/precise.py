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
from collections import OrderedDict
from dataclasses import dataclass, field

import mpmath as mp

from ..families.mptable import check_size, table_estimate
from ..kinds import KINDS
from ..mpnum import dec, dec_complement, frac
from . import precise_tails

_ZERO = mp.mpf(0)
_ONE = mp.mpf(1)

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


_CACHE: OrderedDict | None = None
_SIZE = [0]  # bytes held by the cache
CACHE_BYTES = 64 * 2**20  # tables kept for reuse across designs (same law, other alpha/kind)


def _table(family, theta, n, k, precision, alpha, moments=False, hint=None):
    """Table whose truncated mass is below alpha * 10**-(precision + 12).

    ``hint`` (kind, alpha, the other end) lets a law read from tails predict the
    design's cost and decline it before any work (precise_tails.check_cost).
    Tables are kept in a bounded cache (least recently used first out): a grid
    of designs meets the same law at many alphas and kinds.  A cached table is
    reused when its precision is at least and its threshold at most what is
    needed.
    """
    global _CACHE

    if _CACHE is None:
        _CACHE = OrderedDict()
    thr = _threshold(alpha, precision)
    key = (family.name, repr(theta), repr(n), repr(k))
    prec = mp.mp.prec
    for kk in ((key, True), (key, moments)):
        hit = _CACHE.get(kk)
        if hit is not None and hit._prec >= prec and hit.thr <= thr:
            if isinstance(hit, precise_tails.TailTable):  # this design's cost, predicted again
                if not hit.beyond and not precise_tails.prefers_tails(
                        hit.tails, table_estimate(hit.tails.sd_f, thr, prec)[0], hint, prec):
                    continue  # a table is cheaper for this design (or the only way)
                if precise_tails.over_cost(hit.tails, hint, prec) and precise_tails.fits_table(
                        hit.tails.sd_f, thr, prec):
                    continue  # too slow from tails for this design, and a table fits
                precise_tails.check_cost(hit.tails, hint, prec)
            _CACHE.move_to_end(kk)
            return hit
    T = precise_tails.table_for(family.mp_law(theta, n, k), thr, moments, hint)
    old = _CACHE.pop((key, moments), None)
    _SIZE[0] += T.nbytes - (old.nbytes if old is not None else 0)
    _CACHE[(key, moments)] = T
    while _SIZE[0] > CACHE_BYTES and len(_CACHE) > 1:
        _, old = _CACHE.popitem(last=False)
        _SIZE[0] -= old.nbytes
    return T


def _threshold(alpha, precision):
    """Truncation threshold of a design's tables: alpha (at most 1/2) x 10^-(precision + 12)."""
    return min(dec(alpha), mp.mpf(1) / 2) * mp.mpf(10) ** (-(precision + 12))


def _hints(family, kind, n, alpha, low, high, value, k) -> list:
    """(theta, cost hint) of each law a design reads, in the order ``_solve`` reads them;
    a band's or equivalence design's hint carries the other end's mean."""
    if kind not in ("band", "equivalence"):
        return [(value, precise_tails.CostHint(kind, float(alpha)))]
    return [(a, precise_tails.CostHint(kind, float(alpha), float(family.mp_law(b, n, k).mean)))
            for a, b in ((low, high), (high, low))]


def preflight(family, kind, n, alpha, low=None, high=None, value=None, dispersion=None,
              precision: int = 50) -> None:
    """Raise TableTooLarge where ``solve`` would decline for the cost of its laws, before
    any table or fraction is computed (and before the fast solver runs: a design at the
    centre of a negative binomial of size 1.85e10 spent 5 s in the fast search first).

    Mirrors ``_solve``'s laws, thresholds and cost hints; builds nothing.
    """
    dps = working_dps(precision, kind, low, high, alpha)
    with mp.workdps(dps):
        thr = _threshold(alpha, precision)
        for theta, hint in _hints(family, kind, n, alpha, low, high, value, dispersion):
            law = family.mp_law(theta, n, dispersion)
            way, _ = precise_tails.tail_choice(law, thr, hint)
            if way == "table":
                check_size(float(mp.sqrt(law.variance)), thr, mp.mp.prec)


def clear_cache():
    """Forget the cached tables (tests, memory bounds)."""
    global _CACHE
    _CACHE = None
    _SIZE[0] = 0


class _Band:
    """Size at the first (low) end minus s: increases with the left tail there."""

    def __init__(self, Tl, s):
        self.Tl, self.s = Tl, s

    def residual(self, c1, g1, c2, g2):
        T = self.Tl
        return T.cdf(c1 - 1) + g1 * T.pmf(c1) + g2 * T.pmf(c2) + T.sf(c2) - self.s

    def row(self, c1, c2):
        T = self.Tl
        return T.pmf(c1), T.pmf(c2), self.s - T.cdf(c1 - 1) - T.sf(c2)

    def flat(self, c, g):
        return self.residual(c, g, c, _ZERO)


class _Moment:
    """s E[Y] - E[Y phi] at the point (second condition of the point design)."""

    def __init__(self, T, s, mean):
        self.T, self.s = T, s
        self.target = s * T.law.mean
        self.mean = mean  # the mean n theta as an exact Fraction (``flat``)

    def residual(self, c1, g1, c2, g2):
        T = self.T
        return self.target - (T.moment_below(c1 - 1) + g1 * c1 * T.pmf(c1)
                              + g2 * c2 * T.pmf(c2) + T.moment_above(c2))

    def row(self, c1, c2):
        T = self.T
        return (c1 * T.pmf(c1), c2 * T.pmf(c2),
                self.target - T.moment_below(c1 - 1) - T.moment_above(c2))

    def flat(self, c, g):
        """The residual of the test that accepts at c only (phi(c) = g) and has size s.

        Then E[Y phi] = E[Y] - c (1 - s), so the residual is (1 - s)(c - E[Y]) in
        closed form: zero when the mean is the integer c.  Summed from the moments
        it would be a difference of numbers the size of the mean, whose rounding
        can give a tie at that breakpoint either sign.
        """
        d = c - self.mean  # exact: its sign, and a zero at an integer mean, are exact
        return (1 - self.s) * (mp.mpf(d.numerator) / d.denominator)


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


def _two_tailed(Tl, Tr, cond, s, tol):
    """Band-form test of size s; left tail measured at Tl, right tail fixed at Tr.

    State: the left-tail mass ``a`` at the first point (cutoff j, gamma g1).
    The right tail is chosen so that the size at ``Tr`` is exactly s (for a
    band Tr is the law at ``high``, for the point design the law itself); the
    second condition ``cond`` then increases strictly in ``a`` (monotone
    likelihood ratio).  A wide band's right tail at ``low``, far below any
    digit of the size, is never needed to place the right cutoff.
    """

    def right_for(j, g1):
        rr = s - Tr.cdf(j - 1) - g1 * Tr.pmf(j)
        if rr <= 0:
            return None
        k = Tr.first_sf_at_most(rr)
        return k, (rr - Tr.sf(k)) / Tr.pmf(k)

    def q_left(j):  # second condition at the breakpoint "left tail = {Y < j}"
        k, g2 = right_for(j, _ZERO)
        if k == j:  # the test accepts at j only: the closed form (``flat``), whose tie
            return cond.flat(j, g2)  # at an integer mean is exact, not a rounded difference
        return cond.residual(j, _ZERO, k, g2)

    j_top = Tl.first_cdf_above(s)  # largest j with P(Y < j) <= s at the first point
    while j_top > Tl.lo and right_for(j_top, _ZERO) is None:
        j_top -= 1
    j_lo = Tl.lo
    if q_left(j_lo) > 0:
        raise PreciseFailure("second condition positive at the smallest left tail")
    j = _largest(lambda x: q_left(x) <= 0, j_lo, j_top)
    f1r = Tr.pmf(j)
    g1_max = min(_ONE, (s - Tl.cdf(j - 1)) / Tl.pmf(j))
    k_lo = right_for(j, _ZERO)[0]
    end = right_for(j, g1_max)
    k_hi = end[0] if end is not None else Tr.hi
    base = s - Tr.cdf(j - 1)

    def crossed(kk):  # at "right tail = {Y > kk}" the second condition is >= 0
        if not f1r:  # c1 lies where Tr has no mass: the right tail stays put
            return True
        g1 = (base - Tr.sf(kk)) / f1r
        if g1 > g1_max:
            return True
        if kk == j:  # the test accepts at j only
            return cond.flat(j, g1) >= 0
        return cond.residual(j, g1, kk, _ZERO) >= 0

    k = _smallest(crossed, k_lo, max(k_lo, k_hi))
    f1, f2 = Tr.pmf(j), Tr.pmf(k)
    r1 = s - Tr.cdf(j - 1) - Tr.sf(k)
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
    return KINDS["band"].canonical(j, g1, k, g2, zero=_ZERO)


def band_expectation(T, c1, g1, c2, g2):
    return T.cdf(c1 - 1) + g1 * T.pmf(c1) + g2 * T.pmf(c2) + T.sf(c2)


def equivalence_expectation(T, c1, g1, c2, g2):
    mid = T.cdf(c2 - 1) - T.cdf(c1) if c2 > c1 + 1 else _ZERO
    return mid + g1 * T.pmf(c1) + g2 * T.pmf(c2)


def solve(family, kind, n, alpha, low=None, high=None, value=None, dispersion=None,
          precision: int = 50) -> PreciseDesign:
    """Solve one design at ``precision`` significant digits (plus guard digits).

    alpha, theta and the band ends are read as the decimals they print as;
    1 - alpha is formed from that decimal exactly.  A law read from tails at
    anchors (precise_tails.TailTable) has the tails at the final cutoffs
    checked against fresh evaluations (docs/tolerances.md, section 6).
    """
    pd = _solve(family, kind, n, alpha, low, high, value, dispersion, precision)
    pts = [c + d for c in (pd.c1, pd.c2) if c is not None for d in (-1, 0)]
    for T in pd.tables:
        if isinstance(T, precise_tails.TailTable):
            try:
                T.certify(pts)
            except precise_tails.TailCheckFailure as e:
                raise PreciseFailure(str(e)) from None
    return pd


def _solve(family, kind, n, alpha, low, high, value, dispersion, precision) -> PreciseDesign:
    dps = working_dps(precision, kind, low, high, alpha)
    with mp.workdps(dps):
        tol = mp.mpf(10) ** (-(dps - 8))
        A = dec(alpha)
        k = dispersion
        hints = _hints(family, kind, n, alpha, low, high, value, k)
        if kind in ("upper", "lower"):
            T = _table(family, value, n, k, precision, alpha, hint=hints[0][1])
            if kind == "upper":
                c2 = _upper_cut(T, A, alpha)
                g2 = (A - T.sf(c2)) / T.pmf(c2)
                size = T.sf(c2) + g2 * T.pmf(c2)
                return PreciseDesign(None, None, c2, g2, (size,), None, dps, T.truncated, (T,))
            c1 = _lower_cut(T, A, alpha)
            g1 = (A - T.cdf(c1 - 1)) / T.pmf(c1)
            size = T.cdf(c1 - 1) + g1 * T.pmf(c1)
            return PreciseDesign(c1, g1, None, None, (size,), None, dps, T.truncated, (T,))
        if kind == "point":
            T = _table(family, value, n, k, precision, alpha, moments=True, hint=hints[0][1])
            cond = _Moment(T, A, frac(n) * frac(value))
            c1, g1, c2, g2 = _two_tailed(T, T, cond, A, tol)
            size = band_expectation(T, c1, g1, c2, g2)
            return PreciseDesign(c1, g1, c2, g2, (size,), -cond.residual(c1, g1, c2, g2), dps,
                                 T.truncated, (T,))
        if kind in ("band", "equivalence"):
            # each table holds its own law's bulk only (no masses between distant ends)
            Tl = _table(family, low, n, k, precision, alpha, hint=hints[0][1])
            Th = _table(family, high, n, k, precision, alpha, hint=hints[1][1])
            s = A if kind == "band" else dec_complement(alpha)
            c1, g1, c2, g2 = _two_tailed(Tl, Th, _Band(Tl, s), s, tol)
            if kind == "band":
                sizes = (band_expectation(Tl, c1, g1, c2, g2), band_expectation(Th, c1, g1, c2, g2))
            else:
                c1, g1, c2, g2 = _complement(c1, g1, c2, g2)
                sizes = (equivalence_expectation(Tl, c1, g1, c2, g2),
                         equivalence_expectation(Th, c1, g1, c2, g2))
            return PreciseDesign(c1, g1, c2, g2, sizes, None, dps, Tl.truncated + Th.truncated,
                                 (Tl, Th))
    raise ValueError(f"unknown kind {kind!r}")


def _upper_cut(T, A, alpha):
    """min{c : P(Y > c) <= alpha}.  For alpha > 1/2 found from the small tail, as
    min{c : P(Y <= c) >= 1 - alpha} (1 - alpha exact from the decimal): a law read from
    its tails (TailTable) placed an upper tail near 1 by walking masses (2 s at a
    binomial n of 1e10, alpha 1 - 3e-12), its lower tail in milliseconds."""
    if not A > 0.5:
        return T.first_sf_at_most(A)
    B = dec_complement(alpha)
    c = T.first_cdf_above(B)
    return c - 1 if c > 0 and T.cdf(c - 1) == B else c


def _lower_cut(T, A, alpha):
    """min{c : P(Y <= c) > alpha}; for alpha > 1/2 as min{c : P(Y > c) < 1 - alpha}."""
    if not A > 0.5:
        return T.first_cdf_above(A)
    B = dec_complement(alpha)
    c = T.first_sf_at_most(B)
    return c + 1 if T.sf(c) == B else c


def _complement(c1, g1, c2, g2):
    """Equivalence test = 1 - band-form test of size 1 - alpha, canonical form."""
    if c1 >= c2:
        return c1, 1 - g1 - g2, c1 + 1, _ZERO
    return KINDS["equivalence"].canonical(c1, 1 - g1, c2, 1 - g2, zero=_ZERO)
