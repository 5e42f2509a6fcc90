"""Sizes of many derived rules at once (the digit rule, the conservative rule).

``sizes_with_gammas(designs, gammas)`` returns, for every design, the sizes that
``design.with_gammas(g1, g2).sizes`` returns (same cutoffs, other gammas, float
law at the constraint points), but evaluates the float law once per family and
kind on arrays instead of once per design and point.  The arithmetic is the
same expression element by element (kinds.expectation on the family's float
law, clipped to [0, 1]), so the results equal the one-by-one ones bit for bit
(tests/test_tables_derive.py checks this on every family and kind).

The negative-binomial float law is not elementwise: for a huge dispersion it
sums masses over a width set by the largest mean in the array, and the order of
that (pairwise) sum, hence the last bit, depends on the array.  Its designs are
therefore evaluated one at a time, exactly as Design.with_gammas does.
"""

from __future__ import annotations

from collections import defaultdict

import numpy as np

from . import kinds as K


def sizes_with_gammas(designs, gammas) -> list:
    """[d.with_gammas(g1, g2).sizes for d, (g1, g2) in zip(designs, gammas)], vectorised."""
    designs = list(designs)
    gammas = list(gammas)
    if len(designs) != len(gammas):
        raise ValueError("one pair of gammas per design is required")
    groups = defaultdict(list)
    for i, d in enumerate(designs):
        groups[(d.problem.family.name, d.kind)].append(i)
    out = [None] * len(designs)
    for (name, kind), idx in groups.items():
        if not designs[idx[0]].problem.family.float_law.elementwise:  # (see above)
            for i in idx:
                out[i] = designs[i].with_gammas(*gammas[i]).sizes
            continue
        fam = designs[idx[0]].problem.family
        npts = [len(designs[i].points) for i in idx]
        # one entry per (design, constraint point), in design order then point order
        rows = [i for i, m in zip(idx, npts) for _ in range(m)]
        theta = np.array([t for i in idx for t in designs[i].points], dtype=float)
        n = np.array([float(designs[i].n) for i in rows], dtype=float)
        disp = [designs[i].dispersion for i in rows]
        k = None if all(x is None for x in disp) else np.array(disp, dtype=float)
        c1, g1, c2, g2 = (np.array(v, dtype=float) for v in zip(*(
            _cut(designs[i], *gammas[i]) for i in rows)))
        L = fam.float_law
        P = L.make(theta, n, k)
        e = K.expectation(kind, c1, g1, c2, g2,
                          lambda c: L.cdf(c, P), lambda c: L.sf(c, P), lambda c: L.pmf(c, P))
        e = np.clip(np.broadcast_to(e, theta.shape).astype(float), 0.0, 1.0)
        pos = 0
        for i, m in zip(idx, npts):
            out[i] = tuple(float(x) for x in e[pos:pos + m])
            pos += m
    return out


def _cut(d, gamma1, gamma2) -> tuple:
    """(c1, g1, c2, g2) as Design._cut gives them for d.with_gammas(gamma1, gamma2)."""
    nan = float("nan")
    g1 = 0.0 if d.gamma1 is None else float(gamma1)
    g2 = 0.0 if d.gamma2 is None else float(gamma2)
    return (nan if d.c1 is None else d.c1, g1, nan if d.c2 is None else d.c2, g2)
