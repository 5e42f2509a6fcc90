"""The precise solver's law without a full table: tails at anchors, masses around them.

A law too spread out to tabulate (``families.mptable.MAX_TABLE``) is read
through ``TailTable``, which answers the questions the precise solver asks of an
``MpTable`` (pmf, cdf, sf, first moments, the two quantile searches) from short
segments of masses around a few anchor points:

* at an anchor y0 the family gives P(Y <= y0) and P(Y > y0) directly from a
  special function at the working precision plus ``GUARD_BITS``
  (``families.mptails``: the incomplete beta for the negative binomial);
* around it the masses follow by the law's exact rational ratios, in fixed
  point (integers times 2**-S, one floor per term, as MpTable), so a tail at y0 +
  i is the anchor's tail plus or minus an exact integer sum;
* a tail formed by a subtraction is trusted only while it keeps all but
  ``CANCEL_BITS`` of the anchor's guard bits; beyond that, or more than
  ``REACH`` masses from every segment, a new anchor is made at the point itself.

Quantiles (the cutoffs the solver's bisections ask for) are found by the
solver's own search: a quantile guess from the mean and spread, Newton steps
on the log tail at anchors (one special-function value each), a bracket that
only shrinks, and the last stretch walked mass by mass inside a segment.
Nothing here is shared with the fast solver.
"""

from __future__ import annotations

import math
from statistics import NormalDist
from typing import NamedTuple

import mpmath as mp
from mpmath import libmp

from ..families.mptable import MAX_TABLE, MAX_TABLE_BYTES, MpTable, TableTooLarge, table_estimate
from ..families.mptails import GUARD_BITS, cf_terms_estimate

_ZERO = mp.mpf(0)
_ONE = mp.mpf(1)
TAIL_TERMS = 20_000  # a law whose table would be longer is read through TailTable
REACH = 8192  # masses walked from a segment before a new anchor is cheaper
CANCEL_BITS = 40  # guard bits a subtraction may cost before the value is re-anchored
SPARE_BITS = 64  # fixed-point bits below the anchor's mass (floors of a long walk)
MAX_SEG = 1 << 18  # masses per segment (bounds the floors' error, docs/tolerances.md 6)
CHECK_BITS = 0  # a certified tail agrees with a fresh anchor to 2**-(prec + CHECK_BITS)


ALPHA_MIN_BITS = 333  # the smallest alpha allowed, 1e-100, is above 2**-333


class TailCheckFailure(ArithmeticError):
    """A tail read from a segment disagrees with a fresh evaluation (never silent)."""


class _Seg:
    """Masses on [lo, hi] around an anchor y0 whose two tails are known."""

    def __init__(self, law, y0, F0, S0, p0, bits):
        self.law, self.y0, self.F0, self.S0 = law, y0, F0, S0
        e = mp.frexp(p0)[1] if p0 > 0 else 0
        self.S = S = bits + SPARE_BITS - e  # P(y) = pmf(y) * 2**S
        self.floor_P = 1 << (bits - 8)  # below: the walk has lost too many bits
        P0 = libmp.to_int(libmp.mpf_shift(p0._mpf_, S))  # exact: floor(p0 2**S)
        self.lo = self.hi = y0
        self.right = [P0]  # P(y0), P(y0+1), ...
        self.cumR = [0]  # cumR[i] = P(y0+1) + ... + P(y0+i)
        self.left = []  # P(y0-1), P(y0-2), ...
        self.cumL = [0]  # cumL[i] = P(y0-i+1) + ... + P(y0)

    def grow_right(self, y) -> bool:
        """Extend to hold y (> hi); False if the masses got too small to trust."""
        up = self.law.up_int
        P, x = self.right[-1], self.hi
        right, cum = self.right, self.cumR
        while x < y:
            if P < self.floor_P:
                return False
            num, den = up(x)
            P = (P * num) // den
            x += 1
            right.append(P)
            cum.append(cum[-1] + P)
        self.hi = x
        return True

    def grow_left(self, y) -> bool:
        """Extend to hold y (< lo, >= 0); False if the masses got too small."""
        down = self.law.down_int
        x = self.lo
        P = self.left[-1] if self.left else self.right[0]
        left, cum = self.left, self.cumL
        while x > y:
            if P < self.floor_P:
                return False
            num, den = down(x)
            cum.append(cum[-1] + P)
            P = (P * num) // den
            x -= 1
            left.append(P)
        self.lo = x
        return True

    def P(self, y) -> int:
        return self.right[y - self.y0] if y >= self.y0 else self.left[self.y0 - y - 1]

    def sum_to(self, y) -> tuple:
        """(sign, integer) with F(y) = F0 + sign * integer * 2**-S (and S(y) the opposite)."""
        if y >= self.y0:
            return 1, self.cumR[y - self.y0]
        return -1, self.cumL[self.y0 - y]


