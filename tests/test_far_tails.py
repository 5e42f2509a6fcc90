"""Negative-binomial far tails in double precision (issue 10): tail/mass ratios and masses.

At a tiny alpha over a huge mean the gamma = alpha/pmf(c) - P(Y > c)/pmf(c) has a
condition number ~ P(Y > c)/pmf(c) ~ 1e9; the fast path now forms that ratio
itself (families._tailratio) and the far mass from relative deviations. Designs
that were refused ("the two solvers disagree") verify; one beyond double
precision is declined in one line.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from exactband import api
from exactband.errors import DesignError
from exactband.families import _tailratio as T

NB = "negative-binomial"
U = 2.0 ** -53


def beta_tail(a, b, x) -> mp.mpf:
    """I_x(a, b) = int_0^x t^(a-1) (1-t)^(b-1) dt / B(a, b), by mpmath.quad.

    Source: the definition of the regularised incomplete beta function, integrated
    by mpmath's tanh-sinh quadrature (the integrand peaks at x here: breakpoints
    at multiples of its decay length), normalised with mpmath.loggamma.
    """
    a, b, x = mp.mpf(a), mp.mpf(b), mp.mpf(x)

    def log_h(t):
        return (a - 1) * mp.log(t) + (b - 1) * mp.log1p(-t)

    top = log_h(x)
    width = 1 / abs((a - 1) / x - (b - 1) / (1 - x))
    pts = sorted({mp.mpf(0), x, *(max(mp.mpf(0), x - k * width) for k in (1, 4, 16, 64, 256,
                                                                           1024, 4096))})
    integral = mp.quad(lambda t: mp.exp(log_h(t) - top), pts)
    return integral * mp.exp(top + mp.loggamma(a + b) - mp.loggamma(a) - mp.loggamma(b))


def nb_parts(r, m):
    """pmf, P(Y < c), P(Y > c) of NB(size r, mean m) (mpmath.loggamma and beta_tail)."""
    q, qc = r / (r + m), m / (r + m)

    def pmf(c):
        return mp.exp(mp.loggamma(c + r) - mp.loggamma(r) - mp.loggamma(c + 1)
                      + r * mp.log(q) + c * mp.log(qc))

    def below(c):  # P(Y < c) = I_q(r, c)
        return beta_tail(r, c, q) if c > 0 else mp.mpf(0)

    def above(c):  # P(Y > c) = I_{1-q}(c + 1, r)
        return beta_tail(c + 1, r, qc)

    return pmf, below, above


# refused before ("the two solvers disagree", |phi difference| 2.4e-2 to 7.6e-3)
CASES = [
    ("upper", dict(n=442186, dispersion=966, value=7.221e8, alpha=7.42e-65)),
    ("point", dict(n=504408, dispersion=58.8, value=2.42e8, alpha=1.6e-58)),
    ("band", dict(n=54675, dispersion=588, low=7.552e6, high=3.13e9, alpha=2.09e-90)),
    ("equivalence", dict(n=82098, dispersion=666, low=9.141e7, high=2.75e9, alpha=0.99979)),
    # |phi difference| 8.8e-3: the double n * high is 0.009 below the decimal mean, which
    # moved the far tail at high by ~1e-12 (negbinomial.mean_residual now carries it)
    ("equivalence", dict(n=539234, dispersion=4.31, low=1.527e7, high=391631635.226,
                         alpha=0.999999999091123)),
]


@pytest.mark.parametrize("kind,kw", CASES)
def test_far_tail_designs_verify_with_alpha_sizes(kind, kw):
    d = api.design(NB, kind, verify=True, **kw)
    assert d.verified and d.check.agree
    for g in (d.gamma1, d.gamma2):
        assert g is None or 0.0 <= g < 1.0
    thetas = [kw["value"]] if "value" in kw else [kw["low"], kw["high"]]
    with mp.workdps(40):
        A = mp.mpf(repr(kw["alpha"]))
        g1 = mp.mpf(d.gamma1_decimal) if d.gamma1 is not None else mp.mpf(0)
        g2 = mp.mpf(d.gamma2_decimal) if d.gamma2 is not None else mp.mpf(0)
        for th in thetas:
            r = mp.mpf(kw["n"]) * mp.mpf(repr(kw["dispersion"]))
            pmf, below, above = nb_parts(r, mp.mpf(kw["n"]) * mp.mpf(repr(th)))
            if kind == "upper":
                size = above(d.c2) + g2 * pmf(d.c2)
            elif kind == "equivalence":  # 1 - size: the mass outside the window
                size = 1 - (below(d.c1) + (1 - g1) * pmf(d.c1) + (1 - g2) * pmf(d.c2)
                            + above(d.c2))
            else:
                size = below(d.c1) + g1 * pmf(d.c1) + g2 * pmf(d.c2) + above(d.c2)
            assert abs(size / A - 1) < 1e-9, (th, size)


def test_ratio_against_mpmath_on_random_far_tail_points():
    # 24 points: size r 0.05 to 1e10, mean 1 to 1e15, 2.5 to 60 sd out on either side;
    # measured worst 4 units of roundoff on 329 such points; the floor counts 8
    rng = np.random.default_rng(20261203)
    checked = 0
    with mp.workdps(40):
        for _ in range(24):
            r = 10 ** rng.uniform(math.log10(0.05), 10)
            m = 10 ** rng.uniform(0, 15)
            sd = math.sqrt(m + m * m / r)
            z = 10 ** rng.uniform(math.log10(2.5), math.log10(60))
            right = rng.random() < 0.6
            c = math.floor(m + z * sd) if right else math.floor(m - z * sd)
            usable = T.right_usable(c, r, m) if right else c >= 1 and T.left_usable(c, r, m)
            if not usable:
                continue
            pmf, below, above = nb_parts(mp.mpf(r), mp.mpf(m))
            got = float(T.right_ratio(c, r, m) if right else T.left_ratio(c, r, m))
            ref = (above(c) if right else below(c)) / pmf(c)
            assert abs(got / ref - 1) < 8 * U, (c, r, m)
            checked += 1
    assert checked >= 14


@pytest.mark.parametrize("c,r,m", [(200, 3.5, 50.0), (900, 0.3, 40.0), (5, 7.0, 120.0)])
def test_ratio_against_mpmath_betainc(c, r, m):
    # reference: mpmath.betainc (its own hypergeometric series) and mpmath.loggamma
    with mp.workdps(40):
        R, M = mp.mpf(r), mp.mpf(m)
        pmf = nb_parts(R, M)[0]
        if c > m:
            ref = mp.betainc(c + 1, R, 0, M / (R + M), regularized=True) / pmf(c)
            got = float(T.right_ratio(c, r, m))
        else:
            ref = mp.betainc(R, c, 0, R / (R + M), regularized=True) / pmf(c)
            got = float(T.left_ratio(c, r, m))
        assert abs(got / ref - 1) < 8 * U


def test_far_mass_against_mpmath():
    # reference: mpmath.loggamma at 50 digits; bound 8 u max(1, |log pmf|) (worst
    # measured 5.6 on 271 far-tail points)
    rng = np.random.default_rng(7)
    with mp.workdps(50):
        for _ in range(30):
            r = 10 ** rng.uniform(math.log10(0.05), 10)
            m = 10 ** rng.uniform(0, 15)
            sd = math.sqrt(m + m * m / r)
            y = math.floor(m + 10 ** rng.uniform(0.4, 1.8) * sd)
            got = float(T.far_logpmf(float(y), r, m))
            R, M, Y = mp.mpf(r), mp.mpf(m), mp.mpf(y)
            ref = (mp.loggamma(Y + R) - mp.loggamma(R) - mp.loggamma(Y + 1)
                   + R * mp.log(R / (R + M)) + Y * mp.log(M / (R + M)))
            assert abs(mp.expm1(mp.mpf(got) - ref)) < 8 * U * max(1.0, abs(float(ref)))


def test_beyond_double_precision_is_declined_in_one_line():
    # condition number ~7e10 at |log pmf| ~ 164: rounding log pmf alone moves the gamma
    # by ~1.3e-3, above the ceiling; the decimal 0.37 rounded moves it by 4e-4
    kw = dict(n=764043, dispersion=0.37, value=3.961e8, alpha=5.77e-61)
    with pytest.raises(DesignError) as e:
        api.design(NB, "point", verify=True, **kw)
    msg = str(e.value)
    assert "\n" not in msg and "cannot be verified in double precision" in msg
    assert e.value.field == "alpha"


def test_beyond_double_needs_the_same_cutoffs():
    from exactband.crosscheck import PHI_CEIL, compare
    from exactband.solvers import precise

    p = api.make_problem(NB, "upper", n=1, value=1e9, dispersion=0.05, alpha=1e-50)
    sol = api.fast_solve([p])[0]
    pd = precise.solve(p.family, "upper", p.n, p.alpha, value=p.value, dispersion=p.dispersion)
    ok = compare("upper", p.alpha, sol, pd, 50)
    assert ok.agree and ok.floor > PHI_CEIL and not ok.beyond_double
    off = compare("upper", p.alpha, (sol[0], sol[1], sol[2], sol[3] + 0.002), pd, 50)
    assert not off.agree and off.beyond_double  # gammas alone differ: a double-precision limit
    for shift in (-1, 1):  # a wrong cutoff is a disagreement, never declined as that
        wrong = compare("upper", p.alpha, (sol[0], sol[1], sol[2] + shift, sol[3]), pd, 50)
        assert not wrong.agree and not wrong.beyond_double
