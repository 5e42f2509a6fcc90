"""The fast solver's equivalence search in the window's own terms (alpha <= 1/2).

An equivalence test rejects in a window c1..c2 (randomised at both ends) whose
mass is alpha under the law at ``low`` and under the law at ``high``.  Searched
as its complement, a band of size 1 - alpha, the window keeps only the digits of
alpha that 1 - alpha carries in double precision (four at alpha = 1e-12), and a
wide window over a large mean then got wrong cutoffs or no convergence.  Here
nothing is formed against 1:

* the state is A = S_low(c1) + g1 f_low(c1), the mass at ``low`` from the
  window's left end upward (A in [alpha, 1]); it gives c1 and g1 from the right
  tail at low, which is small where the window lies far above low's mean;
* the right end follows from the size at ``high``: its mass up to the right
  end is B = alpha + (mass at high left of the window), a sum of positive terms,
  which gives c2 and g2 from the left tail at high;
* the residual is the second side condition in difference-quotient form,
  Q = (E_high phi - E_low phi) / dt with E_high phi = alpha by construction; it
  decreases in A (monotone likelihood ratio), so the root is bracketed in
  [alpha, 1];
* on the current integer cutoffs the gammas solve the 2x2 system of the window:
  the size at low (alpha minus the interior mass P_low(c1 < Y < c2)) and the
  difference quotient (minus the interior sum of (f_high - f_low) / dt); each
  interior quantity is a sum of its terms for a window of up to ``WINDOW_SUM``
  points, otherwise a difference of the tails on the side where they are small
  (``interior``).  If both gammas lie in [0, 1] that is the design; otherwise the
  piece's root proposes the next A (Newton), safeguarded by Illinois regula falsi
  and bisection (on the normal-quantile scale of A, so an A near alpha = 1e-12
  is reached in a few steps).
"""

from __future__ import annotations

import numpy as np
from scipy.special import ndtr, ndtri

from .conditions import GL_MAX_SPREAD
from .lineform import equivalence_gammas, line_rows
from .search import BIG, first_true, sub
from .twotailed import GAMMA_TOL, WINDOW_SUM, SolverFailure, crossing, store_done

_MAX_ITER = 200


def initial(L, Pl, Ph, alpha):
    """Starting A: the window centred where the likelihood ratio f_high/f_low crosses 1
    (``twotailed.crossing``)."""
    return np.clip(L.sf(crossing(L, Pl, Ph), Pl) + 0.5 * alpha, alpha, 1.0)


def tail_middle(L, P, c1, c2):
    """P(c1 < Y < c2) from the tails, on the side where they are small.

    Window above the median: S(c1) - S(c2 - 1); below it: F(c2 - 1) - F(c1); a window
    holding the median has a mass of order one and is 1 - F(c1) - S(c2 - 1).
    """
    s1, s2 = L.sf(c1, P), L.sf(c2 - 1.0, P)
    f1, f2 = L.cdf(c1, P), L.cdf(c2 - 1.0, P)
    return np.where(s1 < 0.5, s1 - s2, np.where(f2 < 0.5, f2 - f1, (1.0 - f1) - s2))


def interior(L, diff, c1, c2):
    """P_low(c1 < Y < c2) and the sum over c1 < y < c2 of (f_high - f_low)(y) / dt.

    Term by term for at most WINDOW_SUM interior points (all rows in one
    vectorised call); beyond, from the tails (``tail_middle``), with the
    difference either of the two masses (a wide band: the law changes by more
    than GL_MAX_SPREAD e-folds) or of the quadratures of dF/dt at the window's
    ends (a narrow one, where the two masses nearly cancel).
    """
    Pl = diff.Pl
    count = c2 - c1 - 1.0
    mid = np.zeros(c1.shape)
    dmid = np.zeros(c1.shape)
    few = (count >= 1.0) & (count <= WINDOW_SUM)
    if np.any(few):
        j = np.nonzero(few)[0]
        width = count[j].astype(np.int64)
        row = np.repeat(np.arange(j.size), width)
        start = np.cumsum(width) - width
        y = c1[j][row] + 1.0 + (np.arange(row.size) - start[row])
        jr = j[row]
        fy = L.pmf(y, sub(Pl, jr))
        terms = diff.subset(jr).dpmf(y, fy)
        mid[j] = np.bincount(row, weights=fy, minlength=j.size)
        dmid[j] = np.bincount(row, weights=terms, minlength=j.size)
    many = count > WINDOW_SUM
    if np.any(many):
        j = np.nonzero(many)[0]
        dj = diff.subset(j)
        a, b = c1[j], c2[j]
        ml = tail_middle(L, sub(Pl, j), a, b)
        mh = tail_middle(L, dj.Ph, a, b)
        wide = np.maximum(dj.spread(a), dj.spread(b - 1.0)) > GL_MAX_SPREAD
        by_quotient = -(dj.dcdf(b - 1.0) - dj.dcdf(a))
        mid[j] = ml
        with np.errstate(divide="ignore", invalid="ignore"):
            dmid[j] = np.where(wide, (mh - ml) / dj.dt, by_quotient)
    return mid, dmid