class TailTable:
    """MpTable's questions answered from anchors (module doc); no truncation."""

    def __init__(self, law, tails, moments: bool = False, beyond: bool = True):
        self.law = law
        self.beyond = beyond  # False: the law fits a table; read so because it was cheaper
        self.tails = tails
        self.moments = moments
        self._prec = mp.mp.prec
        self._bits = self._prec + GUARD_BITS
        self.thr = _ZERO  # nothing is left out: reusable for any threshold
        self.truncated = _ZERO
        self.supmax = law.supmax
        self.lo = 0
        self._segs: list[_Seg] = []
        self._hi = None
        self.anchors = 0

    # -- segments ------------------------------------------------------------
    def _anchor(self, y) -> _Seg:
        with mp.workprec(self._prec):
            F, S = self.tails.tails(y)
        with mp.workprec(self._bits + 20):
            p = self.tails.pmf(y)
        seg = _Seg(self.law, y, F, S, p, self._bits)
        self._segs.append(seg)
        self.anchors += 1
        return seg

    def _seg(self, y) -> _Seg:
        """A segment holding y: an existing one, one grown by <= REACH, or a new anchor."""
        best, dist = None, None
        for s in self._segs:
            if s.lo <= y <= s.hi:
                return s
            d = s.lo - y if y < s.lo else y - s.hi
            if dist is None or d < dist:
                best, dist = s, d
        if best is not None and dist <= REACH and best.hi - best.lo + dist < MAX_SEG:
            if (best.grow_left(y) if y < best.lo else best.grow_right(y)):
                return best
        return self._anchor(y)

    def _value(self, y, want_cdf: bool):
        """P(Y <= y) or P(Y > y) at working precision + guard bits, re-anchoring on cancellation."""
        seg = self._seg(y)
        for attempt in (0, 1):
            sign, k = seg.sum_to(y)
            base = seg.F0 if want_cdf else seg.S0
            if not want_cdf:
                sign = -sign
            with mp.workprec(self._bits + 10):
                v = base + sign * mp.ldexp(mp.mpf(k), -seg.S)
            if sign > 0 or k == 0 or (v > 0 and v >= mp.ldexp(base, -CANCEL_BITS)):
                return v
            seg = self._anchor(y)  # subtraction cancelled: the point gets its own anchor
        return v  # pragma: no cover - an anchor at y itself needs no subtraction

    def _round(self, v):
        with mp.workprec(self._prec):
            return +v

    # -- random access (MpTable interface) -------------------------------------
    def pmf(self, y):
        if y < 0 or (self.supmax is not None and y > self.supmax):
            return _ZERO
        seg = self._seg(y)
        with mp.workprec(self._prec):
            return mp.ldexp(mp.mpf(seg.P(y)), -seg.S)

    def cdf(self, y):
        if y < 0:
            return _ZERO
        return self._round(self._value(y, True))

    def sf(self, y):
        if y < 0:
            return _ONE
        return self._round(self._value(y, False))

    def moment_below(self, y):
        """E[Y; Y <= y]."""
        if y < 0:
            return _ZERO
        with mp.workprec(self._bits):
            return self._round(self.tails.moment_below(y, self._value(y - 1, True)
                                                       if y > 0 else _ZERO, self.pmf(y)))

    def moment_above(self, y):
        """E[Y; Y > y]."""
        if y < 0:
            return self._round(self.law.mean)
        with mp.workprec(self._bits):
            return self._round(self.tails.moment_above(y, self._value(y - 1, False)
                                                       if y > 0 else _ONE, self.pmf(y)))

    @property
    def nbytes(self) -> int:
        n = sum(s.hi - s.lo + 1 for s in self._segs)
        return int(n * 2 * (self._bits / 8 + 40) + 2000 * len(self._segs))

    @property
    def hi(self):
        """A point beyond which the right tail is below 2**-(prec + 100) times the
        smallest alpha (for open brackets).

        Relative to alpha, not to 1: at alpha = 4.74e-99 a tail of 2**-(prec + 100)
        (~1e-96 at 65 digits) is still above alpha, and a bracket closed there
        put the right cutoff of a point design short of its solution.
        """
        if self._hi is None:
            with mp.workprec(self._prec):
                self._hi = self.first_sf_at_most(
                    mp.ldexp(_ONE, -(self._prec + 100 + ALPHA_MIN_BITS)))
        return self._hi

    def certify(self, points):
        """Check both tails at each point against fresh anchors a few masses away.

        S(y) = S(z) + pmf(y+1) + ... + pmf(z) with z = y + 2 (y + 3 when an
        anchor already sits there) and F(y) = F(z') + pmf(z'+1) + ... + pmf(y)
        with z' = y - 2 (y - 3), each from a new continued fraction with other
        parameters and masses from loggamma (sums only, no cancellation), must
        agree with the values the solver used to 2**-(prec + CHECK_BITS)
        relative; otherwise TailCheckFailure.  Returns the worst relative
        difference seen.
        """
        worst = _ZERO
        anchors = {s.y0 for s in self._segs}
        for y in sorted({int(p) for p in points if p is not None and p >= 0}):
            for use_F in (False, True):
                z = y + 2 if not use_F else y - 2
                if z in anchors:
                    z += 1 if not use_F else -1
                used = self._value(y, use_F)
                with mp.workprec(self._prec):
                    Fz, Sz = self.tails.tails(z) if z >= 0 else (_ZERO, _ONE)
                with mp.workprec(self._bits + 20):
                    span = range(y + 1, z + 1) if not use_F else range(max(z + 1, 0), y + 1)
                    fresh = (Sz if not use_F else Fz) + sum(self.tails.pmf(w) for w in span)
                    diff = abs(fresh - used) / used if used > 0 else abs(fresh)
                worst = max(worst, diff)
                if diff > mp.ldexp(_ONE, -(self._prec + CHECK_BITS)):
                    raise TailCheckFailure(f"tail at {y} differs from a fresh evaluation by "
                                           f"{mp.nstr(diff, 3)} relative")
        return worst

    # -- quantiles ---------------------------------------------------------------
    def first_cdf_above(self, a):
        """min{c : P(Y <= c) > a}."""
        return self._first(True, mp.mpf(a))

    def first_sf_at_most(self, r):
        """min{c : P(Y > c) <= r}."""
        return self._first(False, mp.mpf(r))

    def _pred(self, use_F, t, y):
        v = self._value(y, use_F)
        return v > t if use_F else v <= t

    def _first(self, use_F, t):
        """Smallest c >= 0 with pred(c): F(c) > t (use_F) or S(c) <= t."""
        if (t >= 1) if use_F else (t <= 0):
            return self.hi + 1 if use_F else self.hi  # never reached by the solver
        if self._pred(use_F, t, 0):
            return 0
        L, H = 0, None  # pred(L) False, pred(H) True
        for s in self._segs:  # bracket from what is known (tails formed by additions only)
            for y in (s.y0, s.hi if use_F else s.lo):
                if L < y and (H is None or y < H):
                    if self._pred(use_F, t, y):
                        H = y
                    else:
                        L = y
        y = self._guess(use_F, t, L, H)
        widths = []
        while H is None or H - L > 1:
            # inside a segment, or one short walk from one: finish by bisection there
            if H is not None and H - L <= 2 * REACH:
                s = self._seg(L)
                if s.hi >= H or s.grow_right(H):
                    return self._bisect(use_F, t, L, H)
                s = self._seg(H)
                if s.lo <= L or s.grow_left(L):
                    return self._bisect(use_F, t, L, H)
            y = min(max(y, L + 1), H - 1) if H is not None else max(y, L + 1)
            if self._pred(use_F, t, y):
                H = y
            else:
                L = y
            if H is not None:
                widths.append(H - L)
                if len(widths) >= 3 and widths[-1] > widths[-3] / 4:
                    y = (L + H) // 2  # Newton is slow here: halve the bracket
                    widths.clear()
                    continue
            y = self._newton(use_F, t, y)
        return H

    def _bisect(self, use_F, t, L, H):
        while H - L > 1:
            mid = (L + H) // 2
            if self._pred(use_F, t, mid):
                H = mid
            else:
                L = mid
        return H

    def _newton(self, use_F, t, y):
        """Next probe: where the tangent of the log tail at y reaches log t."""
        with mp.workprec(64):
            v = self._value(y, use_F)
            p = self.pmf(y + 1)
            if v <= 0 or p <= 0:
                return y + max(1, int(self.tails.sd_f))
            slope = p / v  # |d log tail / dy|
            step = (mp.log(v) - mp.log(t)) / slope
            step = float(step) if use_F is False else -float(step)
        if not math.isfinite(step):
            return y + max(1, int(self.tails.sd_f))
        cap = 1e4 * self.tails.sd_f + 2.0 * abs(y) + 1e6  # a wild step only costs a probe
        step = max(min(step, cap), -cap)
        return int(round(y + step))

    def _guess(self, use_F, t, L, H):
        """Starting probe: a normal quantile from the mean and sd (inside the bracket)."""
        mean, sd = self.tails.mean_f, self.tails.sd_f
        tf = float(t)
        right = (tf > 0.5) if use_F else (tf <= 0.5)  # the quantile lies above the median
        tail = min(max(1.0 - tf if tf > 0.5 else tf, 1e-300), 0.5)
        u = 2.0 * math.log(1.0 / tail)
        z = math.sqrt(max(0.0, u - math.log(max(u, 1.0)) - math.log(2.0 * math.pi)))
        y = int(mean + (z if right else -z) * sd)
        if H is not None:
            y = min(y, H - 1)
        return max(y, L + 1)


