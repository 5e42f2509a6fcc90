"""Distribution layer: float laws (scipy/saddle point) and precise tables (mpmath).

External references, each named where it is used:
* scipy.stats (general-purpose library): poisson / binom / nbinom pmf, cdf, sf;
* mpmath (general-purpose library): gammainc (regularised incomplete gamma),
  betainc (regularised incomplete beta), loggamma;
* the Poisson / chi-square identity P(Y <= c; mu) = P(chi2 with 2(c+1) df > 2 mu)
  (N. L. Johnson, A. W. Kemp and S. Kotz, Univariate Discrete Distributions,
  3rd ed., Wiley 2005, section 4.3).
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest
from scipy import stats

from exactband.families import get_family
from exactband.mpnum import dec

from .conftest import table

POIS, BIN, NB = (get_family(x) for x in ("poisson", "binomial", "negative-binomial"))


def rel(a, b):
    return abs(a - b) / abs(b)


@pytest.mark.parametrize("mu", [0.05, 1.3, 17.0, 250.0, 4000.0, 2.5e5])
def test_poisson_float_law_against_scipy_stats(mu):
    # scipy.stats.poisson: pmf, cdf, sf (general-purpose reference library)
    L = POIS.float_law
    P = L.make(mu, 1.0, None)
    sd = np.sqrt(mu)
    y = np.unique(np.clip(np.round(mu + sd * np.array([-6, -3, -1, 0, 1, 3, 6])), 0, None))
    np.testing.assert_allclose(L.cdf(y, P), stats.poisson.cdf(y, mu), rtol=1e-12, atol=0)
    np.testing.assert_allclose(L.sf(y, P), stats.poisson.sf(y, mu), rtol=1e-12, atol=1e-300)
    # scipy's pmf loses ~log10(mu) digits at large mu (exp of a cancelling sum), ours does not:
    # compare with a tolerance that scipy itself meets (measured 4e-12 at mu = 4000, 2e-9 at 1e6)
    np.testing.assert_allclose(L.pmf(y, P), stats.poisson.pmf(y, mu), rtol=1e-8)


@pytest.mark.parametrize("n,p", [(1, 0.3), (20, 0.5), (300, 0.01), (5000, 0.999), (10**6, 1e-5)])
def test_binomial_float_law_against_scipy_stats(n, p):
    # scipy.stats.binom: pmf, cdf, sf
    L = BIN.float_law
    P = L.make(p, n, None)
    sd = np.sqrt(n * p * (1 - p))
    y = np.unique(np.clip(np.round(n * p + sd * np.array([-5, -2, 0, 2, 5])), 0, n))
    np.testing.assert_allclose(L.pmf(y, P), stats.binom.pmf(y, n, p), rtol=1e-10)
    np.testing.assert_allclose(L.cdf(y, P), stats.binom.cdf(y, n, p), rtol=1e-10)
    np.testing.assert_allclose(L.sf(y, P), stats.binom.sf(y, n, p), rtol=1e-10, atol=1e-300)


@pytest.mark.parametrize("n,k,theta", [(1, 0.5, 3.0), (10, 2.0, 1.5), (40, 25.0, 6.0),
                                       (200, 1e3, 0.7)])
def test_negbinomial_float_law_against_scipy_stats(n, k, theta):
    # scipy.stats.nbinom with size r = n*k and success probability r/(r + n*theta)
    L = NB.float_law
    P = L.make(theta, n, k)
    r, m = n * k, n * theta
    q = r / (r + m)
    sd = np.sqrt(m + m * m / r)
    y = np.unique(np.clip(np.round(m + sd * np.array([-3, -1, 0, 2, 6])), 0, None))
    np.testing.assert_allclose(L.pmf(y, P), stats.nbinom.pmf(y, r, q), rtol=1e-10)
    np.testing.assert_allclose(L.cdf(y, P), stats.nbinom.cdf(y, r, q), rtol=1e-10)
    np.testing.assert_allclose(L.sf(y, P), stats.nbinom.sf(y, r, q), rtol=1e-10)


def test_float_masses_against_mpmath_loggamma(rng):
    # exact masses from mpmath.loggamma at 40 digits; the float law must keep ~1e-12 relative
    worst = 0.0
    with mp.workdps(40):
        for _ in range(40):
            mu = float(10 ** rng.uniform(-1, 5.5))
            y = int(max(0, mu + rng.normal() * 3 * np.sqrt(mu)))
            M = mp.mpf(mu)
            exact = mp.exp(y * mp.log(M) - M - mp.loggamma(y + 1))
            got = POIS.float_law.pmf(y, POIS.float_law.make(mu, 1.0, None))
            worst = max(worst, float(rel(mp.mpf(float(got)), exact)))
            n = int(10 ** rng.uniform(0, 5))
            p = float(rng.uniform(0.001, 0.999))
            y = int(min(n, max(0, n * p + rng.normal() * 3 * np.sqrt(n * p * (1 - p)))))
            Pm = mp.mpf(p)
            exact = mp.exp(mp.loggamma(n + 1) - mp.loggamma(y + 1) - mp.loggamma(n - y + 1)
                           + y * mp.log(Pm) + (n - y) * mp.log1p(-Pm))
            got = BIN.float_law.pmf(y, BIN.float_law.make(p, n, None))
            worst = max(worst, float(rel(mp.mpf(float(got)), exact)))
    assert worst < 1e-11, worst


@pytest.mark.parametrize("mu,c", [(0.3, 0), (4.0, 1), (50.0, 35), (50.0, 80), (900.0, 1010)])
def test_poisson_chisquare_identity(mu, c):
    # Johnson, Kemp & Kotz (3rd ed., sec. 4.3): P(Y <= c; mu) = P(chi2_{2(c+1)} > 2 mu).
    # Float side: scipy.stats.chi2.sf; precise side: the chi-square survival function as
    # mpmath's regularised upper incomplete gamma Gamma(c+1, mu)/Gamma(c+1).
    L = POIS.float_law
    assert L.cdf(c, L.make(mu, 1.0, None)) == pytest.approx(stats.chi2.sf(2 * mu, 2 * (c + 1)),
                                                            rel=1e-12)
    with mp.workdps(60):
        T = table(POIS, mu, 1.0, None, dps=60)
        chi2_sf = mp.gammainc(c + 1, dec(mu), mp.inf, regularized=True)
        assert abs(T.cdf(c) - chi2_sf) <= mp.mpf(10) ** -50 * chi2_sf


def test_precise_tables_against_mpmath_special_functions():
    # mpmath.betainc (binomial and negative-binomial cdf as regularised incomplete beta) and
    # mpmath.gammainc (Poisson); the tables are built by recurrence, so this is independent.
    with mp.workdps(60):
        tol = mp.mpf(10) ** -48
        T = table(BIN, 0.3, 40, None, dps=60)
        for c in (3, 12, 25):
            ref = mp.betainc(40 - c, c + 1, 0, 1 - dec(0.3), regularized=True)
            assert abs(T.cdf(c) - ref) <= tol * ref
        T = table(NB, 1.5, 10, 2.0, dps=60)
        r, m = dec(10) * dec(2.0), dec(10) * dec(1.5)
        for c in (2, 15, 40):
            ref = mp.betainc(r, c + 1, 0, r / (r + m), regularized=True)
            assert abs(T.cdf(c) - ref) <= tol * ref
            assert abs(T.sf(c) - (1 - ref)) <= tol
        T = table(POIS, 12.5, 4.0, None, dps=60)
        for c in (20, 50, 80):
            ref = mp.gammainc(c + 1, 0, dec(4.0) * dec(12.5), regularized=True)  # P(Y > c)
            assert abs(T.sf(c) - ref) <= tol * ref


def test_precise_table_truncation_is_bounded():
    with mp.workdps(60):
        for fam, theta, n, k in [(POIS, 3.0, 100.0, None), (BIN, 0.02, 500, None),
                                 (NB, 5.0, 3, 0.3)]:
            T = table(fam, theta, n, k, dps=60)
            assert T.truncated < mp.mpf(10) ** -54
            total = T.cdf(T.hi)
            assert abs(total - 1) < mp.mpf(10) ** -53


def test_dcdf_is_the_derivative_of_the_cdf():
    # closed forms dF/dt = -w(c) pmf(c) against a central difference of the float cdf
    for fam, theta, n, k in [(POIS, 2.0, 30.0, None), (BIN, 0.3, 60, None), (NB, 2.0, 20, 3.0)]:
        L = fam.float_law
        P = L.make(theta, n, k)
        t = L.t(P)
        h = 1e-6 * t
        c = np.arange(0.0, 80.0)
        up, dn = L.with_t(P, t + h), L.with_t(P, t - h)
        by_cdf = (L.cdf(c, up) - L.cdf(c, dn)) / (2 * h)
        by_sf = -(L.sf(c, up) - L.sf(c, dn)) / (2 * h)  # same derivative, small-tail form
        num = np.where(L.sf(c, P) < 0.5, by_sf, by_cdf)
        np.testing.assert_allclose(L.dcdf(c, P), num, rtol=1e-5, atol=1e-12)


def test_binomial_few_count_tail_at_large_n(rng):
    # The tail of the few smallest counts of the small side at a large n
    # (P(Y <= c) for p <= 1/2, P(Y > c) for p > 1/2, c or n - c - 1 below 39), where
    # scipy's betaincc lost ~2.5e-20 n relative (5e-11 at n = 2e9).  Reference: the
    # masses summed in mpmath at 40 digits from (1 - x)^n, x the small one of p, 1 - p
    # of the same double p.  Bound: law_eps (2e-14) plus the mass's rounding of log pmf
    # (8 u max(1, |log pmf|), docs/tolerances.md sections 1 and 7).
    L = BIN.float_law
    u = 2.0 ** -53
    worst = 0.0
    with mp.workdps(40):
        for _ in range(150):
            n = float(np.floor(10 ** rng.uniform(4, 12)))
            j = int(rng.integers(0, 39))
            x = (j * 10 ** rng.uniform(-0.3, 1) + 0.1) / n
            high = bool(rng.integers(0, 2))
            p = 1.0 - x if high else x
            X = 1 - mp.mpf(p) if high else mp.mpf(p)
            term = mp.exp(int(n) * mp.log1p(-X))
            total = term
            for k in range(1, j + 1):
                term = term * (int(n) - k + 1) / k * X / (1 - X)
                total += term
            P = L.make(np.array([p]), np.array([n]), None)
            if high:
                got = L.sf(np.array([n - j - 1.0]), P)[0]
            else:
                got = L.cdf(np.array([float(j)]), P)[0]
            bound = 2e-14 + 8 * u * max(1.0, abs(float(mp.log(term))))
            err = float(rel(mp.mpf(float(got)), total))
            worst = max(worst, err / bound)
    assert worst <= 1.0, worst


@pytest.mark.parametrize("r", [2.0, 7.0, 20.0, 39.0])
def test_negbinomial_integer_size_tails_at_a_large_mean(r, rng):
    # An integer size r <= 39 at a large mean: scipy's incomplete beta with a small
    # integer first parameter lost up to ~2e-8 relative (r = 20, mean 1e9); the tails now
    # come from the binomial identity P(Y > c) = P(Bin(c + r, q) <= r - 1).  Reference:
    # mpmath.betainc (regularised incomplete beta I_q(r, c + 1)) at 30 digits.  Bound:
    # law_eps at sd <= 100 (2e-14) plus the mass's rounding of log pmf (8 u max(1,
    # |log pmf|), docs/tolerances.md sections 1 and 7), i.e. no growth with the spread.
    L = NB.float_law
    u = 2.0 ** -53
    worst = 0.0
    with mp.workdps(30):
        for _ in range(6):
            m = float(10 ** rng.uniform(5, 10))
            c = float(stats.nbinom(r, r / (r + m)).ppf(rng.uniform(0.001, 0.999)))
            R, M = mp.mpf(r), mp.mpf(m)
            Q = R / (R + M)
            ref_cdf = mp.betainc(R, c + 1, 0, Q, regularized=True)
            ref_sf = mp.betainc(R, c + 1, Q, 1, regularized=True)
            cdf, sf = L._tails(np.array([c]), (np.array([r]), np.array([m])))
            lf = abs(float(L.logpmf(np.array([c]), (np.array([r]), np.array([m])))[0]))
            bound = 2e-14 + 8 * u * max(1.0, lf)
            worst = max(worst, float(rel(mp.mpf(float(cdf[0])), ref_cdf)) / bound,
                        float(rel(mp.mpf(float(sf[0])), ref_sf)) / bound)
    assert worst <= 1.0, worst


@pytest.mark.parametrize("family, theta, n, k", [
    ("poisson", 3.7, 1, None), ("poisson", 2.5e5, 4, None),
    ("binomial", 0.3, 40, None), ("binomial", 0.999999, 3_000_000, None),
    ("binomial", 0.5, 1, None), ("negative-binomial", 12.5, 30, 0.4),
    ("negative-binomial", 800.0, 7, 150.0),
])
def test_table_bulk_loop_builds_the_same_integers(family, theta, n, k, monkeypatch):
    # MpTable fills its bulk with the law's ratios written as (u0 + u1 y) / (v0 + v1 y)
    # inline (``affine``); without them it calls up_int / down_int one term at a time.
    # Both must give the same table: window, every fixed-point integer, truncation
    from exactband.families import mptable

    fam = get_family(family)
    with mp.workdps(40):
        law = fam.mp_law(theta, n, k)
        thr = mp.mpf(10) ** -35
        bulk = mptable.MpTable(law, thr)
        monkeypatch.delattr(type(law), "affine")
        plain = mptable.MpTable(law, thr)
    assert (bulk.lo, bulk.hi, bulk._left, bulk._right, bulk.truncated) == \
        (plain.lo, plain.hi, plain._left, plain._right, plain.truncated)
