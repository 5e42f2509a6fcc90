"""The field decision on every branch, digits read or drawn, table rows, bad input."""

import csv
import json

import pytest

import exactband
from exactband import decide as decide_module
from exactband.cli import main
from exactband.decide import DRAWN, READ, DecideError, decide
from exactband.tablerow import table_rule


@pytest.fixture(scope="module")
def band():
    # the demo's band design: c1 = 39, c2 = 76 (core README), gammas 0.13399..., 0.65055...
    return exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)


@pytest.fixture(scope="module")
def equiv():
    return exactband.design("poisson", "equivalence", n=60, low=1.8, high=2.6, alpha=0.05)


def test_band_every_branch(band):
    c1, c2 = band.c1, band.c2
    t1, t2 = band.thresholds(4)
    assert (c1, c2) == (39, 76) and (t1, t2) == (1339, 6505)
    below = decide(band, c1 - 5, digits_read="0000")
    assert below.reject and below.digits_read is None and "below c1" in below.region
    at_c1_low = decide(band, c1, digits_read=f"{t1 - 1:04d}")
    assert at_c1_low.reject and at_c1_low.digits_read == "1338" and at_c1_low.threshold == t1
    at_c1_high = decide(band, c1, digits_read=f"{t1:04d}")  # equal to t: not below, accept
    assert not at_c1_high.reject and at_c1_high.digits_source == READ
    assert not decide(band, c1, digits_read="4821").reject
    between = decide(band, (c1 + c2) // 2, digits_read="0000")
    assert not between.reject and between.digits_read is None and "between" in between.region
    assert decide(band, c2, digits_read=f"{t2 - 1}").reject
    assert not decide(band, c2, digits_read=f"{t2}").reject
    above = decide(band, c2 + 1)
    assert above.reject and above.digits_read is None and "above c2" in above.region
    assert "above the band (rate per unit > 2.5)" in above.conclusion
    assert above.side == "above" and decide(band, c1 - 1).side == "below"


def test_equivalence_is_reversed(equiv):
    c1, c2 = equiv.c1, equiv.c2
    t1, t2 = equiv.thresholds(3)
    inside = decide(equiv, (c1 + c2) // 2)
    assert inside.reject and "equivalence shown" in inside.conclusion
    assert not decide(equiv, c1 - 1).reject and not decide(equiv, c2 + 1).reject
    assert "equivalence not shown" in decide(equiv, c2 + 1).conclusion
    if t1 > 0:
        assert decide(equiv, c1, digits_read=f"{t1 - 1:03d}").reject
    assert not decide(equiv, c1, digits_read=f"{t1:03d}").reject
    if t2 > 0:
        assert decide(equiv, c2, digits_read=f"{t2 - 1:03d}").reject
    assert not decide(equiv, c2, digits_read=f"{t2:03d}").reject


def test_one_sided_kinds():
    up = exactband.design("binomial", "upper", n=80, value=0.05, alpha=0.05)
    assert decide(up, up.c2 + 1).reject and not decide(up, up.c2 - 1).reject
    t = up.thresholds(3)[1]
    assert decide(up, up.c2, digits_read=f"{max(t - 1, 0):03d}").reject == (t > 0)
    lo = exactband.design("poisson", "lower", n=10, value=3, alpha=0.05)
    assert decide(lo, lo.c1 - 1).reject and not decide(lo, lo.c1 + 1).reject
    assert "below the value (rate per unit < 3)" in decide(lo, 0).conclusion


def test_digit_rule_rejects_exactly_t_of_the_10_to_d_digit_strings(band):
    # every 3-digit string in turn: the rule rejects for exactly t = floor(gamma * 1000)
    # of them, i.e. with probability t / 10**3 <= gamma (common practice of digit tables)
    t1 = band.thresholds(3)[0]
    hits = sum(decide(band, band.c1, digits_read=f"{k:03d}").reject for k in range(1000))
    assert hits == t1 == 133


def test_conservative_never_rejects_at_a_cutoff(band):
    for y in (band.c1, band.c2):
        d = decide(band, y, rule="conservative", digits_read="0000")
        assert not d.reject and d.digits_read is None and d.randomization_point
    assert decide(band, band.c1 - 1, rule="conservative").reject


def test_drawn_digits_come_from_secrets_and_are_printed(band, monkeypatch):
    calls = []

    def fake(bound):
        calls.append(bound)
        return 7

    monkeypatch.setattr(decide_module.secrets, "randbelow", fake)
    d = decide(band, band.c1)
    # drawn digits: the one default of tables, power and plan (3)
    assert calls == [10 ** 3] and d.digits_read == "007" and d.digits_source == DRAWN
    assert d.reject  # 7 < 133
    assert "007" in d.describe()
    d3 = decide(band, band.c2, random_digits=3)
    assert calls[-1] == 1000 and d3.digits_read == "007"


def test_bad_input_is_one_line(band):
    binom = exactband.design("binomial", "upper", n=20, value=0.1, alpha=0.05)
    cases = [(band, dict(y=-1), "y"), (band, dict(y=2.5), "y"), (band, dict(y="ten"), "y"),
             (binom, dict(y=21), "y"), (band, dict(y=39, digits_read="48a1"), "digits-read"),
             (band, dict(y=39, digits_read=" "), "digits-read"), (band, dict(y=39, digits_read="-12"), "digits-read"),
             (band, dict(y=39, digits_read="482", random_digits=4), "digits-read"),
             (band, dict(y=39, digits_read="1234567890"), "digits-read"),
             (band, dict(y=39, random_digits=0), "random-digits"),
             (band, dict(y=39, rule="lenient"), "rule")]
    for des, kw, field in cases:
        y = kw.pop("y")
        with pytest.raises(DecideError) as e:
            decide(des, y, **kw)
        assert "\n" not in str(e.value) and str(e.value).startswith(f"invalid {field} ")
    assert decide(binom, 20).reject  # the top of the binomial support is allowed


# -- a table CSV as the tables command writes it (columns of issue 3) ------------------
COLUMNS = ["family", "kind", "n", "alpha", "low", "high", "value", "dispersion", "c1", "gamma1",
           "c2", "gamma2", "size_low", "size_high", "conservative_size_low",
           "conservative_size_high", "threshold1", "threshold2"]


def write_table(path, designs, digits=3, extra=None):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(COLUMNS + (["random_digits"] if extra else []))
        for d in designs:
            t1, t2 = d.thresholds(digits)
            c = d.nonrandomized()
            row = [d.family, d.kind, d.n, d.alpha, d.low, d.high, d.value, d.dispersion, d.c1,
                   d.gamma1, d.c2, d.gamma2, d.size_low, d.size_high, c.size_low, c.size_high,
                   t1, t2] + ([digits] if extra else [])
            w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else v)
                        for v in row])