MAX_CF_TERMS = 300_000  # continued-fraction terms one design may be predicted to take
SWITCH_TERMS = 200_000  # table terms past which a cheaper design is read from the tails
_EVALS = {"upper": 10, "lower": 10}  # tail evaluations a design takes (measured; 30 if two-tailed)


class CostHint(NamedTuple):
    """What the cost of a design depends on: its kind, alpha and the other end's mean."""

    kind: str
    alpha: float
    other_mean: float | None = None


def predicted_terms(hint: CostHint, mean: float, sd: float, prec: int,
                    cf_sd: float | None = None) -> tuple:
    """(terms, z): continued-fraction terms a design is predicted to take on this law.

    z is how near (in sd) to the law's mean its cutoffs may come: the alpha
    quantile for one-sided designs, the min(alpha, 1/2) quantile for two-tailed
    ones, and for equivalence the smaller of that and the rest of the distance
    to the other end's mean (a narrow equivalence window sits at the centre).
    A band or equivalence design of size alpha > 1/2 is predicted as its
    complement: the other kind at size 1 - alpha.
    Times the evaluations a design takes (10 one-sided, 30 two-tailed;
    measured 6-9 and 13-29) times ``mptails.cf_terms_estimate``, whose centre
    cost is set by ``cf_sd`` (the law's ``cf_sd``: 50 r^(1/3) for a negative
    binomial whose spread comes from its dispersion; sd by default).
    """
    a = min(max(hint.alpha, 1e-300), 1.0 - 1e-16)
    kind = hint.kind
    if kind in ("band", "equivalence") and a > 0.5:
        # size a > 1/2 is the complement of the other kind's design of size 1 - a: an
        # equivalence window holding almost all the mass has its cutoffs the 1 - a
        # quantile out; a band's acceptance window of mass 1 - a sits at the centre of a
        # narrow band, the 1 - a quantile inside each end of a wide one
        kind, a = ("equivalence" if kind == "band" else "band"), 1.0 - a
    if kind in ("upper", "lower"):
        z = abs(NormalDist().inv_cdf(a))
    else:
        z = -NormalDist().inv_cdf(min(a, 0.5))
        if kind == "equivalence" and hint.other_mean is not None:
            z = max(0.0, min(z, abs(hint.other_mean - mean) / sd - z))
    evals = _EVALS.get(hint.kind, 30)
    # the fractions run at the working precision + GUARD_BITS + 10 (mptails.tails)
    return evals * cf_terms_estimate(sd if cf_sd is None else cf_sd, z,
                                     prec + GUARD_BITS + 10), z


