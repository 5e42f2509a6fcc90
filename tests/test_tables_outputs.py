"""A generated table set read back: CSV (pandas), spreadsheet (openpyxl), PDF (pypdf), manifest.

Independent checks and their sources:
* sizes of every row recomputed from the CSV's cutoffs and gammas with scipy.stats
  (poisson, binom, nbinom pmf/cdf/sf), tolerance 1e-9: scipy's tail functions are
  accurate to ~1e-14 relative and a wrong cutoff or gamma moves a size by at
  least pmf * gamma-resolution, far above it in these small designs;
* thresholds from the CSV's 30-digit decimal gammas with Python's decimal module;
* a random sample of rows re-solved with exactband.solvers.precise (50 digits).
"""

from __future__ import annotations

import hashlib
import json
import random
import re
from decimal import ROUND_FLOOR, Decimal

import numpy as np
import openpyxl
import pandas as pd
import pytest
from pypdf import PdfReader
from scipy import stats

from exactband.crosscheck import phi_distance
from exactband.families import get_family
from exactband.solvers import precise
from exactband.tables.write_csv import COLUMNS, CONTRACT

from .tables_support import BINOMIAL, NEGBIN, SMALL, built

SETS = {"small": SMALL, "binom": BINOMIAL, "negbin": NEGBIN}


@pytest.fixture(scope="module")
def root(tmp_path_factory):
    return str(tmp_path_factory.mktemp("sets"))


@pytest.fixture(scope="module", params=list(SETS))
def tset(request, root):
    name = request.param
    return name, built(root, name, SETS[name])


def _csv(folder, name):
    return pd.read_csv(folder / f"{name}.csv", dtype={"gamma1_decimal": str,
                                                       "gamma2_decimal": str})


def _law(row):
    """scipy.stats frozen law of Y at each constraint point of a CSV row."""
    fam, n = row["family"], row["n"]
    pts = [row["low"], row["high"]] if row["kind"] in ("band", "equivalence") else [row["value"]]
    if fam == "poisson":
        return [stats.poisson(n * t) for t in pts]
    if fam == "binomial":
        return [stats.binom(int(n), t) for t in pts]
    k = row["dispersion"]
    return [stats.nbinom(n * k, k / (k + t)) for t in pts]


def _size(kind, law, c1, g1, c2, g2):
    """E phi(Y) by the test-function contract (DESIGN.md), with scipy's law."""
    if kind == "upper":
        return law.sf(c2) + g2 * law.pmf(c2)
    if kind == "lower":
        return law.cdf(c1 - 1) + g1 * law.pmf(c1)
    if kind in ("band", "point"):
        return law.cdf(c1 - 1) + g1 * law.pmf(c1) + g2 * law.pmf(c2) + law.sf(c2)
    return law.cdf(c2 - 1) - law.cdf(c1) + g1 * law.pmf(c1) + g2 * law.pmf(c2)


def _cut(row):
    def v(name, default):
        return default if pd.isna(row[name]) else row[name]
    return (int(v("c1", -1)), float(v("gamma1", 0.0)), int(v("c2", -1)), float(v("gamma2", 0.0)))


def test_csv_columns_and_rows(tset):
    name, folder = tset
    df = _csv(folder, name)
    assert tuple(df.columns) == COLUMNS and tuple(df.columns[:18]) == CONTRACT
    raw = (folder / f"{name}.csv").read_bytes()
    assert raw.count(b"\r\n") == len(df) + 1  # RFC 4180 line ends
    man = json.loads((folder / f"{name}.manifest.json").read_text())
    spec = man["spec"]
    per = sum(len(spec["bands"]) if k in ("band", "equivalence") else len(spec["values"])
              for k in spec["kinds"])
    assert len(df) == man["cross_check"]["rows_verified"] == per * len(spec["alpha"]) * len(
        spec["n"])
    assert set(df["kind"]) == set(man["spec"]["kinds"])
    one = df["kind"].isin(["upper", "lower", "point"])
    assert df.loc[one, "size_high"].isna().all() and df.loc[~one, "size_high"].notna().all()
    assert df.loc[df["kind"] == "upper", "c1"].isna().all()
    assert df.loc[df["kind"] == "lower", "c2"].isna().all()
    if not man["spec"]["conservative"]:
        assert df["conservative_size_low"].isna().all()


def test_gammas_full_precision(tset):
    name, folder = tset
    df = _csv(folder, name)
    for _, row in df.iterrows():
        for g, dec in (("gamma1", "gamma1_decimal"), ("gamma2", "gamma2_decimal")):
            if not pd.isna(row[g]):
                # the double nearest the 30-digit decimal: full precision, not a rounded print
                assert row[g] == float(Decimal(row[dec]))
                assert 0 <= row[g] < 1


