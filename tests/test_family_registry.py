"""A family is one module plus its registration: the rest of the package asks the Family.

* A throwaway family defined here (a Poisson law under another name and other
  words, built on ``families.base.Family`` alone) is registered without editing
  any module: design, describe, decide, plots' words, the tables' words, a table
  set, the audit's scipy law and the challenge set all use it and its words.
  Its designs must equal the Poisson designs exactly (the same laws).
* Every registered family answers the Family interface consistently (words,
  parameter space, support, the float law's mode, the scipy law), checked
  against scipy.stats (general-purpose library: the frozen distribution's pmf, cdf).
* No module outside ``families/`` branches on a family's name (issue 12: at most 2).
"""

from __future__ import annotations

import ast
import math
from pathlib import Path

import numpy as np
import pytest

import exactband
from exactband.families import FAMILIES, Family, get_family, register
from exactband.families.poisson import PoissonLaw, PoissonMp

SRC = Path(exactband.__file__).parent


class _Flaws(Family):
    """Flaws per metre of yarn: the Poisson law under its own name and words."""

    float_law = PoissonLaw

    def theta_ok(self, theta):
        return theta > 0 and math.isfinite(theta)

    def theta_allowed(self):
        return "the flaw rate per metre must be a finite number > 0"

    def theta_spread(self, theta, n, k):
        return math.sqrt(theta / n)

    def mp_law(self, theta, n, k):
        return PoissonMp(theta, n, k)

    def scipy_law(self, theta, n, k):
        from scipy import stats

        return stats.poisson(n * theta)

    def natural_delta(self, lo, hi, n, k):
        return n * (hi - lo)


FLAWS = _Flaws(
    name="yarn-flaws", theta_word="flaw rate per metre", theta_unit="flaws per metre of yarn",
    axis_word="flaw rate \u03bb", symbol="lambda", theta_what="the expected flaws per metre",
    n_word="length n", n_what="the metres of yarn inspected", n_unit="metres",
    y_word="the flaws found along the yarn",
    y_inspected="the flaws found along the n inspected metres",
    integer_n=False, uses_dispersion=False,
)


@pytest.fixture
def flaws():
    register(FLAWS)
    try:
        yield FLAWS
    finally:
        del FAMILIES[FLAWS.name]


def test_registration_is_checked():
    with pytest.raises(ValueError, match="already registered"):
        register(get_family("poisson"))
    with pytest.raises(TypeError, match="a Family is required"):
        register("poisson")


