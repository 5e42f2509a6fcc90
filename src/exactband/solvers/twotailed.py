"""The search of the fast solver for two-tailed kinds (band, point; equivalence via its complement).

Tail-split parameterisation: a left tail of mass ``a`` and a right tail of mass
``r = s - a`` at the first constraint point give cutoffs c1(a), c2(r) and
gammas; the second side condition Q(a) (``conditions``) is then strictly
decreasing in ``a`` (monotone likelihood ratio) and piecewise linear.  On the
linear piece that holds the current point, the 2x2 linear system for the gammas
gives the exact root of that piece (a Newton step); if the solution has both
gammas in [0, 1] it is the answer, otherwise it proposes the next point,
safeguarded by a bracket and bisection.  No cutoff pair is ever enumerated.
"""

from __future__ import annotations

import numpy as np

from .lineform import LINE_MEAN, line_rows, line_system, window_search
from .search import BIG, first_true, sub

GAMMA_TOL = 1e-12  # a piece's solution is accepted with gammas in [-tol, 1 + tol]
_MAX_ITER = 200
MIDDLE_SUM = 64  # middle masses of at most this many points are summed term by term
# s > 1/2: an acceptance window of at most this many points is summed term by term
WINDOW_SUM = 4096


class SolverFailure(RuntimeError):
    """The fast solver did not converge for some designs (never silent)."""


def initial_split(L, Pl, Ph, s):
    """Starting left-tail mass a at the first point (only a start; errors are fixed later).

    Point design: half the size.  Band: a few fixed-point rounds of "left tail at
    low, right tail at high" find the split of a wide band.  Equivalence
    (complement of size 1 - alpha): the rejection window sits where the
    likelihood ratio f_high/f_low crosses 1.
    """
    a = s / 2.0
    if Ph is None:
        return a
    if np.all(s > 0.5):
        alpha = 1.0 - s
        return np.clip(L.cdf(crossing(L, Pl, Ph), Pl) - 0.5 * alpha, 0.0, s)
    for _ in range(3):
        c1 = L.quantile_guess(a, Pl)
        ah = L.cdf(c1 - 1.0, Ph)
        c2 = L.upper_quantile_guess(np.maximum(s - ah, 1e-300), Ph)
        a = s - L.sf(c2, Pl)
    return np.clip(a, 0.0, s)


def crossing(L, Pl, Ph):
    """The integer point where f_high/f_low crosses 1 (between the two means).

    log f_high/f_low is linear in y: its secant through the two means, where it is small
    and so is its rounding (through y = 0 and 1 it is a difference of two numbers ~ n dt:
    at a Poisson mean of 1.2e11 that put y* 6 sd low, the start's left tail underflowed
    and the search never left it)."""
    dt = L.t(Ph) - L.t(Pl)
    ml, mh = L.moments(Pl)[0], L.moments(Ph)[0]
    l0, l1 = L.logratio(ml, Pl, dt), L.logratio(mh, Pl, dt)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ystar = np.floor(ml - l0 * (mh - ml) / (l1 - l0))
    ystar = np.clip(np.nan_to_num(ystar, nan=0.0), np.floor(ml), np.floor(mh))
    return np.clip(ystar, 0.0, np.minimum(L.supmax(Pl), BIG))


def _window_sums(L, P, second, c1, c2, rows):
    """Mass and second-condition sum over c1..c2 at P, term by term, for `rows`.

    Used where the acceptance window is narrow (at most WINDOW_SUM + 1 points):
    there the tails hold almost all the mass and their differences lose the
    window's digits, while the window's own terms keep them.  A window of
    alpha near 1 over a law with a large spread holds about
    (1 - alpha) / pmf(mode) points (about 100 for a negative binomial of mean
    4e10, size 7e4 at 1 - alpha = 2.6e-7): all points of all rows are summed in
    one vectorised call.
    """
    j = np.nonzero(rows)[0]
    a, b = c1[j], c2[j]
    width = (b - a + 1.0).astype(np.int64)
    row = np.repeat(np.arange(j.size), width)
    start = np.cumsum(width) - width
    y = a[row] + (np.arange(row.size) - start[row])
    jr = j[row]
    fy = L.pmf(y, sub(P, jr))
    terms = second.subset(jr).dpmf(y, fy)
    mass = np.bincount(row, weights=fy, minlength=j.size)
    dsum = np.bincount(row, weights=terms, minlength=j.size)
    return j, mass, dsum


