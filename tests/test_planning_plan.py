"""plan() against a brute-force scan of n, for the randomised, conservative and digit rules."""

import math

import numpy as np
import pytest

import exactband
from exactband.oc import PlanningError
from exactband.planning import plan, power_against_n

# (family, kind, hypothesis, dispersion, alternatives, target, step, brute-force grid points)
CASES = [
    ("poisson", "band", dict(low=2, high=2.5), None, [1.2, 3.6], 0.8, 1, 90),
    ("poisson", "point", dict(value=2), None, [3.0], 0.9, 0.5, 120),
    ("binomial", "upper", dict(value=0.1), None, [0.25], 0.9, 1, 160),
    ("binomial", "lower", dict(value=0.5), None, [0.3], 0.85, 1, 140),
    ("negative-binomial", "band", dict(low=2, high=2.5), 4.0, [1.0, 4.0], 0.8, 1, 90),
    ("poisson", "equivalence", dict(low=1, high=3), None, [2.0], 0.8, 1, 60),
]


def brute_force(fam, kind, hyp, disp, alts, target, step, count, digits=3):
    """Power of each rule at every grid n = step * k, k = 1..count, one design at a time."""
    rows = []
    for k in range(1, count + 1):
        n = step * k
        d = exactband.design(fam, kind, n=n, alpha=0.05, dispersion=disp, verify=False, **hyp)
        rules = {"randomised": d, "conservative": d.nonrandomized(),
                 "digits": d.digit_rule(digits)}
        rows.append((n, {r: float(np.min(np.atleast_1d(x.power(alts)))) for r, x in
                         rules.items()}))
    return rows


def first_and_from(rows, rule, target):
    meets = [p[rule] >= target for _, p in rows]
    first = next(n for (n, _), ok in zip(rows, meets) if ok)
    last_fail = max((i for i, ok in enumerate(meets) if not ok), default=-1)
    return first, rows[last_fail + 1][0]


@pytest.mark.parametrize("case", CASES, ids=[f"{c[0]}-{c[1]}" for c in CASES])
def test_plan_matches_brute_force(case):
    fam, kind, hyp, disp, alts, target, step, count = case
    rows = brute_force(fam, kind, hyp, disp, alts, target, step, count)
    for rule in ("randomised", "conservative", "digits"):
        r = plan(fam, kind, alpha=0.05, alternatives=alts, target=target, dispersion=disp,
                 rule=rule, step=step, verify=False, **hyp)
        first, frm = first_and_from(rows, rule, target)
        # the brute force sees only up to its last grid point; it must lie beyond the
        # point from which plan certifies every larger n, or the comparison proves little
        assert (r.n_certified or r.n) <= rows[-1][0] - 10 * step, (rule, r.n_certified)
        assert math.isclose(r.n, first), (rule, r.n, first)
        assert math.isclose(r.n_from, frm), (rule, r.n_from, frm)
        assert min(r.power) >= target
        if r.power_below is not None:
            assert min(r.power_below) < target
        if rule == "randomised":
            assert r.n_from == r.n


def test_conservative_power_is_saw_toothed():
    # why plan scans the conservative rule: its power drops when a cutoff moves
    # (here between exposures 52 and 53 at rate 1.6), unlike the randomised rule's
    f = power_against_n(plan("poisson", "band", alpha=0.05, low=2, high=2.5, alternatives=[1.6],
                             target=0.9, rule="conservative", verify=False), ns=range(45, 70))
    assert np.any(np.diff(f.power_conservative.to_numpy()) < -1e-3)
    assert np.all(np.diff(f.power_randomised.to_numpy()) >= -1e-12)


def test_verified_plan_reports_verified_designs():
    r = plan("poisson", "band", alpha=0.05, low=2, high=2.5, alternatives=[1.6, 3.0],
             target=0.9, rule="conservative")
    assert r.design.verified and r.design_from.verified
    assert r.n_randomised <= r.n <= r.n_from <= r.n_certified
    assert r.design.n == r.n
    d = exactband.design("poisson", "band", n=r.n, alpha=0.05, low=2, high=2.5)
    assert np.allclose(r.power, d.nonrandomized().power([1.6, 3.0]), atol=1e-15)
    assert np.allclose(r.power_randomised, d.power([1.6, 3.0]), atol=1e-15)
    assert r.to_dict()["n"] == r.n


