"""Words and pictures a field inspector and a committee act on (issue 11).

Sides of a rejection, gammas printed so the threshold follows, one meaning of
"row N", the note on an unusual number of random digits, the README example,
legend and caption apart (as geometry), shared x-ranges of the OC pages, the
printed sheets' shading by band and digits grouped as read.
"""

from __future__ import annotations

import json
import re
from decimal import ROUND_FLOOR, Decimal, localcontext
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import exactband
from exactband.cli import main
from exactband.decide import decide
from exactband.kinds import KINDS
from exactband.words import gamma_text

from .tables_support import OC, built, write_spec

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def ocset(tmp_path_factory):
    """The small OC table set of the table tests, generated once for this module."""
    return built(str(tmp_path_factory.mktemp("words")), "oc", OC)


@pytest.fixture(scope="module")
def band():
    return exactband.design("binomial", "band", n=500, low=0.01, high=0.03, alpha=0.05)


# -- sides ------------------------------------------------------------------------------
def test_kind_sides_and_words():
    assert {k: v.sides for k, v in KINDS.items()} == {
        "upper": ("above",), "lower": ("below",), "point": ("below", "above"),
        "band": ("below", "above"), "equivalence": ("inside",)}
    b, p, e = KINDS["band"], KINDS["point"], KINDS["equivalence"]
    assert b.side_text("below", "p", "0.01", "0.03") == "below the band (p < 0.01)"
    assert b.side_text("above", "p", "0.01", "0.03") == "above the band (p > 0.03)"
    assert p.side_text("below", "p", value="0.02") == "below the value (p < 0.02)"
    assert e.side_text("inside", "p", "0.01", "0.03") == "inside the band (0.01 < p < 0.03)"
    # which side a count points to (cutoffs c1 = 5, c2 = 12)
    assert [b.rejection_side(y, 5, 12) for y in (0, 5, 8, 12, 20)] == [
        "below", "below", None, "above", "above"]
    assert b.rejection_side(7, 7, 7) == "outside"  # tails meet: no side
    assert [e.rejection_side(y, 5, 12) for y in (4, 5, 8, 12, 13)] == [
        None, "inside", "inside", "inside", None]
    assert KINDS["upper"].rejection_side(30, None, 12) == "above"
    assert KINDS["lower"].rejection_side(0, 5, None) == "below"