def _piece(L, diff, alpha, c1, c2, g=None):
    """Gammas solving the window system on cutoffs c1 < c2, and the pieces' terms.

    A window at a large mean over which the log ratio changes little (``line_rows``)
    takes the log-ratio line's form (``lineform.equivalence_gammas``): there the
    interior's difference quotient is a difference of two nearly equal tails' slopes
    (gammas of +-100 on the right cutoffs of a negative binomial of mean 8.7e11, and
    no convergence).  With ``g`` (current gammas), also the second condition's
    residual of those rows, divided by dt as the search's Q (NaN elsewhere).
    """
    Pl = diff.Pl
    f1, f2 = L.pmf(c1, Pl), L.pmf(c2, Pl)
    d1, d2 = diff.dpmf(c1, f1), diff.dpmf(c2, f2)
    mid, dmid = interior(L, diff, c1, c2)
    r1, r2 = alpha - mid, -dmid
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        det = f1 * d2 - f2 * d1
        h1 = (r1 * d2 - f2 * r2) / det
        h2 = (f1 * r2 - d1 * r1) / det
    q_line = np.full(c1.shape, np.nan)
    short, long_ = line_rows(diff, L, Pl, c1, c2, alpha < 0.5, WINDOW_SUM)
    if np.any(short | long_):
        res = equivalence_gammas(L, Pl, diff.line, c1, c2, alpha, short, long_,
                                 g=None if g is None else (np.broadcast_to(g[0], c1.shape),
                                                           np.broadcast_to(g[1], c1.shape)))
        h1, h2 = h1.copy(), h2.copy()
        h1[res[0]], h2[res[0]] = res[1], res[2]
        if g is not None:
            with np.errstate(divide="ignore", invalid="ignore"):
                q_line[res[0]] = res[3] * diff.line_scale(res[0])
    return h1, h2, f1, d1, d2, dmid, q_line


def _in_range(h1, h2):
    lo, hi = -GAMMA_TOL, 1.0 + GAMMA_TOL
    return np.isfinite(h1) & np.isfinite(h2) & (h1 >= lo) & (h1 <= hi) & (h2 >= lo) & (h2 <= hi)


