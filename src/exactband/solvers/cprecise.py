"""High-precision solver for continuous families (mpmath only), independent of cfast.

Distribution code: the family's mpmath law (``NormalMp``: erfc; ``GammaMp``:
gammainc, loggamma) at a scoped working precision (``mp.workdps``); no scipy.

Algorithm (different from the float solver's tail-mass search): a nested search
over the cutoffs themselves.  The inner search puts c2 where the first side
condition holds for the given c1 (the size at high, or at the value; for
equivalence the window's mass at high) by safeguarded Newton steps inside a
bracket; the outer search moves c1 by Illinois regula falsi inside a bracket
until the second condition holds, written in its original form:

* point: E[Y phi] = alpha E[Y] (with E[Y; Y < c] and E[Y; Y > c] from the law);
* band: the size at low equals alpha, taken as (E_high phi - E_low phi) / (high - low)
  computed at a precision raised by the digits the narrow band costs;
* equivalence: the window's mass at low equals alpha (same narrow treatment).

Starts (``solve(start=...)``, the float solver's cutoffs when verifying): the outer
search first tries brackets of half-width 1e-12, 1e-8, 1e-4 (relative to |c1| + sd of
Y) around the start and keeps one only where its own outer condition changes sign;
the inner searches begin at the last solution.  Without a usable start the brackets
come from the tails as before.  The outer search stops where |condition| is within its
noise, alpha 10^(10 - dps) (scaled as the condition), i.e. the sizes hold to 10^(10 -
dps) x alpha; working precision is precision + 15 digits, so that is 1e-55 x alpha at
50 digits, far below the 1e-9 x alpha of the cross-check.  With the fixed-point
incomplete gamma of ``families.gamma`` this makes a gamma design at shape 5e5 cost some
40 tail evaluations instead of ~300 (bench/bench_slow.py).

Working precision: precision + GUARD_DIGITS + the digits a narrow band costs
(+ -log10 alpha for equivalence, whose window mass is a difference of tails;
+ log10(|E Y| / sd Y) for the point condition's cancellation).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import mpmath as mp

from ..kinds import as_kind
from ..mpnum import dec

GUARD_DIGITS = 15
MAX_STEPS = 400


class PreciseFailure(RuntimeError):
    """The precise continuous solver could not produce a rule (never silent)."""


@dataclass(frozen=True)
class PreciseContinuous:
    """Cutoffs and sizes as mpf at working precision ``dps``; None where the kind has none."""

    c1: object
    c2: object
    sizes: tuple
    dps: int


def working_dps(precision: int, kind, alpha, sd_ratio=1.0, width=None) -> int:
    """Digits to work with: requested + guard + the digits narrowness and cancellation cost.

    ``width`` is the band's width in standard deviations of Y (None: one point);
    ``sd_ratio`` is |E Y| / sd Y at the value (the point condition subtracts terms of that size).
    """
    extra = 0
    if kind.rejects_inside and alpha < 0.1:
        extra += int(math.ceil(-math.log10(alpha)))
    if width is not None and 0 < width < 1:
        extra += int(math.ceil(-math.log10(width)))
    if kind.moment_condition:
        extra += int(math.ceil(math.log10(1.0 + sd_ratio)))
    return int(precision) + GUARD_DIGITS + extra


def _floor(lo, tol):
    """The absolute floor of a relative stopping test: none on a bracket inside (0, inf),
    where a cutoff may be tiny (a gamma total at a tiny alpha and a small shape)."""
    return 0 if lo > 0 else tol


def _newton_in(fn, lo, hi, tol, x0=None):
    """Root of an increasing fn (value, derivative) in [lo, hi]: Newton steps from x0 (or
    the middle), bisection when a step leaves the bracket or does not halve the last one."""
    x = x0 if x0 is not None and lo < x0 < hi else (lo + hi) / 2
    last = hi - lo
    for _ in range(MAX_STEPS):
        v, d = fn(x)
        if v == 0:
            return x
        if v < 0:
            lo = x
        else:
            hi = x
        nx = x - v / d if d != 0 and mp.isfinite(v) else None
        if nx is not None and lo <= nx <= hi and abs(nx - x) <= tol * (abs(x) + _floor(lo, tol)):
            return nx
        if nx is None or not lo < nx < hi or abs(nx - x) > abs(last) / 2:
            # a bracket over many decades on (0, inf) (a tiny gamma cutoff) is halved in log
            nx = mp.sqrt(lo * hi) if lo > 0 and hi > 4 * lo else (lo + hi) / 2
        last = nx - x
        if hi - lo <= tol * (abs(nx) + _floor(lo, tol)):
            return nx
        x = nx
    raise PreciseFailure("inner search did not converge")


def _log_ratio(top, bottom):
    """log(top / bottom) for probabilities (-inf when top is 0)."""
    return mp.log(top) - mp.log(bottom) if top > 0 else mp.ninf


def _illinois(fn, lo, hi, tol, noise=0, ends=None):
    """Root of a monotone fn in [lo, hi] by Illinois regula falsi (bracket kept).

    fn is known to ``noise`` (absolute): an end of the bracket where fn is within the
    noise and has the other end's sign is taken as the root (e.g. a band so wide that
    its rule is the two one-sided rules to every working digit), and so is a point where
    |fn| <= noise (further steps would only follow the rounding).  ``ends``: (fn(lo), fn(hi))
    when already known."""
    flo, fhi = ends if ends is not None else (fn(lo), fn(hi))
    if flo == 0:
        return lo
    if fhi == 0:
        return hi
    if (flo > 0) == (fhi > 0):
        if min(abs(flo), abs(fhi)) <= noise:
            return lo if abs(flo) < abs(fhi) else hi
        raise PreciseFailure("side condition does not change sign over its bracket")
    side, prev = 0, None
    for _ in range(MAX_STEPS):
        x = (lo * fhi - hi * flo) / (fhi - flo)
        if not lo < x < hi:
            x = (lo + hi) / 2
        if prev is not None and abs(x - prev) <= tol * (abs(x) + _floor(lo, tol)):
            return x
        prev = x
        fx = fn(x)
        if abs(fx) <= noise or abs(hi - lo) <= tol * (abs(x) + _floor(lo, tol)):
            return x
        if (fx > 0) == (fhi > 0):
            hi, fhi = x, fx
            if side == 1:
                flo /= 2
            side = 1
        else:
            lo, flo = x, fx
            if side == -1:
                fhi /= 2
            side = -1
    raise PreciseFailure("outer search did not converge")


START_WIDTHS = (1e-12, 1e-8, 1e-4)  # half-widths of the brackets tried around a start
# (relative to |start| + sd of Y): the float solver's cutoffs are within ~1e-14 of the rule


def _around(fn, start, scale, lower):
    """``_near`` with any failure of the search near the start sent to the full search."""
    try:
        return _near(fn, start, scale, lower)
    except PreciseFailure:
        return None


def _near(fn, start, scale, lower):
    """(a, b, fn(a), fn(b)) with a < b around ``start`` where the monotone fn changes sign,
    or None (then the caller searches its full bracket).

    The start (the float solver's cutoff) only places the bracket: the signs of fn, the
    precise side condition, decide that it holds the root.  Each wider try extends the
    bracket on the side where |fn| is smaller (towards the root of a monotone fn)."""
    if start is None or not mp.isfinite(start):
        return None
    half = [w * scale for w in START_WIDTHS]
    a, b = start - half[0], start + half[0]
    if not a > lower:
        return None
    fa, fb = fn(a), fn(b)
    for w in half[1:] + [None]:
        if fa == 0 or fb == 0 or (fa > 0) != (fb > 0):
            return a, b, fa, fb
        if w is None or not (mp.isfinite(fa) and mp.isfinite(fb)):
            return None
        if abs(fa) < abs(fb):
            if not start - w > lower:
                return None
            a, b, fb = start - w, a, fa
            fa = fn(a)
        else:
            a, b, fa = b, start + w, fb
            fb = fn(b)
    return None


def _lazy(make):
    """A value computed on first use (brackets that a good start never needs)."""
    box = []

    def get():
        if not box:
            box.append(make())
        return box[0]

    return get


def _below(law, theta, target):
    """A point c (inside the support) with P_theta(Y < c) < target."""
    m, s = law.mean(theta), law.sd(theta)
    c = m - s
    for _ in range(4000):
        if c > law.lower and law.cdf(c, theta) < target:
            return c
        c = c - 2 * (m - c) if law.lower == -mp.inf else (c + law.lower) / 2 if c > law.lower \
            else (m + law.lower) / 2
    raise PreciseFailure("no lower bracket")


def _above(law, theta, target):
    """A point c with P_theta(Y > c) < target."""
    m, s = law.mean(theta), law.sd(theta)
    step = s
    for _ in range(4000):
        c = m + step
        if law.sf(c, theta) < target:
            return c
        step *= 2
    raise PreciseFailure("no upper bracket")


def _scale(law, theta, start):
    """The length that START_WIDTHS are relative to: |start| + sd of Y."""
    return abs(start) + law.sd(theta) if start is not None else None


def _quantile_low(law, theta, p, tol, start=None):
    """c with P_theta(Y < c) = p (Newton on log P(Y < c)), from ``start`` when given."""

    def fn(c):
        F = law.cdf(c, theta)
        return _log_ratio(F, p), law.pdf(c, theta) / F if F > 0 else mp.mpf(0)

    near = _around(lambda c: fn(c)[0], start, _scale(law, theta, start), law.lower)
    if near is None:
        lo, hi = _below(law, theta, p), _above(law, theta, min(p, 1 - p) / 2)
    else:
        lo, hi = near[:2]
    return _newton_in(fn, lo, hi, tol, start)


def _quantile_high(law, theta, q, tol, start=None):
    """c with P_theta(Y > c) = q (Newton on -log P(Y > c)), from ``start`` when given."""

    def fn(c):
        S = law.sf(c, theta)
        return _log_ratio(q, S), law.pdf(c, theta) / S if S > 0 else mp.mpf(0)

    near = _around(lambda c: fn(c)[0], start, _scale(law, theta, start), law.lower)
    if near is None:
        lo, hi = _below(law, theta, min(q, 1 - q) / 2), _above(law, theta, q)
    else:
        lo, hi = near[:2]
    return _newton_in(fn, lo, hi, tol, start)


def _size(law, kind, c1, c2, theta):
    """E_theta phi for real cutoffs: the kind's tails or its middle (mpmath)."""
    if kind.rejects_inside:
        return law.cdf(c2, theta) - law.cdf(c1, theta)
    out = law.cdf(c1, theta) if kind.uses_c1 else mp.mpf(0)
    return out + (law.sf(c2, theta) if kind.uses_c2 else 0)


def _upper_end(law, theta, rest, guess, far):
    """A point c with P_theta(Y > c) <= rest: just beyond ``guess`` (the last solution) when
    that holds, else from ``far()`` outwards."""
    if guess is not None and mp.isfinite(guess):
        c = guess + mp.mpf("1e-10") * (abs(guess) + law.sd(theta))
        if law.sf(c, theta) <= rest:
            return c
    c = far()
    while law.sf(c, theta) > rest:
        c = c + (c - law.mean(theta))
    return c


def _two_tail(law, alpha, lo, hi, moment, tol, start=(None, None)):
    """Band / point: inner c2 from the size at hi (point: at the value), outer condition.

    ``start``: the float solver's (c1, c2), where the searches begin; the outer bracket
    around c1 is kept only where the precise outer condition changes sign over it."""
    hi_cut = _lazy(lambda: _above(law, hi, alpha * mp.mpf(10) ** -(mp.mp.dps // 2)))
    last = [None if start[1] is None else mp.mpf(start[1])]
    done = {}

    def c2_of(c1):
        if c1 in done:
            return done[c1]
        rest = alpha - law.cdf(c1, hi)
        if rest <= 0:
            return mp.inf
        up2 = _upper_end(law, hi, rest, last[0], hi_cut)

        def fn(c):
            S = law.sf(c, hi)
            return _log_ratio(rest, S), law.pdf(c, hi) / S if S > 0 else mp.mpf(0)

        found = _newton_in(fn, c1, up2, tol, last[0])
        last[0] = done[c1] = found
        return found

    mu = law.mean(lo)
    if moment:

        def outer(c1):
            c2 = c2_of(c1)
            upper = law.mean_above(c2, lo) if c2 != mp.inf else mp.mpf(0)
            return (law.mean_below(c1, lo) + upper - alpha * mu) / law.sd(lo)
    else:
        width = hi - lo

        def outer(c1):
            c2 = c2_of(c1)
            size_lo = law.cdf(c1, lo) + (law.sf(c2, lo) if c2 != mp.inf else 0)
            size_hi = law.cdf(c1, hi) + (law.sf(c2, hi) if c2 != mp.inf else 0)
            return (size_lo - size_hi) / width

    noise = alpha * mp.mpf(10) ** (10 - mp.mp.dps)
    noise = noise * (1 + abs(mu) / law.sd(lo)) if moment else noise / width
    s1 = None if start[0] is None else mp.mpf(start[0])
    near = _around(outer, s1, _scale(law, lo, s1), law.lower)
    if near is not None:
        c1 = _illinois(outer, near[0], near[1], tol, noise, near[2:])
    else:
        top = _quantile_low(law, lo, alpha, tol)  # c1 can be no larger (left tail alone is alpha)
        bottom = _below(law, lo, alpha * mp.mpf(10) ** -(mp.mp.dps // 2))
        c1 = _illinois(outer, bottom, top, tol, noise)
    return c1, c2_of(c1)


def _window(law, alpha, lo, hi, tol, start=(None, None)):
    """Equivalence: inner c2 from the window's mass at high, outer: the mass at low
    (``start`` as in ``_two_tail``)."""
    width = hi - lo
    last = [None if start[1] is None else mp.mpf(start[1])]
    done = {}

    def c2_of(c1):
        if c1 in done:
            return done[c1]
        base = law.cdf(c1, hi)
        target = base + alpha
        if target >= 1:
            return mp.inf

        def fn(c):
            m = law.cdf(c, hi) - base
            return _log_ratio(m, alpha), law.pdf(c, hi) / m if m > 0 else mp.mpf(0)

        up = None
        if last[0] is not None and mp.isfinite(last[0]) and last[0] > c1:
            cand = last[0] + mp.mpf("1e-10") * (abs(last[0]) + law.sd(hi))
            if fn(cand)[0] >= 0:
                up = cand
        if up is None:
            up = _above(law, hi, (1 - target) / 2)
        found = _newton_in(fn, c1, up, tol, last[0])
        last[0] = done[c1] = found
        return found

    def outer(c1):
        c2 = c2_of(c1)
        return ((law.cdf(c2, lo) - law.cdf(c1, lo)) - (law.cdf(c2, hi) - law.cdf(c1, hi))) / width

    noise = alpha * mp.mpf(10) ** (10 - mp.mp.dps) / width
    s1 = None if start[0] is None else mp.mpf(start[0])
    near = _around(outer, s1, _scale(law, hi, s1), law.lower)
    if near is not None:
        c1 = _illinois(outer, near[0], near[1], tol, noise, near[2:])
    else:
        # below both laws' bulk: there the window ending where its mass at high is alpha
        # holds more than alpha at low (low's law lies to the left), however far apart
        tiny = alpha * mp.mpf(10) ** -(mp.mp.dps // 2)
        left = min(_below(law, hi, tiny), _below(law, lo, tiny))
        right = _quantile_high(law, hi, alpha, tol)  # beyond it the window at high holds < alpha
        c1 = _illinois(outer, left, right, tol, noise)
    return c1, c2_of(c1)


def solve(family, kind, n, alpha, low=None, high=None, value=None, dispersion=None,
          precision: int = 50, start=None) -> PreciseContinuous:
    """The optimal rule at ``precision`` significant digits (mpmath only); ``kind``: a Kind
    or its name.  ``start``: (c1, c2) where the searches begin (e.g. the float solver's
    cutoffs; None where the kind has none): it saves evaluations and changes nothing else,
    since every root is still bracketed by the signs of this solver's own conditions and
    found to the working tolerance."""
    kind = as_kind(kind)
    a_f = float(alpha)
    pts = kind.points(low, high, value)
    fl = family.continuous_float(n, dispersion)  # only the scales, for the digit budget
    lo_f, hi_f = float(pts[0]), float(pts[-1])
    width = (hi_f - lo_f) / float(fl.theta_sd(lo_f)) if kind.two_point else None
    ratio = abs(float(fl.mean(lo_f))) / float(fl.sd(lo_f))
    dps = working_dps(precision, kind, a_f, ratio, width)
    with mp.workdps(dps):
        law = family.continuous_mp(n, dispersion)
        a = dec(alpha)
        tol = mp.mpf(10) ** -(dps - 5)
        points = tuple(dec(t) for t in pts)
        lo, hi = points[0], points[-1]
        c1 = c2 = None
        st = tuple(None if v is None else mp.mpf(v) for v in (start or (None, None)))
        if kind.rejects_inside:
            c1, c2 = _window(law, a, lo, hi, tol, st)
        elif kind.two_tailed:
            c1, c2 = _two_tail(law, a, lo, hi, kind.moment_condition, tol, st)
        elif kind.uses_c2:
            c2 = _quantile_high(law, lo, a, tol, st[1])
        else:
            c1 = _quantile_low(law, lo, a, tol, st[0])
        sizes = tuple(_size(law, kind, c1, c2, t) for t in points)
    return PreciseContinuous(c1, c2, sizes, dps)


def sizes_of(family, kind, n, dispersion, c1, c2, points, precision: int = 50) -> tuple:
    """E_theta phi at each point for given cutoffs, with the mpmath law (for the cross-check)."""
    kind = as_kind(kind)
    with mp.workdps(int(precision) + GUARD_DIGITS):
        law = family.continuous_mp(n, dispersion)
        cc1 = None if c1 is None else mp.mpf(c1 if isinstance(c1, float) else str(c1))
        cc2 = None if c2 is None else mp.mpf(c2 if isinstance(c2, float) else str(c2))
        return tuple(_size(law, kind, cc1, cc2, dec(t)) for t in points)


def mass_between(family, n, dispersion, cuts_a, cuts_b, points, precision: int = 50) -> float:
    """max over the points of sum_i P_theta(Y between a_i and b_i): where two rules with real
    cutoffs (c1, c2) differ as test functions (mpmath law)."""
    with mp.workdps(int(precision) + GUARD_DIGITS):
        law = family.continuous_mp(n, dispersion)
        worst = mp.mpf(0)
        for t in points:
            t = dec(t)
            tot = mp.mpf(0)
            for a, b in zip(cuts_a, cuts_b):
                if a is None or b is None:
                    continue
                lo, hi = sorted((mp.mpf(a), mp.mpf(b)))
                tot += abs(law.cdf(hi, t) - law.cdf(lo, t))
            worst = max(worst, tot)
        return float(worst)
