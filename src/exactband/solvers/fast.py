"""Fast float solver: vectorised over many designs at once (numpy/scipy).

Two-tailed kinds (band, point, and equivalence through its complement) are
solved in the tail-split parameterisation: a left tail of mass ``a`` and a right
tail of mass ``r = s - a`` at the first constraint point give cutoffs
c1(a), c2(r) and gammas; the second side condition Q(a) is then strictly
decreasing in ``a`` (monotone likelihood ratio) and piecewise linear.  On the
linear piece that holds the current point, the 2x2 linear system for the gammas
gives the exact root of that piece (a Newton step); if the solution has both
gammas in [0, 1] it is the answer, otherwise it proposes the next point,
safeguarded by a bracket and bisection.  No cutoff pair is ever enumerated.

The second condition is written as a difference quotient,
[E_high phi - E_low phi] / (t_high - t_low) = 0, whose ingredients are computed
without cancellation (pmf differences through expm1 of the log-ratio; tail
differences by Gauss-Legendre quadrature of dF/dt when the band is narrow), so
it tends smoothly to the derivative condition of the point design.

References
----------
E. L. Lehmann and J. P. Romano, Testing Statistical Hypotheses, 3rd ed.,
Springer 2005, sections 3.4, 3.7 and 4.2 (form of the tests, side conditions).
"""

from __future__ import annotations

import numpy as np
from numpy.polynomial.legendre import leggauss

from ..mpnum import float_complements
from .search import BIG as _BIG, first_true, lower as _lower, sub, upper as _upper

_GL_X, _GL_W = leggauss(20)
_GL_NODES = (_GL_X + 1.0) / 2.0  # on [0, 1]
_GL_WEIGHTS = _GL_W / 2.0  # sum to 1
_GL_MAX_SPREAD = 4.0  # quadrature used while |d log(-dF/dt)/dt| * dt <= this
_GAMMA_TOL = 1e-12  # a piece's solution is accepted with gammas in [-tol, 1 + tol]
_MAX_ITER = 200
_MIDDLE_SUM = 64  # middle masses of at most this many points are summed term by term


class SolverFailure(RuntimeError):
    """The fast solver did not converge for some designs (never silent)."""


# ---------------------------------------------------------------------------
# second side condition: difference quotient (band) or derivative (point)
# ---------------------------------------------------------------------------
class _Derivative:
    """d/dt E_t phi = 0 at one point (point design)."""

    def __init__(self, L, P):
        self.L, self.P = L, P

    def subset(self, j):
        return _Derivative(self.L, sub(self.P, j))

    def dpmf(self, c, f):
        return f * self.L.dlogpmf(c, self.P)

    def dcdf(self, c):
        return self.L.dcdf(c, self.P)


