"""Table sets with the [oc] spec table: its checks, the Power sheet, the pages of OC curves.

Independent checks and their sources:
* every power value of the Power sheet recomputed from NAME.csv's cutoffs, gammas
  and digit thresholds as a direct sum of phi(y) * P(Y = y) over the support,
  the masses from scipy.stats (poisson.pmf, binom.pmf; general-purpose library),
  summed over the whole support (binomial) or up to mu + 20 sqrt(mu) + 40,
  beyond which the Poisson mass is below 1e-40 (Chernoff bound).  Tolerance 1e-12: each mass
  carries a relative error of a few 1e-16 and the sums have at most a few hundred
  terms, so the sum is good to ~1e-14; a wrong cutoff or gamma moves the power
  by pmf * gamma, many orders above it in these small designs;
* whether theta lies in H0: the null regions of the five kinds (DESIGN.md table;
  common practice);
* the bound on the field rule: a gamma floored to d digits moves the rejection
  probability at a cutoff by less than 10^-d, at most two cutoffs (from memory,
  elementary).
"""

from __future__ import annotations

import math

import numpy as np
import openpyxl
import pandas as pd
import pytest
from pypdf import PdfReader
from scipy import stats

import exactband
from exactband.cli import main
from exactband.oc import rule_designs
from exactband.tables.build import build
from exactband.tables.spec import load_spec
from exactband.tables.spec_oc import chart_rows, curve_pages

from .tables_support import BINOMIAL_OC, OC, SMALL, built, write_spec

SETS = {"oc": OC, "binoc": BINOMIAL_OC}

BASE = ('title = "T"\nfamily = "poisson"\nkinds = ["band"]\nalpha = [0.05]\nn = [10, 20]\n'
        'bands = [[2.0, 2.5]]\n')


def spec_text(oc_lines: str, base: str = BASE) -> str:
    return base + "\n[oc]\n" + oc_lines + "\n"


MANY_N = BASE.replace("n = [10, 20]", "n = {from = 1, to = 500, step = 1}")

# (case id, spec text, substrings the one-line message must contain besides the file name)
BAD = [
    ("oc-not-table", BASE + "oc = 5\n", ["invalid oc = 5", "a table"]),
    ("oc-unknown-key", spec_text('colour = "red"'), ["invalid oc.colour = red", "unknown key",
                                                     "thetas"]),
    ("thetas-scalar", spec_text("thetas = 1.5"), ["invalid oc.thetas = 1.5",
                                                  "oc.thetas = [1.5]"]),
    ("thetas-empty", spec_text("thetas = []"), ["invalid oc.thetas = []", "at least one"]),
    ("thetas-space", spec_text("thetas = [1.0, -1]"), ["invalid oc.thetas[1] = -1", "> 0"]),
    ("thetas-binomial", spec_text("thetas = [0.5, 1.0]", BASE.replace(
        '"poisson"', '"binomial"').replace("[[2.0, 2.5]]", "[[0.1, 0.2]]")),
     ["invalid oc.thetas[1] = 1.0", "between 0 and 1"]),
    ("thetas-quoted", spec_text('thetas = ["2"]'), ["invalid oc.thetas[0] = 2",
                                                    "without quotes"]),
    ("thetas-repeat", spec_text("thetas = [1.0, 3.0, 1.0]"), ["invalid oc.thetas[2] = 1.0",
                                                              "repeats oc.thetas[0]"]),
    ("thetas-many", spec_text("thetas = [" + ", ".join(str(x) for x in range(1, 14)) + "]"),
     ["invalid oc.thetas = [1, 2, 3", "at most 12"]),
    ("curves-type", spec_text('curves = "yes"'), ["invalid oc.curves = yes", "true or false"]),
    ("curves-nothing", spec_text("curves = false"), ["invalid oc.curves = false",
                                                     "asks for nothing"]),
    ("n-not-in-spec", spec_text("n = [10, 15]"), ["invalid oc.n[1] = 15", "one of the spec's n"]),
    ("n-not-list", spec_text("n = 10"), ["invalid oc.n = 10", "list"]),
    ("n-per-chart", spec_text("n_per_chart = 7"), ["invalid oc.n_per_chart = 7", "1 to 6"]),
    ("rules-unknown", spec_text('rules = ["exact"]'), ["invalid oc.rules[0] = exact",
                                                       "randomised, conservative, digits"]),
    ("rules-repeat", spec_text('rules = ["conservative", "Conservative"]'),
     ["invalid oc.rules[1] = Conservative", "repeats oc.rules[0]"]),
    ("rules-empty", spec_text("rules = []"), ["invalid oc.rules = []", "a list of rules"]),
    ("oc-not-last", BASE.replace('title = "T"\n', "") + '[oc]\nthetas = [1.0]\ntitle = "T"\n',
     ["the key 'title' is inside the [oc] table", "put [oc] at the end"]),
    ("oc-not-last-n", BASE.replace("n = [10, 20]\n", "") + "[oc]\nn = [10, 20]\n",
     ["the key 'n' is inside the [oc] table"]),
    ("too-many-pages", spec_text("n_per_chart = 1", MANY_N),
     ["invalid oc.n = [1, 2, 3", "125 pages; at most 120", "oc.n_per_chart"]),
]


