"""Poisson, binomial and Poisson-like negative-binomial laws beyond the table limits (issue 10).

Their probability tables would pass mptable.MAX_TABLE terms, so they were declined;
the precise solver now reads their tails from continued fractions (families.mptails:
incomplete gamma for the Poisson, incomplete beta for the binomial and the negative
binomial with size r > mean) at a few anchors.  Each design is re-checked here
independently of exactband: its sizes at the constraint points are summed from
mpmath.gammainc (Poisson; scipy.stats.poisson's pmf is off by 1.5e-4 relative at a
mean of 1e11) or scipy.stats (binom, nbinom: cdf, sf, pmf) and must equal alpha to
1e-9 relative, with gammas in [0, 1).  A design predicted to take too many fraction terms is
declined in one line before any work.
"""

from __future__ import annotations

import random
import subprocess
import sys
from fractions import Fraction

import mpmath as mp
import pytest
from scipy import stats

from exactband import api
from exactband.errors import DesignError
from exactband.families import get_family
from exactband.families.mptable import MAX_TABLE, MAX_TABLE_BYTES, table_estimate
from exactband.families.mptails import BinomialTails, PoissonTails
from exactband.solvers import precise, precise_tails


def scipy_law(d, theta):
    """The law of Y from scipy.stats: poisson(n theta), binom(n, p), nbinom(r, r/(r + n theta))."""
    if d.family == "poisson":
        return stats.poisson(d.n * theta)
    if d.family == "binomial":
        return stats.binom(int(d.n), theta)
    r = d.n * d.problem.dispersion
    return stats.nbinom(r, r / (r + d.n * theta))


class MpPoisson:
    """cdf, sf, pmf of Poisson(mu) from mpmath.gammainc (regularised incomplete gamma,
    P(Y <= c) = Q(c + 1, mu)) and mpmath.loggamma, at 30 digits."""

    def __init__(self, mu):
        self.mu = mp.mpf(mu)

    def cdf(self, c):
        with mp.workdps(40):
            return mp.gammainc(c + 1, self.mu, mp.inf, regularized=True) if c >= 0 else mp.mpf(0)

    def sf(self, c):
        # 1 - cdf at 40 digits: mpmath's lower incomplete gamma does not converge at these
        # arguments (NoConvergence); the tests' right tails are >= 1e-6, 34 digits are left
        with mp.workdps(40):
            return 1 - self.cdf(c)

    def pmf(self, c):
        with mp.workdps(30):
            return mp.exp(c * mp.log(self.mu) - self.mu - mp.loggamma(c + 1))


def scipy_size(d, theta):
    """E_theta phi of a design, summed from the reference law's cdf, sf and pmf."""
    law = MpPoisson(d.n * theta) if d.family == "poisson" else scipy_law(d, theta)
    g1 = d.gamma1 or 0.0
    g2 = d.gamma2 or 0.0
    if d.kind == "upper":
        return law.sf(d.c2) + g2 * law.pmf(d.c2)
    if d.kind == "lower":
        return law.cdf(d.c1 - 1) + g1 * law.pmf(d.c1)
    if d.kind == "equivalence":
        return law.cdf(d.c2 - 1) - law.cdf(d.c1) + g1 * law.pmf(d.c1) + g2 * law.pmf(d.c2)
    return law.cdf(d.c1 - 1) + g1 * law.pmf(d.c1) + g2 * law.pmf(d.c2) + law.sf(d.c2)


def beyond_table(d, theta) -> bool:
    """True when the full table of this law would pass the table limits (the old decline)."""
    law = get_family(d.family).mp_law(theta, d.n, d.problem.dispersion)
    with mp.workdps(65):
        thr = mp.mpf(min(d.alpha, 0.5)) * mp.mpf(10) ** -62
        terms, nbytes = table_estimate(float(mp.sqrt(law.variance)), thr, mp.mp.prec)
        return terms > MAX_TABLE or nbytes > MAX_TABLE_BYTES


