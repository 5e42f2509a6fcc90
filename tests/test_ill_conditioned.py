"""Ill-conditioned gammas verify (issue 10): the cross-check's double-precision floor.

A spread-out negative binomial at a tiny alpha has a tail of size ~alpha that is
~1/q = (r + m)/r times the mass at the cutoff, so the gamma = (alpha - S(c))/f(c)
moves by that factor times any relative error of S(c): no double evaluation
(even of correctly rounded tails, from inputs rounded to doubles) reaches the
1e-6 phi cap. These designs were refused ("the two solvers disagree"); they now
verify with the floor of crosscheck.floor_dg, and their sizes, summed here
independently of exactband, equal alpha.
"""

from __future__ import annotations

import mpmath as mp
import pytest

from exactband import api
from exactband.crosscheck import PHI_CEIL, PHI_TOL, compare
from exactband.errors import DesignError
from exactband.solvers import precise

NB = "negative-binomial"


def mp_size(d, theta) -> mp.mpf:
    """E_theta phi of a one-sided design at 40 digits, from mpmath.

    Source: mpmath.betainc (regularised incomplete beta, its own hypergeometric
    series) for the tails, P(Y > c) = I_{1-q}(c + 1, r) and P(Y < c) = I_q(r, c);
    mpmath.loggamma for the mass Gamma(c + r)/(Gamma(r) c!) q^r (1 - q)^c;
    size r = n k, mean m = n theta, q = r/(r + m). scipy.stats.nbinom is not used:
    it loses digits at c ~ 1e12 with r = 0.05.
    """
    with mp.workdps(40):
        r = mp.mpf(d.n) * mp.mpf(repr(d.problem.dispersion))
        m = mp.mpf(d.n) * mp.mpf(repr(theta))
        q, qc = r / (r + m), m / (r + m)

        def pmf(c):
            return mp.exp(mp.loggamma(c + r) - mp.loggamma(r) - mp.loggamma(c + 1)
                          + r * mp.log(q) + c * mp.log(qc))

        if d.kind == "upper":
            c, g = d.c2, mp.mpf(d.gamma2_decimal)
            return mp.betainc(c + 1, r, 0, qc, regularized=True) + g * pmf(c)
        c, g = d.c1, mp.mpf(d.gamma1_decimal)
        below = mp.betainc(r, c, 0, q, regularized=True) if c > 0 else mp.mpf(0)
        return below + g * pmf(c)


# refused before (the corner validation and a scratch draw over the documented range)
CASES = [
    ("upper", dict(n=1, value=1e9, dispersion=0.05, alpha=1e-50)),
    ("upper", dict(n=1, value=1e9, dispersion=0.05, alpha=1e-100)),
    ("upper", dict(n=3, value=2e8, dispersion=0.07, alpha=1e-20)),
]


@pytest.mark.parametrize("kind,kw", CASES)
def test_refused_designs_verify_with_alpha_sizes(kind, kw):
    d = api.design(NB, kind, verify=True, **kw)
    assert d.verified and d.check.agree
    assert PHI_TOL < d.check.phi_tol <= PHI_CEIL  # the floor was needed and used
    g = d.gamma2 if kind == "upper" else d.gamma1
    assert 0.0 <= g < 1.0
    size = mp_size(d, kw["value"])
    assert abs(size / mp.mpf(repr(kw["alpha"])) - 1) < 1e-9


def test_floor_still_catches_a_wrong_cutoff():
    p = api.make_problem(NB, "upper", n=1, value=1e9, dispersion=0.05, alpha=1e-50)
    sol = api.fast_solve([p])[0]
    pd = precise.solve(p.family, "upper", p.n, p.alpha, value=p.value, dispersion=p.dispersion)
    assert compare("upper", p.alpha, sol, pd, 50).agree
    for shift in (-1, 1):
        wrong = (sol[0], sol[1], sol[2] + shift, sol[3])
        cc = compare("upper", p.alpha, wrong, pd, 50)
        assert not cc.agree
    off = (sol[0], sol[1], sol[2], sol[3] + 0.002)  # gamma off by more than the ceiling
    assert not compare("upper", p.alpha, off, pd, 50).agree


