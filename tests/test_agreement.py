"""The two solvers give the same test function on thousands of random designs.

Each design is solved by the fast float solver (vectorised, all at once) and by
the 50-digit mpmath solver, and the two are compared as test functions with the
policy of exactband.crosscheck (max |phi difference| <= 1e-9 and the fast
design's exact size within 1e-12 of alpha at every constraint point).  The mix
covers every family and kind, narrow bands (high/low - 1 down to 1e-9) and
alpha down to 1e-10.  EXACTBAND_TEST_SEED changes the draw.
"""

from __future__ import annotations

import numpy as np

from exactband import api
from exactband.crosscheck import PHI_TOL, SIZE_TOL, compare
from exactband.params import make_problem
from exactband.solvers import precise

from .conftest import SEED

PER_CELL = 140  # designs per (family, kind): 15 cells -> 2,100 designs


def draw(rng, family, kind):
    alpha = float(10 ** rng.uniform(-10, np.log10(0.5))) if rng.random() < 0.5 else \
        float(rng.choice([0.01, 0.05, 0.1]))
    k = float(10 ** rng.uniform(-0.5, 2)) if family == "negative-binomial" else None
    if family == "binomial":
        n = int(10 ** rng.uniform(0, 3.3))

        def theta():
            return float(10 ** rng.uniform(-3, 0) if rng.random() < 0.5
                         else 1 - 10 ** rng.uniform(-3, -0.3))
    else:
        n = float(10 ** rng.uniform(0, 2.5)) if family == "poisson" else int(10 ** rng.uniform(0, 2.5))

        def theta():
            return float(10 ** rng.uniform(-1.5, 1.2))
    if kind in ("band", "equivalence"):
        low = theta()
        w = float(10 ** rng.uniform(-9, -3) if rng.random() < 0.3 else 10 ** rng.uniform(-3, 0))
        high = low * (1 + w)
        if family == "binomial" and high >= 1:
            low, high = low * (1 - w), low
        if not (0 < low < high) or (family == "binomial" and not high < 1):
            return None
        return make_problem(family, kind, n=n, alpha=alpha, low=low, high=high, dispersion=k)
    return make_problem(family, kind, n=n, alpha=alpha, value=theta(), dispersion=k)


def test_solvers_agree_on_thousands_of_random_designs():
    rng = np.random.default_rng(SEED)
    problems = []
    for family in ("poisson", "binomial", "negative-binomial"):
        for kind in ("upper", "lower", "point", "band", "equivalence"):
            got = 0
            while got < PER_CELL:
                p = draw(rng, family, kind)
                if p is not None:
                    problems.append(p)
                    got += 1
    sols = api.fast_solve(problems)
    narrow = tiny = 0
    worst_phi = worst_size = 0.0
    bad = []
    for p, sol in zip(problems, sols):
        d = precise.solve(p.family, p.kind.name, p.n, p.alpha, low=p.low, high=p.high,
                          value=p.value, dispersion=p.dispersion, precision=50)
        cc = compare(p.kind.name, p.alpha, sol, d, 50)
        worst_phi = max(worst_phi, cc.max_phi_diff)
        worst_size = max(worst_size, cc.fast_size_error)
        if not cc.agree or cc.precise_size_error > 1e-40:
            bad.append((api.label(p), cc.summary()))
        narrow += p.low is not None and (p.high / p.low - 1) < 1e-3
        tiny += p.alpha < 1e-6
    assert len(problems) >= 2000
    assert narrow >= 100 and tiny >= 300, (narrow, tiny)
    assert not bad, bad[:5]
    assert worst_phi <= PHI_TOL and worst_size <= SIZE_TOL
    print(f"\n{len(problems)} designs, {narrow} narrow bands, {tiny} with alpha < 1e-6: "
          f"worst |phi difference| {worst_phi:.2e}, worst fast size error {worst_size:.2e}")