class _Difference:
    """[E_h phi - E_l phi] / dt = 0 between two points (band designs)."""

    def __init__(self, L, Pl, Ph, dt):
        self.L, self.Pl, self.Ph, self.dt = L, Pl, Ph, dt

    def subset(self, j):
        return _Difference(self.L, sub(self.Pl, j), sub(self.Ph, j), self.dt[j])

    def dpmf(self, c, f):
        lr = self.L.logratio(c, self.Pl, self.dt)
        small = np.abs(lr) < 1.0
        with np.errstate(over="ignore", invalid="ignore"):
            near = f * np.expm1(np.where(small, lr, 0.0))
        # far apart (|log ratio| >= 1) the plain difference loses at most a factor e/(e-1)
        far = self.L.pmf(c, self.Ph) - f if not np.all(small) else 0.0
        return np.where(small, near, far) / self.dt

    def spread(self, c):
        """How many e-folds dF(c)/dt varies over the band (bounds the quadrature error)."""
        L, Pl, Ph, dt = self.L, self.Pl, self.Ph, self.dt
        Pm = L.with_t(Pl, L.t(Pl) + 0.5 * dt)
        return dt * np.maximum.reduce(
            [np.abs(L.dlogw(c, Pl)), np.abs(L.dlogw(c, Pm)), np.abs(L.dlogw(c, Ph))])

    def dcdf(self, c):
        L, Pl, Ph, dt = self.L, self.Pl, self.Ph, self.dt
        spread = self.spread(c)
        inside = (c >= 0) & (c < L.supmax(Pl))
        quad = inside & (spread <= _GL_MAX_SPREAD)
        out = np.zeros_like(dt)
        direct = inside & ~quad
        if np.any(direct):
            j = np.nonzero(direct)[0]
            Plj, Phj, cj = sub(Pl, j), sub(Ph, j), c[j]
            sl = L.sf(cj, Plj)
            right = sl < 0.5
            diff_sf = -(L.sf(cj, Phj) - sl)
            diff_cdf = L.cdf(cj, Phj) - L.cdf(cj, Plj)
            out[j] = np.where(right, diff_sf, diff_cdf) / dt[j]
        if np.any(quad):
            j = np.nonzero(quad)[0]
            Plj, cj, dtj = sub(Pl, j), c[j], dt[j]
            t0 = L.t(Plj)
            acc = np.zeros(j.size)
            for x, w in zip(_GL_NODES, _GL_WEIGHTS):
                acc += w * L.dcdf(cj, L.with_t(Plj, t0 + x * dtj))
            out[j] = acc
        return out


# ---------------------------------------------------------------------------
# two-tailed kinds
# ---------------------------------------------------------------------------
def _initial_split(L, Pl, Ph, s):
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
        dt = L.t(Ph) - L.t(Pl)
        l0, l1 = L.logratio(0.0, Pl, dt), L.logratio(1.0, Pl, dt)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            ystar = np.floor(-l0 / (l1 - l0))
        ystar = np.clip(np.nan_to_num(ystar, nan=0.0), 0.0, np.minimum(L.supmax(Pl), _BIG))
        alpha = 1.0 - s
        return np.clip(L.cdf(ystar, Pl) - 0.5 * alpha, 0.0, s)
    for _ in range(3):
        c1 = L.quantile_guess(a, Pl)
        ah = L.cdf(c1 - 1.0, Ph)
        c2 = L.quantile_guess(1.0 - np.maximum(s - ah, 1e-300), Ph)
        a = s - L.sf(c2, Pl)
    return np.clip(a, 0.0, s)


def _window_sums(L, P, second, c1, c2, rows):
    """Mass and second-condition sum over c1..c2 at P, term by term, for `rows`.

    Used where the acceptance window is narrow (at most _MIDDLE_SUM + 1 points):
    there the tails hold almost all the mass and their differences lose the
    window's digits, while the window's own terms keep them.
    """
    j = np.nonzero(rows)[0]
    Pj, a, b = sub(P, j), c1[j], c2[j]
    sub2 = second.subset(j)
    mass = np.zeros(j.size)
    dsum = np.zeros(j.size)
    k = np.arange(j.size)  # rows whose window reaches a + i
    for i in range(_MIDDLE_SUM + 1):
        k = k[a[k] + i <= b[k]]
        if k.size == 0:
            break
        y = a[k] + i
        fy = L.pmf(y, sub(Pj, k))
        mass[k] += fy
        dsum[k] += sub2.subset(k).dpmf(y, fy)
    return j, mass, dsum