# -- the float mass of a negative binomial with a huge size r ------------------------------
@pytest.mark.parametrize("y,r,m", [
    (323675086.0, 7.85813e18, 3.2394740e8),   # the lower design below, at its cutoff
    (201557533.0, 3.0087657408480104e19, 201224419.39),
    (7468650000.0, 1.09e19, 7.47e9),
    (2154124715342.0, 0.05, 1e9),
    (3.0, 11.644, 6.3613),
])
def test_float_mass_keeps_its_digits(y, r, m):
    from exactband.families.negbinomial import NegBinomialLaw

    got = float(NegBinomialLaw.logpmf(y, (r, m)))
    # reference: mpmath.loggamma at 50 digits, log pmf = lgamma(y + r) - lgamma(r)
    # - lgamma(y + 1) + r log(r / (r + m)) + y log(m / (r + m))
    with mp.workdps(50):
        R, M, Y = mp.mpf(r), mp.mpf(m), mp.mpf(y)
        ref = (mp.loggamma(Y + R) - mp.loggamma(R) - mp.loggamma(Y + 1)
               + R * mp.log(R / (R + M)) + Y * mp.log(M / (R + M)))
        err = abs(mp.expm1(mp.mpf(got) - ref))
    # relative error of the mass within 64 units of roundoff times max(1, |log pmf|)
    assert err < 64 * 2.0 ** -53 * max(1.0, abs(float(ref)))


def mp_lower_size(d, theta) -> mp.mpf:
    """E_theta phi of a lower design, masses summed down from c1 at 30 digits.

    Source: the negative-binomial mass from mpmath.loggamma at c1, then the exact
    ratio pmf(y - 1)/pmf(y) = y (r + m)/((y - 1 + r) m), summed until a term is
    below 1e-25 of the sum (the ratios decrease to the left, so the rest is smaller
    still). mpmath.betainc is too slow at r ~ 1e19.
    """
    with mp.workdps(30):
        r = mp.mpf(d.n) * mp.mpf(repr(d.problem.dispersion))
        m = mp.mpf(d.n) * mp.mpf(repr(theta))
        c = d.c1
        p = mp.exp(mp.loggamma(c + r) - mp.loggamma(r) - mp.loggamma(c + 1)
                   + r * mp.log(r / (r + m)) + c * mp.log(m / (r + m)))
        size = mp.mpf(d.gamma1_decimal) * p
        y = c
        while y > 0:
            p = p * y * (r + m) / ((y - 1 + r) * m)
            y -= 1
            size += p
            if p < size * mp.mpf(10) ** -25:
                break
        return size


def test_huge_size_lower_design_verifies():
    # refused before (|phi difference| 0.63: the float mass lost y's digits in y + r)
    kw = dict(n=4306, value=36630.0, dispersion=7.39e15, alpha=7.08e-25)
    d = api.design(NB, "lower", verify=True, **kw)
    assert d.verified and d.check.agree and d.check.max_phi_diff <= PHI_TOL
    assert 0.0 <= d.gamma1 < 1.0
    assert abs(mp_lower_size(d, kw["value"]) / mp.mpf(repr(kw["alpha"])) - 1) < 1e-9


def test_size_beyond_double_is_declined_and_a_wrong_cutoff_is_not():
    # p = 0.311 is not a double; rounding it moves a tail of size 1.5e-68 by ~1e-9 of
    # itself (d log S / d log p ~ 1e7 there), so the fast rule's size cannot be held to
    # 1e-9 x alpha: declined in one line, never called a disagreement or verified
    kw = dict(n=320000000000, value=0.311, alpha=1.54e-68)
    with pytest.raises(DesignError, match="size can only be held to .* x alpha"):
        api.design("binomial", "upper", verify=True, **kw)
    p = api.make_problem("binomial", "upper", **kw)
    sol = api.fast_solve([p])[0]
    pd = precise.solve(p.family, "upper", p.n, p.alpha, value=p.value)
    cc = compare("upper", p.alpha, sol, pd, 50)
    assert cc.beyond_double and cc.max_phi_diff <= cc.phi_tol
    wrong = compare("upper", p.alpha, (sol[0], sol[1], sol[2] + 1, sol[3]), pd, 50)
    assert not wrong.agree and not wrong.beyond_double