def test_sizes_with_scipy(tset):
    name, folder = tset
    df = _csv(folder, name)
    d = int(df["random_digits"][0])
    for _, row in df.iterrows():
        c1, g1, c2, g2 = _cut(row)
        t1 = 0 if pd.isna(row["threshold1"]) else row["threshold1"] / 10 ** d
        t2 = 0 if pd.isna(row["threshold2"]) else row["threshold2"] / 10 ** d
        for j, law in enumerate(_law(row)):
            end = ("size_low", "size_high")[j]
            exact = _size(row["kind"], law, c1, g1, c2, g2)
            assert exact == pytest.approx(row["alpha"], abs=1e-9, rel=1e-7)
            assert row[end] == pytest.approx(exact, abs=1e-9, rel=1e-7)
            digit = _size(row["kind"], law, c1, t1, c2, t2)
            assert row[f"digit_rule_{end}"] == pytest.approx(digit, abs=1e-10, rel=1e-8)
            assert row[f"digit_rule_{end}"] <= row["alpha"] * (1 + 1e-12)
            if not pd.isna(row[f"conservative_{end}"]):
                cons = _size(row["kind"], law, c1, 0.0, c2, 0.0)
                assert row[f"conservative_{end}"] == pytest.approx(cons, abs=1e-10, rel=1e-8)
                assert cons <= row[f"digit_rule_{end}"] * (1 + 1e-12)
        if row["kind"] == "point":  # the unbiasedness condition E[Y phi] = alpha E[Y]
            law = _law(row)[0]
            ys = np.arange(0, int(law.ppf(1 - 1e-16)) + 50)
            phi = np.where((ys < c1) | (ys > c2), 1.0, 0.0) + g1 * (ys == c1) + g2 * (ys == c2)
            assert float(np.sum(ys * phi * law.pmf(ys))) == pytest.approx(
                row["alpha"] * law.mean(), rel=1e-8)


def test_thresholds_from_decimals(tset):
    name, folder = tset
    df = _csv(folder, name)
    d = int(df["random_digits"][0])
    for _, row in df.iterrows():
        for t, dec in (("threshold1", "gamma1_decimal"), ("threshold2", "gamma2_decimal")):
            if pd.isna(row[dec]):
                assert pd.isna(row[t])
            else:
                want = int((Decimal(row[dec]) * 10 ** d).to_integral_value(rounding=ROUND_FLOOR))
                assert int(row[t]) == want


def test_random_sample_reverified_with_precise_solver(tset):
    name, folder = tset
    df = _csv(folder, name)
    rng = random.Random(2026)
    for i in rng.sample(range(len(df)), min(6, len(df))):
        row = df.iloc[i]
        kw = {k: (None if pd.isna(row[k]) else float(row[k]))
              for k in ("low", "high", "value", "dispersion")}
        n = int(row["n"]) if row["family"] != "poisson" else float(row["n"])
        pd_ = precise.solve(get_family(row["family"]), row["kind"], n, float(row["alpha"]),
                            precision=50, **kw)
        theirs = (pd_.c1, None if pd_.gamma1 is None else float(pd_.gamma1), pd_.c2,
                  None if pd_.gamma2 is None else float(pd_.gamma2))
        ours = tuple(None if pd.isna(row[k]) else (int(row[k]) if k[0] == "c" else float(row[k]))
                     for k in ("c1", "gamma1", "c2", "gamma2"))
        assert phi_distance(row["kind"], ours, theirs) <= 1e-12


def test_print_csv_matches_csv(tset):
    name, folder = tset
    df = _csv(folder, name)
    pr = pd.read_csv(folder / f"{name}.print.csv", dtype=str, keep_default_na=False)
    assert len(pr) == len(df)
    man = json.loads((folder / f"{name}.manifest.json").read_text())
    gd = man["spec"]["gamma_decimals"]
    for (_, row), (_, prow) in zip(df.iterrows(), pr.iterrows()):
        assert prow["kind"] == row["kind"]
        for g, dec, c, t in (("gamma1", "gamma1_decimal", "c1", "threshold1"),
                             ("gamma2", "gamma2_decimal", "c2", "threshold2")):
            if pd.isna(row[dec]):
                assert prow[g] == prow[c] == ""
                continue
            assert prow[c] == str(int(row[c])) and prow["t" + g[-1]] == str(int(row[t]))
            assert re.fullmatch(rf"0\.\d{{{gd}}}", prow[g])  # fixed decimals, as printed
            assert Decimal(prow[g]) <= Decimal(row[dec]) < Decimal(prow[g]) + Decimal(10) ** -gd


