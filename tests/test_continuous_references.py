"""Normal and gamma rules against external references, 1e-9 relative in every kind.

Sources beside each check:
* scipy.stats.norm (normal quantiles), scipy.stats.foldnorm (folded normal quantiles) and
  scipy.stats.ncx2 (noncentral chi-square with 1 degree of freedom: |Z + h|^2), as the
  closed forms of the normal rules (common practice: the band and equivalence rules of a
  normal mean are symmetric about the band's midpoint);
* scipy.stats.chi2: 2 k Y / theta is chi-square with 2 n k degrees of freedom;
* mpmath (findroot; the incomplete gamma function as a Poisson sum or by hyp1f1): the two-sided gamma rules from their side conditions
  (Lehmann & Romano, Testing Statistical Hypotheses, 3rd ed., 3.7 and 4.2), written
  here independently of the solvers.
Tolerance 1e-9 relative (the issue's acceptance); the solvers reach ~1e-15.
"""

from __future__ import annotations

import math

import mpmath as mp
import pytest
from scipy import stats

from exactband.families.gamma import GAMMA
from exactband.families.normal import NORMAL
from exactband.kinds import KINDS
from exactband.solvers import cfast, cprecise

REL = 1e-9


def both(fam, kind, n, k, alpha, **kw):
    """(c1, c2) of the float solver and of the precise solver (as floats)."""
    f = cfast.solve(fam.continuous_float(n, k), KINDS[kind], alpha, **kw)
    p = cprecise.solve(fam, kind, n, alpha, dispersion=k, precision=30, **kw)
    conv = [None if c is None else float(c) for c in (p.c1, p.c2)]
    return [(f.c1, f.c2), tuple(conv)]


def close(x, ref, rel=REL):
    return abs(x - ref) <= rel * abs(ref)


NORMAL_CASES = [(25, 2.0, 0.05), (4, 0.3, 0.01), (100, 7.5, 1e-4), (1, 1.0, 0.2)]


@pytest.mark.parametrize("n, sigma, alpha", NORMAL_CASES)
def test_normal_one_sided_and_point(n, sigma, alpha):
    s = sigma / math.sqrt(n)
    v = 12.5
    for c1, c2 in both(NORMAL, "upper", n, sigma, alpha, value=v):
        assert c1 is None and close(c2, v + s * stats.norm.isf(alpha))  # scipy.stats.norm
    for c1, c2 in both(NORMAL, "lower", n, sigma, alpha, value=v):
        assert c2 is None and close(c1, v - s * stats.norm.isf(alpha))  # scipy.stats.norm
    z = stats.norm.ppf(1 - alpha / 2)  # scipy.stats.norm: the quantile at 1 - alpha/2
    for c1, c2 in both(NORMAL, "point", n, sigma, alpha, value=v):
        assert close(c1, v - s * z) and close(c2, v + s * z)


@pytest.mark.parametrize("n, sigma, alpha", NORMAL_CASES)
@pytest.mark.parametrize("half", [0.05, 0.6, 3.0])  # half-width of the band in sd of Y
def test_normal_band_and_equivalence(n, sigma, alpha, half):
    s = sigma / math.sqrt(n)
    mid = 40.0
    lo, hi = mid - half * s, mid + half * s
    # scipy.stats.foldnorm(c = h): |Z + h|; its upper alpha quantile u gives the band rule
    # mid -+ s u (size alpha at both ends); scipy.stats.ncx2(1 df, nc = h^2) is |Z + h|^2.
    u = stats.foldnorm.isf(alpha, half)
    assert close(u, math.sqrt(stats.ncx2.isf(alpha, 1, half * half)), 1e-8)
    for c1, c2 in both(NORMAL, "band", n, sigma, alpha, low=lo, high=hi):
        assert close(c1, mid - s * u) and close(c2, mid + s * u)
    # equivalence: reject |Y - mid| < s w with w the lower alpha quantile of |Z + h|
    w = stats.foldnorm.ppf(alpha, half)
    assert close(w, math.sqrt(stats.ncx2.ppf(alpha, 1, half * half)), 1e-8)
    for c1, c2 in both(NORMAL, "equivalence", n, sigma, alpha, low=lo, high=hi):
        assert close(c1, mid - s * w) and close(c2, mid + s * w)


