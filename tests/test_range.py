"""The verified path over the whole documented range (issue 10, item 6 of issue 9).

Each input below was refused (wrong cutoff, disagreement, MemoryError) before.
Every verified design is re-checked here, independently of exactband, by
summing its test function against scipy.stats (scipy.stats.poisson / binom
pmf, sf and cdf: the probability laws themselves); the sizes must equal alpha
to 1e-9 relative and the gammas lie in [0, 1).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from exactband import api
from exactband import kinds as K
from exactband.cli import main
from exactband.crosscheck import PHI_TOL, phi_distance
from exactband.errors import DesignError
from exactband.mpnum import float_complement
from exactband.params import make_problem
from exactband.solvers import precise


def scipy_size(d, theta, mirrored=False, complement=False):
    """E_theta phi by scipy.stats sums over the support where phi differs from its ends.

    phi is constant outside [min cutoff, max cutoff]: those parts come from sf/cdf.
    ``mirrored`` (binomial theta near 1): Y = n - Y' with Y' ~ Binomial(n, 1 - theta),
    1 - theta formed exactly from the decimal, so the law keeps its digits.
    """
    cs = [c for c in (d.c1, d.c2) if c is not None]
    lo, hi = min(cs), max(cs)
    if d.family == "poisson":
        law = stats.poisson(d.n * theta)
        pmf, cdf, sf = law.pmf, law.cdf, law.sf
    else:
        n = d.n
        if mirrored:
            law = stats.binom(n, float_complement(theta))
            pmf = lambda y: law.pmf(n - np.asarray(y))  # noqa: E731
            cdf = lambda y: law.sf(n - y - 1)  # noqa: E731
            sf = lambda y: law.cdf(n - y - 1)  # noqa: E731
        else:
            law = stats.binom(n, theta)
            pmf, cdf, sf = law.pmf, law.cdf, law.sf
    ys = np.arange(lo, hi + 1)
    c1 = np.nan if d.c1 is None else d.c1
    c2 = np.nan if d.c2 is None else d.c2
    g1 = 0.0 if d.gamma1 is None else d.gamma1
    g2 = 0.0 if d.gamma2 is None else d.gamma2
    def w(y):  # phi, or 1 - phi (the complement keeps its digits when alpha is near 1)
        v = K.phi(d.kind, c1, g1, c2, g2, np.asarray(y, dtype=float))
        return 1.0 - v if complement else v

    mid = float(np.sum(w(ys) * pmf(ys)))
    left = w([lo - 1.0])[0] * (cdf(lo - 1) if lo > 0 else 0)
    right = w([hi + 1.0])[0] * sf(hi)
    return mid + float(left) + float(right)


def check_verified(d, mirrored=False, rel=1e-9):
    assert d.verified
    for g in (d.gamma1, d.gamma2):
        assert g is None or 0.0 <= g < 1.0
    for theta in d.problem.points:
        size = scipy_size(d, theta, mirrored)
        assert abs(size - d.alpha) <= rel * d.alpha, (theta, size)


# -- wide bands: the precise solver took a wrong upper cutoff --------------------------
def test_wide_band_right_cutoff():
    d = api.design("poisson", "band", n=1, low=10, high=10000, alpha=0.05)
    # source: issue 10 (the reporter's 60-digit solution); sizes re-summed with scipy.stats
    assert (d.c1, d.c2) == (5, 10165)
    assert d.gamma1 == pytest.approx(0.548387947688403, abs=1e-14)
    assert d.gamma2 == pytest.approx(0.729838531362293, abs=1e-14)
    check_verified(d)


@pytest.mark.parametrize("kind, low, high", [("band", 1000, 30000), ("equivalence", 500, 20000)])
def test_wide_bands_and_equivalence(kind, low, high):
    check_verified(api.design("poisson", kind, n=1, low=low, high=high, alpha=0.05))


# -- binomial theta near 1: decimals and their exact complements -------------------------
def test_binomial_point_near_one():
    d = api.design("binomial", "point", n=100000, value=0.99999997, alpha=0.5)
    check_verified(d, mirrored=True)


def test_binomial_band_near_one_is_mirror_of_near_zero():
    d = api.design("binomial", "band", n=20000, low=0.9999990, high=0.9999995, alpha=0.05)
    m = api.design("binomial", "band", n=20000, low=0.0000005, high=0.0000010, alpha=0.05)
    check_verified(d, mirrored=True)
    # the mirror image Y -> n - Y, p -> 1 - p (common practice): same test reflected
    assert (d.c1, d.c2) == (20000 - m.c2, 20000 - m.c1)
    assert d.gamma1 == pytest.approx(m.gamma2, abs=1e-12)


def test_binomial_narrow_equivalence_near_one_at_huge_n():
    # source: the whole-range draw (bench/validate_range.py, seed 7): the fast lower tail
    # (scipy's betaincc at a huge n, few counts) was off by 4e-11 relative, phi by 1.9e-11
    # against a tolerance of 8.9e-12 (exit 1); sizes re-summed with scipy.stats
    d = api.design("binomial", "equivalence", n=1600000000, alpha=0.99999999,
                   low=0.999999965, high=0.999999965000000262)
    check_verified(d, mirrored=True)
    assert d.check.max_phi_diff <= 0.01 * d.check.phi_tol


def test_negbinomial_integer_size_narrow_equivalence():
    # source: the whole-range draw (bench/validate_range.py, seed 2): size r = 20 at a mean
    # of 2.1e7, where scipy's incomplete beta lost ~2e-11 relative; phi differed by
    # 1.08e-6 (tolerance 1e-6, exit 1).  Sizes re-summed with scipy.stats.nbinom
    # (cdf, pmf) to 1e-9 relative; the fast rule now within 1% of the tolerance
    d = api.design("negative-binomial", "equivalence", n=20, alpha=0.6411, low=1.05e6,
                   high=1050000.07, dispersion=1)
    assert d.verified and 0 <= d.gamma1 < 1 and 0 <= d.gamma2 < 1
    for theta in (1.05e6, 1050000.07):
        m = 20 * theta
        law = stats.nbinom(20, 20 / (20 + m))
        size = (law.cdf(d.c2 - 1) - law.cdf(d.c1) + d.gamma1 * law.pmf(d.c1)
                + d.gamma2 * law.pmf(d.c2))
        assert abs(size - 0.6411) <= 1e-9 * 0.6411
    assert d.check.max_phi_diff <= 0.01 * d.check.phi_tol


@pytest.mark.parametrize("family, kw, mean", [
    ("poisson", dict(n=2000000, value=114, alpha=0.99999999997342), 228000000),
    ("poisson", dict(n=1.77e11, value=1e-3, alpha=0.99999841), 177000000),
    ("poisson", dict(n=2.1e7, value=0.03359, alpha=0.999999999658), 705390),
    ("binomial", dict(n=70000000, value=0.5469, alpha=0.999999996), 38283000),
])
def test_point_accepting_one_point_at_an_integer_mean(family, kw, mean):
    # source: the whole-range draw (bench/validate_range.py, seeds 2, 3, 4, 7): the
    # acceptance mass 1 - alpha is below one point's mass at an integer mean n theta, so
    # the design accepts at the mean alone (E[(Y - mean)(1 - phi)] = 0 holds with 1 - phi
    # on the mean only); the precise search's tie there, a rounded difference of
    # moments or a mean rounded to binary, fell on either side (PreciseFailure "gamma
    # 1.0 outside [0, 1]", exit 70).  Sizes re-summed with scipy.stats
    d = api.design(family, "point", **kw)
    check_verified(d)
    assert d.c1 == d.c2 == mean and d.gamma2 == 0.0


def test_point_long_acceptance_window_at_a_huge_mean():
    # source: the whole-range draw (bench/validate_range.py, seed 3): alpha near 1 at a
    # negative-binomial mean of 8.8e11 accepts a window of 5,235 points; the fast
    # search took its derivative condition from two tails' derivatives that cancel, and
    # put the window 56 points off the mean (phi difference 1, exit 1).  It now takes
    # the point's line (sum f (y - mean) phi = 0, lineform.PointLine).  The acceptance
    # mass 1 - size re-summed with scipy.stats.nbinom.pmf over the window, against
    # 1 - alpha to 1e-6 relative (scipy's own accuracy there), and the window centred
    # on the mean (symmetric: the masses change by 3e-9 relative across it)
    kw = dict(n=11, alpha=0.9999998029, value=8e10, dispersion=627.2)
    sol = api.fast_solve([make_problem("negative-binomial", "point", **kw)])[0]
    d = api.design("negative-binomial", "point", **kw)
    assert (sol[0], sol[2]) == (d.c1, d.c2)
    assert d.c1 + d.c2 == 2 * 880000000000
    r = 11 * 627.2
    law = stats.nbinom(r, r / (r + 8.8e11))
    ys = np.arange(d.c1, d.c2 + 1)
    keep = np.ones(ys.size)
    keep[0], keep[-1] = 1 - d.gamma1, 1 - d.gamma2
    rest = float(np.sum(keep * law.pmf(ys)))
    assert abs(rest - float_complement(0.9999998029)) <= 1e-6 * float_complement(0.9999998029)


def test_band_above_one_half_at_a_huge_mean_starts_near_the_window():
    # source: the whole-range draw (bench/validate_range.py, seed 6): the fast search's
    # start for a window of size 1 - alpha took y* from the log ratio at y = 0 and 1 (a
    # difference of two numbers ~ 24,000 that differ by 2e-7), 6 sd low; the start's left
    # tail underflowed and the search never converged (SolverFailure, exit 70).  The fast
    # design's sizes re-summed with scipy.stats.poisson (cdf, pmf, sf) at both ends, to
    # 1e-9 relative; the verified path declines it in one line (the precise tails'
    # predicted cost at cutoffs within 0.5 sd of a mean of 1.2e11)
    kw = dict(n=6e11, alpha=0.7, low=0.2, high=0.20000004)
    c1, g1, c2, g2 = api.fast_solve([make_problem("poisson", "band", **kw)])[0]
    for theta in (0.2, 0.20000004):
        law = stats.poisson(6e11 * theta)
        size = law.cdf(c1 - 1) + g1 * law.pmf(c1) + g2 * law.pmf(c2) + law.sf(c2)
        assert abs(size - 0.7) <= 1e-9 * 0.7, (theta, size)
    with pytest.raises(DesignError, match="continued-fraction terms"):
        api.design("poisson", "band", **kw)


def test_window_gammas_split_by_the_rounding_of_y_star():
    # source: the whole-range draw (bench/validate_range.py, seed 5): a window of 202,389
    # points at the crossing y* ~ 1.67e12 of two negative binomials (size 1.6): the two
    # size conditions differ only by the log ratio's slope 1.6e-12 across the window, so
    # the gammas' split moves by about as much as y* moves in counts, and y* in double
    # precision has an ulp of 2.4e-4 (its rounding: 8 u |mean_hi - mean_lo|).  That is a
    # double-precision floor (crosscheck._line_bound), not a fault: phi 4.5e-4 was judged
    # at 1e-6 before (exit 1).  The size check stays at 1e-9 x alpha, and a cutoff moved
    # by one still fails
    from exactband.crosscheck import compare
    from exactband.solvers import precise as P

    kw = dict(n=2, alpha=3.327e-8, low=4e11, high=2.2e12, dispersion=0.8)
    d = api.design("negative-binomial", "equivalence", **kw)
    assert d.verified and 1e-6 < d.check.phi_tol <= 1e-3
    assert d.check.fast_size_error <= 1e-9 * 3.327e-8
    p = make_problem("negative-binomial", "equivalence", **kw)
    c1, g1, c2, g2 = api.fast_solve([p])[0]
    pd = P.solve(p.family, "equivalence", p.n, p.alpha, low=p.low, high=p.high,
                 dispersion=p.dispersion)
    assert not compare("equivalence", p.alpha, (c1 + 1, g1, c2, g2), pd, 50).agree


def test_fast_path_reads_the_decimal():
    p = make_problem("binomial", "upper", n=50000, value=0.99999997, alpha=0.05)
    sol = api.fast_solve([p])[0]
    pd = precise.solve(p.family, "upper", p.n, p.alpha, value=p.value)
    assert phi_distance("upper", sol, (pd.c1, pd.gamma1, pd.c2, pd.gamma2)) < 1e-12


# -- alpha near 1 -------------------------------------------------------------------------
@pytest.mark.parametrize("family, kind, kw", [
    ("poisson", "upper", dict(n=10, value=2, alpha=0.999999999)),
    ("binomial", "lower", dict(n=50, value=0.3, alpha=0.999999999999)),
    # read from its tails (n p q = 5.9e7): its cutoff is placed from the small tail
    ("binomial", "upper", dict(n=10520000000, value=0.9944, alpha=0.999999999997)),
    ("poisson", "band", dict(n=50, low=2, high=2.5, alpha=0.999999999)),
    ("binomial", "equivalence", dict(n=591, low=0.74743132646, high=0.87371566323,
                                     alpha=0.9999999977290759)),
])
def test_alpha_near_one(family, kind, kw):
    d = api.design(family, kind, **kw)
    check_verified(d)
    # 1 - size against 1 - alpha: the part scipy resolves (its own relative accuracy)
    for theta in d.problem.points:
        rest = scipy_size(d, theta, complement=True)
        assert abs(rest - float_complement(d.alpha)) <= 1e-6 * float_complement(d.alpha)


# two-tailed designs whose acceptance window is a few points at a large mean: the fast
# solver did not converge (SolverFailure, CLI exit 70) before; source of the inputs:
# issue 10's corner validation and a grid over means 10..1e6 and alpha near 1
@pytest.mark.parametrize("kind, kw", [
    ("point", dict(n=10, value=2000, alpha=0.999)),  # integer mean 20000
    ("point", dict(n=10, value=2000, alpha=0.999999999999)),
    ("point", dict(n=10, value=100000, alpha=0.999999)),  # mean 1e6
    ("band", dict(n=10, low=100000, high=100000.0001, alpha=0.99999999999)),
])
def test_alpha_near_one_narrow_window_large_mean(kind, kw):
    d = api.design("poisson", kind, **kw)
    check_verified(d)
    b = float_complement(d.alpha)
    for theta in d.problem.points:
        # 1 - size = the window's mass, summed with scipy.stats.poisson.pmf; 1e-6 relative:
        # 1 - phi is formed in double from gammas near 1 (absolute error ~1e-16 against
        # window masses down to ~1e-12)
        rest = scipy_size(d, theta, complement=True)
        assert abs(rest - b) <= 1e-6 * b
    if kind == "point":
        # UMPU side condition E[(Y - mu) phi] = 0, i.e. E[(Y - mu)(1 - phi)] = 0 (Lehmann and
        # Romano, Testing Statistical Hypotheses, 3rd ed., section 4.2), summed with
        # scipy.stats.poisson.pmf over the window
        mu = d.n * d.problem.points[0]
        ys = np.arange(min(d.c1, d.c2) - 1, max(d.c1, d.c2) + 2)
        w = 1.0 - K.phi("point", d.c1, d.gamma1, d.c2, d.gamma2, ys.astype(float))
        terms = (ys - mu) * w * stats.poisson(mu).pmf(ys)
        assert abs(terms.sum()) <= 1e-6 * np.abs(terms).sum() + 1e-300


def test_binomial_upper_huge_n():
    d = api.design("binomial", "upper", n=100_000_000, value=0.5, alpha=0.05)
    check_verified(d)


# -- negative binomial with a huge dispersion: the Poisson limit ---------------------------
@pytest.mark.parametrize("verify", [True, False])
def test_huge_dispersion_is_poisson(verify):
    nb = api.design("negative-binomial", "upper", n=10, value=2, alpha=0.05, dispersion=1e20,
                    verify=verify)
    po = api.design("poisson", "upper", n=10, value=2, alpha=0.05)
    # source: issue 10 ("the right answer is the Poisson limit (28, 0.8633)")
    assert (nb.c2, round(nb.gamma2, 4)) == (28, 0.8633)
    assert phi_distance("upper", (nb.c1, nb.gamma1, nb.c2, nb.gamma2),
                        (po.c1, po.gamma1, po.c2, po.gamma2)) < 1e-12
    if verify:
        assert "Poisson" in nb.describe()


@pytest.mark.parametrize("kind", ["band", "point", "equivalence"])
def test_huge_dispersion_two_tailed(kind):
    kw = dict(value=2) if kind == "point" else dict(low=2, high=2.5)
    for k in (1e9, 1e16):
        d = api.design("negative-binomial", kind, n=10, alpha=0.05, dispersion=k, **kw)
        assert d.verified


# -- large means: windowed tables, bounded memory -------------------------------------------
def test_poisson_band_huge_mean():
    d = api.design("poisson", "band", n=1_000_000, low=2, high=2.5, alpha=0.05)
    check_verified(d)


def test_poisson_right_tail_large_mean_float_law():
    # scipy.special.gammainc loses digits 5 sd above a mean of 1e6; reference: mpmath gammainc
    import mpmath as mp

    from exactband.families.poisson import PoissonLaw

    mu, c = 1e6, 1005000.0
    got = PoissonLaw.sf(np.array([c]), (np.array([mu]),))[0]
    with mp.workdps(40):
        want = mp.gammainc(c + 1, 0, mu, regularized=True)
    assert abs(got / float(want) - 1) < 1e-12


def test_too_spread_out_is_declined_naming_the_limit():
    # a mean of 1e12 is read from its tails; alpha = 0.5 puts the cutoff at its centre
    with pytest.raises(DesignError, match="limit 300,000"):
        api.design("poisson", "upper", n=1e12, value=1, alpha=0.5)


def test_precision_1000_memory_bound_cli(capsys):
    code = main(["design", "--family", "poisson", "--kind", "band", "--n", "1000000", "--low",
                 "2", "--high", "2.5", "--alpha", "0.05", "--precision", "1000"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1
    # the table would pass 400 MB, so the law is read from its tails, whose continued
    # fractions at 1000 digits are predicted too long: declined before any memory is taken
    assert err[0].startswith("exactband: error:") and "limit 300,000" in err[0]


# -- the cross-check still catches a real mistake --------------------------------------------
def test_crosscheck_catches_a_wrong_cutoff():
    from exactband.crosscheck import compare

    p = make_problem("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    sol = api.fast_solve([p])[0]
    pd = precise.solve(p.family, "band", p.n, p.alpha, low=p.low, high=p.high)
    assert compare("band", p.alpha, sol, pd, 50).agree
    wrong = (sol[0], sol[1], sol[2] + 1, sol[3])
    cc = compare("band", p.alpha, wrong, pd, 50)
    assert not cc.agree and cc.phi_tol <= PHI_TOL
