"""Fast float solver: vectorised over many designs at once (numpy/scipy).

``solve`` dispatches on the kind.  One-sided kinds are one integer search each
(``search``).  Two-tailed kinds (band, point, and equivalence through its
complement) are solved in the tail-split parameterisation (``twotailed``), with
the second side condition as a derivative or a difference quotient
(``conditions``); ``canonical`` puts the solutions in canonical form and turns a
band solution into the equivalence design.  No cutoff pair is ever enumerated.

References
----------
E. L. Lehmann and J. P. Romano, Testing Statistical Hypotheses, 3rd ed.,
Springer 2005, sections 3.4, 3.7 and 4.2 (form of the tests, side conditions).
"""

from __future__ import annotations

import numpy as np

from ..families.base import Family
from ..kinds import KINDS
from ..mpnum import float_complements
from . import window
from .canonical import canonical_band, equivalence_from_band, refine_equivalence
from .conditions import Derivative, Difference
from .lineform import Line, PointLine
from .search import lower as _lower
from .search import sub
from .search import upper as _upper
from .twotailed import SolverFailure, initial_split, two_tailed

__all__ = ["SolverFailure", "solve"]

WINDOW_ALPHA = 1e-4  # equivalence designs of a smaller alpha take the window search (window.py)
_MIRROR = {"upper": "lower", "lower": "upper"}


def solve(family, kind: str, n, alpha, low=None, high=None, value=None, dispersion=None):
    """Solve many designs of one family and kind at once.

    All parameters are arrays of equal length (already validated; ``None`` where
    a kind does not use them).  Returns float arrays (c1, gamma1, c2, gamma2)
    with NaN where the kind has no such cutoff.

    A family whose law is symmetric under Y -> n - Y, theta -> 1 - theta
    (``family.reflects``: the binomial) has its designs with theta above one
    half solved in the mirror image, with 1 - theta formed exactly from the
    decimal the user wrote: the double nearest to p = 0.99999997 carries a
    relative error of about 1e-9 in 1 - p, the mirrored parameter none.
    """
    alpha = np.asarray(alpha, dtype=float)
    if not getattr(family, "reflects", False):
        return _solve(family, kind, n, alpha, low, high, value, dispersion)
    centre = np.asarray(value if value is not None else (np.asarray(low) + np.asarray(high)) / 2,
                        dtype=float)
    flip = centre > 0.5
    if not np.any(flip):
        return _solve(family, kind, n, alpha, low, high, value, dispersion)
    keep = ~flip
    out = [np.full(alpha.shape, np.nan) for _ in range(4)]

    def part(x, m):
        return None if x is None else np.asarray(x, dtype=float)[m]

    if np.any(keep):
        res = _solve(family, kind, part(n, keep), alpha[keep], part(low, keep), part(high, keep),
                     part(value, keep), part(dispersion, keep))
        for o, r in zip(out, res):
            o[keep] = r
    nf = np.asarray(n, dtype=float)[flip]
    comp = float_complements
    mlow = None if high is None else comp(part(high, flip))
    mhigh = None if low is None else comp(part(low, flip))
    mval = None if value is None else comp(part(value, flip))
    res = _solve(family, _MIRROR.get(kind, kind), nf, alpha[flip], mlow, mhigh, mval,
                 part(dispersion, flip))
    c1m, g1m, c2m, g2m = res
    for o, r in zip(out, (nf - c2m, g2m, nf - c1m, g1m)):
        o[flip] = r
    return tuple(out)


