"""Power and OC of the three rules: side conditions, unbiasedness, a direct reference sum."""

import math

import numpy as np
import pytest
from scipy import stats

import exactband
from exactband import kinds as K
from exactband.ngrid import NGrid as _Grid
from exactband.oc import (
    PlanningError,
    default_thetas,
    operating_characteristics,
    power_sheet,
    rule_designs,
)
from exactband.params import make_problem

# (family, kind, n, hypothesis, dispersion): one design of every family and kind
CASES = [
    ("poisson", "band", 25, dict(low=2, high=2.5), None),
    ("poisson", "point", 40, dict(value=2), None),
    ("poisson", "upper", 10, dict(value=2.5), None),
    ("poisson", "lower", 7.5, dict(value=3), None),
    ("poisson", "equivalence", 60, dict(low=1.8, high=2.6), None),
    ("binomial", "band", 120, dict(low=0.1, high=0.15), None),
    ("binomial", "upper", 80, dict(value=0.05), None),
    ("binomial", "lower", 50, dict(value=0.4), None),
    ("binomial", "point", 30, dict(value=0.3), None),
    ("binomial", "equivalence", 400, dict(low=0.2, high=0.3), None),
    ("negative-binomial", "band", 25, dict(low=2, high=2.5), 4.0),
    ("negative-binomial", "upper", 12, dict(value=1.5), 0.7),
    ("negative-binomial", "equivalence", 200, dict(low=1.5, high=2.5), 10.0),
]


@pytest.fixture(scope="module")
def designs():
    return [exactband.design(f, k, n=n, alpha=0.05, dispersion=disp, **hyp)
            for f, k, n, hyp, disp in CASES]


def test_power_is_alpha_at_the_constraint_points(designs):
    # the side conditions E_point phi = alpha (Lehmann & Romano 3rd ed. 3.4, 3.7, 4.2);
    # 1e-12: the float power sum of a verified design, as crosscheck.SIZE_TOL
    for d in designs:
        for point in d.points:
            assert abs(d.power(point) - d.alpha) <= 1e-12, (d.kind, d.family, point)
        f = operating_characteristics(d, list(d.points))
        assert np.all(np.abs(f.power_randomised - d.alpha) <= 1e-12)


def test_unbiased_and_level_alpha(designs):
    # randomised rule: power <= alpha on the null region, >= alpha off it (unbiased:
    # UMPU by construction for point/band, UMP one-sided and equivalence tests are
    # unbiased too); conservative and digit rules keep power <= alpha on the null.
    for d in designs:
        f = operating_characteristics(d, points=301)
        null = f.in_null.to_numpy()
        eps = 1e-12
        assert np.all(f.power_randomised[null] <= d.alpha + eps), d.kind
        assert np.all(f.power_randomised[~null] >= d.alpha - eps), d.kind
        for rule in ("conservative", "digits"):
            assert np.all(f[f"power_{rule}"][null] <= d.alpha + eps), (d.kind, rule)
        # the rules are ordered pointwise: conservative <= digits <= randomised
        assert np.all(f.power_conservative <= f.power_digits + eps)
        assert np.all(f.power_digits <= f.power_randomised + eps)


def test_oc_is_one_minus_power(designs):
    f = operating_characteristics(designs[0])
    for rule in ("randomised", "conservative", "digits"):
        assert np.array_equal(f[f"oc_{rule}"].to_numpy(), 1.0 - f[f"power_{rule}"].to_numpy())
    assert np.allclose(designs[0].oc([1.5, 3]), 1.0 - designs[0].power([1.5, 3]), atol=0)


def _law(family, n, theta, k):
    """scipy.stats frozen law of Y (reference distribution code)."""
    if family == "poisson":
        return stats.poisson(n * theta)
    if family == "binomial":
        return stats.binom(int(n), theta)
    r = n * k  # NB(size r, mean n*theta): scipy's nbinom(r, p) with p = r / (r + mean)
    return stats.nbinom(r, r / (r + n * theta))


def direct_power(design, theta):
    """sum_y phi(y) P(Y = y) with scipy.stats pmf, over 0 .. mean + 40 sd + 50.

    Beyond that the tail is below 1e-17 (Poisson and negative binomial tails fall
    at least geometrically; for a geometric law, the heaviest here, exp(-41)).
    """
    law = _law(design.family, design.n, theta, design.dispersion)
    top = (int(law.mean() + 40 * law.std()) + 50 if design.family != "binomial"
           else design.n)
    y = np.arange(0, top + 1)
    return float(np.sum(design.phi(y) * law.pmf(y)))