CASES = [
    ("poisson", "upper", dict(n=1, value=3e9, alpha=0.05)),
    ("poisson", "lower", dict(n=1, value=1e11, alpha=1e-30)),
    ("poisson", "point", dict(n=1, value=1e10, alpha=0.01)),
    ("poisson", "band", dict(n=1, low=1e10, high=1.00001e10, alpha=1e-6)),
    ("poisson", "equivalence", dict(n=1, low=3e9, high=3.0003e9, alpha=0.05)),
    ("binomial", "upper", dict(n=10**12, value=0.3, alpha=0.05)),
    ("binomial", "point", dict(n=10**12, value=0.3, alpha=0.05)),
    ("binomial", "lower", dict(n=10**12, value=1e-3, alpha=1e-40)),
    ("binomial", "band", dict(n=10**12, low=1e-3, high=1.00001e-3, alpha=1e-40)),
    # size r = n k = 1e10 > mean 3e9: sd 6.2e4; scipy's nbinom loses ~3e-20 r = 3e-10 here
    ("negative-binomial", "upper", dict(n=1000, dispersion=1e7, value=3e6, alpha=0.05)),
    ("negative-binomial", "band", dict(n=1000, dispersion=1e7, low=3e6, high=3.0003e6,
                                       alpha=1e-3)),
]


@pytest.mark.parametrize("family,kind,kw", CASES)
def test_beyond_the_tables_verifies(family, kind, kw):
    precise.clear_cache()
    d = api.design(family, kind, **kw)
    assert d.verified
    assert any(beyond_table(d, t) for t in d.problem.points)
    for g in (d.gamma1, d.gamma2):
        assert g is None or 0.0 <= g < 1.0
    for theta in d.problem.points:
        size = float(scipy_size(d, theta))
        assert abs(size - d.alpha) <= 1e-9 * d.alpha, (theta, size)


def test_tail_functions_match_mpmath():
    # reference: mpmath.gammainc(c + 1, mu, inf, regularized=True) (P(Y <= c) of a Poisson;
    # P(Y > c) as its complement at 200 digits: mpmath's lower incomplete gamma raised
    # NoConvergence at some of these points)
    # and mpmath.betainc(n - c, c + 1, 0, 1 - p, regularized=True) (P(Y <= c) of a binomial),
    # mpmath's own incomplete gamma and beta at 90 digits; tolerance 1e-60 relative (the
    # tails carry 65 digits + 70 guard bits here; mpmath's series are exact to ~1e-85)
    rng = random.Random(10)
    with mp.workdps(65):
        for _ in range(12):
            mu = Fraction(rng.randint(1, 10**6), rng.choice((1, 10, 1000)))
            sd = float(mu) ** 0.5
            c = max(0, int(float(mu) + rng.uniform(-15, 15) * sd))
            F, S = PoissonTails(mu).tails(c)
            with mp.workdps(200):
                x = mp.mpf(mu.numerator) / mu.denominator
                want = mp.gammainc(c + 1, x, mp.inf, regularized=True)
                rest = 1 - want
                assert abs(F / want - 1) < mp.mpf(10) ** -60, (mu, c)
                assert abs(S / rest - 1) < mp.mpf(10) ** -60, (mu, c)
        for _ in range(8):
            n = rng.randint(1, 3000)
            p = Fraction(rng.randint(1, 10**6 - 1), 10**6)
            c = rng.randint(0, n - 1)
            F, S = BinomialTails(n, p).tails(c)
            with mp.workdps(90):
                q = 1 - mp.mpf(p.numerator) / p.denominator
                want = mp.betainc(n - c, c + 1, 0, q, regularized=True)
                rest = mp.betainc(c + 1, n - c, 0, 1 - q, regularized=True)
                assert abs(F / want - 1) < mp.mpf(10) ** -60, (n, p, c)
                assert abs(S / rest - 1) < mp.mpf(10) ** -60, (n, p, c)


