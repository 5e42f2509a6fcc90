"""Normal and gamma rules: exact size at every constraint point and agreement of the two
independent solvers (cfast: scipy; cprecise: mpmath), over random designs including narrow
bands (relative width down to 1e-9) and tiny alpha (down to 1e-100; equivalence 1e-12).

The sizes of the float rule are evaluated with the mpmath law (no scipy); tolerances are
those of ``ccheck`` (cutoffs 64 epsilons relative to |c| + floor, sizes derived from it).
"""

from __future__ import annotations

import math

import mpmath as mp
import pytest
from hypothesis import assume, given, seed, settings
from hypothesis import strategies as st

from exactband import ccheck
from exactband.families.gamma import GAMMA
from exactband.families.normal import NORMAL
from exactband.kinds import KINDS
from exactband.solvers import cfast, cprecise

from .conftest import SEED

PRECISION = 30


def log_uniform(lo, hi):
    return st.floats(math.log10(lo), math.log10(hi)).map(lambda e: float(10 ** e))


@st.composite
def designs(draw, kinds=tuple(KINDS)):
    fam = draw(st.sampled_from((NORMAL, GAMMA)))
    kind = draw(st.sampled_from(kinds))
    n = draw(st.integers(1, 500))
    if fam is NORMAL:
        k = draw(log_uniform(0.01, 100.0))
        theta = draw(st.one_of(st.floats(-1000.0, 1000.0), log_uniform(1e-3, 1e3)))
        scale = abs(theta) + k / math.sqrt(n)
    else:
        k = draw(log_uniform(0.2, 20.0))
        theta = draw(log_uniform(0.01, 100.0))
        scale = theta
    if kind == "equivalence":
        alpha = draw(st.one_of(st.sampled_from([0.05, 0.1]), log_uniform(1e-12, 0.5)))
    else:
        alpha = draw(st.one_of(st.sampled_from([0.01, 0.05]), log_uniform(1e-100, 0.5)))
    if kind in ("band", "equivalence"):
        w = draw(st.one_of(log_uniform(1e-9, 1e-3), log_uniform(1e-3, 1.0)))
        pts = dict(low=theta, high=theta + w * scale)
        assume(pts["low"] < pts["high"])
    else:
        pts = dict(value=theta)
    return fam, kind, n, k, alpha, pts


def check(fam, kind, n, k, alpha, pts):
    law = fam.continuous_float(n, k)
    fast = cfast.solve(law, KINDS[kind], alpha, **pts)
    if not ccheck.representable(fast.conditioning):
        return None  # declined by policy: doubles cannot carry the size to 1e-9
    precise = cprecise.solve(fam, kind, n, alpha, dispersion=k, precision=PRECISION, **pts)
    points = [pts["value"]] if "value" in pts else [pts["low"], pts["high"]]
    sizes = cprecise.sizes_of(fam, kind, n, k, fast.c1, fast.c2, points, PRECISION)
    floor = float(law.sd(points[0])) if law.floor_scale else 0.0
    between = cprecise.mass_between(fam, n, k, (fast.c1, fast.c2), (precise.c1, precise.c2),
                                    points, PRECISION)
    cc = ccheck.compare(fast, precise, sizes, alpha, floor, PRECISION, between)
    assert cc.max_phi_diff <= cc.size_tol * alpha * 2  # the rules differ on a sliver only
    assert cc.agree, (cc.reason, fam.name, kind, n, k, alpha, pts)
    if fast.c1 is not None and fast.c2 is not None:
        assert fast.c1 < fast.c2
    return cc


@seed(SEED)
@settings(max_examples=15)
@given(designs())
def test_random_designs_exact_size_and_agreement(d):
    check(*d)


@pytest.mark.parametrize("fam, k, theta", [(NORMAL, 2.0, 10.0), (NORMAL, 0.5, -3.0),
                                           (GAMMA, 1.0, 2.0), (GAMMA, 3.5, 0.2)])
@pytest.mark.parametrize("alpha", [0.05, 1e-12, 1e-100])
def test_narrow_bands_and_tiny_alpha(fam, k, theta, alpha):
    """Relative width 1e-9: the two band conditions nearly coincide; both solvers must still
    hold the size at both ends (the float one through its difference-quotient form)."""
    lo, hi = theta, theta + 1e-9 * abs(theta)
    cc = check(fam, "band", 20, k, alpha, dict(low=lo, high=hi))
    assert cc.fast_size_error <= cc.size_tol
    # the point rule at the same value is the limit of the band rule
    pt = cfast.solve(fam.continuous_float(20, k), KINDS["point"], alpha, value=theta)
    band = cfast.solve(fam.continuous_float(20, k), KINDS["band"], alpha, low=lo, high=hi)
    for a, b in ((pt.c1, band.c1), (pt.c2, band.c2)):
        assert abs(a - b) <= 1e-7 * (abs(a) + fam.continuous_float(20, k).sd(theta))


@pytest.mark.parametrize("alpha", [0.05, 1e-4])
def test_narrow_equivalence(alpha):
    for fam, theta in ((NORMAL, 5.0), (GAMMA, 5.0)):
        check(fam, "equivalence", 30, 1.0, alpha, dict(low=theta, high=theta * (1 + 1e-9)))


def test_ill_conditioned_window_is_declined():
    """A tiny window at a narrow band: half an ulp of each cutoff moves the size by more
    than 1e-9 relative, so the policy declines it rather than print it."""
    fast = cfast.solve(GAMMA.continuous_float(10, 1.0), KINDS["equivalence"], 1e-10,
                       low=2.0, high=2.0 * (1 + 1e-9))
    assert not ccheck.representable(fast.conditioning)
    with mp.workdps(40):
        sizes = cprecise.sizes_of(GAMMA, "equivalence", 10, 1.0, fast.c1, fast.c2, [2.0], 30)
        assert abs(sizes[0] / mp.mpf("1e-10") - 1) > 1e-9


@pytest.mark.parametrize("alpha", [0.7, 0.999])
@pytest.mark.parametrize("kind, pts", [("point", dict(value=5.0)),
                                       ("band", dict(low=5.0, high=5.25)),
                                       ("equivalence", dict(low=5.0, high=5.25))])
def test_large_alpha(kind, pts, alpha):
    """alpha > 1/2: a band or point rule accepts only a short window (solved as a window of
    mass 1 - alpha); both solvers still agree."""
    for fam in (NORMAL, GAMMA):
        assert check(fam, kind, 12, 1.5, alpha, pts) is not None
