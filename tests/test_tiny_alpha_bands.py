"""Two-tailed designs at a tiny alpha converge (issue 10: refusals inside the documented range).

The fast search started its right tail from quantile_guess(1 - tail): 1 - tail is
1 in double below tail ~ 1e-16, the guess stopped ~8 sd out, the start split put
the whole size on the right and the left tail at 0, and the search never moved
("fast solver did not converge"). Found by a random draw at alpha 1e-100..1e-30
(a scratch draw over the documented range): 9 of 200 Poisson and 5 of 200 binomial designs.
"""

from __future__ import annotations

import mpmath as mp
import pytest

from exactband import api


def mp_band_size(d, mu) -> mp.mpf:
    """E_mu phi of a band design of a Poisson(mu), at 40 digits.

    Source: mpmath.gammainc (regularised incomplete gamma, mpmath's own series and
    continued fraction): P(Y <= c - 1) = Q(c, mu), P(Y > c) = P(c + 1, mu); the mass
    from mpmath.loggamma.
    """
    with mp.workdps(40):
        mu = mp.mpf(repr(mu))

        def pmf(c):
            return mp.exp(c * mp.log(mu) - mu - mp.loggamma(c + 1))

        left = mp.gammainc(d.c1, mu, mp.inf, regularized=True) if d.c1 > 0 else mp.mpf(0)
        right = mp.gammainc(d.c2 + 1, 0, mu, regularized=True)
        return (left + mp.mpf(d.gamma1_decimal) * pmf(d.c1)
                + mp.mpf(d.gamma2_decimal) * pmf(d.c2) + right)


@pytest.mark.parametrize("low,high,alpha", [
    (86610.0, 86610.0015563, 3.2e-93),
    (49310.0, 51265.004646, 3.93e-71),
])
def test_poisson_band_at_tiny_alpha_verifies(low, high, alpha):
    d = api.design("poisson", "band", n=1, low=low, high=high, alpha=alpha, verify=True)
    assert d.verified and d.check.agree
    assert 0.0 <= d.gamma1 < 1.0 and 0.0 <= d.gamma2 < 1.0
    for mu in (low, high):
        assert abs(mp_band_size(d, mu) / mp.mpf(repr(alpha)) - 1) < 1e-9
