"""Gamma designs at large shapes n k (the slow class of the whole-range draw), checked
against references computed here independently of both solvers.

Sources beside each check:
* mpmath.gammainc (mpmath's own regularised incomplete gamma function, hypergeometric
  series) for the fixed-point sums of ``families.gamma`` at 50 digits;
* the Poisson sum P(X > x) = P(Poisson(x) <= A - 1) for X ~ Gamma(A, 1) with A a whole
  number (common practice; summed here in mpmath from j = A - 1 downwards) for the side
  conditions of the reproductions, whose shapes are whole numbers;
* scipy.stats.gamma (isf, ppf) for the one-sided rules.
No timing is asserted: bench/bench_slow.py measures the cost.
"""

from __future__ import annotations

import mpmath as mp
import pytest
from scipy import stats

from exactband import design
from exactband.families import gamma as g
from exactband.families.gamma import GAMMA
from exactband.solvers import cprecise


@pytest.mark.parametrize("a, x", [
    (2.5, 4.0), (30.0, 31.5), (100.0, 97.0), (100.0, 140.0),  # small shapes: the fraction
    (9999.5, 10100.0), (9999.5, 9800.25), (91000.0, 91000.5), (91000.0, 91301.0),
    (504000.0, 503000.5), (504000.0, 505000.5), (1e6, 1e6 + 3000.0), (1e6, 998000.0)])
def test_incomplete_gamma_sums_against_mpmath(a, x):
    """Both tails to 1e-40 relative at 50 working digits (the prefactor's exp of a log of
    size a log a ~ 1e7 costs ~8 of them)."""
    with mp.workdps(50):
        low, up = g.GammaMp._tails(mp.mpf(a), mp.mpf(x))
    with mp.workdps(80):
        # mpmath.gammainc: regularised lower (0, x) and upper (x, inf) incomplete gamma
        ref_low = mp.gammainc(mp.mpf(a), 0, mp.mpf(x), regularized=True)
        ref_up = mp.gammainc(mp.mpf(a), mp.mpf(x), mp.inf, regularized=True)
        small = min(ref_low, ref_up)
        assert abs((low if ref_low == small else up) / small - 1) < mp.mpf("1e-40")
        assert abs(low + up - 1) < mp.mpf("1e-45")


def _upper(shape: int, x):
    """P(X > x), X ~ Gamma(shape, 1), whole shape: P(Poisson(x) <= shape - 1), summed from
    j = shape - 1 downwards (terms e^-x x^j / j!) until they are below the working precision of the sum."""
    j = shape - 1
    term = mp.exp(j * mp.log(x) - x - mp.loggamma(j + 1))
    tot = mp.mpf(0)
    while j >= 0:
        tot += term
        if term < tot * mp.eps and j < x:
            break
        term *= j / x
        j -= 1
    return tot


def _mid(shape: int, x1, x2):
    """P(x1 < X < x2) from the Poisson sums."""
    return _upper(shape, x1) - _upper(shape, x2)


def test_narrow_band_at_shape_504000():
    """Size alpha at both ends of the band (the design's own rounding of the cutoffs to
    doubles is within the 1e-9 x alpha the project holds sizes to)."""
    n, k, alpha, low, high = 504000, 1, "0.17", "8.34e-8", "8.3400002155e-8"
    d = design("gamma", "band", n=n, alpha=alpha, low=low, high=high, dispersion=k)
    assert d.verified
    with mp.workdps(30):
        for theta in (low, high):
            t = mp.mpf(theta)
            size = 1 - _mid(n * k, k * mp.mpf(d.c1) / t, k * mp.mpf(d.c2) / t)  # Poisson sum
            assert abs(size - mp.mpf(alpha)) <= mp.mpf("1e-9") * mp.mpf(alpha)


@pytest.mark.parametrize("n, k, alpha, value", [
    (40000, "1.64", "0.9999998606", "20"), (7, "13000", "0.7", "1.7e-5")])
