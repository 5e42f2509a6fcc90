"""Injected errors: tables built from correct designs, one kind of error per marked row.

The audit must flag exactly the injected rows, with the right reason and
diagnosis, and pass the clean rows.  The wrong constructions (equal tails,
end-anchored tails) are built here from their definitions with scipy.stats
(one-sided Poisson tails: scipy.stats.poisson.cdf / sf / pmf), independently of
the audit's own construction code.
"""

from __future__ import annotations

import pytest
from scipy import stats

import exactband
from exactband.audit import audit
from exactband.audit.diagnosis import NONE

from .conftest import design_row, write_csv

CLEAN = [
    dict(family="poisson", kind="band", n=25, alpha=0.05, low=2, high=2.5),
    dict(family="binomial", kind="band", n=60, alpha=0.05, low=0.2, high=0.3),
    dict(family="negative-binomial", kind="band", n=25, alpha=0.05, low=2, high=2.5,
         dispersion=4),
    dict(family="poisson", kind="point", n=40, alpha=0.01, value=2),
    dict(family="binomial", kind="upper", n=80, alpha=0.05, value=0.05),
    dict(family="poisson", kind="lower", n=10, alpha=0.05, value=2.5),
    dict(family="poisson", kind="equivalence", n=60, alpha=0.05, low=1.8, high=2.6),
    dict(family="poisson", kind="band", n=50, alpha=0.01, low=1, high=1.2),
]


def poisson_left(mu, a):
    """Randomised left tail of mass a (scipy.stats.poisson): reject Y < c, prob g at c."""
    c = 0
    while stats.poisson.cdf(c, mu) <= a:
        c += 1
    below = stats.poisson.cdf(c - 1, mu) if c else 0.0
    return c, (a - below) / stats.poisson.pmf(c, mu)


def poisson_right(mu, a):
    """Randomised right tail of mass a (scipy.stats.poisson): reject Y > c, prob g at c."""
    c = 0
    while stats.poisson.sf(c, mu) > a:
        c += 1
    return c, (a - stats.poisson.sf(c, mu)) / stats.poisson.pmf(c, mu)


def tails_row(kw, a_left, a_right):
    c1, g1 = poisson_left(kw["n"] * kw["low"], a_left)
    c2, g2 = poisson_right(kw["n"] * kw["high"], a_right)
    row = design_row(exactband.design(**kw), **kw)
    row.update(c1=str(c1), gamma1=f"{g1:.6f}", c2=str(c2), gamma2=f"{g2:.6f}")
    return row


@pytest.fixture(scope="module")
def injected(tmp_path_factory):
    designs = [exactband.design(**kw) for kw in CLEAN]
    rows, expect = [], {}
    for kw, d in zip(CLEAN, designs):  # the clean rows
        rows.append(design_row(d, **kw))

    def inject(row, reason, diagnosis):
        rows.append(row)
        expect[len(rows) + 1] = (reason, diagnosis)  # +1: the header is line 1

    A, B, C, D = (design_row(designs[i], **CLEAN[i]) for i in range(4))
    A["c1"] = str(int(A["c1"]) + 1)  # a shifted cutoff
    inject(A, "cutoff", "cutoff convention shifted by one")
    B["gamma2"] = f"{designs[1].gamma2 + 1e-3:.6f}"  # a gamma off by 1e-3
    inject(B, "gamma", NONE)
    C["gamma1"] = f"{designs[2].gamma1:.2f}"  # gammas rounded to 2 decimals
    C["gamma2"] = f"{designs[2].gamma2:.2f}"
    inject(C, "gamma", "gammas rounded")
    kwA, kwH = CLEAN[0], CLEAN[7]
    inject(tails_row(kwA, 0.025, 0.025), "cutoff", "equal-tailed")  # equal tails
    inject(tails_row(kwH, 0.005, 0.005), None, "equal-tailed")
    inject(tails_row(kwA, 0.05, 0.05), "size", "end-anchored")  # end-anchored tails
    B2 = design_row(designs[1], **CLEAN[1])
    B2["gamma1"] = B2["gamma2"] = "0.000000"  # a conservative table labelled randomised
    inject(B2, "gamma", "conservative non-randomised")
    D["gamma1"] = D["gamma1"][:3] + D["gamma1"][4] + D["gamma1"][3] + D["gamma1"][5:]  # typo
    assert D["gamma1"] != f"{designs[3].gamma1:.6f}"
    inject(D, "gamma", NONE)
    typo = design_row(designs[4], **CLEAN[4])
    typo["alpha"] = "0.O5"  # a typo that is not a number
    rows.append(typo)
    invalid_line = len(rows) + 1
    path = write_csv(tmp_path_factory.mktemp("inj") / "vendor.csv", rows)
    return audit(path, workers=1), expect, invalid_line


def test_clean_rows_pass(injected):
    result, expect, invalid_line = injected
    for v in result.verdicts:
        if v.row.line not in expect and v.row.line != invalid_line:
            assert v.verdict == "ok", (v.row.line, v.details)


def test_exactly_the_injected_rows_are_flagged(injected):
    result, expect, invalid_line = injected
    flagged = {v.row.line for v in result.verdicts if v.verdict == "finding"}
    assert flagged == set(expect)
    bad = [v for v in result.verdicts if v.verdict == "invalid"]
    assert [v.row.line for v in bad] == [invalid_line]
    assert "alpha" in bad[0].details[0] and "not a number" in bad[0].details[0]


def test_reasons_and_diagnoses(injected):
    result, expect, _ = injected
    by_line = {v.row.line: v for v in result.verdicts}
    for line, (reason, diagnosis) in expect.items():
        v = by_line[line]
        if reason is not None:
            assert reason in v.reasons, (line, v.reasons, v.details)
        assert v.diagnosis.startswith(diagnosis), (line, v.diagnosis, v.also)


def test_numbers_of_a_finding(injected):
    """The shifted cutoff: reason names the cutoff; attained sizes are their own numbers'."""
    result, expect, _ = injected
    line = next(k for k, (_, d) in expect.items() if d.startswith("cutoff"))
    v = next(v for v in result.verdicts if v.row.line == line)
    assert "c1 = 40 (ours 39)" in v.details[0]
    # size at low with c1 = 40: P(Y < 40) + gamma1 P(Y = 40) + ... at mu = 50 (scipy.stats.poisson)
    c1, g1, c2, g2 = 40, float(v.row.text["gamma1"]), 76, float(v.row.text["gamma2"])
    mu = 50.0
    want = (stats.poisson.cdf(c1 - 1, mu) + g1 * stats.poisson.pmf(c1, mu)
            + g2 * stats.poisson.pmf(c2, mu) + stats.poisson.sf(c2, mu))
    assert v.sizes[0] == pytest.approx(want, rel=1e-12)
    assert v.excess == pytest.approx(want - 0.05, rel=1e-9)


def test_equal_tails_are_biased(injected):
    """An equal-tailed band rule dips below alpha outside the null (reported with the finding)."""
    result, expect, _ = injected
    lines = [k for k, (_, d) in expect.items() if d == "equal-tailed"]
    for line in lines:
        v = next(v for v in result.verdicts if v.row.line == line)
        p = v.row.problem
        assert v.verdict == "finding" and {"cutoff", "gamma"} & set(v.reasons)
        assert v.min_power < p.alpha
        assert not (p.low <= v.at_theta <= p.high)
