"""Vectorised integer search and the one-sided kinds of the fast solver.

``first_true`` finds the smallest integer cutoff where a monotone predicate
holds, for many designs at once (galloping from a guess, then bisection).  The
one-sided designs (upper, lower) are one such search and one division each.
"""

from __future__ import annotations

import numpy as np

BIG = 1e15  # largest cutoff searched (an unbounded support is cut here)


def sub(P, j):
    """The j-th elements of every array of a parameter tuple."""
    return tuple(x[j] for x in P)


def first_true(pred, guess, lo, hi):
    """Smallest integer c in [lo, hi] with pred(c, sel) True, vectorised.

    ``pred`` must be monotone in c (False ... False True ... True) and True at hi;
    ``sel`` are the indices of the elements being evaluated.  The search gallops
    out from ``guess`` to a bracket and then bisects.
    """
    size = guess.shape[0]
    c = np.clip(guess, lo, hi)
    low = c - 1.0  # candidate "false" end (lo - 1 counts as false)
    high = c.copy()  # candidate "true" end (hi counts as true)
    step = np.ones(size)
    # make `high` a true point
    todo = np.nonzero(high < hi)[0]
    while todo.size:
        ok = pred(high[todo], todo)
        low[todo[~ok]] = np.maximum(low[todo[~ok]], high[todo[~ok]])
        nxt = todo[~ok]
        high[nxt] = np.minimum(high[nxt] + step[nxt], hi[nxt])
        step[nxt] *= 2.0
        todo = nxt[high[nxt] < hi[nxt]]
    # make `low` a false point
    step[:] = 1.0
    todo = np.nonzero(low >= lo)[0]
    while todo.size:
        bad = pred(low[todo], todo)
        moved = todo[bad]
        high[moved] = np.minimum(high[moved], low[moved])
        low[moved] = np.maximum(low[moved] - step[moved], lo[moved] - 1.0)
        step[moved] *= 2.0
        todo = moved[low[moved] >= lo[moved]]
    # bisect
    todo = np.nonzero(high - low > 1.0)[0]
    while todo.size:
        mid = np.floor((low[todo] + high[todo]) / 2.0)
        ok = pred(mid, todo)
        high[todo[ok]] = mid[ok]
        low[todo[~ok]] = mid[~ok]
        todo = todo[high[todo] - low[todo] > 1.0]
    return high


# ---------------------------------------------------------------------------
# one-sided kinds
# ---------------------------------------------------------------------------
# alpha above one half is handled through its exact complement ac = 1 - alpha
# (from the decimal): sf(c) <= alpha is cdf(c) >= ac, and the gamma comes from
# the short tail, so an alpha within 1e-12 of 1 keeps the gamma's digits.
def upper(L, P, alpha, ac):
    """Upper designs: c2 and gamma2 for each (alpha above 1/2 through ac = 1 - alpha)."""
    hi = np.minimum(L.supmax(P), BIG)
    zero = np.zeros_like(alpha)
    big = alpha > 0.5
    guess = L.quantile_guess(np.where(big, ac, 1.0 - alpha), P)

    def ok(c, j):
        Pj = sub(P, j)
        return np.where(big[j], L.cdf(c, Pj) >= ac[j], L.sf(c, Pj) <= alpha[j])

    c2 = first_true(ok, guess, zero, hi)
    f = L.pmf(c2, P)
    with np.errstate(divide="ignore", invalid="ignore"):
        g2 = np.where(big, (L.cdf(c2, P) - ac) / f, (alpha - L.sf(c2, P)) / f)
    return c2, g2


def lower(L, P, alpha, ac):
    """Lower designs: c1 and gamma1 for each (alpha above 1/2 through ac = 1 - alpha)."""
    hi = np.minimum(L.supmax(P), BIG)
    zero = np.zeros_like(alpha)
    big = alpha > 0.5
    guess = L.quantile_guess(alpha, P)

    def ok(c, j):
        Pj = sub(P, j)
        return np.where(big[j], L.sf(c, Pj) < ac[j], L.cdf(c, Pj) > alpha[j])

    c1 = first_true(ok, guess, zero, hi)
    f = L.pmf(c1, P)
    with np.errstate(divide="ignore", invalid="ignore"):
        g1 = np.where(big, 1.0 + (L.sf(c1, P) - ac) / f, (alpha - L.cdf(c1 - 1.0, P)) / f)
    return c1, g1


