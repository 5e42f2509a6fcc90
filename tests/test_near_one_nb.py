"""Negative-binomial designs with alpha near 1 whose acceptance window is one point or ~100.

Both ended in exit 70 before: the point design's precise search met a tie at the
integer mean (PreciseFailure, gamma 1 + 1e-55 at cutoffs (m, m + 1)); the band's
fast solver took its window of ~100 points from differences of tails near 1/2
(SolverFailure).  Each design is re-checked here independently of exactband: the
window's masses are summed with mpmath from the negative-binomial pmf
Gamma(y + r) / (Gamma(r) y!) * (r / (r + m))**r * (m / (r + m))**y (size r = n k,
mean m = n theta; the standard parameterisation, from memory), evaluated through
mpmath.loggamma and mpmath.log1p at 40 digits (scipy.stats.nbinom loses digits at
these sizes).  Sizes must equal alpha to 1e-9 relative, the gammas lie in [0, 1).
"""

from __future__ import annotations

import mpmath as mp

from exactband import api


def nb_pmf(y, n, k, theta):
    r, m = mp.mpf(n) * mp.mpf(str(k)), mp.mpf(n) * mp.mpf(str(theta))
    return mp.exp(mp.loggamma(y + r) - mp.loggamma(r) - mp.loggamma(y + 1)
                  - r * mp.log1p(m / r) - y * mp.log1p(r / m))


def window_mass(d, n, k, theta):
    """E_theta[1 - phi] and E_theta[Y (1 - phi)]: phi is 1 outside c1..c2."""
    lo, hi = d.c1, d.c2
    total, moment = mp.mpf(0), mp.mpf(0)
    for y in range(lo, hi + 1):
        # band form: reject below c1 and above c2, gamma1 at c1, gamma2 at c2 (both at c1 = c2)
        w = 1 - (d.gamma1 if y == d.c1 else 0.0) - (d.gamma2 if y == d.c2 else 0.0)
        t = mp.mpf(w) * nb_pmf(y, n, k, theta)
        total += t
        moment += y * t
    return total, moment


def check(d, n, k, points):
    assert d.verified
    for g in (d.gamma1, d.gamma2):
        assert 0.0 <= g < 1.0
    with mp.workdps(40):
        b = 1 - mp.mpf(str(d.alpha))
        out = []
        for theta in points:
            rest, moment = window_mass(d, n, k, theta)
            assert abs((1 - rest) / (1 - b) - 1) <= 1e-9
            # the window itself (1 - size = 1 - alpha ~ 3e-7) to 1e-9 relative: 1 - phi is
            # formed in double from the reported gammas (relative error ~1e-14 at
            # 1 - gamma ~ 3e-3); measured 4e-15 (point) and 6e-19 (band)
            assert abs(rest / b - 1) <= 1e-9
            out.append((rest, moment))
    return out


def test_point_accepting_at_the_integer_mean_only():
    n, k, value = 3, 4.28e9, 3.105e6
    d = api.design("negative-binomial", "point", n=n, dispersion=k, value=value,
                   alpha=0.999999632617241)
    ((rest, moment),) = check(d, n, k, [value])
    # UMPU side condition E[Y (1 - phi)] = (1 - alpha) E[Y] (Lehmann and Romano, Testing
    # Statistical Hypotheses, 3rd ed., section 4.2): the window's mean is the mean n theta
    with mp.workdps(40):
        assert abs(moment / rest / (n * mp.mpf(str(value))) - 1) <= 1e-12


def test_band_window_of_a_hundred_points_at_a_large_mean():
    n, k, low, high = 121, 571, 3.27e8, 3.27000485e8
    d = api.design("negative-binomial", "band", n=n, dispersion=k, low=low, high=high,
                   alpha=0.99999974)
    check(d, n, k, [low, high])
