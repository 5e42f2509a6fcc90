"""Compare a printed rule with another as test functions, within printed tolerances.

Rules are tuples (c1, gamma1, c2, gamma2) of one kind (None where unused).  Two
rules agree when |phi_a(y) - phi_b(y)| is within the allowance at every count
y: at the third party's own cutoffs the allowance is the tolerance of the gamma
printed there; elsewhere phi is 0 or 1 and must agree exactly.  Comparing test
functions, not tuples, accepts (c, gamma = 1) for (c -/+ 1, gamma = 0).
"""

from __future__ import annotations

import numpy as np

from .. import kinds as K

SLACK = 1e-12  # arithmetic noise allowed on top of the printed tolerance


def _points(*rules):
    pts = set()
    for r in rules:
        for c in (r[0], r[2]):
            if c is not None:
                pts.update((int(c) - 1, int(c), int(c) + 1))
    return np.array(sorted(p for p in pts if p >= 0), dtype=float)


def _phi(kind, r, y):
    c1, g1, c2, g2 = r
    return K.phi(kind, np.nan if c1 is None else c1, 0.0 if g1 is None else float(g1),
                 np.nan if c2 is None else c2, 0.0 if g2 is None else float(g2), y)


def mismatches(kind, theirs, other, tol, slack=SLACK) -> list:
    """[(y, |phi difference|, allowance)] at the counts where the two rules differ."""
    y = _points(theirs, other)
    if y.size == 0:
        return []
    diff = np.abs(_phi(kind, theirs, y) - _phi(kind, other, y))
    allow = np.full(y.shape, slack)
    for c, t in ((theirs[0], tol[0]), (theirs[2], tol[1])):
        if c is not None and t is not None:
            allow = allow + np.where(y == c, t, 0.0)
    bad = diff > allow
    return [(int(a), float(b), float(c)) for a, b, c in zip(y[bad], diff[bad], allow[bad])]


def agrees(kind, theirs, other, tol, slack=SLACK) -> bool:
    return not mismatches(kind, theirs, other, tol, slack)


def canonical(kind, rule):
    """(c, gamma = 1) written as the neighbouring cutoff with gamma 0."""
    return K.as_kind(kind).canonical(*rule)
