"""High-precision law of Y as an mpmath table of probability masses.

The precise solver never calls a float routine for probabilities.  For one
parameter value a family supplies, in mpmath arithmetic,

* ``log_pmf(y)``  the log mass at one point (mpmath's loggamma/log),
* ``ratio(y)``    pmf(y+1)/pmf(y), and ``down_ratio(y)`` = pmf(y-1)/pmf(y),
* ``up(p, y, prec)`` / ``down(p, y, prec)`` the same steps on libmp values
  (``p * ratio(y)`` with one or two roundings; see ``mul``, ``div_int`` here),
* ``mode``        where the table starts,
* tail bounds     an upper bound on every later ratio, so truncation is bounded.

The table covers the window [lo, hi] outside which the total mass is below
``thr`` (the bound on what is left out is kept in ``truncated``).  ``extend``
widens it to hold a range of interest (for a wide band, the region where the
other end's law lives, so that tails many decades below ``thr`` keep their
relative precision).  Prefix and suffix sums give P(Y <= y) and P(Y > y) with
full relative accuracy in both tails.  All arithmetic happens at the working
precision in force when the table is built.
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from itertools import accumulate

import mpmath as mp
from mpmath import libmp

_ZERO = mp.mpf(0)
_ONE = mp.mpf(1)
_RND = libmp.round_nearest
_MAX_EXACT_SPAN = 60_000  # bits: beyond this the smallest masses are below any tolerance


def raw(x):
    """The libmp value (sign, mantissa, exponent, bitcount) of an mpf."""
    return x._mpf_


def mul(x, y, prec):
    """x * y for libmp values, rounded to prec bits."""
    return libmp.mpf_mul(x, y, prec, _RND)


def mul_int(x, k: int, prec):
    return libmp.mpf_mul_int(x, k, prec, _RND)


def div(x, y, prec):
    return libmp.mpf_div(x, y, prec, _RND)


def div_int(x, d: int, prec):
    """x / d for a positive integer d, one rounding (mpmath's normalize)."""
    sign, man, exp, _ = x
    if not man:
        return x
    shift = prec + d.bit_length() + 4
    q = (man << shift) // d
    return libmp.normalize(sign, q, exp - shift, q.bit_length(), prec, _RND)


MAX_TABLE = 2_000_000  # terms per table; beyond this the precise solver declines
MAX_TABLE_BYTES = 400 * 2**20  # memory of one table (estimated before allocating)
_K_MAX = 1.15  # window half-width in sd, per sqrt(2 ln(1/thr)) (Gaussian tail bound, with room)


class TableTooLarge(OverflowError):
    """The law is too spread out to tabulate within the limits (MAX_TABLE, MAX_TABLE_BYTES)."""


def table_estimate(sd: float, thr, prec: int, max_len: int = MAX_TABLE) -> tuple:
    """(terms, bytes) a window of +-K sd needs, K from the Gaussian tail bound at thr.

    Every term is an integer of S = prec + log2(1/thr) + 2 log2(max_len) + 32 bits
    (see MpTable), held twice (mass and prefix sum; a third time with moments),
    plus the list slots.
    """
    ln_thr = -float(mp.log(thr)) if thr > 0 else 1e4
    k = _K_MAX * (2 * ln_thr) ** 0.5 if ln_thr > 0 else 10.0
    terms = int(2 * k * sd) + 64
    bits = prec + ln_thr / 0.693 + 2 * max_len.bit_length() + 32
    return terms, int(terms * (3 * (bits / 8 + 32) + 32))


def check_size(sd: float, thr, prec: int, max_len: int = MAX_TABLE):
    """Raise TableTooLarge (naming the limit) before a table beyond the limits is built."""
    terms, nbytes = table_estimate(sd, thr, prec, max_len)
    if terms > max_len:
        raise TableTooLarge(f"about {terms:,} terms per probability table, limit {max_len:,}")
    if nbytes > MAX_TABLE_BYTES:
        raise TableTooLarge(f"about {nbytes / 2**20:,.0f} MB per probability table, "
                            f"limit {MAX_TABLE_BYTES // 2**20} MB")


def _bulk(P, y, step, count, aff, target, out):
    """Up to ``count`` masses P <- floor(P (u0 + u1 y) / (v0 + v1 y)), y <- y + step,
    appended to ``out``; stops after the first below ``target``.  The same integers as
    the law's up_int / down_int (``affine``) one call at a time, ~25% faster."""
    u0, u1, v0, v1 = aff
    app = out.append
    for _ in range(count):
        P = (P * (u0 + u1 * y)) // (v0 + v1 * y)
        y += step
        app(P)
        if P < target:
            break
    return P, y


class MpTable:
    """pmf / cdf / sf / first moments of one discrete law, at working precision.

    The window [lo, hi] holds the masses of the law's bulk only (outside it the
    mass is provably below ``thr``); a wide band never tabulates the masses
    between its two ends.  Values are stored as exact integer multiples of one
    power of two, so prefix sums are exact and suffix sums are total - prefix.
    """

    def __init__(self, law, thr, moments: bool = False, max_len: int = MAX_TABLE):
        self.law = law
        self.thr = thr
        self.moments = moments
        self.max_len = max_len
        self.supmax = law.supmax  # None for unbounded support
        self._prec = mp.mp.prec
        m0 = law.mode
        sd = float(mp.sqrt(law.variance))
        check_size(sd, thr, self._prec, max_len)
        # fixed point: every mass is an integer P = pmf * 2**S, filled by the exact
        # rational ratios of the law with one floor division per term; S leaves
        # 2 log2(max_len) + 32 guard bits below thr * 2**-prec, so the N <= max_len
        # floor errors (at most one unit each) stay far below any digit wanted
        thr_bits = int(-mp.log(thr, 2)) + 1 if thr > 0 else 0
        self._S = S = self._prec + thr_bits + 2 * max_len.bit_length() + 32
        with mp.workprec(self._prec + 20):
            p0 = int(mp.floor(mp.exp(law.log_pmf(m0)) * mp.mpf(2) ** S))
        self._thr_int = int(mp.floor(thr * mp.mpf(2) ** S)) + 1
        self.lo = self.hi = m0
        self._right = [p0]  # P(m0), P(m0+1), ...
        self._left = []  # P(m0-1), P(m0-2), ...
        self._trunc_right = self._grow(True, None)
        self._trunc_left = self._grow(False, None)
        self._sums = None

    # -- building ----------------------------------------------------------
    def _grow(self, up: bool, until):
        """Extend the table to the right (up) or left until the rest is provably < thr.

        Returns the bound on the mass left out on that side: the tail beyond y is
        at most pmf(y) * b / (1 - b), with b a bound on every later ratio.
        """
        law, thr_int, S = self.law, self._thr_int, self._S
        if up:
            y, P, out, ratio, bound_at = self.hi, self._right[-1], self._right, law.up_int, \
                law.right_bound
        else:
            y = self.lo
            P = self._left[-1] if self._left else self._right[0]
            out, ratio, bound_at = self._left, law.down_int, law.left_bound
        rest = _ZERO
        limit = self.max_len
        target = thr_int  # below it, test the tail bound (the bounds only fall further out)
        step = 1 if up else -1
        end = 0 if not up else (self.supmax if self.supmax is not None else -1)
        aff = law.affine(up) if hasattr(law, "affine") else None
        with mp.workprec(self._prec):
            while y != end:
                # the bulk, where no tail test is due, takes the same ratios inline; it
                # stops after the first mass below target, short of the limit and the end
                room = limit + 1 - len(out)
                count = room if end == -1 else min(room, abs(end - y))
                if aff is not None and P >= target and count > 1:
                    P, y = _bulk(P, y, step, count - 1, aff, target, out)
                else:
                    num, den = ratio(y)
                    P = (P * num) // den
                    y += step
                    out.append(P)
                if P < target and (until is None or (y >= until if up else y <= until)):
                    bound = bound_at(y)
                    if bound < 1:
                        rest = mp.mpf(P) * mp.mpf(2) ** (-S) * bound / (1 - bound)
                        if rest < self.thr:
                            break
                        # P * b / (1 - b) < thr once P < thr (1 - b) / b (b only falls)
                        target = min(target, int(thr_int * (1 - bound) / bound))
                if len(out) > limit:
                    raise TableTooLarge(f"more than {limit:,} terms")
            else:
                rest = _ZERO
        if up:
            self.hi = y
        else:
            self.lo = y
        return rest

    def extend(self, lo, hi):
        """Make the window hold [lo, hi] (as far as the support allows)."""
        with mp.workprec(self._prec):
            if hi > self.hi:
                self._trunc_right = self._grow(True, hi)
                self._sums = None
            if lo < self.lo:
                self._trunc_left = self._grow(False, lo)
                self._sums = None

    @property
    def nbytes(self) -> int:
        """Rough memory of the table (for the bounded cache)."""
        return int((self.hi - self.lo + 1) * (3 * (self._S / 8 + 32) + 32))

    @property
    def truncated(self):
        """Upper bound on the probability outside the window."""
        return self._trunc_left + self._trunc_right

    def _build(self):
        """Prefix sums, exact: every mass is an integer multiple of 2**e0.

        Summing exactly in Python integers is much cheaper than rounding each
        partial sum, and keeps full relative accuracy in both tails (a suffix
        sum is the exact integer total - prefix); values are rounded to the
        working precision only when read.
        """
        ints = list(reversed(self._left)) + self._right
        e0 = -self._S
        F = list(accumulate(ints))
        self._e0, self._p, self._F, self._tot = e0, ints, F, F[-1]
        if self.moments:
            M = list(accumulate((self.lo + i) * v for i, v in enumerate(ints)))
            self._M, self._Mtot = M, M[-1]
        self._sums = True

    def _unscale(self, k: int):
        """mpf of the integer k * 2**e0, rounded to the working precision."""
        return mp.make_mpf(libmp.from_man_exp(k, self._e0, self._prec, _RND))

    def _ready(self):
        if self._sums is None:
            self._build()

    # -- random access -----------------------------------------------------
    def pmf(self, y):
        self._ready()
        if y < self.lo or y > self.hi:
            return _ZERO
        return self._unscale(self._p[y - self.lo])

    def cdf(self, y):
        """P(Y <= y)."""
        self._ready()
        if y < self.lo:
            return _ZERO
        if y > self.hi:
            return _ONE
        return self._unscale(self._F[y - self.lo])

    def sf(self, y):
        """P(Y > y)."""
        self._ready()
        if y < self.lo:
            return _ONE
        if y >= self.hi:
            return _ZERO
        return self._unscale(self._tot - self._F[y - self.lo])

    def moment_below(self, y):
        """E[Y; Y <= y]."""
        self._ready()
        if y < self.lo:
            return _ZERO
        if y > self.hi:
            return self._unscale(self._M[-1])
        return self._unscale(self._M[y - self.lo])

    def moment_above(self, y):
        """E[Y; Y > y]."""
        self._ready()
        if y < self.lo:
            return self._unscale(self._M[-1])
        if y >= self.hi:
            return _ZERO
        return self._unscale(self._Mtot - self._M[y - self.lo])

    # -- quantiles ------------------------------------------------------------
    def _floor_scaled(self, x) -> int:
        """floor(x * 2**S), exact: compares with the integer sums need no rounding."""
        return int(mp.floor(mp.ldexp(mp.mpf(x), self._S)))

    def first_cdf_above(self, a):
        """min{c : P(Y <= c) > a} (c1 of a left tail of mass a)."""
        self._ready()
        return self.lo + bisect_right(self._F, self._floor_scaled(a))

    def first_sf_at_most(self, r):
        """min{c : P(Y > c) <= r} (c2 of a right tail of mass r)."""
        self._ready()
        # tot - F[i] <= r 2**S  <=>  F[i] >= tot - floor(r 2**S)
        return self.lo + bisect_left(self._F, self._tot - self._floor_scaled(r))
