"""Laws too spread out to tabulate: the precise solver reads tails at anchors (issue 10).

Negative binomials with a small dispersion and a large mean were declined (their
probability tables would exceed mptable.MAX_TABLE terms).  They now verify; each
design is re-checked here independently of exactband: its sizes are summed from
scipy.stats.nbinom (cdf, sf, pmf of the negative binomial) and must equal alpha
to 1e-9 relative, with gammas in [0, 1).
"""

from __future__ import annotations

from fractions import Fraction

import mpmath as mp
import pytest
from scipy import stats

from exactband import api
from exactband.families import get_family
from exactband.families.mptable import MAX_TABLE, TableTooLarge, table_estimate
from exactband.families.mptails import NegBinomialTails
from exactband.solvers import precise, precise_tails

NB = "negative-binomial"


def scipy_size(d, theta):
    """E_theta phi of a design, from scipy.stats.nbinom (size r = n k, p = r / (r + n theta))."""
    r = d.n * d.problem.dispersion
    law = stats.nbinom(r, r / (r + d.n * theta))
    g1 = d.gamma1 or 0.0
    g2 = d.gamma2 or 0.0
    if d.kind == "upper":
        return law.sf(d.c2) + g2 * law.pmf(d.c2)
    if d.kind == "lower":
        return (law.cdf(d.c1 - 1) if d.c1 > 0 else 0.0) + g1 * law.pmf(d.c1)
    if d.kind == "equivalence":  # 1 strictly between the cutoffs
        return law.cdf(d.c2 - 1) - law.cdf(d.c1) + g1 * law.pmf(d.c1) + g2 * law.pmf(d.c2)
    # band, point: 1 outside the cutoffs
    left = law.cdf(d.c1 - 1) if d.c1 > 0 else 0.0
    return left + g1 * law.pmf(d.c1) + g2 * law.pmf(d.c2) + law.sf(d.c2)


def would_be_declined(d, theta) -> bool:
    """True when the full table of this law would exceed MAX_TABLE (the old decline)."""
    law = get_family(NB).mp_law(theta, d.n, d.problem.dispersion)
    with mp.workdps(65):
        thr = mp.mpf(min(d.alpha, 0.5)) * mp.mpf(10) ** -62
        return table_estimate(float(mp.sqrt(law.variance)), thr, mp.mp.prec)[0] > MAX_TABLE


# k = 0.05 per unit, one unit: size r = 0.05, means up to 1e6 (sd up to 4.5e6)
CASES = [
    ("upper", dict(value=1e6, alpha=0.05)),
    ("upper", dict(value=3e5, alpha=1 - 1e-9)),
    ("lower", dict(value=1e6, alpha=1e-3)),
    ("point", dict(value=1e6, alpha=0.05)),
    ("band", dict(low=1e5, high=1e6, alpha=0.05)),
    ("equivalence", dict(low=1e5, high=1e6, alpha=0.05)),
]


@pytest.mark.parametrize("kind,kw", CASES)
def test_spread_out_negative_binomial_verifies(kind, kw):
    precise.clear_cache()
    d = api.design(NB, kind, n=1, dispersion=0.05, **kw)
    assert d.verified
    assert any(would_be_declined(d, t) for t in d.problem.points)
    for g in (d.gamma1, d.gamma2):
        assert g is None or 0.0 <= g < 1.0
    for theta in d.problem.points:
        size = scipy_size(d, theta)
        assert abs(size - d.alpha) <= 1e-9 * d.alpha, (theta, size)


def test_tails_match_mpmath_betainc():
    # reference: mpmath.betainc(a, b, 0, x, regularized=True), the regularised incomplete
    # beta by mpmath's hypergeometric series (P(Y <= y) = I_q(r, y + 1) for NB(r, q))
    for r, m, ys in [(Fraction(1, 20), Fraction(10**6), (0, 10, 1000)),
                     (Fraction(5), Fraction(7, 2), (0, 3, 60))]:
        T = NegBinomialTails(r, m)
        with mp.workdps(65):
            for y in ys:
                F, S = T.tails(y)
                q = mp.mpf(r) / (mp.mpf(r) + mp.mpf(m.numerator) / m.denominator)
                with mp.workdps(90):
                    want = mp.betainc(mp.mpf(r.numerator) / r.denominator, y + 1, 0, q,
                                      regularized=True)
                    assert abs(F / want - 1) < mp.mpf(10) ** -63
                    assert abs(S / (1 - want) - 1) < mp.mpf(10) ** -60


def test_a_wrong_anchor_is_caught():
    law = get_family(NB).mp_law(1e6, 1, 0.05)
    with mp.workdps(65):
        T = precise_tails.TailTable(law, law.tails())
        c = T.first_sf_at_most(mp.mpf("0.05"))
        assert T.certify([c - 1, c]) < mp.mpf(10) ** -70
        seg = next(s for s in T._segs if s.lo <= c <= s.hi)
        seg.S0 *= 1 + mp.mpf(10) ** -40  # an anchor wrong in its 40th digit
        with pytest.raises(precise_tails.TailCheckFailure):
            T.certify([c - 1, c])