def test_moments_from_tails_match_sums():
    # reference: E[Y; Y > y] and E[Y; Y <= y] summed term by term from mpmath.binomial and
    # mpmath.exp/factorial masses at 60 digits (common practice: the definition)
    with mp.workdps(60):
        n, p = 60, Fraction(3, 10)
        T = BinomialTails(n, p)
        P = mp.mpf(3) / 10
        pmf = [mp.binomial(n, j) * P ** j * (1 - P) ** (n - j) for j in range(n + 1)]
        for y in (0, 9, 18, 40, 60):
            F, S = T.tails(y - 1) if y > 0 else (mp.mpf(0), mp.mpf(1))
            assert abs(T.moment_above(y, S, pmf[y]) - sum(j * pmf[j] for j in range(y + 1, n + 1))) \
                < mp.mpf(10) ** -50
            assert abs(T.moment_below(y, F, pmf[y]) - sum(j * pmf[j] for j in range(y + 1))) \
                < mp.mpf(10) ** -50
        T = PoissonTails(Fraction(73, 2))
        mu = mp.mpf(73) / 2
        pmf = [mp.exp(-mu) * mu ** j / mp.factorial(j) for j in range(400)]
        for y in (1, 20, 36, 60):
            F, S = T.tails(y - 1)
            assert abs(T.moment_above(y, S, pmf[y]) - sum(j * pmf[j] for j in range(y + 1, 400))) \
                < mp.mpf(10) ** -50
            assert abs(T.moment_below(y, F, pmf[y]) - sum(j * pmf[j] for j in range(y + 1))) \
                < mp.mpf(10) ** -50


def test_tables_still_used_within_their_limits():
    # a Poisson mean of 1e6 fits the table limits: it keeps its table (same numbers as before)
    law = get_family("poisson").mp_law(1e6, 1, None)
    with mp.workdps(65):
        T = precise_tails.table_for(law, mp.mpf(10) ** -64)
    assert not isinstance(T, precise_tails.TailTable)


SLOW = dict(n=1, value=1e11, alpha=0.5)  # cutoffs at the centre of a law of sd 3.2e5


def test_predicted_too_slow_is_declined_in_one_line():
    precise.clear_cache()
    with pytest.raises(DesignError) as e:
        api.design("poisson", "upper", **SLOW)
    msg = str(e.value)
    assert "continued-fraction terms predicted" in msg and "limit 300,000" in msg
    assert "\n" not in msg
    # the unverified fast path still solves it
    assert api.design("poisson", "upper", verify=False, **SLOW).c2 is not None


def test_predicted_too_slow_exits_2_from_the_cli():
    r = subprocess.run([sys.executable, "-m", "exactband", "design", "--family", "poisson",
                        "--kind", "upper", "--n", "1", "--value", "1e11", "--alpha", "0.5"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("exactband: error:")
    assert "limit 300,000" in lines[0]


def test_big_table_switches_to_tails_when_cheaper(monkeypatch):
    # a Poisson mean of 5e8 fits the table limits (about 1.3e6 terms) but a design at
    # alpha 1e-20 is far cheaper from the tails: same cutoffs, same 30-digit gammas and
    # sizes as the table gives (both exact to the working precision)
    kw = dict(n=1, value=5e8, alpha=1e-20)
    precise.clear_cache()
    by_tails = api.design("poisson", "upper", **kw)
    assert any(isinstance(t, precise_tails.TailTable) for t in precise._CACHE.values())
    monkeypatch.setattr(precise_tails, "SWITCH_TERMS", 10 ** 12)
    precise.clear_cache()
    by_table = api.design("poisson", "upper", **kw)
    assert not any(isinstance(t, precise_tails.TailTable) for t in precise._CACHE.values())
    precise.clear_cache()
    assert (by_tails.c2, by_tails.gamma2_decimal, by_tails.sizes) == \
        (by_table.c2, by_table.gamma2_decimal, by_table.sizes)