@pytest.mark.parametrize("case, text, parts", BAD, ids=[b[0] for b in BAD])
def test_bad_oc_one_line_exit_2_nothing_written(tmp_path, capsys, case, text, parts):
    spec = write_spec(tmp_path, "bad", text)
    out = tmp_path / "out"
    rc = main(["table", str(spec), "--out", str(out)])
    captured = capsys.readouterr()
    assert rc == 2 and captured.out == ""
    lines = captured.err.splitlines()
    assert len(lines) == 1, captured.err
    assert lines[0].startswith(f"exactband: error: {spec}: ")
    for part in parts:
        assert part in lines[0]
    assert not out.exists()


def test_oc_defaults_and_normal_form(tmp_path):
    spec = load_spec(write_spec(tmp_path, "ok", spec_text("thetas = [3.0, 1.0]")))
    oc = spec.oc
    assert oc.thetas == (1.0, 3.0) and oc.curves and oc.n == spec.n and oc.n_per_chart == 4
    assert oc.rules == ("randomised", "conservative")
    assert spec.to_dict()["oc"] == {"thetas": [1.0, 3.0], "curves": True, "n": [10, 20],
                                    "n_per_chart": 4, "rules": ["randomised", "conservative"]}
    # no conservative rule in the spec: only the randomised rule is drawn by default
    text = spec_text("", BASE + "conservative = false\n")
    assert load_spec(write_spec(tmp_path, "nocons", text)).oc.rules == ("randomised",)
    # British spelling accepted, stored in the library's spelling
    text = spec_text('rules = ["Randomised", "digits"]')
    assert load_spec(write_spec(tmp_path, "brit", text)).oc.rules == ("randomised", "digits")
    assert load_spec(write_spec(tmp_path, "none", BASE)).oc is None
    assert "oc" not in load_spec(write_spec(tmp_path, "none", BASE)).to_dict()


def test_chart_sizes_are_balanced():
    assert chart_rows(9, 4) == [3, 3, 3]
    assert chart_rows(5, 4) == [3, 2]
    assert chart_rows(4, 4) == [4]
    assert chart_rows(1, 6) == [1]
    assert chart_rows(13, 6) == [5, 4, 4]


@pytest.fixture(scope="module")
def root(tmp_path_factory):
    return str(tmp_path_factory.mktemp("ocsets"))


@pytest.fixture(scope="module", params=list(SETS))
def tset(request, root):
    name = request.param
    return name, built(root, name, SETS[name])


# -- the Power sheet -------------------------------------------------------------------
def _phi(kind, c1, g1, c2, g2, y):
    """Rejection probability at y (DESIGN.md's test functions), written out again."""
    if kind == "upper":
        return np.where(y > c2, 1.0, np.where(y == c2, g2, 0.0))
    if kind == "lower":
        return np.where(y < c1, 1.0, np.where(y == c1, g1, 0.0))
    if kind in ("band", "point"):
        out = np.where((y < c1) | (y > c2), 1.0, 0.0)
    else:  # equivalence
        out = np.where((y > c1) & (y < c2), 1.0, 0.0)
    return out + np.where(y == c1, g1, 0.0) + np.where(y == c2, g2, 0.0)


def _scipy_power(row, rule, theta):
    """Direct sum of phi(y) * P(Y = y) with scipy.stats masses (see the module docstring)."""
    fam, kind, n = row["family"], row["kind"], row["n"]
    law = stats.poisson(n * theta) if fam == "poisson" else stats.binom(int(n), theta)
    mu = n * theta  # Poisson: the mass beyond mu + 20 sqrt(mu) + 40 is below 1e-40 (Chernoff)
    top = int(mu + 20 * math.sqrt(mu) + 40) if fam == "poisson" else int(n)
    y = np.arange(0, top + 1)

    def num(key):
        return None if pd.isna(row[key]) else row[key]

    c1, c2 = num("c1"), num("c2")
    g1, g2 = num("gamma1"), num("gamma2")
    if rule == "conservative":
        g1, g2 = 0.0, 0.0
    elif rule == "digits":
        scale = 10 ** int(row["random_digits"])
        g1 = None if g1 is None else row["threshold1"] / scale
        g2 = None if g2 is None else row["threshold2"] / scale
    c1 = math.nan if c1 is None else c1
    c2 = math.nan if c2 is None else c2
    ph = _phi(kind, c1, g1 or 0.0, c2, g2 or 0.0, y)
    return float(np.sum(ph * law.pmf(y)))