def store_done(out, idx, done, c1, g1, c2, g2) -> None:
    """Write the finished rows (cutoffs, gammas clipped to [0, 1]) into ``out`` at ``idx``."""
    k = idx[done]
    out[0][k], out[2][k] = c1[done], c2[done]
    out[1][k] = np.clip(g1[done], 0.0, 1.0)
    out[3][k] = np.clip(g2[done], 0.0, 1.0)

def two_tailed(L, Pl, Pr, second, s, a0, b=None):
    """Band-form test of size s (left tail at Pl, right tail at Pr) with condition `second`.

    ``b`` is 1 - s formed exactly (from the decimal alpha); where s > 1/2 and the
    acceptance window c1..c2 is narrow, the linear system's right sides are then
    taken from the window's own terms (mass - b and the summed condition), not
    from differences of tails near 1/2 that have lost the window's digits (alpha
    within ~1e-11 of 1 at a large mean failed to converge before).

    The state is the left-tail mass ``a`` at the first point.  The right tail is
    fixed by its own mass at ``Pr``: for a band, the size at ``high`` is then exact
    by construction and the residual is the size at ``low`` (a wide band's right
    tail at ``low`` may lie far below the smallest double and never needs to be
    represented); for the point design ``Pr`` is the point itself.  The second
    condition, evaluated as a difference quotient, decreases in ``a``.

    Each round takes, in order of preference: the root of the current linear
    piece (a Newton step) while it keeps shrinking |Q|; a jump over a flat piece
    where the two tails end at one point; an Illinois regula falsi step; bisection.
    """
    size = s.shape[0]
    same = Pr is Pl
    out = [np.full(size, np.nan) for _ in range(4)]
    st = {
        "idx": np.arange(size), "s": s, "a": np.array(a0, float),
        "alo": np.zeros(size), "ahi": s.copy(),
        "qlo": np.full(size, np.nan), "qhi": np.full(size, np.nan),
        "qprev": np.full(size, np.inf), "side": np.zeros(size),
        "c1": L.quantile_guess(a0, Pl), "c2": L.upper_quantile_guess(s - np.asarray(a0), Pr),
        "zero": np.zeros(size), "top": np.minimum(L.supmax(Pl), BIG),
        "b": None if b is None else np.asarray(b, float),
    }
    lo_ok, hi_ok = -GAMMA_TOL, 1.0 + GAMMA_TOL
    for _ in range(_MAX_ITER):
        a, s_ = st["a"], st["s"]
        P, R = Pl, Pr
        c1 = first_true(lambda c, j: L.cdf(c, sub(P, j)) > a[j], st["c1"], st["zero"], st["top"])
        Fm, f1 = L.cdf(c1 - 1.0, P), L.pmf(c1, P)
        with np.errstate(divide="ignore", invalid="ignore"):
            g1 = (a - Fm) / f1
        if same:
            rh = s_ - a
        else:
            rh = s_ - (L.cdf(c1 - 1.0, R) + g1 * L.pmf(c1, R))
        c2 = first_true(lambda c, j: L.sf(c, sub(R, j)) <= rh[j], st["c2"], st["zero"], st["top"])
        S2r, f2r = L.sf(c2, R), L.pmf(c2, R)
        S2, f2 = (S2r, f2r) if same else (L.sf(c2, P), L.pmf(c2, P))
        with np.errstate(divide="ignore", invalid="ignore"):
            g2 = (rh - S2r) / f2r
        d1, d2 = second.dpmf(c1, f1), second.dpmf(c2, f2)
        R2 = second.dcdf(c2) - second.dcdf(c1 - 1.0)
        R1 = (a - Fm) + ((s_ - a) - S2)
        lines = None
        if st["b"] is not None:
            narrow = (s_ > 0.5) & (c2 - c1 <= WINDOW_SUM) & (c2 >= c1)
            if np.any(narrow):
                j, mass, dsum = _window_sums(L, P, second, c1, c2, narrow)
                R1 = R1.copy()
                R2 = R2.copy()
                R1[j] = mass - st["b"][j]
                R2[j] = dsum
            # a large mean: the window's gammas from its log-ratio line (lineform)
            short, long_ = line_rows(second, L, P, c1, c2, s_ > 0.5, WINDOW_SUM)
            if np.any(short | long_):
                lines = line_system(L, P, second.line, c1, c2, st["b"], f1, f2, g1, g2,
                                    short, long_)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            det = f1 * d2 - f2 * d1
            g1n = (R1 * d2 - f2 * R2) / det
            g2n = (f1 * R2 - d1 * R1) / det
            Q = g1 * d1 + g2 * d2 - R2
        if lines is not None:
            j, h1, h2, q = lines
            g1n[j], g2n[j], Q[j] = h1, h2, q * second.line_scale(j)
        done = ((c1 < c2) & np.isfinite(g1n) & np.isfinite(g2n)
                & (g1n >= lo_ok) & (g1n <= hi_ok) & (g2n >= lo_ok) & (g2n <= hi_ok))
        if np.any(done):
            store_done(out, st["idx"], done, c1, g1n, c2, g2n)
        keep = ~done
        if not np.any(keep):
            break
        up = Q > 0  # the root lies at a larger left tail
        alo = np.where(up, a, st["alo"])
        ahi = np.where(up, st["ahi"], a)
        qlo = np.where(up, Q, st["qlo"])
        qhi = np.where(up, st["qhi"], Q)
        # Illinois: an end kept twice in a row has its Q halved
        qhi = np.where(up & (st["side"] == 1.0), 0.5 * qhi, qhi)
        qlo = np.where(~up & (st["side"] == -1.0), 0.5 * qlo, qlo)
        # Newton: the root of the current linear piece
        an = Fm + g1n * f1
        newton = (np.abs(Q) < 0.5 * st["qprev"]) & np.isfinite(an) & (an > alo) & (an < ahi)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = qlo / (qlo - qhi)
        rf = np.isfinite(t) & (t > 0) & (t < 1)
        am = np.where(rf, alo + t * (ahi - alo), 0.5 * (alo + ahi))
        meet = (c1 >= c2) & ~newton
        if np.any(meet):
            ja = _jump(L, P, R, c1, s_, up)
            am = np.where(meet & (ja > alo) & (ja < ahi), ja, am)
        st.update(a=np.where(newton, an, am), alo=alo, ahi=ahi, qlo=qlo, qhi=qhi,
                  qprev=np.abs(Q), side=np.where(up, 1.0, -1.0), c1=c1, c2=c2)
        sel = np.nonzero(keep)[0]
        st = {key: (None if val is None else val[sel]) for key, val in st.items()}
        Pl = sub(Pl, sel)
        Pr = Pl if same else sub(Pr, sel)
        second = second.subset(sel)
    else:
        # a short window at a large mean the tails could not place: the window itself
        left = st["idx"]
        if st["b"] is not None and getattr(second, "line", None) is not None:
            on = (st["s"] > 0.5) & (L.moments(Pl)[0] >= LINE_MEAN)
            if np.any(on):
                j = np.nonzero(on)[0]
                res = window_search(L, sub(Pl, j), second.line.subset(j), st["b"][j], WINDOW_SUM)
                found = np.isfinite(res[0])
                for o, r in zip(out, res):
                    o[left[j[found]]] = r[found]
                left = np.setdiff1d(left, left[j[found]])
        if left.size:
            raise SolverFailure(f"fast solver did not converge for {left.size} design(s)")
    return tuple(out)


def _jump(L, P, R, c, s, up):
    """Left-tail mass in the middle of the piece next to a flat one (both tails end at c).

    Next piece (c, c+1): gamma1 at c such that the right tail at R ends at c+1.
    Previous piece (c-1, c): gamma1 at c-1 such that the right tail at R ends at c.
    """
    def window(cl, cr):
        fl = L.pmf(cl, R)
        base = s - L.cdf(cl - 1.0, R)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            lo = np.clip((base - L.sf(cr - 1.0, R)) / fl, 0.0, 1.0)
            hi = np.clip((base - L.sf(cr, R)) / fl, 0.0, 1.0)
        g = 0.5 * (lo + hi)
        return L.cdf(cl - 1.0, P) + g * L.pmf(cl, P)

    return np.where(up, window(c, c + 1.0), window(c - 1.0, c))
