"""Normal and gamma end to end: design / designs / describe / decide / power, table sets
(printed cutoffs rounded the safe way, the size they attain) and their audit.

External checks name their source: scipy.stats.norm and scipy.stats.chi2 for the cutoffs
(as in test_continuous_references), the rounding direction from Kind.rounding (common
practice: shrinking the rejection region never raises the size).
"""

from __future__ import annotations

import csv
import math
import textwrap
from decimal import Decimal

import pytest
from scipy import stats

import exactband
from exactband.audit import Options, audit
from exactband.decide import DecideError, decide
from exactband.errors import DesignError
from exactband.tables.publish import generate

NORMAL_SPEC = textwrap.dedent("""\
    title = "Yarn strength: exact rules for the mean (test set)"
    family = "normal"
    dispersion = 2.0
    kinds = ["band", "upper", "lower", "point", "equivalence"]
    alpha = [0.05, 0.01]
    n = [10, 25]
    bands = [[9.5, 10.5]]
    values = [10.0]
    cutoff_decimals = 3
    precision = 30
    """)
GAMMA_SPEC = textwrap.dedent("""\
    title = "Loom lamp lifetimes: exact rules for the mean lifetime (test set)"
    family = "gamma"
    dispersion = 1.0
    kinds = ["band", "upper", "lower", "point", "equivalence"]
    alpha = [0.05]
    n = [8, 30]
    bands = [[900, 1100]]
    values = [1000]
    cutoff_decimals = 2
    precision = 30
    """)


@pytest.fixture(scope="module")
def sets(tmp_path_factory):
    d = tmp_path_factory.mktemp("continuous")
    out = {}
    for name, text in (("normal", NORMAL_SPEC), ("gamma", GAMMA_SPEC)):
        spec = d / f"{name}.toml"
        spec.write_text(text, encoding="utf-8")
        generate(spec, d / name, workers=1)
        out[name] = d / name
    return out


def _rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


@pytest.mark.parametrize("name, k", [("normal", "2"), ("gamma", "1")])
def test_table_sets_audit_clean(sets, name, k):
    full = audit(sets[name] / f"{name}.csv", workers=1)
    assert [v.verdict for v in full.verdicts] == ["ok"] * len(full.verdicts) > []
    printed = audit(sets[name] / f"{name}.print.csv",
                    Options(constants={"family": name, "dispersion": k}), workers=1)
    assert printed.verdicts and all(v.verdict == "ok" for v in printed.verdicts)


@pytest.mark.parametrize("name, k", [("normal", "2"), ("gamma", "1")])
def test_printed_cutoffs_rounded_the_safe_way(sets, name, k):
    kinds = exactband.kinds.KINDS
    for r in _rows(sets[name] / f"{name}.csv"):
        kind = kinds[r["kind"]]
        d = int(r["cutoff_decimals"])
        for c, way in zip(("c1", "c2"), kind.rounding):
            if not r[c]:
                continue
            exact, shown = Decimal(r[c]), Decimal(r[f"printed_{c}"])
            assert -shown.as_tuple().exponent == d
            # outward for band/point (c1 down, c2 up), inward for equivalence, by < 1 unit
            assert 0 <= (shown - exact) * way < Decimal(1).scaleb(-d)
        for s in ("printed_rule_size_low", "printed_rule_size_high"):
            if r[s]:
                assert float(r[s]) <= float(r["alpha"]) * (1 + 1e-12)
        assert r["gamma1"] == r["gamma2"] == r["random_digits"] == ""


def test_wrong_printed_rules_are_flagged(sets, tmp_path):
    rows = _rows(sets["gamma"] / "gamma.print.csv")
    header = list(rows[0])
    band = next(i for i, r in enumerate(rows) if r["kind"] == "band")
    upper = next(i for i, r in enumerate(rows) if r["kind"] == "upper")
    rows[band]["c1"] = f"{Decimal(rows[band]['c1']) + Decimal('0.01')}"  # rounded inward
    rows[upper]["c2"] = f"{Decimal(rows[upper]['c2']) + 1}"  # a whole unit too far out
    bad = tmp_path / "bad.csv"
    with open(bad, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=header)
        w.writeheader()
        w.writerows(rows)
    res = audit(bad, Options(constants={"family": "gamma", "dispersion": "1"}), workers=1)
    verdicts = {v.row.index: v for v in res.verdicts}
    assert verdicts[band + 1].verdict == "finding" and verdicts[band + 1].reasons == ["size"]
    assert verdicts[upper + 1].verdict == "finding" and "cutoff" in verdicts[upper + 1].reasons
    assert sum(v.verdict != "ok" for v in res.verdicts) == 2