def _in_null(kind, t, low, high, value):
    if kind == "band":
        return low <= t <= high
    if kind == "equivalence":
        return t <= low or t >= high
    return {"upper": t <= value, "lower": t >= value, "point": t == value}[kind]


def _power_rows(ws):
    """(Table, alpha, H0, n, rule) -> list of cells at the thetas; and the thetas."""
    header = [c.value for c in ws[5]]
    assert header[:5] == ["Table", "alpha", "H0", "n", "Rule"]
    thetas = header[5:]
    out = {}
    for row in ws.iter_rows(min_row=6):
        key = tuple(c.value for c in row[:5])
        out[key] = row[5:]
    return thetas, out


def test_power_sheet_against_design_power_and_scipy(tset):
    name, folder = tset
    spec = load_spec(folder.parent.parent / f"{name}.toml")
    ws = openpyxl.load_workbook(folder / f"{name}.xlsx")["Power"]
    thetas, cells = _power_rows(ws)
    assert tuple(thetas) == spec.oc.thetas and thetas == sorted(thetas)
    data = pd.read_csv(folder / f"{name}.csv")
    d = spec.random_digits
    labels = {"randomised": "randomised", "digits": f"field, {d} digits",
              "conservative": "conservative"}
    assert len(cells) == 3 * len(data)
    worst = 0.0
    sections = [(k, a) for k in spec.kinds for a in spec.alpha]
    for _, row in data.iterrows():
        kind = row["kind"]
        low, high, value = (None if pd.isna(row[k]) else row[k] for k in ("low", "high", "value"))
        pts = dict(low=low, high=high) if kind in ("band", "equivalence") else dict(value=value)
        des = exactband.design(row["family"], kind, n=int(row["n"]), alpha=row["alpha"], **pts)
        rules = rule_designs(des, d)
        table = sections.index((kind, row["alpha"])) + 1
        for rule, label in labels.items():
            key = next(k for k in cells if k[0] == table and k[3] == row["n"] and k[4] == label
                       and k[1] == row["alpha"])
            got = [c.value for c in cells[key]]
            # Design.power; openpyxl writes numbers with 16 significant digits ('%.16g'),
            # so a value comes back within a relative 5e-16 of the double written
            want = rules[rule].power(np.array(thetas, float))
            assert got == pytest.approx(list(want), rel=1e-15, abs=1e-300)
            for t, x, c in zip(thetas, got, cells[key]):
                ref = _scipy_power(row, rule, t)
                worst = max(worst, abs(x - ref))
                assert x == pytest.approx(ref, abs=1e-12), (key, t)
                assert c.number_format == "0.0000"
                inside = _in_null(kind, t, low, high, value)
                assert (c.fill.fgColor.rgb == "00D9D9D9") == inside, (key, t)
                assert bool(c.font.i) == inside
                if inside and rule != "conservative":  # the size, at most alpha
                    assert x <= row["alpha"] * (1 + 1e-12)
    assert worst < 1e-12


def test_power_sheet_prints_like_the_tables(tset):
    name, folder = tset
    wb = openpyxl.load_workbook(folder / f"{name}.xlsx")
    ws = wb["Power"]
    spec = load_spec(folder.parent.parent / f"{name}.toml")
    assert wb.sheetnames.index("Power") == wb.sheetnames.index("Data") - 1
    assert ws.print_title_rows == "$1:$5" and ws.freeze_panes == "A6"
    assert ws.page_setup.fitToWidth == 1 and ws.sheet_properties.pageSetUpPr.fitToPage
    assert ws.oddHeader.left.text == spec.title
    assert ws.oddFooter.center.text == "Page &P of &N"
    assert spec.sha256[:16] in ws.oddFooter.left.text
    assert ws["A1"].value == spec.title and "probability of rejecting H0" in ws["A2"].value
    assert ws["F4"].value.startswith("Power at ")
    cover = [c.value for c in wb["Cover"]["A"] if c.value]
    assert any(str(v).startswith("Sheet 'Power'") for v in cover)
    assert any("sheet 'Power'" in str(v) for v in cover)  # the cover explains it