def test_spreadsheet_read_back(tset):
    name, folder = tset
    man = json.loads((folder / f"{name}.manifest.json").read_text())
    spec = man["spec"]
    wb = openpyxl.load_workbook(folder / f"{name}.xlsx")
    assert wb.sheetnames[0] == "Cover" and wb.sheetnames[-1] == "Provenance"
    assert "Data" in wb.sheetnames
    assert ("Random digits" in wb.sheetnames) == (spec["random_digit_pages"] > 0)
    cover = " ".join(str(c.value) for row in wb["Cover"].iter_rows() for c in row if c.value)
    assert spec["title"] in cover
    assert "these tables compute statistical decision rules" in cover
    assert "the governing standard, local regulation and qualified professionals" in cover
    d = spec["random_digits"]
    assert f"read {d} random digits as a number" in cover and "below t1" in cover
    prov = " ".join(str(c.value) for row in wb["Provenance"].iter_rows() for c in row if c.value)
    assert man["spec_sha256"] in prov
    pr = pd.read_csv(folder / f"{name}.print.csv", dtype=str, keep_default_na=False)
    sections = [s for s in wb.sheetnames if s[0].isdigit()]
    assert len(sections) == len(spec["kinds"]) * len(spec["alpha"])
    for sheet in sections:
        ws = wb[sheet]
        assert ws.print_title_rows == "$1:$5"
        assert ws.freeze_panes == "A6"
        assert int(ws.page_setup.paperSize) == {"A4": 9, "Letter": 1}[spec["paper"]]
        assert ws.page_setup.fitToWidth == 1 and ws.sheet_properties.pageSetUpPr.fitToPage
        assert ws.page_setup.orientation in ("portrait", "landscape")
        assert ws.oddHeader.left.text == spec["title"]
        assert ws.oddFooter.center.text == "Page &P of &N"
        assert man["spec_sha256"][:16] in ws.oddFooter.left.text
        labels = [c.value for c in ws[5]]
        number = sheet.split()[0]
        block = pr[pr["table"] == f"Table {number}"]
        assert ws.max_row == 5 + len(block)
        first = dict(zip(labels, [c for c in ws[6]]))
        want = block.iloc[0]
        for label, cell in first.items():
            key = {"at low": None, "at high": None, "at value": None}.get(label, label)
            if key in ("gamma1", "gamma2"):
                assert cell.number_format == "0." + "0" * spec["gamma_decimals"]
                assert f"{cell.value:.{spec['gamma_decimals']}f}" == want[key]
            elif key in ("c1", "c2", "t1", "t2", "n"):
                assert str(cell.value) == want[key]
    data = wb["Data"]
    assert [c.value for c in data[1]] == list(COLUMNS)
    assert data.max_row == len(pr) + 1
    assert wb.properties.created == wb.properties.modified  # fixed, not the run's time


def _pdf_text(path):
    reader = PdfReader(path)
    return reader, [" ".join(p.extract_text().split()) for p in reader.pages]


def test_pdf_read_back(tset):
    name, folder = tset
    man = json.loads((folder / f"{name}.manifest.json").read_text())
    reader, pages = _pdf_text(folder / f"{name}.pdf")
    assert reader.metadata.title == man["spec"]["title"]
    assert man["spec"]["title"] in pages[0]
    assert "Caution: these tables compute statistical decision rules" in pages[0]
    assert "qualified professionals" in pages[0]
    whole = " ".join(pages)
    assert "read the digits once" in whole or "below t2" in whole
    for i, text in enumerate(pages, start=1):
        assert f"Page {i} of {len(pages)}" in text
    pr = pd.read_csv(folder / f"{name}.print.csv", dtype=str, keep_default_na=False)
    keys = [k for k in pr.columns[3:]]
    for i in (0, len(pr) - 1):  # a known row: the first and the last of the set
        cells = [pr.iloc[i][k] for k in keys if pr.iloc[i][k] != ""]
        assert " ".join(cells) in whole
    assert "Provenance" in pages[-1] and man["spec_sha256"] in " ".join(pages[-2:])
    if man["spec"]["random_digit_pages"]:
        assert f"random.Random({man['spec']['random_seed']})" in whole


def test_wide_section_goes_landscape(root):
    folder = built(root, "negbin", NEGBIN)  # alpha = 1e-10: sizes printed with 13 decimals
    reader = PdfReader(folder / "negbin.pdf")
    boxes = [(float(p.mediabox.width), float(p.mediabox.height)) for p in reader.pages]
    assert any(w > h for w, h in boxes) and any(w < h for w, h in boxes)
    _, pages = _pdf_text(folder / "negbin.pdf")
    assert "0.0000000001" in " ".join(pages)  # the whole alpha and sizes printed


def test_manifest_hashes(tset):
    name, folder = tset
    man = json.loads((folder / f"{name}.manifest.json").read_text())
    assert set(man["files"]) == {f"{name}.csv", f"{name}.print.csv", f"{name}.xlsx",
                                 f"{name}.pdf"}
    for fname, digest in man["files"].items():
        assert hashlib.sha256((folder / fname).read_bytes()).hexdigest() == digest
    assert man["versions"]["exactband"] and man["solver"]["precision"] == man["spec"]["precision"]
    assert man["cross_check"]["max_phi_difference"] <= man["cross_check"]["phi_tolerance"]
    assert not list(folder.glob(".*"))  # no cache or temporary file left behind