def test_power_against_a_direct_scipy_sum_on_random_designs():
    # reference: scipy.stats poisson/binom/nbinom pmf, summed term by term against phi.
    # Tolerance 1e-11: pmf values agree to ~1e-14 relative; sums of up to a few
    # thousand terms add rounding of that order.
    rng = np.random.default_rng(20240605)
    kinds = list(K.KINDS)
    checked = 0
    for _ in range(24):
        fam = ["poisson", "binomial", "negative-binomial"][rng.integers(3)]
        kind = kinds[rng.integers(len(kinds))]
        if fam == "binomial":
            a = rng.uniform(0.05, 0.6)
            b = a + rng.uniform(0.03, 0.2)
            n = int(rng.integers(5, 300))
        else:
            a = rng.uniform(0.3, 4.0)
            b = a * rng.uniform(1.1, 1.8)
            n = float(np.round(rng.uniform(2, 120), 2)) if fam == "poisson" else int(
                rng.integers(2, 120))
        hyp = dict(low=a, high=b) if kind in ("band", "equivalence") else dict(value=a)
        disp = float(rng.choice([0.5, 2.0, 8.0])) if fam == "negative-binomial" else None
        alpha = float(rng.choice([0.01, 0.05, 0.1]))
        d = exactband.design(fam, kind, n=n, alpha=alpha, dispersion=disp, verify=False, **hyp)
        thetas = default_thetas(d, points=9)
        for rule, rd in rule_designs(d, 3).items():
            lib = np.atleast_1d(rd.power(thetas))
            ref = np.array([direct_power(rd, t) for t in thetas])
            assert np.allclose(lib, ref, rtol=0, atol=1e-11), (fam, kind, n, rule)
            checked += len(thetas)
    assert checked >= 24 * 3 * 9


def test_vectorised_power_over_n_matches_design_power():
    # planning's evaluation over many n at once against Design.power one design at a time
    prob = make_problem("negative-binomial", "band", n=1, alpha=0.05, low=2, high=2.5,
                        dispersion=3)
    grid = _Grid(prob, (1.4, 3.2), 1, "conservative", None)
    ks = np.arange(5, 40, 7)
    ns, cut = grid.solve(ks)
    for theta in (1.4, 3.2):
        vec = grid.power(ns, cut, theta)
        cons = grid.power(ns, cut, theta, grid.rule_gammas(cut, "conservative"))
        for i, n in enumerate(ns):
            d = exactband.design("negative-binomial", "band", n=int(n), alpha=0.05, low=2,
                                 high=2.5, dispersion=3, verify=False)
            assert vec[i] == pytest.approx(d.power(theta), abs=1e-13)
            assert cons[i] == pytest.approx(d.nonrandomized().power(theta), abs=1e-13)


def test_default_range_shows_the_whole_curve(designs):
    for d in designs:
        th = default_thetas(d)
        for p in d.points:
            assert p in th
        ends = np.atleast_1d(d.power([th[0], th[-1]]))
        far = [K.in_null(d.kind, t, d.low, d.high, d.value) for t in (th[0], th[-1])]
        for e, in_null in zip(ends, far):
            # near 0 where the far side is null (or an equivalence tail), else near 1;
            # unless the family's space ends first (e.g. binomial p near 0)
            if d.kind in ("band", "point") or (not in_null and d.kind != "equivalence"):
                assert e >= 0.99 or th[0] < 1e-6 or th[-1] > 1 - 1e-6
            else:
                assert e <= 0.01 or th[0] < 1e-6


def test_power_sheet_for_the_spreadsheet(designs):
    sheet = power_sheet(designs[:2], [1.5, 2.0, 3.0])
    assert list(sheet.columns[:8]) == ["family", "kind", "n", "alpha", "low", "high", "value",
                                       "dispersion"]
    assert len(sheet) == 6
    row = sheet.iloc[1]
    assert row.theta == 2.0 and bool(row.in_null)
    assert row.power_randomised == pytest.approx(0.05, abs=1e-12)


def test_bad_thetas_are_one_line_errors(designs):
    d = designs[0]
    for bad in ([0.0], [-1], ["x"], [], [math.inf]):
        with pytest.raises(PlanningError) as e:
            operating_characteristics(d, bad)
        assert "\n" not in str(e.value) and "theta" in str(e.value)
    with pytest.raises(PlanningError, match="random-digits"):
        operating_characteristics(d, [1.0], random_digits=0)
    b = designs[5]  # binomial: p must stay inside (0, 1)
    with pytest.raises(PlanningError, match="strictly between 0 and 1"):
        operating_characteristics(b, [0.5, 1.0])