@pytest.fixture
def table(tmp_path, band, equiv):
    p = tmp_path / "demo.csv"
    write_table(p, [band, equiv, exactband.design("poisson", "band", n=40, low=2, high=2.5,
                                                  alpha=0.05)])
    return p


def test_table_row_by_number_and_by_options(table, band):
    tr = table_rule(table, 1)
    assert tr.design.c1 == band.c1 and tr.thresholds == band.thresholds(3)
    assert tr.random_digits == 3  # inferred from the printed thresholds
    tr2 = table_rule(table, kind="band", n="25", alpha="0.05")
    assert tr2.row == 1
    dec = decide(tr.design, band.c1, digits_read="132", random_digits=tr.random_digits,
                 thresholds=tr.thresholds)
    assert dec.reject and dec.threshold == 133
    with pytest.raises(DecideError, match="exactly 3"):
        decide(tr.design, band.c1, digits_read="1320", random_digits=tr.random_digits,
               thresholds=tr.thresholds)


def test_table_thresholds_are_used_as_printed(tmp_path, band):
    p = tmp_path / "t.csv"
    write_table(p, [band], digits=2, extra=True)
    rows = list(csv.reader(open(p, encoding="utf-8")))
    rows[1][COLUMNS.index("threshold1")] = "12"  # printed one below floor(0.1339 * 100) = 13
    with open(p, "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(rows)
    tr = table_rule(p, 1)
    assert tr.thresholds[0] == 12 and tr.random_digits == 2
    assert not decide(tr.design, band.c1, digits_read="12", random_digits=2,
                      thresholds=tr.thresholds).reject
    rows[1][COLUMNS.index("threshold1")] = "40"  # far off: refused
    with open(p, "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(rows)
    with pytest.raises(DecideError, match="threshold1 = 40 does not match"):
        table_rule(p, 1)


def test_table_gamma_outside_zero_one_is_refused(tmp_path, band):
    p = tmp_path / "t.csv"
    write_table(p, [band])
    rows = list(csv.reader(open(p, encoding="utf-8")))
    for bad in ("1.0", "-0.25", "1.5"):
        rows[1][COLUMNS.index("gamma1")] = bad
        with open(p, "w", newline="", encoding="utf-8") as fh:
            csv.writer(fh).writerows(rows)
        with pytest.raises(DecideError, match=rf"row 1: invalid gamma1 = {float(bad)}: a number "
                                              r"in \[0, 1\)$"):
            table_rule(p, 1)


def test_table_bad_input(tmp_path, table):
    with pytest.raises(DecideError, match="row = 9"):
        table_rule(table, 9)
    with pytest.raises(DecideError, match="2 rows match"):
        table_rule(table, kind="band")
    with pytest.raises(DecideError, match="no row matches"):
        table_rule(table, kind="upper")
    with pytest.raises(DecideError, match="give --row"):
        table_rule(table)
    bad = tmp_path / "bad.csv"
    bad.write_text("family,kind,n\npoisson,band,25\n", encoding="utf-8")
    with pytest.raises(DecideError, match="missing column"):
        table_rule(bad, 1)
    with pytest.raises(DecideError, match="existing table"):
        table_rule(tmp_path / "nope.csv", 1)
    for d in (0, 10, "12"):  # the random digits asked for: 1 to 9, the value named as given
        with pytest.raises(DecideError, match=rf"row 1: invalid random-digits = {d}: a whole "
                                              "number 1 to 9$"):
            table_rule(table, 1, random_digits=d)
    tr = table_rule(table, 1, random_digits=9)  # in range: taken, the table's 3 noted
    assert tr.random_digits == 9 and tr.table_random_digits == 3


# -- the command ---------------------------------------------------------------------
BAND = ["--family", "poisson", "--kind", "band", "--n", "25", "--low", "2", "--high", "2.5",
        "--alpha", "0.05"]


def test_cli_decide_text_and_json(capsys, table):
    assert main(["decide", *BAND, "--y", "39", "--digits", "1338"]) == 0
    out = capsys.readouterr().out
    assert "REJECT H0" in out and "DO NOT" not in out and "1338" in out
    assert main(["decide", *BAND, "--y", "39", "--digits", "4821", "--json"]) == 0
    js = json.loads(capsys.readouterr().out)
    assert js["digits_read"] == "4821" and js["reject"] is False and js["threshold"] == 1339
    assert main(["decide", "--table", str(table), "--row", "2", "--y", "0", "--json"]) == 0
    js = json.loads(capsys.readouterr().out)
    assert js["inputs"]["kind"] == "equivalence" and js["reject"] is False
    assert main(["decide", *BAND, "--y", "39", "--conservative"]) == 0
    assert "DO NOT REJECT" in capsys.readouterr().out
    assert main(["decide", *BAND, "--y", "39"]) == 0
    assert "cryptographic" in capsys.readouterr().out


@pytest.mark.parametrize("extra", [
    ["--y", "-3"], ["--y", "4.5"], ["--y", "39", "--digits", "48x1"],
    ["--y", "39", "--digits", "482", "--random-digits", "4"], [],
    ["--y", "39", "--row", "1"], ["--y", "39", "--alpha", "2"],
])
def test_cli_decide_bad_input(capsys, extra):
    args = [a for a in BAND]
    if "--alpha" in extra:
        i = args.index("--alpha")
        del args[i:i + 2]
    assert main(["decide", *args, *extra]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err


def test_cli_decide_table_digit_length(capsys, table):
    assert main(["decide", "--table", str(table), "--row", "1", "--y", "39",
                 "--digits", "4821"]) == 2
    assert "exactly 3" in capsys.readouterr().err


def test_tails_meeting_at_one_point():
    # c1 == c2: phi there is gamma1 + gamma2 (kinds.phi contract), so the field
    # threshold is t1 + t2; a hand-made design exercises the branch
    from exactband.design import Design
    from exactband.params import make_problem

    prob = make_problem("poisson", "band", n=1, alpha=0.05, low=2, high=2.5)
    d = Design(prob, 3, 0.2, 3, 0.3, ())
    assert d.thresholds(3) == (200, 300)
    assert decide(d, 3, digits_read="499").reject and not decide(d, 3, digits_read="500").reject
    assert "c1 = c2 = 3" in decide(d, 3, digits_read="500").region
    assert decide(d, 2).reject and decide(d, 4).reject