def test_no_oc_key_no_power_sheet_no_curves(root):
    folder = built(root, "plain", SMALL)
    assert "Power" not in openpyxl.load_workbook(folder / "plain.xlsx").sheetnames
    text = "".join(p.extract_text() for p in PdfReader(folder / "plain.pdf").pages)
    assert "OC curves" not in text and "Operating characteristics" not in text


# -- the PDF -------------------------------------------------------------------------
def _page_texts(path):
    return [p.extract_text() for p in PdfReader(path).pages]


def test_pdf_has_oc_pages_listed_in_contents(root):
    folder = built(root, "oc", OC)
    pages = _page_texts(folder / "oc.pdf")
    contents = next(t for t in pages if "Contents" in t)
    want = ("OC curves, Tables 1 and 2: Band test, H0: 2 <= rate <= 2.5",
            "OC curves, Tables 3 and 4: Upper test, H0: rate <= 2.5")
    last_table = max(i for i, t in enumerate(pages) if "Table 4. Upper test" in t)
    digits = next(i for i, t in enumerate(pages) if "Random digits, page 1" in t)
    lines = [x.strip() for x in contents.splitlines()]
    for heading in want:
        at = lines.index(heading)  # contents: heading, page count, page number (one cell each)
        assert lines[at + 1] == "1 page"
        number = int(lines[at + 2])
        text = pages[number - 1]
        assert text.count(heading) == 1
        assert last_table < number - 1 < digits  # after the tables, before the digits
        # the charts' own words are in the page (vector charts): both rules, both alphas,
        # the n drawn (oc.n = [40, 10]) and not the n left out
        for words in ("randomised rule, alpha = 0.05", "conservative rule, alpha = 0.01",
                      "n = 10", "n = 40", "null region (H0)", "1 - alpha = 0.95"):
            assert words in text, (heading, words)
        assert "n = 25" not in text
        assert "Probability of not rejecting H0 (OC)" in text
    assert sum("OC curves, Tables" in t for t in pages) == 2 + 1  # two pages + contents
    spec = load_spec(folder.parent.parent / "oc.toml")  # the count the spec check uses
    assert curve_pages(spec.kinds, len(spec.alpha), len(spec.bands), len(spec.values),
                       spec.oc) == 2


def test_pdf_without_curves_and_cover_words(root):
    folder = built(root, "binoc", BINOMIAL_OC)
    pages = _page_texts(folder / "binoc.pdf")
    assert not any("OC curves, Table" in t for t in pages)
    cover = pages[0] + pages[1]
    assert "Operating characteristics" in cover and "sheet 'Power'" in cover
    assert "p = 0.05, 0.1, 0.15, 0.3" in cover


def test_field_rule_curve_within_bound(tmp_path):
    """Every drawn curve of the field rule lies within 2 * 10^-d of the randomised rule,
    as the OC pages state."""
    spec = load_spec(write_spec(tmp_path, "oc", OC))
    tset = build(spec, tmp_path / "out", workers=1)
    bound = 2 * 10.0 ** -spec.random_digits
    assert [len(g.charts) for g in tset.oc.groups] == [2, 2]  # one chart per alpha
    for group in tset.oc.groups:
        for chart in group.charts:
            assert [x.n for x in chart.designs] == [10, 40]
            for frame in chart.frames:
                gap = np.abs(frame["power_digits"] - frame["power_randomised"]).max()
                assert gap < bound
                assert np.allclose(frame["oc_randomised"], 1 - frame["power_randomised"])


def test_check_accepts_an_oc_set(root, capsys):
    folder = built(root, "oc", OC)
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 0
    assert "oc: OK" in capsys.readouterr().out


def test_provenance_and_manifest_name_the_oc_libraries(root):
    import json

    folder = built(root, "oc", OC)
    man = json.loads((folder / "oc.manifest.json").read_text("utf-8"))
    assert {"matplotlib", "pypdf"} <= set(man["versions"])
    assert man["spec"]["oc"]["thetas"] == [1.0, 2.0, 2.25, 2.5, 3.0]
    prov = openpyxl.load_workbook(folder / "oc.xlsx")["Provenance"]
    cells = {r[0].value: r[1].value for r in prov.iter_rows(min_row=3) if r[0].value}
    assert cells["Operating characteristics"].startswith("sheet 'Power': 12 designs x 5 values")
    assert "matplotlib" in cells
    plain = built(root, "plain", SMALL)
    man = json.loads((plain / "plain.manifest.json").read_text("utf-8"))
    assert "matplotlib" not in man["versions"] and "oc" not in man["spec"]
