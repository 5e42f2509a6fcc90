"""What a Kind knows: its cutoffs and sides, null region, E phi, canonical form, rounding.

Also holds the line of issue 12: nobody outside kinds.py and the solvers branches
on a kind's name (at most 6 such lines).
"""

from __future__ import annotations

import math
import re
from decimal import Decimal
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from exactband.kinds import KINDS

# The table of DESIGN.md ("Theory"), written out here independently of kinds.py:
# kind -> (cutoffs used, where the rule rejects, null hypothesis as a predicate)
CONTRACT = {
    "upper": (("c2",), ("above",), lambda t, lo, hi, v: t <= v),
    "lower": (("c1",), ("below",), lambda t, lo, hi, v: t >= v),
    "point": (("c1", "c2"), ("below", "above"), lambda t, lo, hi, v: t == v),
    "band": (("c1", "c2"), ("below", "above"), lambda t, lo, hi, v: lo <= t <= hi),
    "equivalence": (("c1", "c2"), ("inside",), lambda t, lo, hi, v: t <= lo or t >= hi),
}
LOW, HIGH, VALUE = 2.0, 3.0, 2.5


@pytest.mark.parametrize("name", list(KINDS))
def test_kind_answers_match_the_contract(name):
    k = KINDS[name]
    cutoffs, sides, _ = CONTRACT[name]
    assert k.cutoffs == cutoffs and k.sides == sides
    assert k.one_sided == (len(cutoffs) == 1)
    assert k.rejects_inside == (name == "equivalence")
    assert k.two_tailed == (name in ("band", "point"))
    assert k.moment_condition == (name == "point")  # E[Y phi] = alpha E[Y] (L&R 4.2)
    assert k.far_rejects == ("below" in sides, "above" in sides)
    assert k.points(LOW, HIGH, VALUE) == ((LOW, HIGH) if name in ("band", "equivalence")
                                          else (VALUE,))
    assert k.title == name.capitalize() + " test"
    assert k.alpha_min == (1e-12 if name == "equivalence" else 1e-100)


@pytest.mark.parametrize("name", list(KINDS))
def test_null_region(name):
    k = KINDS[name]
    in_h0 = CONTRACT[name][2]
    thetas = np.array([0.5, 1.99, LOW, 2.2, VALUE, 2.7, HIGH, 3.01, 9.0])
    got = k.in_null(thetas, LOW, HIGH, VALUE)
    assert got.tolist() == [in_h0(t, LOW, HIGH, VALUE) for t in thetas]
    # an interval holds a null point exactly when a fine grid over it (ends included) does
    for lo, hi in ((0.5, 1.9), (1.9, 2.1), (2.1, 2.4), (2.6, 2.9), (2.4, 2.6), (3.2, 4.0),
                   (0.5, 4.0)):
        grid = np.linspace(lo, hi, 2001).tolist() + [x for x in (LOW, HIGH, VALUE)
                                                       if lo <= x <= hi]
        brute = any(in_h0(t, LOW, HIGH, VALUE) for t in grid)
        assert k.crosses_null(lo, hi, LOW, HIGH, VALUE) == brute, (name, lo, hi)


@pytest.mark.parametrize("name", list(KINDS))
def test_expectation_is_the_sum_of_phi_times_the_mass(name):
    k = KINDS[name]
    mu = 6.5
    y = np.arange(0, 120)
    f = stats.poisson.pmf(y, mu)  # scipy.stats.poisson: the Poisson masses
    for c1, c2 in ((3, 9), (5, 6), (4, 4)):
        if name == "equivalence" and c1 == c2:
            continue
        r = (c1 if k.uses_c1 else math.nan, 0.3, c2 if k.uses_c2 else math.nan, 0.45)
        direct = float(np.sum(k.phi(*r, y) * f))
        got = k.expectation(*r, lambda c: stats.poisson.cdf(c, mu),
                            lambda c: stats.poisson.sf(c, mu), lambda c: stats.poisson.pmf(c, mu))
        assert float(got) == pytest.approx(direct, abs=1e-14), (name, c1, c2)


@pytest.mark.parametrize("name", list(KINDS))
def test_rounding_a_printed_cutoff_never_raises_the_size(name):
    """Moving a cutoff of a non-randomised rule in ``Kind.rounding`` never raises E phi;
    the other way it does (the rejection region grows by one point of positive mass).
    Sizes are sums of phi times scipy.stats.binom masses (n = 30, p = 0.3)."""
    k = KINDS[name]
    y = np.arange(0, 31)
    f = stats.binom.pmf(y, 30, 0.3)  # scipy.stats.binom: binomial masses
    c = [7, 13]

    def size(c1, c2):
        return float(np.sum(k.phi(c1 if k.uses_c1 else math.nan, 0.0,
                                  c2 if k.uses_c2 else math.nan, 0.0, y) * f))

    base = size(*c)
    for i, r in enumerate(k.rounding):
        if r is None:
            continue
        safe, unsafe = list(c), list(c)
        safe[i] += r
        unsafe[i] -= r
        assert size(*safe) < base < size(*unsafe), (name, i)
    assert k.step == tuple(None if r is None else -r for r in k.rounding)


@pytest.mark.parametrize("name", list(KINDS))
def test_canonical_on_arrays_and_numbers_agree(name):
    k = KINDS[name]
    c1 = np.array([3.0, 3.0, 5.0])
    g1 = np.array([1.0, 0.5, 0.0])
    c2 = np.array([9.0, 9.0, 7.0])
    g2 = np.array([0.25, 1.0, 1.0])
    arr = k.canonical(c1, g1, c2, g2)
    for j in range(3):
        one = k.canonical(*(float(v[j]) for v in (c1, g1, c2, g2)))
        for i in range(4):
            used = k.uses_c1 if i < 2 else k.uses_c2
            if used:
                assert float(arr[i][j]) == one[i], (name, j, i)


