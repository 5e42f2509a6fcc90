"""Narrow bands with alpha near 1 at a large mean (and the equivalence complement).

The two size conditions of such a band are nearly the same; their difference
places the acceptance window's centre of mass at the zero y* of the log ratio
of the two end laws, which the fast solver now takes from each family's
log-ratio line (``Family.log_ratio_line``, ``solvers/lineform.py``).  Before,
the designs below ended in exit 1 (phi differences up to 0.5) or exit 70.

Each design is re-checked here independently of exactband: the acceptance
window's masses 1 - phi are summed with mpmath from the pmf written out
(negative binomial: Gamma(y + r) / (Gamma(r) y!) (r / (r + m))^r (m / (r + m))^y,
size r = n k, mean m = n theta; Poisson: e^-mu mu^y / y!; binomial:
C(n, y) p^y (1 - p)^(n - y); the standard forms, from memory), the first mass
through mpmath.loggamma at 40 digits and the rest by the exact ratio
f(y + 1) / f(y) of each law.  The sizes at both band ends must equal alpha to
1e-9 relative, the window's mass 1 - alpha to 1e-9 relative, and the gammas lie
in [0, 1).  With the 30-digit gammas the precise solver reports, the window's
mass equals 1 - alpha to 1e-20 relative (its own working precision is 50+ digits).
"""

from __future__ import annotations

import random

import mpmath as mp
import numpy as np
import pytest

from exactband import api
from exactband.errors import DesignError
from exactband.families.registry import get_family
from exactband.mpnum import float_complement
from exactband.solvers.lineform import Line, window_search
from exactband.solvers.twotailed import WINDOW_SUM

DPS = 40  # loggamma at y ~ 4e10 cancels ~12 digits: 28 left


def _law(family, n, k, theta):
    """(log pmf at y, ratio f(y + 1) / f(y)) of the law at theta, as mpmath functions."""
    N, T = mp.mpf(str(n)), mp.mpf(str(theta))
    if family == "poisson":
        mu = N * T
        return (lambda y: y * mp.log(mu) - mu - mp.loggamma(y + 1),
                lambda y: mu / (y + 1))
    if family == "binomial":
        q = 1 - T
        return (lambda y: (mp.loggamma(N + 1) - mp.loggamma(y + 1) - mp.loggamma(N - y + 1)
                           + y * mp.log(T) + (N - y) * mp.log(q)),
                lambda y: (N - y) * T / ((y + 1) * q))
    r, m = N * mp.mpf(str(k)), N * T
    return (lambda y: (mp.loggamma(y + r) - mp.loggamma(r) - mp.loggamma(y + 1)
                       - r * mp.log1p(m / r) - y * mp.log1p(r / m)),
            lambda y: (y + r) * m / ((r + m) * (y + 1)))


def window(family, n, k, theta, c1, c2):
    """(f(c1), sum of f over c1 < y < c2, f(c2)) at theta (c2 > c1)."""
    logf, ratio = _law(family, n, k, theta)
    f1 = f = mp.exp(logf(c1))
    inner = mp.mpf(0)
    for y in range(c1, c2 - 1):
        f *= ratio(y)
        inner += f
    return f1, inner, f * ratio(c2 - 1)


def acceptance(parts, g1, g2):
    """E_theta[1 - phi] of the band rule (reject below c1 and above c2, gammas at both)."""
    f1, inner, f2 = parts
    return (1 - g1) * f1 + inner + (1 - g2) * f2


def check_band(d, family, n, k, low, high):
    assert d.verified
    for g in (d.gamma1, d.gamma2):
        assert 0.0 <= g < 1.0
    with mp.workdps(DPS):
        b = 1 - mp.mpf(str(d.alpha))
        for theta in (low, high):
            parts = window(family, n, k, theta, d.c1, d.c2)
            acc = acceptance(parts, mp.mpf(d.gamma1), mp.mpf(d.gamma2))
            assert abs((1 - acc) / (1 - b) - 1) <= 1e-9  # the size at theta
            assert abs(acc / b - 1) <= 1e-9  # the window's own mass
            exact = acceptance(parts, mp.mpf(d.gamma1_decimal), mp.mpf(d.gamma2_decimal))
            assert abs(exact / b - 1) <= 1e-20  # the precise solver, 30-digit gammas