def test_tail_table_agrees_with_the_full_table():
    # source: the project's own full table (families.mptable.MpTable), built by summing
    # masses from the mode: an independent route to the same numbers (no incomplete beta)
    from exactband.families.mptable import MpTable

    with mp.workdps(65):
        law = get_family(NB).mp_law(2000.0, 1, 0.5)  # r = 0.5, m = 2000: sd ~ 2800
        full = MpTable(law, mp.mpf(10) ** -80, moments=True)
        tails = precise_tails.TailTable(law, law.tails())
        tol = mp.mpf(10) ** -60
        # the full table leaves out < 1e-80 of mass beyond its ends (full.truncated),
        # a mass whose values y lie near 1e6: at most ~1e-74 of the moments
        assert full.truncated < mp.mpf(10) ** -80
        slack = mp.mpf(10) ** -72
        for y in (0, 1, 7, 150, 2000, 9000, 20000, 300000):
            for a, b in ((full.cdf(y), tails.cdf(y)), (full.sf(y), tails.sf(y)),
                         (full.pmf(y), tails.pmf(y)), (full.moment_above(y), tails.moment_above(y)),
                         (full.moment_below(y), tails.moment_below(y))):
                assert abs(a - b) <= tol * abs(a) + slack, (y, a, b)
        for t in ("1e-30", "1e-8", "0.05", "0.5", "0.95"):
            t = mp.mpf(t)
            assert tails.first_cdf_above(t) == full.first_cdf_above(t)
            assert tails.first_sf_at_most(t) == full.first_sf_at_most(t)


def test_cost_of_a_design_above_one_half_is_its_complements():
    # a band of size a > 1/2 accepts a window of mass 1 - a: on a band 190 sd wide that
    # window runs from the 1 - a quantile inside one end to the same inside the other,
    # so the cutoffs lie ~4.4 sd from each mean (not at the centre, as predicted before:
    # the law was tabulated, 2.5 s); an equivalence window of mass a > 1/2 ends the
    # 1 - a quantile out whatever the other end's mean (a narrow band near alpha 1 was
    # predicted at the centre: 4 s).  Normal quantiles: statistics.NormalDist (stdlib).
    from statistics import NormalDist

    mean, sd = 1.98e9, 3.0e4
    z = -NormalDist().inv_cdf(1 - 0.99999349)
    _, zb = precise_tails.predicted_terms(
        precise_tails.CostHint("band", 0.99999349, mean + 190 * sd), mean, sd, 200)
    assert zb == pytest.approx(z, rel=1e-9)
    _, zn = precise_tails.predicted_terms(  # a narrow band: the window at the centre
        precise_tails.CostHint("band", 0.99999349, mean + 0.5 * sd), mean, sd, 200)
    assert zn == 0.0
    ze = -NormalDist().inv_cdf(1 - 0.99999999989)
    _, zq = precise_tails.predicted_terms(
        precise_tails.CostHint("equivalence", 0.99999999989, mean + 1.7), mean, sd, 200)
    assert zq == pytest.approx(ze, rel=1e-9)


@pytest.mark.parametrize("n, p, alpha", [(2, "0.5", "0.75"), (1, "0.5", "0.5000001"),
                                         (7, "0.3", "0.9"), (40, "0.55", "0.999"),
                                         (3, "0.5", "0.875")])
def test_one_sided_cutoffs_above_one_half_by_their_definition(n, p, alpha):
    # upper: min{c : P(Y > c) <= alpha}; lower: min{c : P(Y <= c) > alpha} (the
    # definitions, common practice), here by exact rational sums of the binomial masses
    # (fractions.Fraction); the precise solver finds them for alpha > 1/2 from the small
    # tail and 1 - alpha, ties (P(Y <= c) = 1 - alpha exactly: n = 2, 3 at p = 1/2)
    # included
    P, A = Fraction(p), Fraction(alpha)
    from math import comb

    pmf = [comb(n, y) * P ** y * (1 - P) ** (n - y) for y in range(n + 1)]
    cdf = [sum(pmf[: y + 1]) for y in range(n + 1)]
    up = min(c for c in range(n + 1) if 1 - cdf[c] <= A)
    lo = min(c for c in range(n + 1) if cdf[c] > A)
    fam = get_family("binomial")
    du = precise.solve(fam, "upper", n, float(alpha), value=float(p))
    dl = precise.solve(fam, "lower", n, float(alpha), value=float(p))
    assert (du.c2, dl.c1) == (up, lo)


@pytest.mark.parametrize("family, kind, kw", [
    ("negative-binomial", "point", dict(n=10, alpha=0.9999999999973, value=3.1e10,
                                        dispersion=1.849e9)),
    ("poisson", "band", dict(n=6e11, alpha=0.7, low=0.2, high=0.20000004)),
    ("poisson", "upper", dict(n=1, alpha=0.3, value=1e11)),
])
def test_preflight_declines_as_the_solver_does(family, kind, kw):
    # the verified path declines these for the predicted cost of the precise tails; the
    # preflight (run before the fast solver: the first spent 5 s there) must raise the
    # same limit, and the API's one-line decline must be the same either way
    fam = get_family(family)
    args = dict(low=kw.get("low"), high=kw.get("high"), value=kw.get("value"),
                dispersion=kw.get("dispersion"))
    with pytest.raises(TableTooLarge) as pre:
        precise.preflight(fam, kind, kw["n"], kw["alpha"], **args)
    precise.clear_cache()
    with pytest.raises(TableTooLarge) as full:
        precise.solve(fam, kind, kw["n"], kw["alpha"], **args)
    assert str(pre.value) == str(full.value)


@pytest.mark.parametrize("family, kind, kw", [
    ("poisson", "band", dict(n=25, alpha=0.05, low=2, high=2.5)),
    ("binomial", "upper", dict(n=10520000000, alpha=0.999999999997, value=0.9944)),
    ("negative-binomial", "equivalence", dict(n=30, alpha=1.163e-7, low=2.9e10,
                                              high=29000190000, dispersion=0.82)),
])
def test_preflight_passes_what_the_solver_solves(family, kind, kw):
    fam = get_family(family)
    args = dict(low=kw.get("low"), high=kw.get("high"), value=kw.get("value"),
                dispersion=kw.get("dispersion"))
    precise.preflight(fam, kind, kw["n"], kw["alpha"], **args)
    assert api.design(family, kind, **kw).verified
