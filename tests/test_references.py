"""External reference checks, each with its source beside it."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

import exactband
from exactband import api
from exactband.crosscheck import phi_distance
from exactband.params import make_problem


def test_worked_example_poisson_band():
    # Poisson, n = 25 units, alpha = 0.05, band [2, 2.5] per unit: c1 = 39, c2 = 76
    # (cutoffs from memory of a worked example; the gammas are recomputed, never pasted)
    d = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    assert (d.c1, d.c2) == (39, 76)
    assert 0 < d.gamma1 < 1 and 0 < d.gamma2 < 1
    assert d.sizes == pytest.approx((0.05, 0.05), abs=1e-15)


@pytest.mark.parametrize("n,p,alpha", [(10, 0.3, 0.05), (25, 0.1, 0.01), (40, 0.5, 0.1),
                                       (100, 0.02, 0.05), (7, 0.9, 0.2), (300, 0.25, 0.001)])
def test_upper_binomial_matches_binomtest(n, p, alpha):
    # scipy.stats.binomtest (general-purpose library): the one-sided exact p-value
    # P(Y >= y; p).  The non-randomised part of the UMP upper design rejects exactly
    # when that p-value is <= alpha.
    d = exactband.design("binomial", "upper", n=n, value=p, alpha=alpha)
    for y in range(n + 1):
        pval = stats.binomtest(y, n, p, alternative="greater").pvalue
        assert (y > d.c2) == (pval <= alpha), (y, pval, d.c2)


@pytest.mark.parametrize("mu,alpha", [(0.7, 0.05), (12.0, 0.01), (250.0, 0.1), (3.3, 1e-6)])
def test_upper_poisson_cutoff_matches_scipy_isf(mu, alpha):
    # scipy.stats.poisson.isf(alpha, mu): the smallest c with P(Y > c) <= alpha, which is
    # the cutoff c2 of the UMP upper design (gamma2 then covers the rest of alpha).
    d = exactband.design("poisson", "upper", n=1, value=mu, alpha=alpha)
    assert d.c2 == int(stats.poisson.isf(alpha, mu))


@pytest.mark.parametrize("n", [2, 10, 30, 100, 500])
@pytest.mark.parametrize("alpha", [0.01, 0.05, 0.1])
def test_binomial_point_design_is_symmetric_at_one_half(n, alpha):
    # common practice / symmetry of Binomial(n, 1/2): the UMPU test is symmetric,
    # c1 = n - c2 and gamma1 = gamma2
    d = exactband.design("binomial", "point", n=n, value=0.5, alpha=alpha)
    assert d.c1 == n - d.c2
    assert d.gamma1 == pytest.approx(d.gamma2, abs=1e-15)


@pytest.mark.parametrize("n,p", [(20, 0.2), (75, 0.6), (400, 0.05)])
def test_lower_is_upper_mirrored_for_the_binomial(n, p):
    # Y ~ Binomial(n, p) iff n - Y ~ Binomial(n, 1 - p): the lower design at p is the
    # upper design at 1 - p read from the other end (common practice).
    lo = exactband.design("binomial", "lower", n=n, value=p, alpha=0.05)
    up = exactband.design("binomial", "upper", n=n, value=1 - p, alpha=0.05)
    assert lo.c1 == n - up.c2
    assert lo.gamma1 == pytest.approx(up.gamma2, abs=1e-12)


@pytest.mark.parametrize("family,value,n,k", [("poisson", 2.0, 25.0, None),
                                              ("binomial", 0.3, 60, None),
                                              ("negative-binomial", 1.5, 40, 3.0)])
def test_band_design_tends_to_the_point_design(family, value, n, k):
    # as high -> low the two band conditions merge into the point conditions
    point = exactband.design(family, "point", n=n, value=value, alpha=0.05, dispersion=k)
    pt = (point.c1, point.gamma1, point.c2, point.gamma2)
    dists = []
    for eps in (1e-2, 1e-4, 1e-6, 1e-9):
        band = exactband.design(family, "band", n=n, low=value, high=value * (1 + eps),
                                alpha=0.05, dispersion=k)
        dists.append(phi_distance("band", (band.c1, band.gamma1, band.c2, band.gamma2), pt))
    assert dists[-1] < 1e-6
    assert all(b <= a + 1e-12 for a, b in zip(dists, dists[1:])), dists
    # the narrow band's rule is also the same in the fast path (difference-quotient form)
    p = make_problem(family, "band", n=n, low=value, high=value * (1 + 1e-9), alpha=0.05,
                     dispersion=k)
    c1, g1, c2, g2 = api.fast_solve([p])[0]
    assert phi_distance("band", (c1, g1, c2, g2), pt) < 1e-6


def test_equivalence_is_the_complement_of_a_band_form_test():
    # Lehmann & Romano (3rd ed., sec. 3.7): the UMP equivalence test rejects in the middle;
    # 1 - phi is a two-tailed test of size 1 - alpha at both ends.
    d = exactband.design("poisson", "equivalence", n=60, low=1.8, high=2.6, alpha=0.05)
    y = np.arange(0, 300)
    comp = 1 - d.phi(y)
    assert np.all(comp[: d.c1] == 1) and np.all(comp[d.c2 + 1:] == 1)
    assert np.all(comp[d.c1 + 1: d.c2] == 0)
