"""Canonical form of a two-tailed solution and the equivalence design from its complement."""

from __future__ import annotations

import numpy as np

from ..kinds import KINDS
from .conditions import GL_MAX_SPREAD
from .lineform import equivalence_gammas, line_rows
from .twotailed import GAMMA_TOL, MIDDLE_SUM, WINDOW_SUM


def canonical_band(c1, g1, c2, g2):
    """gamma = 1 at a cutoff is the neighbouring cutoff with gamma = 0 (``Kind.canonical``)."""
    return KINDS["band"].canonical(c1, np.asarray(g1), c2, np.asarray(g2))


def equivalence_from_band(c1, g1, c2, g2):
    """phi_equivalence = 1 - phi_band(size 1 - alpha), in canonical form."""
    e1, e2 = 1.0 - g1, 1.0 - g2
    same = c1 >= c2  # one-point rejection region: (c, g, c+1, 0)
    e1 = np.where(same, 1.0 - g1 - g2, e1)
    c2 = np.where(same, c1 + 1.0, c2)
    e2 = np.where(same, 0.0, e2)
    return KINDS["equivalence"].canonical(c1, e1, c2, e2)


def _middle(L, P, c1, c2):
    """P(c1 < Y < c2) from whichever tail keeps the difference accurate."""
    s1, s2 = L.sf(c1, P), L.sf(c2 - 1.0, P)
    return np.where(s1 < 0.5, s1 - s2, L.cdf(c2 - 1.0, P) - L.cdf(c1, P))


def refine_equivalence(L, Pl, diff, alpha, c1, g1, c2, g2):
    """Re-solve the equivalence gammas from the rejection window itself.

    The complement search fixes the cutoffs, but gammas obtained as
    1 - (band gamma) lose digits when the window sits where the law at ``low``
    has little mass; the window's own equations keep them.
    """
    f1, f2 = L.pmf(c1, Pl), L.pmf(c2, Pl)
    d1, d2 = diff.dpmf(c1, f1), diff.dpmf(c2, f2)
    count = c2 - c1 - 1.0
    few = count <= MIDDLE_SUM
    mid = np.zeros_like(alpha)
    dmid = np.zeros_like(alpha)
    if np.any(few):
        for j in range(1, MIDDLE_SUM + 1):
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
        wide = np.maximum(diff.spread(c1), diff.spread(c2 - 1.0)) > GL_MAX_SPREAD
        by_quotient = diff.dcdf(c2 - 1.0) - diff.dcdf(c1)
        mid = np.where(few, mid, mid_l)
        dmid = np.where(few, dmid, np.where(wide, (mid_h - mid_l) / diff.dt, by_quotient))
    r1, r2 = alpha - mid, -dmid
    with np.errstate(divide="ignore", invalid="ignore"):
        det = f1 * d2 - f2 * d1
        h1 = (r1 * d2 - f2 * r2) / det
        h2 = (f1 * r2 - d1 * r1) / det
    lo_ok = -GAMMA_TOL
    # alpha near 1: the window holds almost all the mass; the complement's gammas
    # (band form of size 1 - alpha, small) are then the accurate ones.  A window
    # at a large mean takes the line form instead (lineform.equivalence_gammas)
    short, long_ = line_rows(diff, L, Pl, c1, c2, alpha < 0.5, WINDOW_SUM)
    if np.any(short | long_):
        j, l1, l2 = equivalence_gammas(L, Pl, diff.line, c1, c2, alpha, short, long_)
        h1, h2 = h1.copy(), h2.copy()
        h1[j], h2[j] = l1, l2
    ok = (np.isfinite(h1) & np.isfinite(h2) & (h1 >= lo_ok) & (h1 < 1.0) & (h2 >= lo_ok)
          & (h2 < 1.0) & (c2 > c1) & (alpha <= 0.5))
    g1 = np.where(ok, np.clip(h1, 0.0, 1.0), g1)
    g2 = np.where(ok, np.clip(h2, 0.0, 1.0), g2)
    return c1, g1, c2, g2