def over_cost(T, hint: CostHint | None, prec: int) -> bool:
    """The design is predicted to take more than MAX_CF_TERMS fraction terms on T."""
    return hint is not None and predicted_terms(hint, T.mean_f, T.sd_f, prec,
                                                T.cf_sd)[0] > MAX_CF_TERMS


def fits_table(sd: float, thr, prec: int) -> bool:
    """The law's table stays within MAX_TABLE terms and MAX_TABLE_BYTES."""
    terms, nbytes = table_estimate(sd, thr, prec)
    return terms <= MAX_TABLE and nbytes <= MAX_TABLE_BYTES


def check_cost(T, hint: CostHint | None, prec: int):
    """Raise TableTooLarge (one line, naming the limit) for a design predicted too slow."""
    if hint is None:
        return
    terms, z = predicted_terms(hint, T.mean_f, T.sd_f, prec, T.cf_sd)
    if terms > MAX_CF_TERMS:
        raise TableTooLarge(
            f"about {terms:,.0f} continued-fraction terms predicted for the tails of a law with "
            f"standard deviation {T.sd_f:.3g}{'' if T.cf_sd is None else f' (size r = {T.r_f:.3g})'}"
            f" at cutoffs {abs(z):.2g} sd from its mean, "
            f"limit {MAX_CF_TERMS:,}")


