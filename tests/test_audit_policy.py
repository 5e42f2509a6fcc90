"""The audit's verdict policy: per cell, rounding inferred, size never above alpha.

* Round trip: the tables exactband writes (NAME.csv at full precision and
  NAME.print.csv with gammas truncated) audit all ok, for small random specs
  (hypothesis) and for the demo.
* A table whose gammas are rounded to 2 decimals: every row whose printed numbers
  exceed alpha is a finding, and no other row is; the sizes are computed here
  independently with scipy.stats sums (scipy.stats.poisson.cdf / sf / pmf: the
  size of a band rule at theta is P(Y < c1) + g1 P(Y = c1) + g2 P(Y = c2) +
  P(Y > c2)).  Rows whose scipy excess lies within 1e-9 * alpha of zero are not
  asserted either way (scipy's double sums are good to ~1e-13 relative; the audit
  decides those in high precision).
* The verdict of a row does not depend on the other rows (per-cell decimals).
"""

from __future__ import annotations

import csv
import hashlib
import textwrap
from decimal import ROUND_HALF_UP, Decimal

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import stats

from exactband.audit import Options, audit
from exactband.audit import policy as P
from exactband.tables.publish import generate

DEMO_LIKE = textwrap.dedent("""\
    title = "Weaving flaws per bolt (test copy of the demo grid)"
    family = "poisson"
    kinds = ["band", "upper"]
    alpha = [0.05, 0.01]
    n = { from = 10, to = 50, step = 5 }
    bands = [[2.0, 2.5], [1.5, 2.0]]
    values = [2.5]
    gamma_decimals = 4
    random_digit_pages = 0
    """)


@pytest.fixture(scope="module")
def demo_set(tmp_path_factory):
    d = tmp_path_factory.mktemp("demo")
    spec = d / "demo.toml"
    spec.write_text(DEMO_LIKE, encoding="utf-8")
    generate(spec, d / "out", workers=1)
    return d / "out"


def _csv_rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def _write(path, rows, header):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=header)
        w.writeheader()
        w.writerows(rows)
    return path


# -- policy units -------------------------------------------------------------------
def test_windows():
    D = Decimal
    assert P.within("round", 4, D("0.00005")) and not P.within("round", 4, D("0.000051"))
    assert P.within("truncate", 4, D("-0.000099")) and not P.within("truncate", 4, D("0.00001"))
    assert not P.within("truncate", 4, D("-0.0001") - D("2e-12"))
    assert P.within("round", None, D("1e-13")) and not P.within("round", None, D("1e-11"))


def test_infer_mode():
    D = Decimal
    trunc = [(4, D("-0.00007")), (4, D("-0.00002")), (4, D("-0.00009"))]
    assert P.infer_mode(trunc)[0] == "truncate"
    rnd = [(4, D("0.00003")), (4, D("-0.00002")), (4, D("0.00004"))]
    assert P.infer_mode(rnd)[0] == "round"
    assert P.infer_mode([(4, D("-0.00001"))])[0] == "round"  # a tie reads as rounded


# -- round trip ---------------------------------------------------------------------
def test_demo_round_trip(demo_set):
    full = audit(demo_set / "demo.csv", workers=2)
    assert full.all_ok, [v.details for v in full.verdicts if v.verdict != "ok"]
    printed = audit(demo_set / "demo.print.csv", Options(constants={"family": "poisson"}),
                    workers=2)
    assert printed.all_ok, [v.details for v in printed.verdicts if v.verdict != "ok"][:3]
    assert printed.modes == ("truncate", "truncate")
    assert any("gammas truncated to 4 decimals" in n for n in printed.notes)
    assert len(printed.verdicts) == len(_csv_rows(demo_set / "demo.print.csv"))


FAMILIES = {"poisson": ([[1.5, 2.0], [2.0, 2.1]], [2.0], None),
            "binomial": ([[0.1, 0.2], [0.3, 0.31]], [0.15], None),
            "negative-binomial": ([[1.0, 1.5]], [1.2], 3)}


@settings(max_examples=4, deadline=None, suppress_health_check=list(HealthCheck))
@given(family=st.sampled_from(sorted(FAMILIES)),
       kinds=st.sets(st.sampled_from(["band", "point", "upper", "lower", "equivalence"]),
                     min_size=1, max_size=3),
       alpha=st.sampled_from([0.1, 0.05, 0.01, 0.001]),
       n=st.lists(st.integers(5, 120), min_size=1, max_size=3, unique=True),
       decimals=st.integers(2, 6))
def test_round_trip_random_specs(tmp_path_factory, family, kinds, alpha, n, decimals):
    bands, values, k = FAMILIES[family]
    d = tmp_path_factory.mktemp("spec")
    two = kinds & {"band", "equivalence"}
    one = kinds - two
    text = (f'title = "Round trip"\nfamily = "{family}"\nkinds = {sorted(kinds)!r}\n'
            f"alpha = [{alpha}]\nn = {sorted(n)!r}\n"
            + (f"bands = {bands!r}\n" if two else "") + (f"values = {values!r}\n" if one else "")
            + f"gamma_decimals = {decimals}\nrandom_digit_pages = 0\n"
            + (f"dispersion = {k}\n" if k else "")).replace("'", '"')
    (d / "rt.toml").write_text(text, encoding="utf-8")
    generate(d / "rt.toml", d / "out", workers=1)
    full = audit(d / "out" / "rt.csv", workers=1)
    assert full.all_ok, [v.details for v in full.verdicts if v.verdict != "ok"][:3]
    consts = {"family": family} | ({"dispersion": str(k)} if k else {})
    printed = audit(d / "out" / "rt.print.csv", Options(constants=consts), workers=1)
    assert printed.all_ok, (text, [v.details for v in printed.verdicts if v.verdict != "ok"][:3])