def test_fractional_exposure_step():
    whole = plan("poisson", "upper", alpha=0.05, value=2.0, alternatives=[3.0], target=0.9,
                 verify=False)
    fine = plan("poisson", "upper", alpha=0.05, value=2.0, alternatives=[3.0], target=0.9,
                step=0.1, verify=False)
    assert whole.n - 1 < fine.n <= whole.n
    assert fine.n == pytest.approx(round(fine.n * 10) / 10, abs=1e-12)  # on the 0.1 grid
    below = exactband.design("poisson", "upper", n=round(fine.n - 0.1, 10), value=2.0,
                             alpha=0.05, verify=False)
    assert below.power(3.0) < 0.9 <= min(fine.power)


@pytest.mark.parametrize("kwargs, field", [
    (dict(alternatives=[2.2]), "alternative"),           # inside the band
    (dict(alternatives=[2.0]), "alternative"),           # on its edge (null is closed)
    (dict(alternatives=[-1.0]), "alternative"),
    (dict(alternatives=[]), "alternatives"),
    (dict(alternatives="x"), "alternatives"),
    (dict(target=0.05), "target"),
    (dict(target=0.01), "target"),
    (dict(target=1.0), "target"),
    (dict(target="high"), "target"),
    (dict(step=0), "step"),
    (dict(step=-1), "step"),
    (dict(rule="best"), "rule"),
    (dict(n_max=0.5), "n-max"),
    (dict(rule="digits", random_digits=11), "random-digits"),
])
def test_bad_input_is_one_line(kwargs, field):
    args = dict(alpha=0.05, low=2, high=2.5, alternatives=[3.0], target=0.9, verify=False)
    args.update(kwargs)
    with pytest.raises(PlanningError) as e:
        plan("poisson", "band", **args)
    msg = str(e.value)
    assert "\n" not in msg and f"invalid {field} " in msg


def test_bad_input_of_other_kinds():
    with pytest.raises(PlanningError, match="null region"):
        plan("poisson", "equivalence", alpha=0.05, low=1, high=3, alternatives=[3.5],
             target=0.8)
    with pytest.raises(PlanningError, match="null region"):
        plan("binomial", "upper", alpha=0.05, value=0.1, alternatives=[0.05], target=0.8)
    with pytest.raises(PlanningError, match="null region"):
        plan("poisson", "point", alpha=0.05, value=2, alternatives=[2], target=0.8)
    with pytest.raises(PlanningError, match="invalid step"):
        plan("binomial", "upper", alpha=0.05, value=0.1, alternatives=[0.3], target=0.8,
             step=0.5)
    with pytest.raises(PlanningError, match="n-max"):
        plan("poisson", "band", alpha=0.05, low=2, high=2.5, alternatives=[2.55],
             target=0.99, n_max=50, verify=False)
    with pytest.raises(exactband.DesignError, match="dispersion"):
        plan("negative-binomial", "band", alpha=0.05, low=2, high=2.5, alternatives=[3],
             target=0.8)


def test_one_digit_field_rule_against_brute_force():
    # with one random digit the field rule loses up to 0.1 of each gamma, enough to
    # separate its answer from the randomised rule's
    alts, target = [0.25], 0.9
    rows = brute_force("binomial", "upper", dict(value=0.1), None, alts, target, 1, 160,
                       digits=1)
    r = plan("binomial", "upper", alpha=0.05, value=0.1, alternatives=alts, target=target,
             rule="digits", random_digits=1, verify=False)
    assert (r.n, r.n_from) == first_and_from(rows, "digits", target)
    assert r.n_certified <= 150


def test_one_alternative_may_be_a_plain_number():
    r = plan("poisson", "upper", alpha=0.05, value=2, alternatives=3, target="0.9",
             verify=False)
    assert r.alternatives == (3.0,) and len(r.power) == 1
    assert r.power_by_alternative[3.0] == r.power[0] >= 0.9


def test_plan_is_exported_at_the_top():
    import exactband.planning

    assert exactband.plan is exactband.planning.plan