def prefers_tails(T, terms: int, hint: CostHint | None, prec: int) -> bool:
    """A law within the table limits is read from its tails when that is the cheaper way.

    Only past SWITCH_TERMS table terms (laws that small keep their tables, so
    their designs are computed as before), when the design is known (``hint``)
    and its predicted fraction terms, at about twice a table term's cost each,
    stay under the table's length and under MAX_CF_TERMS.  Both ways give the
    same numbers to the working precision (docs/tolerances.md section 6).
    """
    if hint is None or T.suited or terms <= SWITCH_TERMS:
        return False
    cf, _ = predicted_terms(hint, T.mean_f, T.sd_f, prec)
    return cf <= MAX_CF_TERMS and 2 * cf < terms


def table_for(law, thr, moments: bool = False, hint: CostHint | None = None):
    """MpTable of the law, or a TailTable when the law is too spread out for a table.

    A law whose family gives single-point tails (``law.tails``) is read through a
    TailTable past TAIL_TERMS terms when the family says the tails are cheap for
    it from there on (``suited``: a negative binomial with r <= m), past the
    table limits (mptable.MAX_TABLE terms, MAX_TABLE_BYTES), where it was
    declined before (Poisson, binomial and the Poisson-like negative binomial),
    and past SWITCH_TERMS terms when the design's fractions are predicted to be
    cheaper than the table (``prefers_tails``).  A design predicted to take more
    than MAX_CF_TERMS continued-fraction terms is tabulated when the table fits,
    and declined beyond the table limits (TableTooLarge, ``check_cost``).
    """
    way, T = tail_choice(law, thr, hint)
    if way == "beyond":
        return TailTable(law, T, moments=True, beyond=True)
    if way == "tails":
        return TailTable(law, T, moments=True, beyond=False)
    return MpTable(law, thr, moments=moments)


def tail_choice(law, thr, hint: CostHint | None):
    """("beyond" | "tails" | "table", tails or None): how ``table_for`` reads the law.

    Raises TableTooLarge (``check_cost``) for a design predicted too slow from the tails
    where no table may be built instead; no table or fraction is computed here, so the
    verified path can ask before the fast solver runs (``precise.preflight``)."""
    tails = getattr(law, "tails", None)
    if tails is not None:
        sd = float(mp.sqrt(law.variance))
        terms, nbytes = table_estimate(sd, thr, mp.mp.prec)
        if terms > TAIL_TERMS or nbytes > MAX_TABLE_BYTES:
            T = tails()
            fits = terms <= MAX_TABLE and nbytes <= MAX_TABLE_BYTES
            # a suited law whose fractions would be slow at this design's cutoffs (a
            # size r above ~1e7, cutoffs near the centre) keeps its table when it fits
            if (T.suited or not fits) and not (fits and over_cost(T, hint, mp.mp.prec)):
                check_cost(T, hint, mp.mp.prec)
                return "beyond", T
            if prefers_tails(T, terms, hint, mp.mp.prec):
                return "tails", T
    return "table", None