def test_decide_names_the_side(band):
    lo, hi = decide(band, 0), decide(band, band.c2 + 1)
    assert lo.reject and lo.side == "below" and lo.side_words == "below the band (p < 0.01)"
    assert "p lies below the band (p < 0.01)" in lo.describe()
    assert hi.reject and hi.side == "above" and "above the band (p > 0.03)" in hi.conclusion
    kept = decide(band, (band.c1 + band.c2) // 2)
    assert not kept.reject and kept.side is None and kept.side_words is None
    assert json.loads(json.dumps(hi.to_dict()))["side_words"] == "above the band (p > 0.03)"
    point = exactband.design("poisson", "point", n=10, value=2, alpha=0.05)
    assert "below the value (rate per unit < 2)" in decide(point, 0).conclusion
    assert "above the value (rate per unit > 2)" in decide(point, point.c2 + 1).conclusion
    eq = exactband.design("binomial", "equivalence", n=2000, low=0.01, high=0.03, alpha=0.05)
    inside = decide(eq, (eq.c1 + eq.c2) // 2)
    assert inside.side == "inside" and "inside the band (0.01 < p < 0.03)" in inside.conclusion


def test_describe_names_sides_for_every_rule(band):
    for rule in ("randomised", "randomized", "conservative", "digits"):
        text = band.describe(rule=rule, random_digits=3)
        assert f"Reject H0 if Y >= {band.c2 + 1}: the data indicate p lies above the band " \
               f"(p > 0.03)." in text
        assert f"If Y = {band.c2}:" in text and "above the band" in text.split(
            f"If Y = {band.c2}:")[1].split("\n")[0]
    t1, t2 = band.thresholds(3)
    assert f"below t2 = {t2} " in band.describe(rule="digits", random_digits=3)
    # the sizes printed are those of the rule described
    cons = band.nonrandomized().sizes
    assert f"{cons[0]:.6g}" in band.describe(rule="conservative")


def test_printed_rule_text_names_sides():
    from exactband.tables.texts import rule_text

    assert "Y < c1 (below the band (p < low)) or Y > c2 (above the band (p > high))" in \
        rule_text("band", 3, "binomial")
    assert "Y > c2 (above the value (rate > value))" in rule_text("upper", 3, "poisson")
    assert "Y < c1 (below the value (mean < value))" in rule_text("lower", 3, "negative-binomial")
    assert "inside the band (low < p < high)" in rule_text("equivalence", 2, "binomial")


# -- gammas as text ---------------------------------------------------------------------
def test_gamma_text_shows_the_threshold():
    exact = "0.49999999999999999837"  # the case of the issue: floats round it to 0.5
    assert gamma_text(0.5, exact, 1) == "0.499999..."
    assert gamma_text(0.5) == "0.5" and gamma_text(0.0) == "0"
    assert gamma_text(0.25, "0.25", 9) == "0.25"
    assert gamma_text(0.5, exact, 9) == "0.499999999..."


@settings(max_examples=60, deadline=None)
@given(st.decimals(min_value=0, max_value=Decimal("0.999999999999999999999999999999"),
                   places=30, allow_nan=False), st.integers(1, 9))
def test_gamma_text_first_d_decimals_are_the_threshold(g, d):
    text = gamma_text(float(g), str(g), d)
    shown = Decimal(text.rstrip("."))
    assert shown <= g  # truncated, never rounded up
    with localcontext(prec=80):  # exact products (the default 28 digits would round)
        floor = (g * 10 ** d).to_integral_value(rounding=ROUND_FLOOR)
        assert (shown * 10 ** d).to_integral_value(rounding=ROUND_FLOOR) == floor


def test_describe_digit_rule_with_a_gamma_just_below_one_half():
    # a hand-made design with the gamma: the digit rule prints t = 4 beside 0.4999..
    from exactband.design import Design
    from exactband.params import make_problem

    prob = make_problem("poisson", "upper", n=10, value=2, alpha=0.05)
    d = Design(prob, None, None, 25, 0.5, (), gamma2_decimal="0.49999999999999999837")
    text = d.describe(rule="digits", random_digits=1)
    assert "below t2 = 4 (= floor(gamma2 x 10^1), gamma2 = 0.499999...)" in text
    assert "0.500000" not in text and "0.5 " not in text


# -- random digits: one default and a note ------------------------------------------------
def test_digit_count_note(band):
    assert decide(band, band.c1, digits_read="123").notes == ()
    one = decide(band, band.c1, digits_read="1")
    assert one.random_digits == 1 and "reads 1 random digit" in one.notes[0]
    assert "Note: the rule reads 1 random digit" in one.describe()
    assert decide(band, band.c1, digits_read="1", random_digits=1).notes == ()  # asked for


def test_table_digit_count_other_than_the_tables(ocset, capsys):
    folder = ocset
    csv = str(folder / "oc.csv")
    from exactband.tablerow import table_rule

    tr = table_rule(csv, 1)
    assert tr.random_digits == 3 and tr.note is None
    y = str(tr.design.c1)  # at the lower cutoff: the digits decide
    assert main(["decide", "--table", csv, "--row", "1", "--y", y, "--random-digits", "4",
                 "--digits-read", "0000", "--json"]) == 0
    js = json.loads(capsys.readouterr().out)
    assert js["random_digits"] == 4 and "the table's rule reads 3 random digits" in js["notes"][0]
    assert js["threshold"] == tr.design.thresholds(4)[0]  # floor(gamma1 x 10^4), not printed


# -- row numbers and the README example ---------------------------------------------------
def test_row_means_data_row_in_helps(capsys):
    with pytest.raises(SystemExit):
        main(["decide", "--help"])
    out = " ".join(capsys.readouterr().out.split())
    assert "N-th data row" in out and "header line is not counted" in out
    readme = " ".join((ROOT / "README.md").read_text(encoding="utf-8").split())
    assert '"Row N" means the N-th data row, the header line not counted' in readme


def test_readme_decide_example_is_at_a_cutoff(tmp_path, capsys):
    """The README's decide --table example: its Y is a cutoff of that row and its digits
    decide; the numbers the README states are recomputed here from the demo spec."""
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    m = re.search(r"exactband decide --table output/demo/demo\.csv --row (\d+) --y (\d+) "
                  r"--digits-read (\d+)", readme)
    assert m, "the README shows a decide --table example"
    row, y, digits = m.groups()
    spec = (ROOT / "tables" / "demo.toml").read_text(encoding="utf-8")
    spec = spec.split("[oc]")[0]  # the rows do not depend on the OC pages
    folder = built(str(tmp_path), "demo", spec)
    csv = str(folder / "demo.csv")
    assert main(["decide", "--table", csv, "--row", row, "--y", y, "--digits-read", digits,
                 "--json"]) == 0
    js = json.loads(capsys.readouterr().out)
    assert int(y) in (js["c1"], js["c2"]) and js["randomization_point"]
    assert js["digits_read"] == digits and js["threshold"] is not None
    claim = re.search(r"digits (\d+) \((\d+) < (\d+)\) reject H0, (below|above) the band; "
                      r"(\d+) would not", " ".join(readme.split()))
    assert claim, "the README states what the digits decide"
    d1, n1, t, side, d2 = claim.groups()
    assert (d1, int(n1), int(t)) == (digits, int(digits), js["threshold"])
    assert js["reject"] and js["side"] == side
    assert re.search(rf"t1 = {js['threshold']}\b", " ".join(readme.split()))
    assert main(["decide", "--table", csv, "--row", row, "--y", y, "--digits-read", d2,
                 "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["reject"] is False


# -- figures ----------------------------------------------------------------------------
def _apart(fig):
    from exactband.figfooter import footer_boxes

    leg, cap = footer_boxes(fig)
    w, h = fig.bbox.width, fig.bbox.height
    assert not leg.overlaps(cap), (leg, cap)
    for box in (leg, cap):  # and both on the figure
        assert box.x0 >= -1 and box.y0 >= -1 and box.x1 <= w + 1 and box.y1 <= h + 1


@pytest.mark.parametrize("curve", ["power", "oc"])
def test_legend_never_over_the_caption(curve):
    from exactband.oc import operating_characteristics
    from exactband.plots import oc_figure

    for d in (exactband.design("binomial", "band", n=200, low=0.01, high=0.03, alpha=0.05,
                               verify=False),
              exactband.design("negative-binomial", "equivalence", n=40, low=1.5, high=2.5,
                               alpha=0.05, dispersion=2.5, verify=False)):
        frame = operating_characteristics(d, points=41)
        _apart(oc_figure(d, frame, curve=curve))
    # a narrow figure: a two-column legend does not fit, caption lines wrap into more lines
    _apart(oc_figure(d, frame, curve=curve, size=(6.0, 6.0)))


def test_plan_figure_legend_apart():
    from exactband.planning import plan, power_against_n
    from exactband.plots import plan_figure

    r = plan("poisson", "band", low=2, high=2.5, alpha=0.05, alternatives=[1.6, 3.0],
             target=0.9, rule="conservative", verify=False)
    _apart(plan_figure(r, power_against_n(r)))


def test_oc_lower_panel_has_the_sign_of_the_top_panel(band):
    from exactband.plots import oc_figure

    fig = oc_figure(band, curve="oc")
    lower = fig.axes[1]
    assert "OC minus" in lower.get_ylabel()
    cons = [ln for ln in lower.get_lines() if ln.get_marker() == "o"][0]
    # the conservative rule rejects less: its OC is never below the randomised OC
    assert np.min(cons.get_ydata()) >= -1e-12 and np.max(cons.get_ydata()) > 1e-3


# -- OC x-ranges --------------------------------------------------------------------------
def test_shared_thetas_cover_null_region_and_climb():
    from exactband.oc import EDGE_TOL, shared_thetas

    ds = [exactband.design("binomial", "band", n=n, low=0.01, high=0.03, alpha=a,
                           verify=False) for n in (20, 80, 400) for a in (0.05, 0.01)]
    th = shared_thetas(ds, 161)
    assert th[0] < 0.01 and th[-1] > 0.03 and {0.01, 0.03} <= set(th.tolist())
    for d in ds:  # every curve has climbed (to within EDGE_TOL of 1) at both ends, or the
        # range reaches the bottom of the space (c1 = 0: the power at p -> 0 is gamma1 < 1)
        assert d.power(th[0]) >= 1 - EDGE_TOL - 1e-9 or th[0] < 1e-100
        assert d.power(th[-1]) >= 1 - EDGE_TOL - 1e-9
    assert any(d.c1 == 0 for d in ds) and any(d.power(th[0]) >= 1 - EDGE_TOL for d in ds)
    up = [exactband.design("poisson", "upper", n=n, value=2.5, alpha=0.05, verify=False)
          for n in (10, 50)]
    th = shared_thetas(up, 101)
    assert th[0] == 0.0 or th[0] <= th[1] - th[0]  # all of H0: rate from 0 up to 2.5
    assert all(d.power(th[-1]) >= 1 - EDGE_TOL - 1e-9 for d in up)


def test_oc_pages_share_one_x_range_per_band(tmp_path):
    from exactband.tables.build import build
    from exactband.tables.spec import load_spec



    spec = load_spec(write_spec(tmp_path, "oc", OC))
    tset = build(spec, tmp_path / "out", workers=1)
    assert tset.oc.groups
    for group in tset.oc.groups:
        grids = [f["theta"].to_numpy() for c in group.charts for f in c.frames]
        assert len(grids) > 1 and all(np.array_equal(grids[0], g) for g in grids)
        if group.kind == "upper":
            assert grids[0][0] <= grids[0][1] - grids[0][0] + 1e-12  # starts at the bottom


# -- printed sheets -------------------------------------------------------------------------
def test_sheets_shade_by_band_and_group_digits(ocset):
    import openpyxl

    from exactband.tables.layout import digit_pages

    folder = ocset
    wb = openpyxl.load_workbook(folder / "oc.xlsx")
    ws = wb[wb.sheetnames[1]]  # Table 1: band test, one band of three n
    fills = [ws.cell(row=r, column=1).fill.fgColor.rgb for r in range(6, 6 + 3)]
    assert len(set(fills)) == 1  # one band: one shade
    data = wb["Data"]
    widths = {data.cell(row=1, column=j).value: data.column_dimensions[
        openpyxl.utils.get_column_letter(j)].width for j in range(1, data.max_column + 1)}
    assert widths["gamma1_decimal"] >= 32 and widths["kind"] >= 6
    assert len(data.row_breaks.brk) == 3  # four printed tables, each from a new page
    digits = wb["Random digits"]
    assert digits.cell(row=4, column=2).value and len(digits.cell(row=4, column=2).value) == 3
    # layout: groups of d, a line never splits a group, all digits kept in order
    text = "".join(str(i % 10) for i in range(2500))
    pages = digit_pages(text, 3, 2500)
    assert "".join("".join(g) for p in pages for _, g in p) == text
    assert all(len(g) == 3 for p in pages for _, gs in p for g in gs[:-1])
    assert max(sum(map(len, gs)) for p in pages for _, gs in p) == 48


def test_pdf_zebra_by_band_and_cover_sides(ocset):
    from pypdf import PdfReader

    from exactband.tables.layout import Section
    from exactband.tables.pdf_sections import band_index, shaded_runs

    sec = Section(1, "band", 0.05, "s", "h", "H0", "r", (), tuple(range(12)), (0, 5, 9))
    assert band_index(sec) == [0] * 5 + [1] * 4 + [2] * 3
    assert shaded_runs(sec, 0, 12) == [(5, 9)]  # the second band only, never across a line
    assert shaded_runs(sec, 6, 6) == [(0, 3)]  # a page starting inside it
    folder = ocset
    cover = " ".join(PdfReader(folder / "oc.pdf").pages[0].extract_text().split())
    assert "below the band (rate < low)" in cover and "above the value (rate > value)" in cover


# -- the power CSV: thetas as meant, powers to their accuracy ---------------------------------
def test_power_csv_thetas_and_accuracy(capsys):
    import io

    import mpmath as mp
    import pandas as pd

    from exactband import kinds as K
    from exactband.cli.power import POWER_DECIMALS

    from .conftest import table

    assert main(["power", "--family", "binomial", "--kind", "upper", "--n", "20", "--value",
                 "0.05", "--alpha", "0.05", "--theta-range", "0.01:0.2", "--points", "20"]) == 0
    text = capsys.readouterr().out
    assert "0.04999999" not in text and "\r\n0.05,true,0.05000000000000," in text
    f = pd.read_csv(io.StringIO(text), dtype=str)
    assert all(len(x.split(".")[1]) == POWER_DECIMALS for x in f.power_randomised)
    # the accuracy the CSV claims: Design.power against a 50-digit mpmath sum of the same
    # test function (conftest.table: masses by recurrence from mpmath loggamma/exp);
    # measured worst over 900 random (design, theta) pairs: 1.9e-15 (5x margin)
    for fam, kind, kw, thetas in (
            ("poisson", "band", dict(low=2, high=2.5), (1.0, 2.0, 2.6, 4.0)),
            ("binomial", "point", dict(value=0.1), (0.02, 0.1, 0.2)),
            ("negative-binomial", "equivalence", dict(low=1, high=2, dispersion=2), (0.9, 1.5))):
        d = exactband.design(fam, kind, n=60, alpha=0.05, verify=False, **kw)
        for t in thetas:
            T = table(d.problem.family, t, d.n, d.dispersion, 50)
            with mp.workdps(50):
                e = K.expectation(kind, d.c1, mp.mpf(d.gamma1), d.c2, mp.mpf(d.gamma2),
                                  T.cdf, T.sf, T.pmf)
            assert abs(d.power(t) - float(e)) < 10.0 ** -POWER_DECIMALS
