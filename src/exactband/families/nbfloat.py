"""Float-law helpers of the negative binomial (fast path only; ``negbinomial`` uses them).

The pieces of ``negbinomial.NegBinomialLaw`` that replace scipy where it loses digits:
which far tails are formed as mass x tail/mass ratio (``far_tail``, ``_tailratio``),
the decimal mean's residual carried into them (``mean_residual``), the saddle-point
log mass, and the tails of a small integer size from the binomial identity
(``whole_size_tails``).  docs/tolerances.md sections 1 and 8 derive each.
"""

from __future__ import annotations

import numpy as np

from . import _saddle
from .floatlaw import binomial_head, binomial_rest, sum_is_better

SUM_TOP = 6000  # largest support point summed term by term (huge size r)
RATIO_MIN = 1e4  # far tails whose tail/mass ratio passes this are mass x ratio (_tailratio)


def far_tail(c, r, m):
    """(right, left): where P(Y > c)/pmf(c) (c > m), or P(Y < c)/pmf(c) (c < m), is at least
    about RATIO_MIN, by the leading terms of _tailratio: (c + r)(m/r) / ((c - m) + 1 + m/r)
    and c (r + m) / (r (m - c + 1)).

    Both are at most m max(1 + m/r, 1/r) (the right one falls from m at c = m towards
    m/r, the left one rises to m (1 + m/r) at c = m): laws below RATIO_MIN there
    have no far tail, checked on the parameters alone."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        bound = np.max(m * np.maximum(1.0 + m / r, 1.0 / r), initial=0.0)
        if bound < RATIO_MIN:
            none = np.zeros(np.broadcast(c, r, m).shape, dtype=bool)
            return none, none
        right = (c > m) & ((c + r) * (m / r) >= RATIO_MIN * ((c - m) + 1.0 + m / r))
        left = (c < m) & (c * (r + m) >= RATIO_MIN * r * ((m - c) + 1.0))
    return right, left


RESIDUAL_MIN = 2.0 ** 20  # means below this have no far tail whose gamma their rounding moves


def mean_residual(theta, n, m):
    """(n x the decimal theta) - m for the double m = n * theta (0 below RESIDUAL_MIN).

    A far tail's gamma moves with d log tail / d log m ~ z sqrt(r) times m's
    rounding (1e-2 in gamma at kappa ~ 2e10, z sqrt(r) ~ 9e3): the far forms of
    _tailratio take the deviation y - m as (y - m) - residual, the mean the
    user wrote (docs/tolerances.md section 8).
    """
    import decimal

    from ..mpnum import exact

    m = np.asarray(m, dtype=float)
    out = np.zeros(m.shape)
    big = np.abs(m) >= RESIDUAL_MIN
    if np.any(big):
        th = np.broadcast_to(np.asarray(theta, dtype=float), m.shape)
        nn = np.broadcast_to(np.asarray(n, dtype=float), m.shape)
        with decimal.localcontext() as ctx:
            ctx.prec = 200  # every product and difference below is exact
            for i in zip(*np.nonzero(big)):
                e = exact(float(nn[i])) * exact(float(th[i])) - decimal.Decimal(float(m[i]))
                out[i] = float(e)
    return out


def saddle_logpmf(yy, r, m, qc, at0):
    """log pmf in saddle-point form (section 1 of docs/tolerances.md), y >= 0."""
    # pmf(y) = r/(r+y) * C(y+r, r) q^r (1-q)^y (y > 0) in saddle-point form, with
    # y itself (never (y + r) - r) and the deviations d = r (y - m)/(r + m) formed
    # without cancellation (derivation: docs/tolerances.md section 1)
    with np.errstate(divide="ignore", invalid="ignore"):
        y1 = np.where(yy > 0, yy, 1.0)
        d = r * (y1 - m) / (r + m)
        pos = (_saddle.stirlerr(y1 + r) - _saddle.stirlerr(r + 0.0 * y1)
               - _saddle.stirlerr(y1)
               - _saddle.bd0(r + 0.0 * y1, r * (r + y1) / (r + m), -d)
               - _saddle.bd0(y1, (y1 + r) * qc, d)
               - 0.5 * np.log(2.0 * np.pi * y1) - 0.5 * np.log1p(y1 / r))
    return np.where(yy == 0, at0, pos)


def residual_of(P):
    return P[2] if len(P) > 2 else 0.0


INT_SIZE_MAX = 39.0  # an integer size r up to this: the tails from binomial sums
WHOLE_LOSS = 1e-18  # scipy's relative loss per unit of c there (measured against mpmath)


def whole_size_tails(cdf, sf, r, m, c, rows):
    """cdf, sf with the rows of an integer size 2 <= r <= 39 from the binomial identity.

    scipy's incomplete beta with an integer first parameter of at most 39 (here the
    size r) and a huge second one (c + 1) loses up to ~2e-8 relative (r = 20, mean
    1e9, against mpmath.betainc), while a non-integer r keeps ~1e-15.  With N = c + r
    trials of success probability q = r/(r + m): P(Y > c) = P(Bin(N, q) <= r - 1), a
    sum of r masses (``binomial_head``); P(Y <= c) = P(Bin(N, q) >= r), summed upward
    (``binomial_rest``) where it is the smaller tail, else 1 - P(Y > c).
    """
    cdf, sf = (np.array(np.broadcast_to(x, r.shape), dtype=float) for x in (cdf, sf))
    j = np.nonzero(rows.ravel())[0]
    rs, ms, cs = r.ravel()[j], m.ravel()[j], c.ravel()[j]
    n_ = cs + rs
    q, qc = rs / (rs + ms), ms / (rs + ms)
    lh = _saddle.log_binom_raw(rs - 1.0, n_, q, qc)
    head = binomial_head(rs - 1.0, n_, q, qc, lh)
    # the sums where they are the more accurate: scipy's loss (~1e-18 c, measured against
    # mpmath.betainc for r = 2..39, means 10 to 1e9) above the sums' u (2 max(1, |log
    # pmf|) + 4 r); deep in a tail at a moderate c, scipy's value is the better one
    use = sum_is_better(WHOLE_LOSS * cs, rs, lh)
    left = 1.0 - head
    up = use & (head >= 0.5)  # P(Y <= c) the smaller tail: summed upward
    if np.any(up):
        left[up] = binomial_rest(rs[up], n_[up], q[up], qc[up],
                                 _saddle.log_binom_raw(rs[up], n_[up], q[up], qc[up]))
    sf.ravel()[j] = np.where(use, head, sf.ravel()[j])
    cdf.ravel()[j] = np.where(use & np.isfinite(left), left, cdf.ravel()[j])
    return cdf, sf
