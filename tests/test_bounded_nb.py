"""Negative-binomial inputs inside the documented range that ended in exit 70 (issue 10).

Each now gives a verified design whose size is checked here independently, or a
one-line decline naming the limit it reached.
"""

from __future__ import annotations

import mpmath as mp
import pytest

from exactband import api
from exactband.cli import main
from exactband.errors import DesignError

from .test_far_tails import nb_parts

NB = "negative-binomial"

# the high mean n * high passes 1e15, the largest cutoff the fast solver searches
# (SolverFailure "fast solver did not converge", exit 70, after ~36 s before)
BEYOND = [
    dict(n=271264, dispersion=1.25, low=6.743e7, high=2.5286e10, alpha=7.34e-38),
    dict(n=269538, dispersion=60.9, low=4.237e7, high=2.476e10, alpha=1.7e-77),
]


@pytest.mark.parametrize("kw", BEYOND)
def test_cutoff_beyond_search_limit_is_declined(kw):
    with pytest.raises(DesignError, match="would pass 1e15"):
        api.design(NB, "band", **kw)


def test_cutoff_beyond_search_limit_cli_one_line(capsys):
    kw = BEYOND[0]
    code = main(["design", "--family", NB, "--kind", "band", "--n", str(kw["n"]),
                 "--dispersion", "1.25", "--low", "6.743e7", "--high", "2.5286e10",
                 "--alpha", "7.34e-38"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1
    assert err[0].startswith("exactband: error:") and "1e15" in err[0]


def test_mean_just_inside_the_search_limit_still_solves():
    # the check declines only what the search cannot reach: a Poisson mean of 1e13
    # (upper cutoff ~ 1e13 + 13 sd) is solved by the fast path as before
    d = api.design("poisson", "upper", n=1e12, value=10, alpha=1e-30, verify=False)
    assert 1e13 < d.c2 < 1e13 + 1e8


def test_point_with_all_left_tail_in_the_mass_at_zero():
    # P(Y = 0) ~ 1.7e-61 is far above alpha: c1 = 0 with a gamma ~ 2.7e-38. The
    # precise TailTable's open-bracket end (its right tail below 2**-(prec + 100),
    # ~1e-96) lay short of the right cutoff at alpha 4.74e-99 (PreciseFailure
    # "gamma -37242178 outside [0, 1]", exit 70, before)
    kw = dict(n=93, dispersion=0.0863, value=3.214e6, alpha=4.74e-99)
    d = api.design(NB, "point", verify=True, **kw)
    assert d.verified and d.check.agree and d.c1 == 0
    assert 0.0 <= d.gamma1 < 1.0 and 0.0 <= d.gamma2 < 1.0
    # independent size: pmf from mpmath.loggamma, P(Y > c2) by mpmath.quad of the
    # incomplete-beta integral (test_far_tails.nb_parts); to 1e-9 relative to alpha
    with mp.workdps(40):
        A = mp.mpf("4.74e-99")
        r, m = mp.mpf(93) * mp.mpf("0.0863"), mp.mpf(93) * mp.mpf("3.214e6")
        pmf, _, above = nb_parts(r, m)
        g1, g2 = mp.mpf(d.gamma1_decimal), mp.mpf(d.gamma2_decimal)
        size = g1 * pmf(0) + g2 * pmf(d.c2) + above(d.c2)
        assert abs(size / A - 1) < 1e-9, size


def test_narrow_window_at_a_huge_size_is_declined_before_the_work(capsys):
    # size r = n k = 1.6e11 <= mean 2.6e14: read from its tails with no table; the
    # window is 0.03 sd wide, so at alpha 1e-12 both cutoffs sit at the centre, where
    # each continued fraction takes ~200,000 terms (94-167 s, then exit 1, before)
    args = dict(n=348385, dispersion=4.7e5, low=7.351e8, high=7.35100057e8, alpha=1e-12)
    with pytest.raises(DesignError, match="limit 300,000"):
        api.design(NB, "equivalence", **args)
    code = main(["design", "--family", NB, "--kind", "equivalence", "--n", "348385",
                 "--dispersion", "4.7e5", "--low", "7.351e8", "--high", "7.35100057e8",
                 "--alpha", "1e-12"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and "size r = 1.64e+11" in err[0]


@pytest.mark.parametrize("r,m", [(10**6, 10**12), (10**7, 10**8)])
def test_centre_cost_estimate_covers_the_terms_taken(r, m):
    # the cost check's prediction for a negative binomial read from its tails
    # (cf_sd = 50 r^(1/3)) is not below the terms one evaluation takes near the centre
    # (at 217 bits of working precision the fractions run at 217 + GUARD_BITS + 10)
    from fractions import Fraction

    from exactband.families.mptails import GUARD_BITS, NegBinomialTails, cf_terms_estimate

    T = NegBinomialTails(Fraction(r), Fraction(m))
    for z in (0.0, 0.3):
        T.terms = 0
        with mp.workprec(217):
            T.tails(int(m + z * T.sd_f))
        assert 0 < T.terms <= cf_terms_estimate(T.cf_sd, z, 217 + GUARD_BITS + 10), (z, T.terms)


def test_slow_tails_fall_back_to_a_table_that_fits():
    # size r = mean = 2e8 (sd 2e4): a table fits; at alpha 0.5 the point design's
    # cutoffs sit at the centre, where the fractions are predicted over the limit, so
    # the law is tabulated (MpTable) instead of declined; at alpha 0.05 its tails are
    # cheap and it is read from them (TailTable) as before
    from exactband.solvers import precise

    kw = dict(n=10000, dispersion=20000, value=20000)
    for alpha, kind in ((0.5, "MpTable"), (0.05, "TailTable")):
        precise.clear_cache()
        d = api.design(NB, "point", alpha=alpha, verify=True, **kw)
        assert d.verified and d.check.agree
        assert {type(T).__name__ for T in precise._CACHE.values()} == {kind}


def test_astronomical_size_certifies_at_the_working_precision():
    # size r = n k ~ 6e28 (Poisson-like, read from its tails): the fresh-anchor check agreed
    # to ~6e-71 against a bound of 2^-(219+16) = 1.8e-71 and failed (exit 70; found by the
    # whole-range draw, bench/validate_range.py); it now holds the tails to the working
    # precision 2^-219 (~1e-66), 15 digits beyond the printed 50
    d = api.design("negative-binomial", "lower", n=600000000000, alpha=0.073, value=2.1e-4,
                   dispersion=1.02e17)
    assert d.verified and d.check.agree and 0.0 <= d.gamma1 < 1.0
