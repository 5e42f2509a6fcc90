"""The second band condition of a short acceptance window in its log-ratio-line form.

A band (or equivalence complement) of size s > 1/2 accepts only on a window
c1..c2 of mass b = 1 - s at both ends of the band.  In a one-parameter
exponential family the log ratio of the two end laws is a line,
log f_high(y) - log f_low(y) = s_ (y - y*) (``Family.log_ratio_line``: s_ and
y* from the exact decimals).  With psi = 1 - phi on the window (1 inside,
1 - gamma at the cutoffs) the two size conditions are sum f_low psi = b and
sum f_high psi = b.  Dividing the second by exp(s_ (c1 - y*)) and subtracting
v times the first, with

    w(y) = expm1(s_ (y - c1)) / s_   (w(c1) = 0),   v = expm1(s_ (y* - c1)) / s_,

leaves the window's centre of mass at y* in the line's own scale.  Written
with u(y) = expm1(s_ (y - y*)) / s_ = (w(y) - v) exp(-s_ (y* - c1)), which stays
finite wherever the log ratio does (the window's log ratio changes by at most
LINE_SPAN), the condition is

    sum_window f_low(y) u(y) psi(y) = 0.

Every term is of the order of the window's width, a common relative error of
the masses cancels, and y* - c1 is exact from the decimals; the float log ratio
(``conditions.Difference``) places y* only to about u * mean, which moved a
gamma by up to 1e-5 at a mean of 4e10 (and the tail differences of a window's
mass lost it entirely).  In gammas the system is

    f1 g1 + f2 g2 = mass - b,    u1 f1 g1 + u2 f2 g2 = sum f u,

det = f1 f2 (u2 - u1).  A window of at most ``twotailed.WINDOW_SUM`` + 1 points is
summed term by term; a longer one, over which log f changes by less than
LINE_SLOPE per point, is integrated (midpoint Euler-Maclaurin: the sum over
c1..c2 is the integral over [c1 - 1/2, c2 + 1/2] minus (h'(c2 + 1/2) -
h'(c1 - 1/2)) / 24, the next term being below 1e-9 of the window's scale
there; the integral by 20-point Gauss-Legendre on panels over which log f
changes by at most 1).  Error analysis: docs/tolerances.md section 9.
"""

from __future__ import annotations

import numpy as np
from numpy.polynomial.legendre import leggauss

from .search import sub

# From this mean on (at the band's low end, of the mirror image for a binomial above
# one half) a short window takes the line form: the float log ratio places y* to
# about u * mean, which moves a gamma by as much (u * 2^20 ~ 1e-10)
LINE_MEAN = 2.0 ** 20
LINE_SLOPE = 2.0 ** -10  # a long window is integrated while |d log f / dy| <= this
LINE_SPAN = 512.0  # the log ratio changes by at most this over the window (exp stays finite)
MAX_PANELS = 1024  # panels of the integral (log f changes by at most 1 on each)

_X, _W = leggauss(20)
_NODES = (_X + 1.0) / 2.0  # on [0, 1]
_WEIGHTS = _W / 2.0


class Line:
    """s_ and y* = y0 + d per design (``Family.log_ratio_line``), computed for the
    rows that ask (``at``), once."""

    def __init__(self, family, lo, hi, n, k, cols=None):
        self.family, self.lo, self.hi, self.n, self.k = family, lo, hi, n, k
        self.cols = cols if cols is not None else np.full((3, np.shape(lo)[0]), np.nan)

    def subset(self, j):
        return Line(self.family, self.lo[j], self.hi[j], self.n[j],
                    None if self.k is None else self.k[j], self.cols[:, j])

    def at(self, j):
        """(s_, y0, d) for rows j."""
        todo = j[np.isnan(self.cols[0, j])]
        if todo.size:
            k = None if self.k is None else self.k[todo]
            res = self.family.log_ratio_line(self.lo[todo], self.hi[todo], self.n[todo], k)
            for q in range(3):
                self.cols[q, todo] = res[q]
        return self.cols[0, j], self.cols[1, j], self.cols[2, j]


