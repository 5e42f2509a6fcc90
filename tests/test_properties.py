"""Property tests (hypothesis) over every family and kind.

* exact size at every constraint point: |E phi - alpha| <= 1e-12 for the float
  solver (evaluated in high precision with the mpmath tables) and <= 1e-40 for the
  50-digit solver; gammas in [0, 1);
* unbiasedness on a grid of theta for band and point designs (power <= alpha in the
  null, >= alpha outside), the reverse for equivalence designs;
* the point design's derivative condition E[Y phi] = alpha E[Y];
* one-sided power monotone in theta.

Tolerances: 1e-12 and 1e-40 are the bars set for the two solvers; power on the
theta grid is computed in double precision (scipy), whose own error is about
1e-15, so the unbiasedness checks allow 1e-12.
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from exactband import api
from exactband.solvers import precise

from .conftest import exact_moment_residual, exact_sizes
from .strategies import problems

SLACK = 1e-12


def fast_of(p):
    return api.fast_solve([p])[0]


@settings(max_examples=600)
@given(problems())
def test_fast_solver_size_is_exact_at_constraint_points(p):
    c1, g1, c2, g2 = fast_of(p)
    for g in (g1, g2):
        assert g is None or 0.0 <= g <= 1.0
    for size in exact_sizes(p, c1, g1, c2, g2):
        assert abs(size - mp.mpf(p.alpha)) <= 1e-12, (p, float(size))


@settings(max_examples=200)
@given(problems(max_mean=800.0))
def test_precise_solver_size_is_exact_at_constraint_points(p):
    d = precise.solve(p.family, p.kind.name, p.n, p.alpha, low=p.low, high=p.high,
                      value=p.value, dispersion=p.dispersion, precision=50)
    with mp.workdps(d.dps):
        from exactband.mpnum import dec

        for g in (d.gamma1, d.gamma2):
            assert g is None or 0 <= g < 1
        for size in d.sizes:
            assert abs(size - dec(p.alpha)) <= mp.mpf(10) ** -40
        if p.kind.name == "point":
            assert abs(d.extra) <= mp.mpf(10) ** -40 * max(1, p.n)


def _design(p):
    sol = fast_of(p)
    return api.verify_one(p, sol, 50)


@settings(max_examples=150)
@given(problems(kinds=("band", "point", "equivalence"), max_mean=800.0),
       st.lists(st.floats(0.0, 1.0), min_size=3, max_size=6))
def test_unbiasedness_on_a_theta_grid(p, fractions):
    d = _design(p)
    fam = p.family
    if p.kind.name == "point":
        inside = np.array([p.value])
        a, b = p.value, p.value
    else:
        a, b = p.low, p.high
        inside = np.array([a + f * (b - a) for f in fractions] + [a, b])
    steps = np.array([1e-3, 1e-2, 0.1, 0.3, 0.7])
    below = a * (1 - steps)
    above = b + (b if fam.name != "binomial" else (1 - b)) * steps
    if fam.name == "binomial":
        above = above[above < 1]
    outside = np.concatenate([below[below > 0], above])
    pin, pout = d.power(inside), d.power(outside)
    if p.kind.name == "equivalence":  # UMP for theta outside (low, high): the reverse
        assert np.all(pout <= p.alpha + SLACK), (p, pout)
        assert np.all(pin >= p.alpha - SLACK), (p, pin)
    else:
        assert np.all(pin <= p.alpha + SLACK), (p, pin)
        assert np.all(pout >= p.alpha - SLACK), (p, pout)


@settings(max_examples=300)
@given(problems(kinds=("point",)))
def test_point_design_derivative_condition(p):
    c1, g1, c2, g2 = fast_of(p)
    resid, mean = exact_moment_residual(p, c1, g1, c2, g2)
    # E[Y phi] and alpha E[Y] are of the order of alpha * E[Y]: relative bar 1e-12
    assert abs(resid) <= 1e-12 * max(mean, 1), (p, float(resid))


@settings(max_examples=200)
@given(problems(kinds=("upper", "lower")), st.lists(st.floats(-2.0, 2.0), min_size=4,
                                                      max_size=12))
def test_one_sided_power_is_monotone(p, logs):
    d = api.from_fast(p, fast_of(p))
    if p.family.name == "binomial":
        grid = np.sort(np.clip(p.value + np.array(logs) * 0.2, 1e-6, 1 - 1e-6))
    else:
        grid = np.sort(p.value * np.exp(np.array(logs)))
    pw = d.power(grid)
    step = np.diff(pw)
    if p.kind.name == "upper":
        assert np.all(step >= -SLACK), (p, pw)
    else:
        assert np.all(step <= SLACK), (p, pw)
    assert abs(d.power(p.value) - p.alpha) <= 1e-12
