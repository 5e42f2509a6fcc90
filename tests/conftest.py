"""Shared helpers for the test suite.

``exact_sizes`` evaluates E_theta phi for any design in high precision with the
mpmath tables of exactband.families (independent of the float code under test).
"""

from __future__ import annotations

import os

import mpmath as mp
import pytest
from hypothesis import HealthCheck, settings

from exactband import kinds as K
from exactband.families.mptable import MpTable

settings.register_profile(
    "exactband", deadline=None, database=None, print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
)
settings.load_profile("exactband")

SEED = int(os.environ.get("EXACTBAND_TEST_SEED", "20261202"))


def table(family, theta, n, k, dps=70, moments=False):
    with mp.workdps(dps):
        return MpTable(family.mp_law(theta, n, k), mp.mpf(10) ** (-(dps - 5)), moments=moments)


def exact_sizes(problem, c1, g1, c2, g2, dps=70):
    """E phi at each constraint point, in mpmath, for the given numbers (float or mpf)."""
    out = []
    with mp.workdps(dps):
        G1 = mp.mpf(0) if g1 is None else mp.mpf(g1)
        G2 = mp.mpf(0) if g2 is None else mp.mpf(g2)
        tabs = [table(problem.family, t, problem.n, problem.dispersion, dps) for t in problem.points]
        lo = min(T.lo for T in tabs)
        hi = max(T.hi for T in tabs)
        for T in tabs:
            T.extend(lo, hi)
            out.append(K.expectation(problem.kind.name, c1, G1, c2, G2, T.cdf, T.sf, T.pmf))
    return out


def exact_moment_residual(problem, c1, g1, c2, g2, dps=70):
    """E[Y phi] - alpha E[Y] at the point (point designs), in mpmath."""
    from exactband.mpnum import dec

    with mp.workdps(dps):
        T = table(problem.family, problem.value, problem.n, problem.dispersion, dps, moments=True)
        G1, G2 = mp.mpf(g1), mp.mpf(g2)
        m = (T.moment_below(c1 - 1) + G1 * c1 * T.pmf(c1) + G2 * c2 * T.pmf(c2)
             + T.moment_above(c2))
        return m - dec(problem.alpha) * T.law.mean, T.law.mean


@pytest.fixture
def rng():
    import numpy as np

    return np.random.default_rng(SEED)
