"""Continuous designs from the whole-range draw (bench/validate_range.py) that failed on main.

Each reproduction is verified (API) and its sizes at the constraint points are summed here
independently of the project, to 1e-9 x alpha relative (the issue's acceptance):
* normal: mpmath.ncdf at 40 digits (the sample mean is N(theta, sigma^2 / n));
* gamma: mpmath.gammainc (regularized incomplete gamma function) at 40 digits for small
  shapes; for a large shape (where mpmath's gammainc does not converge and scipy 1.17's
  gammainc loses digits) the power series P(a, x) = x^a e^-x / Gamma(a + 1) *
  sum_j x^j / ((a + 1) ... (a + j)) summed here in mpmath at 30 digits (DLMF 8.7.1 form,
  from memory).
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from exactband import design
from exactband.errors import DesignError
from exactband.families.gamma import GammaFloat

REL = 1e-9


def normal_sizes(d):
    with mp.workdps(40):
        s = mp.mpf(repr(d.dispersion)) / mp.sqrt(d.n)
        out = []
        for t in d.points:
            t = mp.mpf(repr(t))
            lo = mp.ncdf((mp.mpf(d.c1) - t) / s) if d.c1 is not None else 0
            hi = mp.ncdf(-(mp.mpf(d.c2) - t) / s) if d.c2 is not None else 0
            out.append(1 - hi - lo if d.kind == "equivalence" else lo + hi)
        return out


def lower_series(a, x):
    """Regularized P(a, x) by its power series (x < a), mpmath at 30 digits."""
    with mp.workdps(30):
        a, x = mp.mpf(a), mp.mpf(x)
        term = total = mp.mpf(1)
        j = 0
        while term > total * mp.mpf(10) ** -32:
            j += 1
            term *= x / (a + j)
            total += term
        return float(total * mp.exp(a * mp.log(x) - x - mp.loggamma(a + 1)))


def gamma_tail(d, c, t, upper=False):
    """P_t(Y <= c) (or P_t(Y > c)) for the total of n gamma units, shape k, mean t."""
    with mp.workdps(40):
        k = mp.mpf(repr(d.dispersion))
        a, x = d.n * k, k * mp.mpf(c) / mp.mpf(repr(t))
        if upper:
            return mp.gammainc(a, x, mp.inf, regularized=True)
        return mp.gammainc(a, 0, x, regularized=True)


def gamma_sizes(d):
    out = []
    for t in d.points:
        lo = gamma_tail(d, d.c1, t) if d.c1 is not None else 0
        hi = gamma_tail(d, d.c2, t, upper=True) if d.c2 is not None else 0
        out.append(1 - hi - lo if d.kind == "equivalence" else lo + hi)
    return out


CASES = [  # (family, kind, inputs): each failed on main (exit 1 or 70)
    # alpha > 1/2: 1 - alpha was formed in float (exit 1)
    ("normal", "lower", dict(n=100, alpha=0.99996, value=72800, dispersion=8.005e11)),
    ("normal", "upper", dict(n=1000000, alpha=0.9999999995, value=-0.0768, dispersion=23.2)),
    ("normal", "equivalence", dict(n=4700000, alpha=0.999999999984, low=-1.206e-8,
                                   high=-1.2059891e-8, dispersion=5e11)),
    ("gamma", "upper", dict(n=4, alpha=0.99999999991, value=8e4, dispersion=8.331)),
    ("gamma", "lower", dict(n=4, alpha=0.9999999999923, value=100, dispersion=96)),
    # a window hundreds of sd wide: the precise bracket missed the root (exit 70)
    ("normal", "equivalence", dict(n=2, alpha=0.0001626, low=41700, high=183500,
                                   dispersion=0.322)),
    ("normal", "equivalence", dict(n=300, alpha=0.99996441, low=-200, high=-180,
                                   dispersion=5.3)),
    # a band 6000 sd wide at alpha 1 - 5.2e-12: the float root at the bracket's end was
    # rounding (declined as "the float solver failed")
    ("normal", "band", dict(n=31680, alpha=0.9999999999948, low=-19.72, high=134.28,
                            dispersion=4.7)),
    # a band 5,000 sd wide far from 0 at alpha near 1: c2 ~ 1.1e7 carries its rounding
    # into c1 (~ -4.6e4) through the side conditions (exit 1 at 1.45e-14 > 64 eps)
    ("normal", "band", dict(n=200, alpha=0.999567, low=-53250, high=10946750,
                            dispersion=29990)),
]


@pytest.mark.parametrize("family,kind,kw", CASES)
def test_reproduction_verified(family, kind, kw):
    d = design(family, kind, verify=True, **kw)
    assert d.verified
    sizes = normal_sizes(d) if family == "normal" else gamma_sizes(d)
    for s in sizes:
        assert abs(s - d.alpha) <= REL * d.alpha, (s, d.alpha)


@pytest.mark.parametrize("shape", [7e5, 4e6])
@pytest.mark.parametrize("z", [-5.0, -10.0])
def test_gamma_deep_lower_tail(shape, z):
    # scipy 1.17's gammainc is off by 2.5e-7 (7e5), 3e-2 (1e7), 0.35 (1e8) here
    x = shape + z * shape ** 0.5
    got = float(GammaFloat(shape, 1.0).cdf(np.array([x]), 1.0)[0])
    ref = lower_series(shape, x)
    assert abs(got - ref) <= 1e-11 * ref, (got, ref)  # measured <= 1.3e-12


def test_gamma_fast_path_large_shape():
    # shape 1e7 is beyond the precise solver (declined when verified); the fast path's
    # lower cutoff holds its size: P(Y <= c1) = alpha, by the series above
    d = design("gamma", "lower", n=10000000, alpha=1e-7, value=2, dispersion=1, verify=False)
    p = lower_series(1e7, d.c1 / 2)  # x = k c / theta
    assert abs(p - 1e-7) <= REL * 1e-7, p


def test_gamma_tiny_cutoff_verified():
    # shape n k = 0.14 at alpha 4.5e-40: c1 = 1.3e-283, still a normal double; the size
    # hardly moves with c1 (kappa 0.14), so c1 is compared to law_error / kappa (ccheck)
    for kind in ("lower", "point"):
        d = design("gamma", kind, n=2, alpha=4.5e-40, value=0.0016, dispersion=0.07)
        assert d.verified and 0 < d.c1 < 1e-280
        for s in gamma_sizes(d):
            assert abs(s - d.alpha) <= REL * d.alpha, (kind, s)


def test_gamma_cutoff_below_doubles_declined():
    # at alpha 4.5e-49 the cutoff is about 1e-347: declined in one line, on both paths
    with mp.workdps(40):  # mpmath: P(Y <= 2.2e-308) at the value already exceeds alpha
        x = mp.mpf("0.07") * mp.mpf(2.2250738585072014e-308) / mp.mpf("0.0016")
        assert mp.gammainc(mp.mpf("0.14"), 0, x, regularized=True) > mp.mpf("4.5e-49")
    for verify in (True, False):
        with pytest.raises(DesignError, match="smallest normal double"):
            design("gamma", "lower", n=2, alpha=4.5e-49, value=0.0016, dispersion=0.07,
                   verify=verify)


def test_partner_rounding_tolerance_still_catches_a_moved_cutoff():
    # the coupled tolerance (ccheck.coupled: a cutoff carries its partner's rounding, here
    # 226 x) must not let a cutoff moved by 1e-9 of itself pass; c1 checked against the
    # closed form low + sd z_alpha (mpmath.erfinv at 40 digits; the far tail at c2 beyond
    # 5,000 sd is below 1e-1000)
    from exactband import ccheck
    from exactband.params import make_problem
    from exactband.solvers import cfast, cprecise

    p = make_problem("normal", "band", n=200, alpha=0.999567, low=-53250, high=10946750,
                     dispersion=29990)
    with mp.workdps(40):
        sd = mp.mpf(29990) / mp.sqrt(200)
        exact_c1 = -53250 + sd * mp.sqrt(2) * mp.erfinv(2 * mp.mpf("0.999567") - 1)
    d = design("normal", "band", verify=True, n=200, alpha=0.999567, low=-53250,
               high=10946750, dispersion=29990)
    assert abs(d.c1 - float(exact_c1)) <= 1e-15 * abs(float(exact_c1))
    law = p.family.continuous_float(p.n, p.dispersion)
    fast = cfast.solve(law, p.kind, p.alpha, p.low, p.high)
    tols = ccheck.coupled([ccheck.CUT_TOL] * 2, fast.cut_weights)
    assert ccheck.CUT_TOL < tols[0] < 1e-12 and tols[1] == ccheck.CUT_TOL
    moved = cfast.ContinuousSolution(fast.c1 * (1 + 1e-9), fast.c2, fast.sizes,
                                     fast.conditioning, fast.cut_conditioning,
                                     fast.cut_weights)
    pd = cprecise.solve(p.family, p.kind, p.n, p.alpha, low=p.low, high=p.high,
                        dispersion=p.dispersion, precision=15)
    floor = float(law.sd(p.points[0]))

    def check(sol):
        sizes = cprecise.sizes_of(p.family, p.kind, p.n, p.dispersion, sol.c1, sol.c2,
                                  p.points, 15)
        return ccheck.compare(sol, pd, sizes, p.alpha, floor, 15)

    assert check(fast).agree
    assert not check(moved).agree