def test_design_describe_power_decide_normal():
    d = exactband.design("normal", "point", n=16, alpha=0.05, value=10.0, dispersion=2.0)
    s = 0.5
    z = stats.norm.isf(0.025)  # scipy.stats.norm: the point rule is value -+ s z
    assert math.isclose(d.c1, 10 - s * z, rel_tol=1e-9) and math.isclose(d.c2, 10 + s * z,
                                                                           rel_tol=1e-9)
    assert d.gamma1 is None and d.gamma2 is None and d.verified
    assert math.isclose(d.power(10.0), 0.05, rel_tol=1e-12)
    text = d.describe()
    assert "Reject H0 if Y < " in text and "Y = the mean of the n observations." in text
    assert "random" not in text and d.describe("conservative") == text
    assert decide(d, 12.0).reject and not decide(d, 10.3).reject
    assert decide(d, 8.0).side == "below" and decide(d, d.c2).reject is False
    with pytest.raises(DecideError, match="digits-read"):
        decide(d, 12.0, digits_read="123")
    with pytest.raises(DecideError, match="invalid y"):
        decide(d, "abc")


def test_design_gamma_upper_and_decide_total():
    d = exactband.design("gamma", "upper", n=12, alpha=0.01, value=500.0, dispersion=1.0)
    ref = stats.chi2.isf(0.01, 24) * 500.0 / 2  # scipy.stats.chi2: 2 Y / theta ~ chi2(2 n)
    assert math.isclose(d.c2, ref, rel_tol=1e-9)
    assert decide(d, ref * 1.01).reject and not decide(d, ref * 0.99).reject
    with pytest.raises(DecideError, match=">= 0"):
        decide(d, -1.0)


def test_designs_dataframe_and_bad_input():
    import pandas as pd

    df = exactband.designs(pd.DataFrame([
        dict(family="normal", kind="band", n=9, alpha=0.05, low=-1.0, high=1.0, dispersion=3.0),
        dict(family="gamma", kind="lower", n=5, alpha=0.1, value=2.0, dispersion=2.5)]))
    u = stats.foldnorm.isf(0.05, 1.0)  # scipy.stats.foldnorm: band -+ s u, s = 1, h = 1
    assert math.isclose(df["c2"][0], u, rel_tol=1e-9) and math.isclose(df["c1"][0], -u,
                                                                          rel_tol=1e-9)
    # scipy.stats.chi2: 2 k Y / theta ~ chi2(2 n k), n k = 12.5
    assert math.isclose(df["c1"][1], stats.chi2.ppf(0.1, 25) * 2.0 / 5, rel_tol=1e-9)
    assert df["gamma1"].isna().all() and df["gamma2"].isna().all()
    with pytest.raises(DesignError, match="dispersion"):
        exactband.design("normal", "upper", n=5, alpha=0.05, value=1.0)
    with pytest.raises(DesignError, match="gamma mean"):
        exactband.design("gamma", "upper", n=5, alpha=0.05, value=-1.0, dispersion=1.0)