# -- gammas rounded to 2 decimals ----------------------------------------------------
def _round2(text):
    return str(Decimal(text).quantize(Decimal("0.01"), rounding=ROUND_HALF_UP))


def _scipy_excess(row, g1, g2):
    """max(size - alpha) over the constraint points, by scipy.stats.poisson sums."""
    n, alpha = float(row["n"]), float(row["alpha"])
    if row["kind"] == "upper":
        mu, c2 = n * float(row["value"]), int(row["c2"])
        size = stats.poisson.sf(c2, mu) + g2 * stats.poisson.pmf(c2, mu)
        return size - alpha
    c1, c2 = int(row["c1"]), int(row["c2"])
    out = []
    for theta in (float(row["low"]), float(row["high"])):
        mu = n * theta
        out.append(stats.poisson.cdf(c1 - 1, mu) + g1 * stats.poisson.pmf(c1, mu)
                   + g2 * stats.poisson.pmf(c2, mu) + stats.poisson.sf(c2, mu) - alpha)
    return max(out)


def _rounded_table(demo_set, tmp_path):
    rows = _csv_rows(demo_set / "demo.csv")
    header = list(rows[0])
    two = []
    for r in rows:
        r2 = dict(r)
        for g in ("gamma1", "gamma2"):
            if r[f"{g}_decimal"]:
                r2[g] = _round2(r[f"{g}_decimal"])
        two.append(r2)
    return rows, two, header


def test_rounded_to_two_decimals_is_judged_by_its_size(demo_set, tmp_path, cli):
    rows, two, header = _rounded_table(demo_set, tmp_path)
    path = _write(tmp_path / "two.csv", two, header)
    code, out, err = cli("audit", path, "--report", tmp_path / "rep")
    assert code == 1 and err == ""
    result = audit(path, workers=2)
    over = under = 0
    for v, r in zip(result.verdicts, two):
        g1 = float(r["gamma1"]) if r["gamma1"] else 0.0
        g2 = float(r["gamma2"]) if r["gamma2"] else 0.0
        e = _scipy_excess(r, g1, g2)
        alpha = float(r["alpha"])
        if e > 1e-9 * alpha:
            over += 1
            assert v.verdict == "finding" and "size" in v.reasons, (v.row.index, e, v.details)
            assert v.excess == pytest.approx(e, rel=1e-6, abs=1e-13)
            assert v.diagnosis == "gammas rounded to 2 decimals", (v.diagnosis, v.also)
        elif e < -1e-9 * alpha:
            under += 1
            assert v.verdict == "ok", (v.row.index, e, v.details)
    assert over >= 5 and under >= 5  # the table really has both kinds of rows
    import json

    summary = json.loads((tmp_path / "rep" / "audit-summary.json").read_text())["summary"]
    worst = max((v for v in result.verdicts if "size" in v.reasons),
                key=lambda v: v.excess / v.row.problem.alpha).excess  # worst relative to alpha
    assert summary["worst_excess_over_alpha"] == pytest.approx(worst)
    assert summary["rows_above_alpha"] == over + sum(
        1 for v, r in zip(result.verdicts, two) if "size" in v.reasons and
        abs(_scipy_excess(r, float(r["gamma1"] or 0), float(r["gamma2"] or 0)))
        <= 1e-9 * float(r["alpha"]))


def test_verdict_of_a_row_does_not_depend_on_the_others(demo_set, tmp_path):
    rows, two, header = _rounded_table(demo_set, tmp_path)
    alone = audit(_write(tmp_path / "two.csv", two, header), workers=2)
    mixed_rows = [t if i % 2 else r for i, (r, t) in enumerate(zip(rows, two))]
    mixed = audit(_write(tmp_path / "mixed.csv", mixed_rows, header), workers=2)
    for i, v in enumerate(mixed.verdicts):
        if i % 2:  # a 2-decimal row among full-precision ones: the same verdict as among its own
            assert (v.verdict, v.reasons) == (alone.verdicts[i].verdict, alone.verdicts[i].reasons)
            assert v.row.decimals == tuple(2 if two[i][g] else None for g in ("gamma1", "gamma2"))
        else:
            assert v.verdict == "ok", v.details


def test_hash_is_of_the_bytes_judged(demo_set):
    result = audit(demo_set / "demo.csv", workers=1)
    assert result.sha256 == hashlib.sha256((demo_set / "demo.csv").read_bytes()).hexdigest()


def test_forced_rounding_flags_a_truncated_table(demo_set):
    """--gamma-rounding round on a truncated table: cells cut by more than half a unit fail."""
    r = audit(demo_set / "demo.print.csv", Options(constants={"family": "poisson"},
                                                   gamma_rounding="round"), workers=2)
    bad = [v for v in r.verdicts if v.verdict != "ok"]
    assert bad and all(v.reasons == ["gamma"] for v in bad)
    assert all(v.diagnosis.startswith("gammas truncated to 4 decimals") for v in bad)