def _solve(family, kind: str, n, alpha, low=None, high=None, value=None, dispersion=None):
    """solve() without the mirror image."""
    L = family.float_law
    alpha = np.asarray(alpha, dtype=float)
    size = alpha.shape[0]
    k = None if dispersion is None else np.asarray(dispersion, dtype=float)
    n = np.asarray(n, dtype=float)
    nan = np.full(size, np.nan)
    ac = 1.0 - alpha
    big = alpha > 0.5
    if np.any(big):
        ac[big] = float_complements(alpha[big])
    if kind == "upper":
        P = L.make(np.asarray(value, float), n, k)
        c2, g2 = _upper(L, P, alpha, ac)
        _, _, c2, g2 = KINDS["upper"].canonical(None, None, c2, g2)
        return nan, nan.copy(), c2, np.clip(g2, 0.0, 1.0)
    if kind == "lower":
        P = L.make(np.asarray(value, float), n, k)
        c1, g1 = _lower(L, P, alpha, ac)
        c1, g1, _, _ = KINDS["lower"].canonical(c1, g1, None, None)
        return c1, np.clip(g1, 0.0, 1.0), nan, nan.copy()
    if kind == "point":
        P = L.make(np.asarray(value, float), n, k)
        a0 = initial_split(L, P, None, alpha)
        # a long acceptance window at a large mean (alpha > 1/2) takes the point's line
        # (lineform.PointLine): its derivative condition is sum f (y - mean) phi = 0
        own = type(family).log_ratio_line is not Family.log_ratio_line
        pline = PointLine(n, np.asarray(value, float)) if own else None
        res = two_tailed(L, P, P, Derivative(L, P, pline), alpha, a0, b=ac)
        return canonical_band(*res)
    if kind == "band" and np.any(big):
        # a band of size alpha near 1 is 1 - (equivalence design of size 1 - alpha):
        # the equivalence window's own equations keep the digits of 1 - alpha
        out = [np.full(size, np.nan) for _ in range(4)]
        lo_a, hi_a = np.asarray(low, float), np.asarray(high, float)
        kk = None if k is None else k[big]
        e1, h1, e2, h2 = _solve(family, "equivalence", n[big], ac[big], lo_a[big], hi_a[big],
                                None, kk)
        res = canonical_band(e1, 1.0 - h1, e2, 1.0 - h2)
        for o, r in zip(out, res):
            o[big] = r
        small = ~big
        if np.any(small):
            res = _solve(family, kind, n[small], alpha[small], lo_a[small], hi_a[small], None,
                         None if k is None else k[small])
            for o, r in zip(out, res):
                o[small] = r
        return tuple(out)
    small = alpha < WINDOW_ALPHA
    if kind == "equivalence" and np.any(small):
        # a small alpha: searched in the window's own terms (``window``), not as the
        # complement band of size 1 - alpha, which cannot carry alpha's digits; a
        # larger alpha keeps the complement band's search, which converges on the
        # spread-out laws the window search can miss (bench/bench_spread.py)
        out = [np.full(size, np.nan) for _ in range(4)]
        lo_a, hi_a = np.asarray(low, float)[small], np.asarray(high, float)[small]
        ks = None if k is None else k[small]
        Pl, Ph = L.make(lo_a, n[small], ks), L.make(hi_a, n[small], ks)
        dt = np.asarray(family.natural_delta(lo_a, hi_a, n[small], ks), dtype=float)
        # the family's log-ratio line: a short window at a large mean takes its
        # gammas from it (lineform, in refine_equivalence)
        own = type(family).log_ratio_line is not Family.log_ratio_line
        line = Line(family, lo_a, hi_a, n[small], ks) if own else None
        diff = Difference(L, Pl, Ph, dt, line)
        a_s = alpha[small]
        res = _equivalence_window(family, L, Pl, Ph, diff, a_s, n[small], lo_a, hi_a, ks)
        res = KINDS["equivalence"].canonical(*res)
        res = refine_equivalence(L, Pl, diff, a_s, *res)
        for o, r in zip(out, res):
            o[small] = r
        rest = ~small
        if np.any(rest):
            res = _solve(family, kind, n[rest], alpha[rest], np.asarray(low, float)[rest],
                         np.asarray(high, float)[rest], None, None if k is None else k[rest])
            for o, r in zip(out, res):
                o[rest] = r
        return tuple(out)
    if kind in ("band", "equivalence"):
        lo = np.asarray(low, float)
        hi = np.asarray(high, float)
        Pl = L.make(lo, n, k)
        Ph = L.make(hi, n, k)
        dt = np.asarray(family.natural_delta(lo, hi, n, k), dtype=float)
        s = alpha if kind == "band" else float_complements(alpha)
        a0 = initial_split(L, Pl, Ph, s)
        # the family's log-ratio line, for short windows at a large mean (lineform.Line)
        own = type(family).log_ratio_line is not Family.log_ratio_line
        line = Line(family, lo, hi, n, k) if own else None
        res = two_tailed(L, Pl, Ph, Difference(L, Pl, Ph, dt, line), s, a0,
                          b=ac if kind == "band" else alpha)
        res = canonical_band(*res)
        if kind == "equivalence":
            res = equivalence_from_band(*res)
            return refine_equivalence(L, Pl, Difference(L, Pl, Ph, dt, line), alpha, *res)
        return res
    raise ValueError(f"unknown kind {kind!r}")  # validated before; defensive


def _equivalence_window(family, L, Pl, Ph, diff, alpha, n, lo, hi, k):
    """``window.equivalence``; where it does not converge, row by row, and a row it
    still leaves through the complement band of size 1 - alpha, whose short window at
    a large mean takes the log-ratio line (``twotailed``, ``lineform``): a window of
    ~5,000 to 120,000 points over means of 1e8 to 3e10 that the window search did
    not converge on (tests/test_narrow_bands_near_one.py)."""
    try:
        return window.equivalence(L, Pl, Ph, diff, alpha, window.initial(L, Pl, Ph, alpha))
    except SolverFailure:
        if alpha.size == 1:
            s = float_complements(alpha)
            res = two_tailed(L, Pl, Ph, diff, s, initial_split(L, Pl, Ph, s), b=alpha)
            return equivalence_from_band(*canonical_band(*res))
    out = [np.full(alpha.size, np.nan) for _ in range(4)]
    for i in range(alpha.size):
        j = np.array([i])
        res = _equivalence_window(family, L, sub(Pl, j), sub(Ph, j), diff.subset(j), alpha[j],
                                  n[j], lo[j], hi[j], None if k is None else k[j])
        for o, r in zip(out, res):
            o[i] = r[0]
    return tuple(out)