def _u(sl, x):
    """u = expm1(s_ x) / s_, and its limit x where s_ = 0 (the point design's line)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return np.where(sl > 0, np.expm1(sl * x) / np.where(sl > 0, sl, 1.0), x)


class PointLine:
    """The point design's line: slope 0 and y* the mean n theta from the decimals, so
    that u(y) = y - mean and sum f u phi = 0 is its derivative condition (the band's
    line as the band closes).  ``long_only``: its short windows keep the summed form."""

    long_only = True

    def __init__(self, n, value, cols=None):
        self.n, self.value = n, value
        self.cols = cols if cols is not None else np.full((2, np.shape(n)[0]), np.nan)

    def subset(self, j):
        return PointLine(self.n[j], self.value[j], self.cols[:, j])

    def at(self, j):
        """(0, y0, d) for rows j, the mean n theta = y0 + d (``exact_mean_width``)."""
        from ..families.floatlaw import exact_mean_width

        todo = j[np.isnan(self.cols[0, j])]
        if todo.size:
            whole, rest, _ = exact_mean_width(self.n[todo], self.value[todo], self.value[todo])
            self.cols[0, todo], self.cols[1, todo] = whole, rest
        return np.zeros(np.size(j)), self.cols[0, j], self.cols[1, j]


def _slope(L, y, P):
    """d log f / dy at the half-integer y + 1/2, as log f(y + 1) - log f(y)."""
    return L.logpmf(y + 1.0, P) - L.logpmf(y, P)


def line_rows(second, L, P, c1, c2, big, window_sum):
    """(short, long): rows of s > 1/2 (``big``) that take the line form, summed or integrated.

    The family must give its line (``second.line``), the cutoffs must differ, the
    mean at the low end be at least LINE_MEAN and the log ratio change by at most
    LINE_SPAN over the window; a window of more than ``window_sum``
    + 1 points is integrated only where log f changes by at most LINE_SLOPE per
    point at both ends (and so inside: log f is concave or convex in y there).
    """
    none = np.zeros(np.shape(c1), dtype=bool)
    if getattr(second, "line", None) is None:
        return none, none
    on = big & (c2 > c1) & (L.moments(P)[0] >= LINE_MEAN)
    if np.any(on):
        j = np.nonzero(on)[0]
        sl = second.line.at(j)[0]
        on[j] = sl * (c2[j] - c1[j] + 1.0) <= LINE_SPAN
    short = on & (c2 - c1 <= window_sum)
    long_ = on & ~short
    if getattr(second.line, "long_only", False):
        short = np.zeros_like(short)
    if np.any(long_):
        j = np.nonzero(long_)[0]
        Pj = sub(P, j)
        with np.errstate(invalid="ignore"):
            tilt = np.maximum(np.abs(_slope(L, c1[j] - 1.0, Pj)), np.abs(_slope(L, c2[j], Pj)))
            ok = (tilt <= LINE_SLOPE) & (tilt * (c2[j] - c1[j] + 1.0) <= MAX_PANELS)
        long_[j[~ok]] = False
    return short, long_


def _summed(L, P, sl, x1, c1, c2, j, inner=False):
    """Window mass and sum of f u, term by term (``inner``: c1 < y < c2 only)."""
    a = c1[j]
    skip = 1.0 if inner else 0.0
    width = np.maximum(c2[j] - a + 1.0 - 2.0 * skip, 0.0).astype(np.int64)
    row = np.repeat(np.arange(j.size), width)
    start = np.cumsum(width) - width
    off = (np.arange(row.size) - start[row]).astype(float) + skip  # y - c1
    fy = L.pmf(a[row] + off, sub(P, j[row]))
    u = _u(sl[row], off - x1[row])
    mass = np.bincount(row, weights=fy, minlength=j.size)
    r2 = np.bincount(row, weights=fy * u, minlength=j.size)
    return mass, r2


def _integrated(L, P, sl, x1, c1, c2, j):
    """Window mass and sum of f u by midpoint Euler-Maclaurin (module doc)."""
    a, Pj = c1[j], sub(P, j)
    W = c2[j] - a  # x = y - c1 runs over 0..W
    lo_s, hi_s = _slope(L, a - 1.0, Pj), _slope(L, c2[j], Pj)
    tilt = np.maximum(np.abs(lo_s), np.abs(hi_s))
    K = np.clip(np.ceil(tilt * (W + 1.0)), 1, MAX_PANELS).astype(np.int64)
    row = np.repeat(np.arange(j.size), K * _NODES.size)
    first = np.cumsum(K * _NODES.size) - K * _NODES.size
    idx = np.arange(row.size) - first[row]
    panel, node = idx // _NODES.size, idx % _NODES.size
    h = (W + 1.0) / K  # panel length on [-1/2, W + 1/2]
    x = -0.5 + (panel + _NODES[node]) * h[row]
    fx = L.pmf(a[row] + x, sub(Pj, row))
    ux = _u(sl[row], x - x1[row])
    wt = _WEIGHTS[node] * h[row]
    mass = np.bincount(row, weights=wt * fx, minlength=j.size)
    r2 = np.bincount(row, weights=wt * fx * ux, minlength=j.size)
    # h'(x) = f (l' u + u'), l' = d log f / dy, u' = exp(s_ (x - x1)), at both ends
    fa, fb = L.pmf(a - 0.5, Pj), L.pmf(c2[j] + 0.5, Pj)
    xa, xb = -0.5 - x1, W + 0.5 - x1
    ua, ub = _u(sl, xa), _u(sl, xb)
    mass -= (fb * hi_s - fa * lo_s) / 24.0
    r2 -= (fb * (hi_s * ub + np.exp(sl * xb)) - fa * (lo_s * ua + np.exp(sl * xa))) / 24.0
    return mass, r2


def line_system(L, P, line, c1, c2, b, f1, f2, g1, g2, short, long_):
    """Gammas of the windows of rows ``short | long_`` from the line form (module doc).

    Returns the rows, both gammas, and the second condition's residual at the current
    gammas (g1, g2), sum f u phi; the caller scales it to its own condition
    (``line_scale``: s_ / dt for a band, as f_high - f_low = f_low s_ u; for a point
    the change of d log f / dt per unit of y), the same sign, so that the search's
    bracket keeps one scale.
    """
    j = np.nonzero(short | long_)[0]
    sl, y0, d = line.at(j)
    x1 = (y0 - c1[j]) + d  # y* - c1: an exact whole-number difference plus the rest
    mass, r2 = _window(L, P, sl, x1, c1, c2, j, short[j])
    u1 = _u(sl, -x1)
    u2 = _u(sl, (c2[j] - c1[j]) - x1)
    r1 = mass - b[j]
    F1, F2 = f1[j], f2[j]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        h1 = (r1 * u2 - r2) / (F1 * (u2 - u1))
        h2 = (r2 - u1 * r1) / (F2 * (u2 - u1))
        q = u1 * F1 * g1[j] + u2 * F2 * g2[j] - r2
    return j, h1, h2, q


def _window(L, P, sl, x1, c1, c2, j, summed, inner=False):
    """(mass, sum f u) over rows j: summed where ``summed``, integrated elsewhere
    (``inner``: without the cutoffs, summed rows only)."""
    mass, r2 = np.empty(j.size), np.empty(j.size)
    if np.any(summed):
        mass[summed], r2[summed] = _summed(L, P, sl[summed], x1[summed], c1, c2, j[summed],
                                           inner)
    if np.any(~summed):
        q = ~summed
        mass[q], r2[q] = _integrated(L, P, sl[q], x1[q], c1, c2, j[q])
    return mass, r2


def equivalence_gammas(L, P, line, c1, c2, alpha, short, long_, g=None):
    """Gammas of equivalence designs (reject inside c1..c2) of rows ``short | long_``.

    The same two conditions written for phi itself (sum f_low phi = alpha and
    sum f_low u phi = 0), with the inner terms summed apart from the cutoffs:
    h1 f1 + h2 f2 = alpha - mid, u1 f1 h1 + u2 f2 h2 = -R_mid, so a gamma of size
    ~alpha / f keeps its relative digits (1 - the complement's gamma would keep only
    absolute ones).  Returns the rows and both gammas; with ``g`` = (g1, g2), the
    current gammas of all rows, also the second condition's residual at them (as
    ``line_system``'s, unscaled).
    """
    j = np.nonzero(short | long_)[0]
    sl, y0, d = line.at(j)
    x1 = (y0 - c1[j]) + d
    u1 = _u(sl, -x1)
    u2 = _u(sl, (c2[j] - c1[j]) - x1)
    f1, f2 = L.pmf(c1[j], sub(P, j)), L.pmf(c2[j], sub(P, j))
    s_rows = short[j]
    mid, rmid = _window(L, P, sl, x1, c1, c2, j, s_rows, inner=True)
    # a long window: f1, f2 are below 1/4096 of its mass, so they come off its integral
    q = ~s_rows
    mid[q] -= f1[q] + f2[q]
    rmid[q] -= f1[q] * u1[q] + f2[q] * u2[q]
    r1 = alpha[j] - mid
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        h1 = (r1 * u2 + rmid) / (f1 * (u2 - u1))
        h2 = (-rmid - u1 * r1) / (f2 * (u2 - u1))
        if g is not None:
            q = u1 * f1 * g[0][j] + u2 * f2 * g[1][j] + rmid
            return j, h1, h2, q
    return j, h1, h2


def _from_left(L, P, line, b, c, span):
    """Windows of mass b at low starting fully at integer c (psi(c) = 1) for each row:
    (c2, psi2, sum f u psi, ok); ``span`` points are looked at from c."""
    sl, y0, d = line
    width = np.maximum(span, 2.0).astype(np.int64)
    row = np.repeat(np.arange(c.size), width)
    start = np.cumsum(width) - width
    off = (np.arange(row.size) - start[row]).astype(float)  # y - c
    y = c[row] + off
    fy = L.pmf(y, sub(P, row))
    uy = _u(sl[row], (y - y0[row]) - d[row])
    cum = np.cumsum(fy)
    base = np.concatenate(([0.0], cum))[start]
    within = cum - base[row]  # mass from c to y inclusive
    idx = np.where(within >= b[row], np.arange(row.size), row.size)
    first = np.minimum.reduceat(idx, start)
    ok = first < start + width
    k = np.where(ok, first, start)
    psi2 = (b - (within[k] - fy[k])) / fy[k]
    fu = np.where(np.arange(row.size) < k[row], fy * uy, 0.0)
    total = np.bincount(row, weights=fu, minlength=c.size) + psi2 * fy[k] * uy[k]
    return c + off[k], psi2, total, ok


def window_search(L, P, line, b, window_sum):
    """Band-form (c1, g1, c2, g2) of size 1 - b from the window itself, for rows the
    two-tailed search did not converge on (the state's tails, from differences near
    1/2, cannot place a window whose 1 - gamma are ~1e-6 at a mean of 4e10).

    The window of mass b at low starting at an integer c (psi(c) = 1) has its
    centre condition sum f u psi increasing in c; c1 is the last c where it is
    <= 0 (integer bisection between a window wholly left of y* and one right of it),
    and the gammas come from the line system on the pieces (c1, c2), (c1, c2 + 1),
    (c1, c2 + 2) - the first whose gammas lie in [0, 1].  NaN where none does.
    """
    from .search import first_true

    rows = np.arange(b.size)
    sl, y0, d = line.at(rows)
    ystar = y0 + np.floor(d)
    W = np.ceil(b / L.pmf(ystar, P)) + 2.0
    span = np.minimum(2.0 * W + 8.0, window_sum + 1.0)
    lo = np.maximum(ystar - 2.0 * W - 8.0, 0.0)
    hi = ystar + 1.0

    def pred(c, j):
        _, _, total, _ = _from_left(L, sub(P, j), (sl[j], y0[j], d[j]), b[j], c, span[j])
        return total > 0

    c1 = first_true(pred, np.floor(ystar - W / 2.0), lo, hi) - 1.0
    c2a, _, _, ok = _from_left(L, P, (sl, y0, d), b, c1, span)
    out = [np.full(b.size, np.nan) for _ in range(4)]
    for extra in (0.0, 1.0, 2.0):
        todo = ok & np.isnan(out[0])
        if not np.any(todo):
            break
        c2 = c2a + extra
        short = todo.copy()
        f1, f2 = L.pmf(c1, P), L.pmf(c2, P)
        zero = np.zeros(b.size)
        j, h1, h2, _ = line_system(L, P, line, c1, c2, b, f1, f2, zero, zero, short,
                                   np.zeros(b.size, dtype=bool))
        good = (h1 >= -1e-12) & (h1 <= 1.0 + 1e-12) & (h2 >= -1e-12) & (h2 <= 1.0 + 1e-12)
        k = j[good]
        out[0][k], out[1][k] = c1[k], np.clip(h1[good], 0.0, 1.0)
        out[2][k], out[3][k] = c2[k], np.clip(h2[good], 0.0, 1.0)
    return tuple(out)