def equivalence(L, Pl, Ph, diff, alpha, A0):
    """Equivalence designs of size alpha (<= 1/2) at Pl and Ph: arrays (c1, g1, c2, g2)."""
    size = alpha.shape[0]
    out = [np.full(size, np.nan) for _ in range(4)]
    A0 = np.asarray(A0, float)
    st = {
        "idx": np.arange(size), "alpha": alpha, "A": A0.copy(),
        "alo": alpha.copy(), "ahi": np.ones(size),
        "qlo": np.full(size, np.nan), "qhi": np.full(size, np.nan),
        "qprev": np.full(size, np.inf), "side": np.zeros(size),
        "c1": L.upper_quantile_guess(A0, Pl), "c2": L.quantile_guess(alpha, Ph),
        "zero": np.zeros(size), "top": np.minimum(L.supmax(Pl), BIG),
    }
    for _ in range(_MAX_ITER):
        A, a_, top = st["A"], st["alpha"], st["top"]
        c1 = first_true(lambda c, j: L.sf(c, sub(Pl, j)) <= A[j], st["c1"], st["zero"], top)
        S1, f1 = L.sf(c1, Pl), L.pmf(c1, Pl)
        with np.errstate(divide="ignore", invalid="ignore"):
            g1 = np.clip(np.nan_to_num((A - S1) / f1, nan=0.0), 0.0, 1.0)
        # the right end from the size at high, from the tail at high that is small:
        # B = alpha + (mass left of the window) while the left end is below high's
        # median, else R = (mass right of the left end) - alpha (stochastic order
        # keeps R >= 0 and B <= 1)
        f1h = L.pmf(c1, Ph)
        Lh = L.cdf(c1 - 1.0, Ph) + (1.0 - g1) * f1h
        left = Lh <= 0.5
        B = np.minimum(a_ + Lh, 1.0)
        R = np.zeros(c1.shape)
        if not np.all(left):
            j = np.nonzero(~left)[0]
            R[j] = np.maximum(L.sf(c1[j], sub(Ph, j)) + g1[j] * f1h[j] - a_[j], 0.0)

        def right_end(c, j):
            out = np.empty(j.size, dtype=bool)
            lj = left[j]
            for m, test in ((lj, lambda x, k: L.cdf(x, sub(Ph, k)) >= B[k]),
                            (~lj, lambda x, k: L.sf(x, sub(Ph, k)) <= R[k])):
                if np.any(m):
                    out[m] = test(c[m], j[m])
            return out

        c2 = first_true(right_end, np.maximum(st["c2"], c1), st["zero"], top)
        f2h = L.pmf(c2, Ph)
        g2 = np.empty(c2.shape)
        with np.errstate(divide="ignore", invalid="ignore"):
            if np.any(left):
                j = np.nonzero(left)[0]
                g2[j] = (B[j] - L.cdf(c2[j] - 1.0, sub(Ph, j))) / f2h[j]
            if not np.all(left):
                j = np.nonzero(~left)[0]
                g2[j] = 1.0 - (R[j] - L.sf(c2[j], sub(Ph, j))) / f2h[j]
        g2 = np.clip(np.nan_to_num(g2, nan=1.0), 0.0, 1.0)
        # a window inside one point (c2 == c1): try the pieces on both sides of it
        meet = c2 <= c1
        p2 = np.where(meet, c1 + 1.0, c2)
        h1, h2, pf1, d1, d2, dmid, q_line = _piece(L, diff, a_, c1, p2, (g1, g2))
        done = _in_range(h1, h2) & (p2 <= top)
        c1o, c2o = c1.copy(), p2.copy()
        alt = meet & ~done & (c1 >= 1.0)
        if np.any(alt):
            j = np.nonzero(alt)[0]
            k1, k2 = c1[j] - 1.0, c1[j]
            b1, b2, *_ = _piece(L, diff.subset(j), a_[j], k1, k2)
            ok = _in_range(b1, b2)
            jj = j[ok]
            h1[jj], h2[jj], c1o[jj], c2o[jj] = b1[ok], b2[ok], k1[ok], k2[ok]
            done[jj] = True
        if np.any(done):
            store_done(out, st["idx"], done, c1o, h1, c2o, h2)
        keep = ~done
        if not np.any(keep):
            break
        # residual of the state: (E_high phi - E_low phi) / dt, E_high phi = alpha
        Q = np.where(meet, (g1 + g2 - 1.0) * d1, g1 * d1 + g2 * d2 + dmid)
        Q = np.where(~meet & np.isfinite(q_line), q_line, Q)
        up = Q > 0  # the root lies at a larger A
        alo = np.where(up, A, st["alo"])
        ahi = np.where(up, st["ahi"], A)
        qlo = np.where(up, Q, st["qlo"])
        qhi = np.where(up, st["qhi"], Q)
        qhi = np.where(up & (st["side"] == 1.0), 0.5 * qhi, qhi)  # Illinois
        qlo = np.where(~up & (st["side"] == -1.0), 0.5 * qlo, qlo)
        with np.errstate(invalid="ignore", over="ignore"):  # inf * 0: not finite, not taken
            An = S1 + h1 * pf1  # the root of the current linear piece
        newton = (np.abs(Q) < 0.5 * st["qprev"]) & np.isfinite(An) & (An > alo) & (An < ahi)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = qlo / (qlo - qhi)
        rf = np.isfinite(t) & (t > 0) & (t < 1) & (ahi <= 4.0 * alo)
        # bisection on the normal-quantile scale: halves a bracket near 1/2, and
        # reaches an A near alpha = 1e-12 in a few steps
        zl, zh = ndtri(alo), ndtri(np.minimum(ahi, 1.0 - 1e-16))
        mid = np.clip(ndtr(0.5 * (zl + zh)), alo, ahi)
        mid = np.where((mid > alo) & (mid < ahi), mid, 0.5 * (alo + ahi))
        am = np.where(rf, alo + t * (ahi - alo), mid)
        st.update(A=np.where(newton, An, am), alo=alo, ahi=ahi, qlo=qlo, qhi=qhi,
                  qprev=np.abs(Q), side=np.where(up, 1.0, -1.0), c1=c1, c2=c2)
        sel = np.nonzero(keep)[0]
        st = {key: val[sel] for key, val in st.items()}
        Pl, Ph = sub(Pl, sel), sub(Ph, sel)
        diff = diff.subset(sel)
    else:
        raise SolverFailure(f"fast solver did not converge for {st['idx'].size} design(s)")
    return tuple(out)