def test_words_of_the_kinds():
    assert KINDS["band"].hypothesis("p") == "H0: low <= p <= high"
    assert KINDS["equivalence"].hypothesis("rate", low="1", high="2") == \
        "H0: rate <= 1 or rate >= 2"
    assert KINDS["upper"].rejection_side(7, None, 7) == "above"
    assert KINDS["lower"].rejection_side(7, 7, None) == "below"
    assert KINDS["point"].rejection_side(4, 4, 4) == "outside"
    assert KINDS["equivalence"].rejection_side(5, 4, 8) == "inside"
    assert KINDS["band"].rejection_side(5, 4, 8) is None


# -- the line issue 12 draws --------------------------------------------------------------
KIND_NAME = r"""["'](?:band|point|upper|lower|equivalence)["']"""
BRANCH = re.compile(rf"(?:==|!=|\bin\b)\s*\(?[^#\n]*{KIND_NAME}|{KIND_NAME}\s*(?:==|!=)"
                    rf"|\[\s*{KIND_NAME}\s*\]|{KIND_NAME}\s*:")
MAX_BRANCHES = 6


def kind_branches() -> list:
    """Lines outside kinds.py and solvers/ that compare with, test membership in, or key a
    dict by a kind's name (the count of issue 12)."""
    src = Path(__file__).resolve().parents[1] / "src" / "exactband"
    out = []
    for path in sorted(src.rglob("*.py")):
        rel = path.relative_to(src).as_posix()
        if rel == "kinds.py" or rel.startswith("solvers/"):
            continue
        for i, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
            code = line.split("#")[0]
            if BRANCH.search(code):
                out.append(f"{rel}:{i}: {line.strip()}")
    return out


def test_branch_count_sees_a_branch():
    assert BRANCH.search('if kind == "band":') and BRANCH.search("x = {'upper': 1}")
    assert BRANCH.search('kind in ("band", "point")') and BRANCH.search('KINDS["point"]')
    assert not BRANCH.search('kind="point"') and not BRANCH.search("banded = True")


def test_nobody_else_branches_on_a_kind_name():
    found = kind_branches()
    assert len(found) <= MAX_BRANCHES, "\n".join(found)


def test_round_cutoffs_direction():
    assert [str(x) for x in KINDS["band"].round_cutoffs(1.23456, 2.34561, 2)] == ["1.23", "2.35"]
    assert [str(x) for x in KINDS["equivalence"].round_cutoffs(1.23456, 2.34561, 2)] == \
        ["1.24", "2.34"]
    assert KINDS["upper"].round_cutoffs(None, 2.341, 1) == (None, Decimal("2.4"))
    assert KINDS["lower"].round_cutoffs(-2.341, None, 1) == (Decimal("-2.4"), None)
    assert KINDS["band"].round_cutoffs(1.5, 2.5, 3) == (Decimal("1.500"), Decimal("2.500"))


@pytest.mark.parametrize("name", list(KINDS))
def test_rounded_real_cutoffs_keep_the_size_of_a_normal_mean(name):
    """Mean of 16 normal observations, sigma 1 (sd of the mean 0.25); exact real cutoffs of
    size 0.05 from scipy.stats.norm quantiles; printed with 2 decimals in ``rounding`` the
    size at every constraint point stays at most 0.05 (and the other way it exceeds it)."""
    k, sd, a = KINDS[name], 0.25, 0.05
    norm = stats.norm  # scipy.stats.norm: normal cdf and quantiles

    def size(c1, c2, theta):
        c1 = -math.inf if c1 is None else float(c1)
        c2 = math.inf if c2 is None else float(c2)
        if k.rejects_inside:
            return norm.cdf(c2, theta, sd) - norm.cdf(c1, theta, sd)
        return norm.cdf(c1, theta, sd) + norm.sf(c2, theta, sd)

    if name == "upper":
        exact, thetas = (None, norm.isf(a, 0, sd)), (0.0,)
    elif name == "lower":
        exact, thetas = (norm.ppf(a, 0, sd), None), (0.0,)
    elif name == "point":
        exact, thetas = (norm.ppf(a / 2, 0, sd), norm.isf(a / 2, 0, sd)), (0.0,)
    else:  # band / equivalence around (-0.1, 0.1), cutoffs solved with scipy.optimize.brentq
        from scipy.optimize import brentq

        lo, hi = -0.1, 0.1
        if name == "band":  # symmetric tails: c1 = -c, c2 = c with size a at the ends
            c = brentq(lambda c: norm.cdf(-c, hi, sd) + norm.sf(c, hi, sd) - a, 0.0, 5.0)
        else:  # the middle (-c, c) has probability a at the ends
            c = brentq(lambda c: norm.cdf(c, hi, sd) - norm.cdf(-c, hi, sd) - a, 0.0, 1.0)
        exact, thetas = (-c, c), (lo, hi)
    for t in thetas:
        assert size(*exact, t) == pytest.approx(a, rel=1e-9)
    safe = k.round_cutoffs(*exact, 2)
    unsafe = tuple(None if c is None else 2 * Decimal(repr(float(c))) - s
                   for c, s in zip(exact, safe))  # the mirror image: the other way
    assert all(size(*safe, t) <= a for t in thetas)
    assert any(size(*unsafe, t) > a for t in thetas)