def test_normal_narrow_band_tends_to_point():
    """Relative width 1e-9: the band rule is the point rule to 1e-9 (scipy.stats.norm)."""
    n, sigma, alpha, v = 9, 1.5, 0.05, 20.0
    s = sigma / 3
    z = stats.norm.ppf(1 - alpha / 2)
    for c1, c2 in both(NORMAL, "band", n, sigma, alpha, low=v, high=v * (1 + 1e-9)):
        assert close(c1, v - s * z) and close(c2, v + s * z)


GAMMA_CASES = [(10, 1.0, 0.05), (3, 2.5, 0.01), (50, 0.5, 1e-6), (1, 1.0, 0.1), (200, 4.0, 0.05)]


@pytest.mark.parametrize("n, k, alpha", GAMMA_CASES)
def test_gamma_one_sided(n, k, alpha):
    v = 3.0
    df = 2 * n * k  # scipy.stats.chi2: 2 k Y / theta ~ chi-square(2 n k)
    for c1, c2 in both(GAMMA, "upper", n, k, alpha, value=v):
        assert close(c2, stats.chi2.isf(alpha, df) * v / (2 * k))
    for c1, c2 in both(GAMMA, "lower", n, k, alpha, value=v):
        assert close(c1, stats.chi2.ppf(alpha, df) * v / (2 * k))


def _gamma_two_sided_reference(n, k, alpha, lo, hi, kind):
    """Solve the side conditions with mpmath (independent of the solvers).

    X = k Y / theta ~ Gamma(A = n k).  Point: P(x1 < X < x2) = 1 - alpha and, since
    x f_A(x) = A f_{A+1}(x), E[X; x1 < X < x2] = (1 - alpha) A becomes
    P_{A+1}(x1 < X < x2) = 1 - alpha.  Band: the size at lo and at hi equals alpha.
    Equivalence: the mass of (c1, c2) at lo and at hi equals alpha.
    Returned as cutoffs of Y.
    """
    with mp.workdps(40):
        A, kk, a = mp.mpf(n) * mp.mpf(k), mp.mpf(k), mp.mpf(alpha)

        def P(shape, x):
            """Regularized lower incomplete gamma.  Whole shapes: 1 - P(Poisson(x) < shape)
            (the gamma-Poisson identity, common practice), summed term by term; other
            shapes: Kummer's function, x^a e^-x 1F1(1; a + 1; x) / Gamma(a + 1) (mpmath;
            its hyp1f1 raises ComplexResult for some whole a)."""
            if shape == int(shape):
                term, tot = mp.exp(-x), mp.mpf(0)
                for j in range(int(shape)):
                    tot += term
                    term *= x / (j + 1)
                return 1 - tot
            return x ** shape * mp.exp(-x) / mp.gamma(shape + 1) * mp.hyp1f1(1, shape + 1, x)

        if kind == "point":
            t = mp.mpf(lo)

            def eqs(u1, u2):  # x = exp(u) keeps the cutoffs positive during Newton steps
                x1, x2 = mp.exp(u1), mp.exp(u2)
                return [P(A, x2) - P(A, x1) - (1 - a), P(A + 1, x2) - P(A + 1, x1) - (1 - a)]

            g1 = stats.chi2.ppf(alpha / 2, 2 * n * k) / 2
            g2 = stats.chi2.isf(alpha / 2, 2 * n * k) / 2
            u1, u2 = mp.findroot(eqs, (mp.log(g1), mp.log(g2)))
            return float(mp.exp(u1) * t / kk), float(mp.exp(u2) * t / kk)
        tl, th = mp.mpf(lo), mp.mpf(hi)

        def mass(c1, c2, t):
            return P(A, kk * c2 / t) - P(A, kk * c1 / t)

        if kind == "band":
            def eqs(c1, c2):
                return [1 - mass(c1, c2, tl) - a, 1 - mass(c1, c2, th) - a]

            g1 = stats.chi2.ppf(alpha / 2, 2 * n * k) * lo / (2 * k)
            g2 = stats.chi2.isf(alpha / 2, 2 * n * k) * hi / (2 * k)
        else:
            def eqs(c1, c2):
                return [mass(c1, c2, tl) - a, mass(c1, c2, th) - a]

            mid = (lo + hi) / 2 * n
            g1, g2 = mid * (1 - 0.05), mid * (1 + 0.05)
        u1, u2 = mp.findroot(lambda u1, u2: eqs(mp.exp(u1), mp.exp(u2)), (mp.log(g1), mp.log(g2)))
        return float(mp.exp(u1)), float(mp.exp(u2))