# The reproductions of the gap (exit 1 before, phi differences 8.95e-2 and 0.50), a
# long window (43,852 points, exit 1 before: 3.8e-3) and a binomial and a Poisson
# band of the same kind; measured |phi difference| of the fast path: 7e-12, 1e-11,
# 1e-11, and below 1e-10 for the last two.
CASES = [
    ("negative-binomial", 121, 571, 3.27e8, 3.27000485e8, 0.999999),
    ("negative-binomial", 121, 571, 3.27e8, 327000485.139, 0.999999743023193),
    ("negative-binomial", 97, 5.827, 54487841.6855, 54488561.0149893, 0.999959205186947),
    ("binomial", 30000000000, None, 0.0003, 0.0003000001, 0.9999),
    ("poisson", 10, None, 1e6, 1.00000001e6, 0.9999999),
]


@pytest.mark.parametrize("family, n, k, low, high, alpha", CASES)
def test_narrow_band_near_one_verifies(family, n, k, low, high, alpha):
    d = api.design(family, "band", n=n, dispersion=k, low=low, high=high, alpha=alpha)
    check_band(d, family, n, k, low, high)
    # the fast path itself: its gammas from the line form (before: off by up to 0.5)
    assert d.check.max_phi_diff <= 1e-8


def test_equivalence_complement_verifies():
    """The equivalence design at alpha = 1 - (band alpha) rejects on the same window."""
    family, n, k, low, high = "negative-binomial", 121, 571, 3.27e8, 3.27000485e8
    d = api.design(family, "equivalence", n=n, dispersion=k, low=low, high=high, alpha=1e-6)
    assert d.verified and d.check.max_phi_diff <= 1e-8
    with mp.workdps(DPS):
        for theta in (low, high):
            # the rejection window's mass is the size: reject inside c1..c2, gammas at both
            parts = window(family, n, k, theta, d.c1, d.c2)
            size = acceptance(parts, 1 - mp.mpf(d.gamma1), 1 - mp.mpf(d.gamma2))
            assert abs(size / mp.mpf("1e-6") - 1) <= 1e-9


@pytest.mark.parametrize("family", ["poisson", "binomial", "negative-binomial"])
def test_log_ratio_line_against_mpmath(family):
    """s = eta(hi) - eta(lo) and y* = (A(hi) - A(lo)) / s, y* right to 1e-14 of
    |y* - mean| + 1 (natural parameter eta and log-partition A: Poisson log mu, mu;
    binomial log(p/q), -n log q; negative binomial log(m/(r + m)), r log1p(m/r);
    from memory), evaluated with mpmath at 60 digits from the decimals."""
    fam = get_family(family)
    rng = random.Random(10)
    for _ in range(12):
        mean, rel = 10 ** rng.uniform(3, 11), 10 ** rng.uniform(-9, 0)
        k = None
        if family == "binomial":
            lo = float(f"{10 ** rng.uniform(-5, -0.4):.12g}")
            n = max(1, int(mean / lo))
        else:
            n = float(f"{10 ** rng.uniform(0, 3):.4g}")
            lo = float(f"{mean / n:.12g}")
            k = float(f"{10 ** rng.uniform(-1, 6):.4g}") if family != "poisson" else None
        hi = float(f"{lo * (1 + rel):.15g}")
        s, y0, d = fam.log_ratio_line(np.array([lo]), np.array([hi]), np.array([n]),
                                      None if k is None else np.array([k]))
        with mp.workdps(DPS):
            L, H, N = (mp.mpf(repr(x)) for x in (lo, hi, n))
            if family == "poisson":
                eta, A = (lambda t: mp.log(t)), (lambda t: N * t)
            elif family == "binomial":
                eta, A = (lambda t: mp.log(t / (1 - t))), (lambda t: -N * mp.log(1 - t))
            else:
                R = N * mp.mpf(repr(k))
                eta, A = (lambda t: mp.log(N * t / (R + N * t))), (lambda t: R * mp.log1p(N * t / R))
            S = eta(H) - eta(L)
            Y = (A(H) - A(L)) / S
            assert abs(s[0] / S - 1) <= 1e-15
            assert abs(y0[0] + mp.mpf(d[0]) - Y) <= 1e-14 * (abs(Y - N * L) + 1)