def _two_tailed(L, Pl, Pr, second, s, a0, b=None):
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
        "c1": L.quantile_guess(a0, Pl), "c2": L.quantile_guess(1.0 - (s - np.asarray(a0)), Pr),
        "zero": np.zeros(size), "top": np.minimum(L.supmax(Pl), _BIG),
        "b": None if b is None else np.asarray(b, float),
    }
    lo_ok, hi_ok = -_GAMMA_TOL, 1.0 + _GAMMA_TOL
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
        if st["b"] is not None:
            narrow = (s_ > 0.5) & (c2 - c1 <= _MIDDLE_SUM) & (c2 >= c1)
            if np.any(narrow):
                j, mass, dsum = _window_sums(L, P, second, c1, c2, narrow)
                R1 = R1.copy()
                R2 = R2.copy()
                R1[j] = mass - st["b"][j]
                R2[j] = dsum
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            det = f1 * d2 - f2 * d1
            g1n = (R1 * d2 - f2 * R2) / det
            g2n = (f1 * R2 - d1 * R1) / det
            Q = g1 * d1 + g2 * d2 - R2
        done = ((c1 < c2) & np.isfinite(g1n) & np.isfinite(g2n)
                & (g1n >= lo_ok) & (g1n <= hi_ok) & (g2n >= lo_ok) & (g2n <= hi_ok))
        if np.any(done):
            k = st["idx"][done]
            out[0][k], out[2][k] = c1[done], c2[done]
            out[1][k] = np.clip(g1n[done], 0.0, 1.0)
            out[3][k] = np.clip(g2n[done], 0.0, 1.0)
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
        raise SolverFailure(f"fast solver did not converge for {st['idx'].size} design(s)")
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


def _canonical_band(c1, g1, c2, g2):
    """gamma = 1 at a cutoff is the neighbouring cutoff with gamma = 0."""
    one1 = g1 >= 1.0
    c1 = np.where(one1, c1 + 1.0, c1)
    g1 = np.where(one1, 0.0, g1)
    one2 = g2 >= 1.0
    c2 = np.where(one2, c2 - 1.0, c2)
    g2 = np.where(one2, 0.0, g2)
    return c1, g1, c2, g2


def _equivalence_from_band(c1, g1, c2, g2):
    """phi_equivalence = 1 - phi_band(size 1 - alpha), in canonical form."""
    e1, e2 = 1.0 - g1, 1.0 - g2
    same = c1 >= c2  # one-point rejection region: (c, g, c+1, 0)
    e1 = np.where(same, 1.0 - g1 - g2, e1)
    c2 = np.where(same, c1 + 1.0, c2)
    e2 = np.where(same, 0.0, e2)
    full1 = e1 >= 1.0
    c1 = np.where(full1, c1 - 1.0, c1)
    e1 = np.where(full1, 0.0, e1)
    full2 = e2 >= 1.0
    c2 = np.where(full2, c2 + 1.0, c2)
    e2 = np.where(full2, 0.0, e2)
    return c1, e1, c2, e2




def _middle(L, P, c1, c2):
    """P(c1 < Y < c2) from whichever tail keeps the difference accurate."""
    s1, s2 = L.sf(c1, P), L.sf(c2 - 1.0, P)
    return np.where(s1 < 0.5, s1 - s2, L.cdf(c2 - 1.0, P) - L.cdf(c1, P))


