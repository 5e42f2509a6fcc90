"""High-precision law of Y as an mpmath table of probability masses.

The precise solver never calls a float routine for probabilities.  For one
parameter value a family supplies, in mpmath arithmetic,

* ``log_pmf(y)``  the log mass at one point (mpmath's loggamma/log),
* ``ratio(y)``    pmf(y+1)/pmf(y), and ``down_ratio(y)`` = pmf(y-1)/pmf(y),
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


class MpTable:
    """pmf / cdf / sf / first moments of one discrete law, at working precision."""

    def __init__(self, law, thr, moments: bool = False, max_len: int = 20_000_000):
        self.law = law
        self.thr = thr
        self.moments = moments
        self.max_len = max_len
        self.supmax = law.supmax  # None for unbounded support
        self._prec = mp.mp.prec
        m0 = law.mode
        p0 = mp.exp(law.log_pmf(m0))
        self.lo = self.hi = m0
        self._right = [p0]  # pmf(m0), pmf(m0+1), ...
        self._left = []  # pmf(m0-1), pmf(m0-2), ...
        self._trunc_right = self._grow_right(None)
        self._trunc_left = self._grow_left(None)
        self._sums = None

    # -- building ----------------------------------------------------------
    def _grow_right(self, until):
        law, thr = self.law, self.thr
        y, p = self.hi, self._right[-1]
        rest = _ZERO
        while self.supmax is None or y < self.supmax:
            p = p * law.ratio(y)
            y += 1
            self._right.append(p)
            if p < thr and (until is None or y >= until):
                bound = law.right_bound(y)
                if bound < 1:
                    rest = p * bound / (1 - bound)
                    if rest < thr:
                        break
            if len(self._right) > self.max_len:
                raise OverflowError("probability table too long")
        else:
            rest = _ZERO
        self.hi = y
        return rest

    def _grow_left(self, until):
        law, thr = self.law, self.thr
        y = self.lo
        p = self._left[-1] if self._left else self._right[0]
        rest = _ZERO
        while y > 0:
            p = p * law.down_ratio(y)
            y -= 1
            self._left.append(p)
            if p < thr and (until is None or y <= until):
                bound = law.left_bound(y)
                if bound < 1:
                    rest = p * bound / (1 - bound)
                    if rest < thr:
                        break
            if len(self._left) > self.max_len:
                raise OverflowError("probability table too long")
        else:
            rest = _ZERO
        self.lo = y
        return rest

    def extend(self, lo, hi):
        """Make the window hold [lo, hi] (as far as the support allows)."""
        with mp.workprec(self._prec):
            if hi > self.hi:
                self._trunc_right = self._grow_right(hi)
                self._sums = None
            if lo < self.lo:
                self._trunc_left = self._grow_left(lo)
                self._sums = None

    @property
    def truncated(self):
        """Upper bound on the probability outside the window."""
        return self._trunc_left + self._trunc_right

    def _build(self):
        prec, rnd = self._prec, libmp.round_nearest
        add = libmp.mpf_add

        def radd(u, v):
            return add(u, v, prec, rnd)

        self.p = list(reversed(self._left)) + self._right
        raw = [v._mpf_ for v in self.p]
        F = list(accumulate(raw, radd))
        S = list(accumulate(reversed(raw), radd))
        S.reverse()
        S = S[1:] + [libmp.fzero]
        mk = mp.make_mpf
        self.F = [mk(v) for v in F]
        self.S = [mk(v) for v in S]
        if self.moments:
            with mp.workprec(prec):
                yp = [((self.lo + i) * v)._mpf_ for i, v in enumerate(self.p)]
            M = list(accumulate(yp, radd))
            MS = list(accumulate(reversed(yp), radd))
            MS.reverse()
            MS = MS[1:] + [libmp.fzero]
            self.M = [mk(v) for v in M]
            self.MS = [mk(v) for v in MS]
        self._sums = True

    def _ready(self):
        if self._sums is None:
            self._build()

    # -- random access -----------------------------------------------------
    def pmf(self, y):
        self._ready()
        if y < self.lo or y > self.hi:
            return _ZERO
        return self.p[y - self.lo]

    def cdf(self, y):
        """P(Y <= y)."""
        self._ready()
        if y < self.lo:
            return _ZERO
        if y > self.hi:
            return _ONE
        return self.F[y - self.lo]

    def sf(self, y):
        """P(Y > y)."""
        self._ready()
        if y < self.lo:
            return _ONE
        if y >= self.hi:
            return _ZERO
        return self.S[y - self.lo]

    def moment_below(self, y):
        """E[Y; Y <= y]."""
        self._ready()
        if y < self.lo:
            return _ZERO
        if y > self.hi:
            return self.M[-1]
        return self.M[y - self.lo]

    def moment_above(self, y):
        """E[Y; Y > y]."""
        self._ready()
        if y < self.lo:
            return self.M[-1]
        if y >= self.hi:
            return _ZERO
        return self.MS[y - self.lo]

    # -- quantiles ------------------------------------------------------------
    def first_cdf_above(self, a):
        """min{c : P(Y <= c) > a} (c1 of a left tail of mass a)."""
        self._ready()
        return self.lo + bisect_right(self.F, a)

    def first_sf_at_most(self, r):
        """min{c : P(Y > c) <= r} (c2 of a right tail of mass r)."""
        self._ready()
        # S is non-increasing; the first index with S[i] <= r
        return self.lo + bisect_left(self.S, -r, key=lambda v: -v)
