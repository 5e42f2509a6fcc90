"""Other constructions a third party may have used instead of the optimal rule.

These are deliberately different tests, each computed from its own definition
(one-sided tails from scipy.stats; the point design and neighbouring designs
from exactband's fast solver applied to the *other* problem), never by
perturbing the optimal answer except where the construction is itself a
perturbation of it (dropped randomisation, rounded gammas, shifted cutoffs).

Every construction returns rules (c1, gamma1, c2, gamma2) in the convention of
the problem's kind, so the audit compares them with the printed rule as test
functions.
"""

from __future__ import annotations

from decimal import ROUND_FLOOR, ROUND_HALF_UP, Decimal

from .. import kinds as K
from ..errors import ExactbandError
from ..params import Problem, make_problem

STANDARD_ALPHAS = (0.1, 0.05, 0.025, 0.02, 0.01, 0.005, 0.001)


def law(p: Problem, theta: float):
    """scipy.stats frozen law of the total Y at theta (the family's ``scipy_law``)."""
    return p.family.scipy_law(theta, p.n, p.dispersion)


def lower_tail(dist, a: float) -> tuple[int, float]:
    """Randomised left tail of mass a: reject Y < c, with probability g at c."""
    c = max(int(dist.ppf(a)), 0)
    while dist.cdf(c) <= a:
        c += 1
    while c > 0 and dist.cdf(c - 1) > a:
        c -= 1
    below = dist.cdf(c - 1) if c > 0 else 0.0
    return c, float((a - below) / dist.pmf(c))


def upper_tail(dist, a: float) -> tuple[int, float]:
    """Randomised right tail of mass a: reject Y > c, with probability g at c."""
    c = max(int(dist.isf(a)), 0)
    while c > 0 and dist.sf(c - 1) <= a:
        c -= 1
    while dist.sf(c) > a:
        c += 1
    return c, float((a - dist.sf(c)) / dist.pmf(c))


def equal_tailed(p: Problem):
    """alpha/2 in each tail, each tail at its own end of the null (band, point)."""
    a = p.alpha / 2
    lo, hi = p.points[0], p.points[-1]  # the two ends of the null (band), or the value
    c1, g1 = lower_tail(law(p, lo), a)
    c2, g2 = upper_tail(law(p, hi), a)
    return c1, g1, c2, g2


def end_anchored(p: Problem):
    """Each tail of size alpha at its own band end (band); two one-sided tests (equivalence)."""
    dl, dh = law(p, p.low), law(p, p.high)
    if not p.kind.rejects_inside:
        c1, g1 = lower_tail(dl, p.alpha)
        c2, g2 = upper_tail(dh, p.alpha)
        return c1, g1, c2, g2
    # equivalence: reject when the upper test at low and the lower test at high both reject
    c1, g1 = upper_tail(dl, p.alpha)
    c2, g2 = lower_tail(dh, p.alpha)
    return c1, g1, c2, g2


def conservative(ours):
    c1, g1, c2, g2 = ours
    return c1, None if g1 is None else 0.0, c2, None if g2 is None else 0.0


def _decimal(g) -> Decimal:
    return Decimal(str(g))


def rounded(ours_text, k: int, mode: str):
    """Our gammas (exact decimal text) rounded half-up or truncated to k decimals."""
    c1, t1, c2, t2 = ours_text
    q = Decimal(1).scaleb(-k)
    how = ROUND_HALF_UP if mode == "round" else ROUND_FLOOR

    def one(t):
        return None if t is None else float(_decimal(t).quantize(q, rounding=how))

    return c1, one(t1), c2, one(t2)


def shifted(kind: str, ours):
    """(label, rule) for every cutoff moved by one, gammas kept."""
    c1, g1, c2, g2 = ours
    out = []
    for s1 in ((-1, 0, 1) if c1 is not None else (0,)):
        for s2 in ((-1, 0, 1) if c2 is not None else (0,)):
            if (s1, s2) == (0, 0) or (c1 is not None and c1 + s1 < 0) or \
                    (c2 is not None and c2 + s2 < 0):
                continue
            parts = [f"their {c} = ours {'+' if s > 0 else '-'} 1"
                     for c, s in (("c1", s1), ("c2", s2)) if s]
            # printing the last count rejected outright ('reject if Y <= c1') moves c1 down and
            # c2 up by one for the kinds that reject in the tails
            outward = not K.as_kind(kind).rejects_inside and s1 <= 0 and s2 >= 0
            note = ": 'reject if Y <= c1 / Y >= c2' read as < / >" if outward else ""
            out.append((f"cutoff convention shifted by one ({'; '.join(parts)}{note})",
                        (None if c1 is None else c1 + s1, g1, None if c2 is None else c2 + s2, g2)))
    return out


def other_problems(p: Problem):
    """(label, Problem) for the point design at each band end and neighbouring n / alpha."""
    base = p.inputs()
    out = []

    def add(label, **change):
        kw = dict(base)
        kw.update(change)
        fam, kind = kw.pop("family"), kw.pop("kind")
        try:
            out.append((label, make_problem(fam, kind, **kw)))
        except ExactbandError:
            pass

    if p.kind.two_point and p.kind.two_tailed:  # a band: its limits at each end
        add(f"point design at the band's low end (theta = {p.low:g})", kind="point",
            value=p.low, low=None, high=None)
        add(f"point design at the band's high end (theta = {p.high:g})", kind="point",
            value=p.high, low=None, high=None)
    for dn in (-1, 1):
        n2 = p.n + dn
        if n2 > 0:
            add(f"design for the neighbouring n = {n2:g} (table row n = {p.n:g})", n=n2)
    alphas = [p.alpha / 2, p.alpha * 2] + [a for a in STANDARD_ALPHAS]
    seen = {p.alpha}
    for a in alphas:
        if a in seen or not 0 < a < 1:
            continue
        seen.add(a)
        add(f"design for alpha = {a:g} instead of {p.alpha:g}", alpha=a)
    return out
