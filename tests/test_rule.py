"""The Rule value: checks when made, canonical form, phi, distance, thresholds; Design wraps it."""

from __future__ import annotations

import dataclasses
import math
import pickle
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import exactband
from exactband.design import Design
from exactband.errors import DesignError
from exactband.kinds import KINDS
from exactband.rule import DEFAULT_RANDOM_DIGITS, Rule, phi_distance, threshold

NAMES = tuple(KINDS)


def contract_phi(kind: str, c1, g1, c2, g2, y) -> float:
    """phi(y) written out from the contract in DESIGN.md ("Test function phi"), one y at a time.

    Independent of kinds.py: plain comparisons, no numpy; a (c, gamma) with gamma
    up to 1 included.
    """
    if kind == "upper":
        return 1.0 if y > c2 else (g2 if y == c2 else 0.0)
    if kind == "lower":
        return 1.0 if y < c1 else (g1 if y == c1 else 0.0)
    if kind in ("band", "point"):
        if y < c1 or y > c2:
            return 1.0
        return (g1 if y == c1 else 0.0) + (g2 if y == c2 else 0.0)
    inside = 1.0 if c1 < y < c2 else 0.0  # equivalence
    return inside + (g1 if y == c1 else 0.0) + (g2 if y == c2 else 0.0)


def rule_args(kind, c1, g1, c2, g2):
    k = KINDS[kind]
    return (c1 if k.uses_c1 else None, g1 if k.uses_c1 else None,
            c2 if k.uses_c2 else None, g2 if k.uses_c2 else None)


# -- checks when made -----------------------------------------------------------------
@pytest.mark.parametrize("args, field", [
    (("band", 3, 1.0, 9, 0.5), "gamma1"),
    (("band", 3, 0.5, 9, -0.1), "gamma2"),
    (("band", 3, float("nan"), 9, 0.5), "gamma1"),
    (("band", None, 0.5, 9, 0.5), "c1"),
    (("point", 3, 0.5, None, None), "c2"),
    (("upper", 3, None, 9, 0.5), "c1"),
    (("upper", None, 0.2, 9, 0.5), "gamma1"),
    (("lower", 2, 0.5, None, 0.2), "gamma2"),
    (("equivalence", float("inf"), 0.5, 9, 0.5), "c1"),
    (("equivalence", 3, 0.5, "9", 0.5), "c2"),
    (("band", 3, True, 9, 0.5), "gamma1"),
    (("bnad", 3, 0.5, 9, 0.5), "kind"),
])
def test_bad_rule_is_one_line_naming_the_field(args, field):
    with pytest.raises(DesignError) as e:
        Rule(*args)
    msg = str(e.value)
    assert "\n" not in msg and field in msg.split(":")[0], msg


def test_continuous_rule_without_gammas_is_not_randomised():
    r = Rule("band", 1.25, None, 2.75, None)
    assert not r.randomised
    assert [float(r.phi(y)) for y in (1.0, 1.25, 2.0, 2.75, 3.5)] == [1.0, 0.0, 0.0, 0.0, 1.0]
    assert r.thresholds() == (None, None)
    assert Rule("upper", None, None, -0.5, None).phi(-0.4) == 1.0  # a real cutoff below 0


def test_rule_is_immutable_and_hashable():
    r = Rule("point", 2, 0.1, 8, 0.2)
    with pytest.raises(dataclasses.FrozenInstanceError):
        r.c1 = 3
    assert r == Rule(KINDS["point"], 2, 0.1, 8, 0.2) and hash(r) == hash(Rule("point", 2, 0.1, 8, 0.2))
    assert repr(r) == "Rule('point', 2, 0.1, 8, 0.2)"


# -- canonical form -----------------------------------------------------------------
@pytest.mark.parametrize("kind, raw, want", [
    # a full rejection at a cutoff moves it one step into the acceptance region's side
    ("band", (3, 1.0, 9, 1.0), (4, 0.0, 8, 0.0)),
    ("point", (3, 0.25, 9, 1.0), (3, 0.25, 8, 0.0)),
    ("upper", (None, None, 9, 1.0), (None, None, 8, 0.0)),
    ("lower", (3, 1.0, None, None), (4, 0.0, None, None)),
    ("equivalence", (3, 1.0, 9, 1.0), (2, 0.0, 10, 0.0)),
])
def test_canonical_moves_a_gamma_of_one_to_the_neighbour(kind, raw, want):
    r = Rule.canonical(kind, *raw)
    assert r.astuple() == want
    ys = range(0, 14)
    assert [contract_phi(kind, *_nan(raw), y) for y in ys] == \
        [contract_phi(kind, *_nan(want), y) for y in ys]


def _nan(t):
    return tuple(math.nan if v is None else v for v in t)


@settings(max_examples=60, deadline=None)
@given(kind=st.sampled_from(NAMES), c1=st.integers(0, 12), w=st.integers(0, 6),
       g1=st.sampled_from([0.0, 0.3, 0.999, 1.0]), g2=st.sampled_from([0.0, 0.6, 1.0]))