def test_a_new_family_needs_only_its_module_and_registration(flaws, tmp_path):
    from exactband.audit import challenge, constructions
    from exactband.decide import check_count
    from exactband.plots import theta_axis_label
    from exactband.tables.tablewords import WORDS
    from exactband.tables.texts import hypothesis_text, y_text

    assert get_family(" Yarn-Flaws ") is flaws
    d = exactband.design("yarn-flaws", "band", n=25, low=2, high=2.5, alpha=0.05)
    ref = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    assert d.verified
    assert (d.c1, d.gamma1, d.c2, d.gamma2) == (ref.c1, ref.gamma1, ref.c2, ref.gamma2)
    text = d.describe()
    for words in ("yarn-flaws family", "length n = 25", "H0: 2 <= flaw rate per metre <= 2.5",
                  "Y = the flaws found along the yarn."):
        assert words in text
    assert check_count(d, 10**6) == 10**6  # no upper end of the support
    assert theta_axis_label(d) == "flaw rate \u03bb (flaws per metre of yarn)"
    assert WORDS["yarn-flaws"] == ("lambda", "the expected flaws per metre",
                                   "the metres of yarn inspected")
    assert "yarn-flaws" in tuple(WORDS)
    assert y_text("yarn-flaws") == "Y = the flaws found along the n inspected metres"
    assert hypothesis_text("band", "yarn-flaws").startswith("H0: low <= lambda <= high")
    assert constructions.law(d.problem, 2.0).mean() == pytest.approx(50.0, rel=1e-15)
    rows = [r for r in challenge.grid(0) if r["family"] == "yarn-flaws"]
    assert len(rows) == len([r for r in challenge.grid(0) if r["family"] == "poisson"]) > 0
    with pytest.raises(exactband.DesignError, match="flaw rate per metre must be"):
        exactband.design("yarn-flaws", "upper", n=3, value=-1, alpha=0.05)
    with pytest.raises(exactband.DesignError, match="yarn-flaws family takes no dispersion; "
                       "it is used only by negative-binomial"):  # the registry's names
        exactband.design("yarn-flaws", "upper", n=3, value=1, alpha=0.05, dispersion=2)

    # a table set of the new family: its words on the cover, the Poisson numbers in the rows
    from exactband.tables import generate

    spec = tmp_path / "yarn.toml"
    spec.write_text('title = "Yarn"\nfamily = "yarn-flaws"\nkinds = ["upper"]\nalpha = [0.05]\n'
                    'n = [10]\nvalues = [2.0]\nrandom_digit_pages = 0\n', encoding="utf-8")
    generate(spec, tmp_path / "out", workers=1)
    csv = (tmp_path / "out" / "yarn.csv").read_text(encoding="utf-8")
    up = exactband.design("poisson", "upper", n=10, value=2.0, alpha=0.05)
    assert f",{up.c2}," in csv and "yarn-flaws" in csv


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_every_family_answers_its_interface(name):
    fam = get_family(name)
    for word in ("theta_word", "theta_unit", "axis_word", "symbol", "theta_what", "n_word",
                 "n_what", "n_unit", "y_word", "y_inspected"):
        assert isinstance(getattr(fam, word), str) and getattr(fam, word).strip(), word
    lo, hi = fam.theta_min, fam.theta_max
    inside = [x for x in (-1e6, -1.0, 0.0, 1e-9, 0.3, 0.5, 1.0, 2.0, 1e6) if lo < x < hi]
    outside = [x for x in (lo, hi, math.nan, math.inf, -math.inf) if not lo < x < hi]
    assert all(fam.theta_ok(x) for x in inside) and not any(fam.theta_ok(x) for x in outside)
    expect = [True] * len(inside) + [False] * len(outside)
    assert list(fam.theta_ok_array(inside + outside)) == expect
    to_u, from_u = fam.theta_scale()
    for x in inside:
        assert from_u(to_u(x)) == pytest.approx(x, rel=1e-12, abs=1e-300)
    assert fam.bounded == (math.isfinite(lo) and math.isfinite(hi))
    if not fam.discrete:
        return
    # the float law's mode, the support and the scipy law (scipy.stats: pmf and cdf of the
    # frozen law, general-purpose library) at one ordinary design
    n, k = (40, 2.0 if fam.uses_dispersion else None)
    for theta in inside[:3]:
        if not fam.theta_ok(theta) or theta < 1e-6:
            continue
        L = fam.float_law
        P = L.make(theta, n, k)
        top = fam.support_max(n)
        assert (top is None) == (not np.isfinite(L.supmax(P)))
        mode = float(L.mode(P))
        ref = fam.scipy_law(theta, n, k)
        y = np.arange(0, int(ref.ppf(1 - 1e-12)) + 2, dtype=float)
        if top is not None:
            y = y[y <= top]
        assert ref.pmf(mode) == pytest.approx(ref.pmf(y).max(), rel=1e-12)
        # tolerance 1e-9: scipy's own cdf at ordinary parameters (incomplete gamma / beta)
        np.testing.assert_allclose(L.cdf(y, P), ref.cdf(y), rtol=1e-9, atol=1e-300)


# "gamma" names a family and also the randomisation probability (dict keys, column and
# reason names): a bare "gamma" is counted only where it is compared with a .name / .family.
AMBIGUOUS = {"gamma"}


def _family_name_branches(names) -> list:
    """(file, line) of comparisons with, dicts keyed by, or collections of family names."""
    def named(node, strict=True):
        if isinstance(node, ast.Constant) and node.value in names:
            return not (strict and node.value in AMBIGUOUS)
        return isinstance(node, (ast.Tuple, ast.List, ast.Set)) and any(
            named(e, strict) for e in node.elts)

    def about_family(node):
        return isinstance(node, ast.Attribute) and node.attr in ("name", "family")

    found = set()
    for path in sorted(SRC.rglob("*.py")):
        if "families" in path.relative_to(SRC).parts:
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            sides = [node.left, *node.comparators] if isinstance(node, ast.Compare) else []
            hit = ((isinstance(node, ast.Compare) and any(named(x) for x in sides))
                   or (any(about_family(x) for x in sides) and any(named(x, False) for x in sides))
                   or (isinstance(node, ast.Dict) and any(k is not None and named(k)
                                                          for k in node.keys))
                   or (isinstance(node, (ast.Tuple, ast.List, ast.Set)) and named(node)))
            if hit:
                found.add((str(path.relative_to(SRC)), node.lineno))
    return sorted(found)


def test_no_branches_on_family_names_outside_families():
    found = _family_name_branches(set(FAMILIES))
    assert len(found) <= 2, found
    # the detector itself finds a branch when there is one
    assert _family_name_branches({"upper"})  # kind names are still compared (kinds' part)
