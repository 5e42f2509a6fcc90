"""The Python API contract: design(), designs(), Design."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

import exactband
from exactband import Design


@pytest.fixture(scope="module")
def band():
    return exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)


def test_design_fields_and_types(band):
    assert isinstance(band, Design)
    assert type(band.c1) is int and type(band.c2) is int
    assert type(band.gamma1) is float and type(band.gamma2) is float
    assert 0 <= band.gamma1 < 1 and 0 <= band.gamma2 < 1
    assert band.verified and band.precision == 50
    assert band.points == (2.0, 2.5) and len(band.sizes) == 2
    assert band.size_low == pytest.approx(0.05, abs=1e-15)
    assert band.family == "poisson" and band.kind == "band" and band.n == 25
    # 30 significant digits, agreeing with the float
    assert len(band.gamma1_decimal.lstrip("0.").replace(".", "")) >= 30
    assert float(band.gamma1_decimal) == band.gamma1


def test_design_is_immutable(band):
    with pytest.raises(dataclasses.FrozenInstanceError):
        band.c1 = 3


def test_unused_cutoffs_are_none():
    up = exactband.design("poisson", "upper", n=10, value=2, alpha=0.05)
    assert up.c1 is None and up.gamma1 is None and up.size_high is None
    lo = exactband.design("binomial", "lower", n=30, value=0.4, alpha=0.05)
    assert lo.c2 is None and lo.gamma2 is None


def test_phi_follows_the_contract(band):
    y = np.arange(0, 120)
    phi = band.phi(y)
    assert np.all(phi[y < band.c1] == 1) and np.all(phi[y > band.c2] == 1)
    assert phi[band.c1] == band.gamma1 and phi[band.c2] == band.gamma2
    assert np.all(phi[(y > band.c1) & (y < band.c2)] == 0)
    assert band.phi(band.c1) == band.gamma1  # scalar in, float out


def test_power_is_vectorised_and_exact(band):
    th = np.array([[1.5, 2.0], [2.5, 3.0]])
    pw = band.power(th)
    assert pw.shape == (2, 2)
    assert pw[0, 1] == pytest.approx(0.05, abs=1e-14) and pw[1, 0] == pytest.approx(0.05, abs=1e-14)
    assert np.allclose(band.oc(th), 1 - pw)
    # direct sum with scipy.stats.poisson.pmf (general-purpose library)
    from scipy import stats

    y = np.arange(0, 400)
    for t in (1.7, 2.2, 3.1):
        direct = float(np.sum(band.phi(y) * stats.poisson.pmf(y, 25 * t)))
        assert band.power(t) == pytest.approx(direct, abs=1e-13)


def test_describe_states_the_rule(band):
    text = band.describe()
    # each rejection names its side of H0 (issue 11)
    assert ("Reject H0 if Y <= 38: the data indicate the rate per unit lies below the band "
            "(rate per unit < 2).") in text
    assert ("Reject H0 if Y >= 77: the data indicate the rate per unit lies above the band "
            "(rate per unit > 2.5).") in text
    assert "If Y = 39: with probability gamma1 = 0.133995... reject, below the band;" in text
    assert "If Y = 76: with probability gamma2 = 0.650554... reject, above the band;" in text


def test_unverified_fast_path_matches():
    fast = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05, verify=False)
    assert not fast.verified and fast.gamma1_decimal is None
    assert (fast.c1, fast.c2) == (39, 76)


def test_designs_batch_adds_columns_and_matches_single_calls():
    frame = pd.DataFrame({
        "family": ["poisson", "binomial", "negative-binomial", "poisson", "binomial"],
        "kind": ["band", "point", "upper", "equivalence", "lower"],
        "n": [25, 20, 10, 60, 30],
        "alpha": [0.05, 0.05, 0.01, 0.05, 0.1],
        "low": [2.0, np.nan, np.nan, 1.8, np.nan],
        "high": [2.5, np.nan, np.nan, 2.6, np.nan],
        "value": [np.nan, 0.5, 3.0, np.nan, 0.4],
        "dispersion": [np.nan, np.nan, 2.0, np.nan, np.nan],
    })
    for verify in (False, True):
        out = exactband.designs(frame, verify=verify)
        assert list(out.columns[-4:]) == ["c1", "gamma1", "c2", "gamma2"]
        assert list(out.columns[:8]) == list(frame.columns)
        for row in out.itertuples():
            kw = {k: getattr(row, k) for k in ("low", "high", "value", "dispersion")
                  if not pd.isna(getattr(row, k))}
            one = exactband.design(row.family, row.kind, n=row.n, alpha=row.alpha, **kw,
                                   verify=verify)
            assert (None if pd.isna(row.c1) else int(row.c1)) == one.c1
            assert (None if pd.isna(row.c2) else int(row.c2)) == one.c2
            for got, want in ((row.gamma1, one.gamma1), (row.gamma2, one.gamma2)):
                if want is None:
                    assert pd.isna(got)
                else:
                    assert got == pytest.approx(want, abs=1e-12)


def test_designs_accepts_missing_optional_columns():
    frame = pd.DataFrame({"family": ["binomial"], "kind": ["upper"], "n": [50], "alpha": [0.05],
                          "value": [0.1]})
    out = exactband.designs(frame, verify=False)
    assert pd.isna(out.c1[0]) and out.c2[0] >= 0


def test_nonrandomized_and_digit_rules_never_exceed_alpha(band):
    cons = band.nonrandomized()
    assert cons.gamma1 == 0 and all(s <= 0.05 for s in cons.sizes)
    t1, t2 = band.thresholds(3)
    assert t1 == int(band.gamma1 * 1000) and t2 == int(band.gamma2 * 1000)
    dig = band.digit_rule(3)
    assert all(s <= 0.05 + 1e-15 for s in dig.sizes)
    assert all(c <= d + 1e-15 for c, d in zip(cons.sizes, dig.sizes))


def test_thresholds_use_the_exact_decimal():
    # gamma exactly 0.123 in decimal is 0.12299999999999999822 as a double: the threshold
    # must still be 123 with three digits
    d = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    fake = dataclasses.replace(d, gamma1=0.123, gamma1_decimal="0.123000000000000000000000000000")
    assert fake.thresholds(3)[0] == 123


def test_atomic_writes_leave_no_temp_and_normal_permissions(tmp_path):
    import os

    from exactband.fileio import atomic_open, atomic_write_text

    target = tmp_path / "out.txt"
    atomic_write_text(target, "one")
    assert target.read_text() == "one"
    mask = os.umask(0)
    os.umask(mask)
    assert (target.stat().st_mode & 0o777) == (0o666 & ~mask)
    with pytest.raises(RuntimeError):
        with atomic_open(target, "w") as fh:
            fh.write("two, half written")
            raise RuntimeError("interrupted")
    assert target.read_text() == "one"  # the old file is untouched
    assert [p.name for p in tmp_path.iterdir()] == ["out.txt"]  # no temp file left


def test_expectation_matches_phi_when_cutoffs_meet():
    # a third party may write an equivalence or band rule whose cutoffs meet (c1 == c2):
    # E phi from the contract's phi summed over the support equals kinds.expectation
    from scipy import stats

    from exactband import kinds as K

    mu = 7.0
    y = np.arange(0, 80)
    f = stats.poisson.pmf(y, mu)  # scipy.stats.poisson (general-purpose library)
    for kind in ("equivalence", "band", "point"):
        for c1, c2 in ((6, 6), (6, 7), (5, 9)):
            direct = float(np.sum(K.phi(kind, c1, 0.3, c2, 0.2, y) * f))
            got = K.expectation(kind, c1, 0.3, c2, 0.2,
                                lambda c: stats.poisson.cdf(c, mu), lambda c: stats.poisson.sf(c, mu),
                                lambda c: stats.poisson.pmf(c, mu))
            assert got == pytest.approx(direct, abs=1e-14), (kind, c1, c2)