def test_random_narrow_bands_near_one():
    """Seeded draw over the three discrete families: narrow bands (relative width 1e-9
    to 1e-3) with alpha within 1e-12 to 1e-3 of 1 and means 1e6 to 1e7 (1e11 for the
    negative binomial, whose wide laws need no table): each verifies, no exception."""
    rng = random.Random(20261203)
    for i in range(6):
        family = ("poisson", "binomial", "negative-binomial")[i % 3]
        top = 11 if family == "negative-binomial" else 7
        mean = 10 ** rng.uniform(6, top)
        rel = 10 ** rng.uniform(-9, -3)
        alpha = float(f"{1 - 10 ** rng.uniform(-12, -3):.15g}")
        k = None
        if family == "binomial":
            p = 10 ** rng.uniform(-4, -0.4)
            n = int(mean / p)
            low = float(f"{mean / n:.10g}")
        else:
            n = int(10 ** rng.uniform(0, 3))
            low = float(f"{mean / n:.12g}")
            if family == "negative-binomial":
                k = float(f"{10 ** rng.uniform(-1.3, 4):.4g}")
        high = float(f"{low * (1 + rel):.15g}")
        d = api.design(family, "band", n=n, dispersion=k, low=low, high=high, alpha=alpha)
        assert d.verified
        assert 0.0 <= d.gamma1 < 1.0 and 0.0 <= d.gamma2 < 1.0


def test_tiny_equivalence_gammas_keep_their_digits():
    """An equivalence design at alpha = 1.3e-12 rejecting on two points with gammas
    ~3e-9: the line form written for phi keeps their relative digits (1 - the
    complement's gamma keeps only absolute ones: size error 1.4e-8 x alpha, refused)."""
    family, n, low, high, alpha = "binomial", 179493367, 0.01091057141, 0.0109110855494403, \
        1.29196653375629e-12
    d = api.design(family, "equivalence", n=n, low=low, high=high, alpha=alpha)
    assert d.verified and d.c2 == d.c1 + 1
    with mp.workdps(DPS):
        for theta in (low, high):
            parts = window(family, n, None, theta, d.c1, d.c2)
            size = acceptance(parts, 1 - mp.mpf(d.gamma1), 1 - mp.mpf(d.gamma2))
            assert abs(size / mp.mpf(repr(alpha)) - 1) <= 1e-9


def test_window_search_where_the_tails_cannot_place_the_window():
    """Binomial n = 1e12, p ~ 0.0428 (mean 4.3e10), alpha = 1 - 4.4e-12: the window is
    two points with 1 - gamma ~ 1e-6, below what the search's tails (absolute error
    ~1e-12 here) resolve; the fast solver failed (exit 70) before.  Now the window
    search in its own terms (``window``) places it and the line form gives its
    gammas; ``lineform.window_search`` (the complement search's fallback) finds the
    same rule.  The verified path declines the law (its table would pass 2,000,000
    terms), with one line."""
    family, n, low, high, alpha = "binomial", 10**12, 0.04277874839, 0.0427789845521, \
        0.999999999995567
    d = api.design(family, "band", n=n, low=low, high=high, alpha=alpha, verify=False)
    assert 0.0 <= d.gamma1 < 1.0 and 0.0 <= d.gamma2 < 1.0 and d.c2 == d.c1 + 1
    with mp.workdps(DPS):
        b = 1 - mp.mpf(repr(alpha))
        for theta in (low, high):
            acc = acceptance(window(family, n, None, theta, d.c1, d.c2), mp.mpf(d.gamma1),
                             mp.mpf(d.gamma2))
            assert abs(acc / b - 1) <= 1e-9  # measured 1.5e-12
    with pytest.raises(DesignError):
        api.design(family, "band", n=n, low=low, high=high, alpha=alpha)
    fam = get_family(family)
    lo, hi, nn = np.array([low]), np.array([high]), np.array([float(n)])
    b = np.array([float_complement(alpha)])
    w = window_search(fam.float_law, fam.float_law.make(lo, nn, None), Line(fam, lo, hi, nn, None),
                      b, WINDOW_SUM)
    assert (w[0][0], w[2][0]) == (d.c1, d.c2)
    assert abs(w[1][0] - d.gamma1) <= 1e-9 and abs(w[3][0] - d.gamma2) <= 1e-9