def _refine_equivalence(L, Pl, diff, alpha, c1, g1, c2, g2):
    """Re-solve the equivalence gammas from the rejection window itself.

    The complement search fixes the cutoffs, but gammas obtained as
    1 - (band gamma) lose digits when the window sits where the law at ``low``
    has little mass; the window's own equations keep them.
    """
    f1, f2 = L.pmf(c1, Pl), L.pmf(c2, Pl)
    d1, d2 = diff.dpmf(c1, f1), diff.dpmf(c2, f2)
    count = c2 - c1 - 1.0
    few = count <= _MIDDLE_SUM
    mid = np.zeros_like(alpha)
    dmid = np.zeros_like(alpha)
    if np.any(few):
        for j in range(1, _MIDDLE_SUM + 1):
            y = c1 + j
            on = few & (y < c2)
            if not np.any(on):
                break
            fy = L.pmf(y, Pl)
            mid = mid + np.where(on, fy, 0.0)
            dmid = dmid + np.where(on, diff.dpmf(y, fy), 0.0)
    if not np.all(few):
        mid_l = _middle(L, Pl, c1, c2)
        mid_h = _middle(L, diff.Ph, c1, c2)
        # over a wide band the law changes a lot: difference the window's masses;
        # over a narrow one, difference the quotients dF/dt at the window's ends
        wide = np.maximum(diff.spread(c1), diff.spread(c2 - 1.0)) > _GL_MAX_SPREAD
        by_quotient = diff.dcdf(c2 - 1.0) - diff.dcdf(c1)
        mid = np.where(few, mid, mid_l)
        dmid = np.where(few, dmid, np.where(wide, (mid_h - mid_l) / diff.dt, by_quotient))
    r1, r2 = alpha - mid, -dmid
    with np.errstate(divide="ignore", invalid="ignore"):
        det = f1 * d2 - f2 * d1
        h1 = (r1 * d2 - f2 * r2) / det
        h2 = (f1 * r2 - d1 * r1) / det
    lo_ok, hi_ok = -_GAMMA_TOL, 1.0 + _GAMMA_TOL
    # alpha near 1: the window holds almost all the mass; the complement's gammas
    # (band form of size 1 - alpha, small) are then the accurate ones
    ok = (np.isfinite(h1) & np.isfinite(h2) & (h1 >= lo_ok) & (h1 < 1.0) & (h2 >= lo_ok)
          & (h2 < 1.0) & (c2 > c1) & (alpha <= 0.5))
    del hi_ok
    g1 = np.where(ok, np.clip(h1, 0.0, 1.0), g1)
    g2 = np.where(ok, np.clip(h2, 0.0, 1.0), g2)
    return c1, g1, c2, g2


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
        c2, g2 = np.where(g2 >= 1.0, c2 - 1.0, c2), np.where(g2 >= 1.0, 0.0, g2)
        return nan, nan.copy(), c2, np.clip(g2, 0.0, 1.0)
    if kind == "lower":
        P = L.make(np.asarray(value, float), n, k)
        c1, g1 = _lower(L, P, alpha, ac)
        c1, g1 = np.where(g1 >= 1.0, c1 + 1.0, c1), np.where(g1 >= 1.0, 0.0, g1)
        return c1, np.clip(g1, 0.0, 1.0), nan, nan.copy()
    if kind == "point":
        P = L.make(np.asarray(value, float), n, k)
        a0 = _initial_split(L, P, None, alpha)
        res = _two_tailed(L, P, P, _Derivative(L, P), alpha, a0, b=ac)
        return _canonical_band(*res)
    if kind == "band" and np.any(big):
        # a band of size alpha near 1 is 1 - (equivalence design of size 1 - alpha):
        # the equivalence window's own equations keep the digits of 1 - alpha
        out = [np.full(size, np.nan) for _ in range(4)]
        lo_a, hi_a = np.asarray(low, float), np.asarray(high, float)
        kk = None if k is None else k[big]
        e1, h1, e2, h2 = _solve(family, "equivalence", n[big], ac[big], lo_a[big], hi_a[big],
                                None, kk)
        res = _canonical_band(e1, 1.0 - h1, e2, 1.0 - h2)
        for o, r in zip(out, res):
            o[big] = r
        small = ~big
        if np.any(small):
            res = _solve(family, kind, n[small], alpha[small], lo_a[small], hi_a[small], None,
                         None if k is None else k[small])
            for o, r in zip(out, res):
                o[small] = r
        return tuple(out)
    if kind in ("band", "equivalence"):
        lo = np.asarray(low, float)
        hi = np.asarray(high, float)
        Pl = L.make(lo, n, k)
        Ph = L.make(hi, n, k)
        dt = np.asarray(family.natural_delta(lo, hi, n, k), dtype=float)
        s = alpha if kind == "band" else float_complements(alpha)
        a0 = _initial_split(L, Pl, Ph, s)
        res = _two_tailed(L, Pl, Ph, _Difference(L, Pl, Ph, dt), s, a0,
                          b=ac if kind == "band" else alpha)
        res = _canonical_band(*res)
        if kind == "equivalence":
            res = _equivalence_from_band(*res)
            return _refine_equivalence(L, Pl, _Difference(L, Pl, Ph, dt), alpha, *res)
        return res
    raise ValueError(f"unknown kind {kind!r}")  # validated before; defensive