def test_decide_from_a_table_row(sets, tmp_path):
    from exactband.tableverify import verified_table_rule

    path = sets["gamma"] / "gamma.csv"
    rows = _rows(path)
    i = next(j for j, r in enumerate(rows) if r["kind"] == "band")
    tr = verified_table_rule(path, row=i + 1)
    shown = Decimal(rows[i]["printed_c1"])
    assert Decimal(repr(tr.design.c1)) == shown  # the printed cutoff is the one applied
    assert decide(tr.design, float(shown) * 0.999).reject
    assert not decide(tr.design, float(shown) * 1.001).reject
    # a printed cutoff changed after publication is refused
    rows[i]["printed_c1"] = f"{shown + Decimal('0.01')}"
    with open(tmp_path / "gamma.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    with pytest.raises(DecideError, match="printed_c1"):
        verified_table_rule(tmp_path / "gamma.csv", row=i + 1)


def test_plan_normal_point_matches_the_closed_form():
    """Smallest n with power >= 0.8 at mean 9 and 11 (value 10, sigma 2): the power of the
    two-sided normal rule is Phi(sqrt(n)/2 - z) + Phi(-sqrt(n)/2 - z) (scipy.stats.norm)."""
    res = exactband.plan("normal", "point", alpha=0.05, value=10.0, dispersion=2.0,
                         alternatives=[9.0, 11.0], target=0.8)
    z = stats.norm.isf(0.025)

    def power(n):
        return stats.norm.cdf(math.sqrt(n) / 2 - z) + stats.norm.cdf(-math.sqrt(n) / 2 - z)

    want = next(n for n in range(1, 200) if power(n) >= 0.8)
    assert res.n == want


def test_cli_design_and_decide(cli):
    code, out, err = cli("design", "--family", "gamma", "--kind", "lower", "--n", "6",
                         "--alpha", "0.05", "--value", "2", "--dispersion", "1")
    assert code == 0 and "gamma1" not in out and "Reject H0 if Y < " in out
    code, out, err = cli("decide", "--family", "normal", "--kind", "upper", "--n", "4",
                         "--alpha", "0.05", "--value", "0", "--dispersion", "1", "--y", "0.9")
    assert code == 0 and "REJECT H0" in out and "never randomised" in out
    code, out, err = cli("decide", "--family", "normal", "--kind", "upper", "--n", "4",
                         "--alpha", "0.05", "--value", "0", "--dispersion", "1", "--y", "0.9",
                         "--digits-read", "123")
    assert code == 2 and err.count("\n") == 1 and "digits-read" in err


def test_spec_keys_for_real_cutoffs(tmp_path):
    from exactband.tables.spec import SpecError, load_spec

    base = NORMAL_SPEC.replace("cutoff_decimals = 3\n", "")
    cases = [(base + "cutoff_decimals = 13\n", "cutoff_decimals"),
             (base + '\n[oc]\nrules = ["randomised", "conservative"]\n', "oc.rules"),
             ('title = "t"\nfamily = "poisson"\nkinds = ["upper"]\nalpha = [0.05]\nn = [5]\n'
              'values = [1.0]\ncutoff_decimals = 2\n', "cutoff_decimals")]
    for i, (text, key) in enumerate(cases):
        path = tmp_path / f"s{i}.toml"
        path.write_text(text, encoding="utf-8")
        with pytest.raises(SpecError, match=key):
            load_spec(path)
    path = tmp_path / "ok.toml"
    path.write_text(base, encoding="utf-8")
    assert load_spec(path).cutoff_decimals == 4  # the default for real cutoffs


def test_resume_from_the_cache(tmp_path):
    """A build killed after its verified chunk was saved resumes from the cache (the cached
    real cutoffs are checked against the fast solution) and writes the same bytes."""
    import subprocess
    import sys

    spec = tmp_path / "normal.toml"
    spec.write_text(NORMAL_SPEC.replace("n = [10, 25]", "n = [10]"), encoding="utf-8")
    env = dict(__import__("os").environ, EXACTBAND_STOP_AT="chunk-saved")
    run = [sys.executable, "-m", "exactband", "table", str(spec), "--out", str(tmp_path / "o")]
    assert subprocess.run(run, env=env, capture_output=True).returncode != 0
    notes = []
    generate(spec, tmp_path / "o", workers=1, log=notes.append)  # resumes, in this process
    assert any("resumed 10 of 10" in n for n in notes), notes
    generate(spec, tmp_path / "fresh", workers=1)
    for name in ("normal.csv", "normal.print.csv", "normal.pdf"):
        assert (tmp_path / "o" / name).read_bytes() == (tmp_path / "fresh" / name).read_bytes()


def test_power_figure_of_a_continuous_rule():
    """One curve (the rule has real cutoffs), a caption without gammas or random digits."""
    from exactband.plots import design_caption, oc_figure

    d = exactband.design("normal", "band", n=25, alpha=0.05, low=9.5, high=10.5, dispersion=2)
    fig = oc_figure(d)
    assert len(fig.axes[0].lines) == 2  # the alpha line and the one rule
    text = design_caption(d, 3)
    assert "real cutoffs" in text and "gamma" not in text and "random digits" not in text