@pytest.mark.parametrize("n, k, alpha", GAMMA_CASES)
def test_gamma_point_from_side_conditions(n, k, alpha):
    v = 3.0
    r1, r2 = _gamma_two_sided_reference(n, k, alpha, v, v, "point")
    for c1, c2 in both(GAMMA, "point", n, k, alpha, value=v):
        assert close(c1, r1) and close(c2, r2)


@pytest.mark.parametrize("n, k, alpha, lo, hi", [
    (10, 1.0, 0.05, 2.0, 3.0), (40, 2.0, 0.01, 1.0, 1.1), (5, 0.7, 0.1, 4.0, 9.0),
])
def test_gamma_band_from_side_conditions(n, k, alpha, lo, hi):
    r1, r2 = _gamma_two_sided_reference(n, k, alpha, lo, hi, "band")
    for c1, c2 in both(GAMMA, "band", n, k, alpha, low=lo, high=hi):
        assert close(c1, r1) and close(c2, r2)


@pytest.mark.parametrize("n, k, alpha, lo, hi", [
    (30, 1.0, 0.05, 2.0, 3.0), (100, 2.0, 0.1, 1.0, 1.2), (60, 0.5, 0.2, 4.0, 5.0),
])
def test_gamma_equivalence_from_side_conditions(n, k, alpha, lo, hi):
    r1, r2 = _gamma_two_sided_reference(n, k, alpha, lo, hi, "equivalence")
    for c1, c2 in both(GAMMA, "equivalence", n, k, alpha, low=lo, high=hi):
        assert close(c1, r1) and close(c2, r2)


def test_gamma_narrow_band_tends_to_point():
    """Relative width 1e-9: the band rule equals the point rule to 1e-9 (mpmath reference)."""
    n, k, alpha, v = 12, 1.0, 0.05, 2.0
    r1, r2 = _gamma_two_sided_reference(n, k, alpha, v, v, "point")
    for c1, c2 in both(GAMMA, "band", n, k, alpha, low=v, high=v * (1 + 1e-9)):
        assert close(c1, r1, 2e-9) and close(c2, r2, 2e-9)


@pytest.mark.parametrize("fam, n, k, theta", [(NORMAL, 9, 1.5, -2.0), (NORMAL, 1, 0.01, 1e3),
                                              (GAMMA, 4, 0.5, 3.0), (GAMMA, 300, 7.0, 0.02)])
def test_float_mp_and_scipy_laws_agree(fam, n, k, theta):
    """The float law (scipy.special), the precise law (mpmath, own code) and the family's
    scipy.stats law give the same cdf, sf and density; d/dtheta of the cdf matches a
    central difference of the mpmath cdf.  Tolerance 1e-12 relative (the float laws are
    accurate to a few 1e-15 here)."""
    law, ref = fam.continuous_float(n, k), fam.scipy_law(theta, n, k)
    m, s = float(law.mean(theta)), float(law.sd(theta))
    with mp.workdps(40):
        mpl = fam.continuous_mp(n, k)
        for z in (-8.0, -2.5, -0.3, 0.0, 1.7, 6.0):
            c = m + z * s
            if c <= float(law.lower):
                continue
            C, T = mp.mpf(c), mp.mpf(theta)
            for got, want in ((law.cdf(c, theta), mpl.cdf(C, T)), (law.sf(c, theta), mpl.sf(C, T)),
                              (math.exp(law.logpdf(c, theta)), mpl.pdf(C, T))):
                assert close(float(got), float(want), 1e-12)
            assert close(float(law.cdf(c, theta)), float(ref.cdf(c)), 1e-12)
            assert close(math.exp(float(law.logpdf(c, theta))), float(ref.pdf(c)), 1e-11)
            h = mp.mpf(theta) * mp.mpf("1e-12") if theta != 0 else mp.mpf("1e-12")
            slope = (mpl.cdf(C, T + h) - mpl.cdf(C, T - h)) / (2 * h)
            assert close(float(law.dcdf(c, theta)), float(slope), 1e-9)