def test_canonical_is_the_same_test_function(kind, c1, w, g1, g2):
    c2 = c1 + w if kind != "equivalence" else c1 + w + 1
    if c1 == c2 and g1 + g2 > 1:
        g2 = 0.0  # meeting cutoffs reject there with g1 + g2: a test function needs <= 1
    raw = rule_args(kind, c1, g1, c2, g2)
    r = Rule.canonical(kind, *raw)
    assert all(g is None or 0 <= g < 1 for g in (r.gamma1, r.gamma2))
    for y in range(0, c2 + 4):
        assert float(r.phi(y)) == contract_phi(kind, *_nan(raw), y), (raw, r, y)


# -- phi and distance -------------------------------------------------------------------
@settings(max_examples=60, deadline=None)
@given(kind=st.sampled_from(NAMES), c1=st.integers(0, 10), w=st.integers(0, 5),
       g1=st.floats(0, 0.999), g2=st.floats(0, 0.999))
def test_phi_follows_the_contract(kind, c1, w, g1, g2):
    c2 = c1 + w if kind != "equivalence" else c1 + w + 1
    r = Rule(kind, *rule_args(kind, c1, g1, c2, g2))
    ys = np.arange(0, c2 + 4)
    want = [contract_phi(kind, *_nan(r.astuple()), int(y)) for y in ys]
    assert np.array_equal(r.phi(ys), np.array(want))


@settings(max_examples=60, deadline=None)
@given(kind=st.sampled_from(NAMES), a=st.tuples(st.integers(0, 8), st.integers(1, 4)),
       b=st.tuples(st.integers(0, 8), st.integers(1, 4)),
       g=st.tuples(*[st.sampled_from([0.0, 0.25, 0.5, 0.875])] * 4))
def test_distance_is_the_largest_phi_difference(kind, a, b, g):
    ra = Rule(kind, *rule_args(kind, a[0], g[0], a[0] + a[1], g[1]))
    rb = Rule(kind, *rule_args(kind, b[0], g[2], b[0] + b[1], g[3]))
    brute = max(abs(contract_phi(kind, *_nan(ra.astuple()), y)
                    - contract_phi(kind, *_nan(rb.astuple()), y)) for y in range(0, 20))
    assert ra.distance(rb) == brute == rb.distance(ra)
    assert ra.distance(ra) == 0.0


def test_distance_of_real_cutoffs_sees_the_gap_between_them():
    a = Rule("band", 1.5, None, 2.5, None)
    assert a.distance(Rule("band", 1.5, None, 2.25, None)) == 1.0  # differ on (2.25, 2.5)
    assert a.distance(a) == 0.0
    with pytest.raises(ValueError):
        a.distance(Rule("equivalence", 1.5, None, 2.5, None))


def test_phi_distance_accepts_tuples_that_are_not_canonical():
    # the fast solver's raw answer may hold a gamma of exactly 1.0
    assert phi_distance("band", (3, 1.0, 9, 0.5), (4, 0.0, 9, 0.5)) == 0.0
    assert phi_distance("upper", (None, None, 5, 1.0), (None, None, 5, 0.0)) == 1.0


# -- thresholds -------------------------------------------------------------------------
def floor_fraction(text: str, d: int) -> int:
    """floor(gamma * 10**d) with exact rationals (fractions.Fraction of the decimal text)."""
    return math.floor(Fraction(text) * 10 ** d)


@pytest.mark.parametrize("gamma, exact, d", [
    (0.29, None, 2),  # 0.29 * 100 is 28.999999999999996 in binary: floor must give 29
    (0.123, None, 3),
    (0.5, "0.499999999999999999837", 3),  # the 30-digit decimal decides: 499
    (0.9999, None, 4),
    (0.0, None, 3),
])
def test_thresholds_floor_the_decimal(gamma, exact, d):
    want = floor_fraction(exact if exact is not None else repr(gamma), d)
    assert threshold(gamma, d, exact) == want
    r = Rule("upper", None, None, 4, gamma)
    assert r.thresholds(d, (None, exact)) == (None, want)
    assert r.digit_gammas(d, (None, exact)) == (None, want / 10 ** d)


def test_default_random_digits_is_three_and_checked():
    assert DEFAULT_RANDOM_DIGITS == 3
    r = Rule("band", 3, 0.4567, 9, 0.25)
    assert r.thresholds() == (456, 250)
    for bad in (0, 10, 2.0, True, "3"):
        with pytest.raises(DesignError, match="random_digits"):
            r.thresholds(bad)


# -- Design wraps a Rule --------------------------------------------------------------
def test_design_wraps_its_rule():
    d = exactband.design("poisson", "band", n=12, low=1.5, high=2.0, alpha=0.05, verify=False)
    assert isinstance(d.rule, Rule) and d.rule.kind is d.problem.kind
    assert (d.c1, d.gamma1, d.c2, d.gamma2) == d.rule.astuple()
    same = Design(d.problem, rule=d.rule, sizes=d.sizes)
    assert same == d and Design(d.problem, *d.rule.astuple(), d.sizes) == d
    assert dataclasses.replace(d, gamma1_decimal="0.5").rule == d.rule
    assert pickle.loads(pickle.dumps(d)) == d
    assert d.thresholds(2) == d.rule.thresholds(2)
    with pytest.raises(DesignError, match="gamma2"):
        Design(d.problem, d.c1, d.gamma1, d.c2, 1.0, ())
    with pytest.raises(DesignError, match="rule"):
        Design(d.problem, rule=Rule("point", 1, 0.1, 5, 0.1), sizes=())