def test_point_designs_at_large_shape(n, k, alpha, value):
    """The two UMPU conditions, X = k Y / theta ~ Gamma(A): P_A(x1 < X < x2) = 1 - alpha
    (size) and, as x f_A(x) = A f_(A+1)(x), P_(A+1)(x1 < X < x2) = 1 - alpha (E[Y phi] =
    alpha E[Y]).  Tolerances: 1e-9 x alpha on the size; the moment condition's residual
    times E[Y] within 1e-9 x alpha x sd(Y), i.e. 1e-9 x alpha / sqrt(A) (an equal-tailed
    rule misses it by ~alpha / sqrt(A))."""
    d = design("gamma", "point", n=n, alpha=alpha, value=value, dispersion=k)
    assert d.verified
    with mp.workdps(30):
        A = int(mp.mpf(n) * mp.mpf(k))
        kk, t, a = mp.mpf(k), mp.mpf(value), mp.mpf(alpha)
        x1, x2 = kk * mp.mpf(d.c1) / t, kk * mp.mpf(d.c2) / t
        m0 = _mid(A, x1, x2) - (1 - a)  # Poisson sums
        m1 = _mid(A + 1, x1, x2) - (1 - a)
        assert abs(m0) <= mp.mpf("1e-9") * a
        assert abs(m1) <= mp.mpf("1e-9") * a / mp.sqrt(A)


def test_one_sided_at_large_shape_against_scipy():
    """upper: c2 = theta / k * gamma.isf(alpha, A); lower: c1 = theta / k * gamma.ppf(alpha, A)
    (scipy.stats.gamma quantiles), 1e-9 relative."""
    n, k, v = 430700, 2, 2.83e6
    up = design("gamma", "upper", n=n, alpha="0.01", value=v, dispersion=k)
    assert abs(up.c2 / (v / k * stats.gamma.isf(0.01, n * k)) - 1) < 1e-9
    lo = design("gamma", "lower", n=n, alpha="0.3", value=v, dispersion=k)
    assert abs(lo.c1 / (v / k * stats.gamma.ppf(0.3, n * k)) - 1) < 1e-9


@pytest.mark.parametrize("kind, pts", [
    ("band", dict(low="2", high="2.003")), ("point", dict(value="2")),
    ("equivalence", dict(low="2", high="2.3")), ("upper", dict(value="2")),
    ("lower", dict(value="2"))])
def test_start_changes_nothing(kind, pts):
    """The precise solver from the float cutoffs, from a start 1 % off (its brackets then
    come from the full search) and from no start gives the same cutoffs to 1e-40 relative:
    the start only saves evaluations."""
    n, k, alpha = 300, "7", "0.05"
    plain = cprecise.solve(GAMMA, kind, n, alpha, dispersion=k, precision=50, **pts)
    with mp.workdps(plain.dps):
        good = tuple(None if c is None else float(c) for c in (plain.c1, plain.c2))
        off = tuple(None if c is None else c * 1.01 for c in good)
    for start in (good, off):
        got = cprecise.solve(GAMMA, kind, n, alpha, dispersion=k, precision=50, start=start,
                             **pts)
        with mp.workdps(plain.dps):
            for c, ref in zip((got.c1, got.c2), (plain.c1, plain.c2)):
                assert (c is None) == (ref is None)
                if ref is not None:
                    assert abs(c / ref - 1) < mp.mpf("1e-40")


def test_shape_limit_tightens_with_precision():
    """At 50 digits every shape up to MAX_SHAPE is within the work limit; at 1000 digits a
    shape of 1e6 is declined before any tail is evaluated, one line naming the limit."""
    from exactband.errors import DesignError

    assert g.largest_shape(int(115 * 3.33)) == g.MAX_SHAPE  # 50 digits + guard + 50 extra
    with pytest.raises(DesignError, match="term-bits per incomplete gamma value, limit") as e:
        design("gamma", "band", n=1000000, alpha="0.05", low="1", high="1.0001",
               dispersion="1", precision=1000)
    assert "\n" not in str(e.value)
