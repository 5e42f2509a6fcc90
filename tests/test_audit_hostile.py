"""Hostile and broken inputs: each gives one clear line, exit 2, and writes nothing."""

from __future__ import annotations

import os
import tracemalloc
import zipfile

import pytest

import exactband
from exactband.audit import AuditInputError, Options
from exactband.audit.table import load

from .conftest import STD, design_row, write_csv

GOOD = dict(family="poisson", kind="band", n=25, alpha=0.05, low=2, high=2.5)


def good_row():
    return design_row(exactband.design(**GOOD), **GOOD)


def refused(cli, path, tmp_path, *extra):
    """Run the audit; it must exit 2 with one line on stderr and write no report."""
    report = tmp_path / "report"
    code, out, err = cli("audit", path, "--report", report, *extra)
    assert code == 2, (out, err)
    assert err.count("\n") == 1 and "Traceback" not in err
    assert not report.exists()
    return err


# -- XLSX -------------------------------------------------------------------------
def _xlsx(path, rows, formula_cell=None):
    from openpyxl import Workbook

    wb = Workbook()
    ws = wb.active
    ws.append(list(STD))
    for r in rows:
        ws.append([r.get(h, "") for h in STD])
    if formula_cell:
        ws[formula_cell] = "=0.1+0.2"
    wb.save(path)
    return path


LAUGHS = (b'<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">'
          + b"".join(b'<!ENTITY lol%d "%s">' % (i, (b"&lol%d;" % (i - 1) if i > 1 else b"&lol;") * 10)
                     for i in range(1, 10))
          + b"]>\n")


def _bomb(src, dst, member):
    """Copy an xlsx, prefixing one XML member with a billion-laughs DTD and using it."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            body = zin.read(info.filename)
            if info.filename == member:
                body = body.split(b"?>", 1)[1] if body.startswith(b"<?xml") else body
                body = LAUGHS + body.replace(b"poisson", b"&lol9;", 1)
            zout.writestr(info, body)
    return dst


@pytest.mark.parametrize("member", ["xl/worksheets/sheet1.xml", "xl/workbook.xml"])
def test_xml_bomb_in_xlsx(cli, tmp_path, member):
    """Billion laughs in the sheet (parsed while streaming) or the workbook (parsed at open)."""
    src = _xlsx(tmp_path / "ok.xlsx", [good_row()])
    bomb = _bomb(src, tmp_path / "bomb.xlsx", member)
    err = refused(cli, bomb, tmp_path)
    assert "XML bomb" in err


def test_zip_that_unpacks_too_far(cli, tmp_path, monkeypatch):
    from exactband.audit import xlsx_reader

    src = _xlsx(tmp_path / "ok.xlsx", [good_row()])
    monkeypatch.setattr(xlsx_reader, "MAX_UNZIPPED", 1000)  # the real limit is 256 MiB
    err = refused(cli, src, tmp_path)
    assert "would unpack to" in err


def test_xlsx_reads_values_and_refuses_formulas(cli, tmp_path):
    rows = [good_row(), good_row()]
    path = _xlsx(tmp_path / "f.xlsx", rows, formula_cell="J3")  # gamma1 of the second row
    code, out, err = cli("audit", path)
    assert code == 1, err
    assert "ok        1" in out and "invalid   1" in out
    assert "formula" in out and "never evaluated" in out


def test_formula_in_csv_cells(cli, tmp_path):
    r1, r2 = good_row(), good_row()
    r2["gamma2"] = "=0.65+0.0005"
    r3 = good_row()
    r3["family"] = '=HYPERLINK("http://example.invalid","poisson")'
    path = write_csv(tmp_path / "f.csv", [r1, r2, r3])
    report = tmp_path / "rep"
    code, out, err = cli("audit", path, "--report", report)
    assert code == 1
    bad = [line for line in out.splitlines() if line.startswith("  row ")]
    assert len(bad) == 2 and all("formula" in line for line in bad)
    text = (report / "audit-report.csv").read_text(encoding="utf-8")
    assert "'=HYPERLINK" in text  # echoed, but never as a live formula


def test_not_an_xlsx(cli, tmp_path):
    p = tmp_path / "fake.xlsx"
    p.write_bytes(b"PK\x03\x04 this is not a zip archive at all")
    assert "not a readable XLSX" in refused(cli, p, tmp_path)


# -- CSV ---------------------------------------------------------------------------
def test_big_csv_memory_bounded(tmp_path):
    """An 8 MB CSV of ~160,000 rows: the reader streams and stops at the row cap with a clear
    message, its memory bounded well below the file's size and below one int per row.

    The counting pass holds one line at a time (about 50 KB traced) plus the 1 MB block
    that hashes the unread rest; a reader holding the file's text (>= 8 MB) or keeping one
    Python int per row (~160,000 x 36 bytes = 5.7 MB) exceeds the 3 MB bound.  (8 MB, not
    more: tracemalloc traces every allocation, ~15x slower than the plain read.)
    """
    row = ",".join(good_row()[h] for h in STD) + "\n"
    path = tmp_path / "big.csv"
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(",".join(STD) + "\n")
        block = row * 10_000
        while fh.tell() < 8 * 2**20:
            fh.write(block)
    assert os.path.getsize(path) >= 8 * 2**20 and os.path.getsize(path) // len(row) > 150_000
    tracemalloc.start()
    try:
        with pytest.raises(AuditInputError, match="more than 20000 data rows"):
            load(path, Options())
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 3 * 2**20, peak  # bounded: well below the file's 8 MB


def test_big_csv_cli(cli, tmp_path):
    row = ",".join(good_row()[h] for h in STD) + "\n"
    path = tmp_path / "big.csv"
    path.write_text(",".join(STD) + "\n" + row * 60, encoding="utf-8")
    err = refused(cli, path, tmp_path, "--max-rows", "50")
    assert "more than 50 data rows" in err and "--max-rows" in err


def test_overlong_line(cli, tmp_path):
    path = tmp_path / "long.csv"
    path.write_text(",".join(STD) + "\n" + "x" * 1_500_000 + "\n", encoding="utf-8")
    assert "longer than" in refused(cli, path, tmp_path)


def test_not_utf8(cli, tmp_path):
    path = tmp_path / "latin.csv"
    body = ",".join(STD) + "\n" + ",".join(good_row()[h] for h in STD) + "\n"
    path.write_bytes(body.encode() + "poisson,band,25,0.05,2,2.5,,,39,0.1,76,0.6 caf\xe9\n"
                     .encode("latin-1"))
    err = refused(cli, path, tmp_path)
    assert "line 3 is not utf-8 text" in err and "0xe9" in err


def test_empty_file(cli, tmp_path):
    p = tmp_path / "empty.csv"
    p.write_bytes(b"")
    assert "empty" in refused(cli, p, tmp_path)
    p.write_bytes(b"\n  \n\n")
    assert "empty" in refused(cli, p, tmp_path)


def test_header_without_rows(cli, tmp_path):
    p = write_csv(tmp_path / "h.csv", [])
    assert "no data rows" in refused(cli, p, tmp_path)


def test_duplicated_column(cli, tmp_path):
    p = tmp_path / "dup.csv"
    p.write_text("family,kind,n,alpha,low,high,c1,gamma1,c2,gamma2,C1\n"
                 "poisson,band,25,0.05,2,2.5,39,0.1,76,0.6,39\n", encoding="utf-8")
    err = refused(cli, p, tmp_path)
    assert "'C1' appears twice" in err or "appears twice" in err


def test_missing_columns(cli, tmp_path):
    p = tmp_path / "miss.csv"
    p.write_text("family,kind,n,low,high,c1,gamma1,c2,gamma2\n"
                 "poisson,band,25,2,2.5,39,0.1,76,0.6\n", encoding="utf-8")
    err = refused(cli, p, tmp_path)
    assert "missing column(s) alpha" in err
    p.write_text("family,kind,n,alpha,low,c1,gamma1,c2,gamma2\n"
                 "poisson,band,25,0.05,2,39,0.1,76,0.6\n", encoding="utf-8")
    err = refused(cli, p, tmp_path)
    assert "no high column" in err


def test_mapped_column_not_in_header(cli, tmp_path):
    p = write_csv(tmp_path / "g.csv", [good_row()])
    err = refused(cli, p, tmp_path, "--map", "c1=Lower limit")
    assert "'Lower limit'" in err and "not in the header" in err


def test_family_both_column_and_flag(cli, tmp_path):
    p = write_csv(tmp_path / "g.csv", [good_row()])
    assert "both" in refused(cli, p, tmp_path, "--family", "poisson")


# -- numbers with thousands separators and decimal commas --------------------------
def test_decimal_commas_accepted(cli, tmp_path):
    """A semicolon file with decimal commas reads exactly like the plain file."""
    r = good_row()
    comma = {k: v.replace(".", ",") for k, v in r.items()}
    p = write_csv(tmp_path / "eu.csv", [comma, comma], delimiter=";")
    code, out, err = cli("audit", p)
    assert code == 0, out + err
    assert "ok        2" in out


def test_thousands_separators_accepted(cli, tmp_path):
    kw = dict(family="binomial", kind="upper", n=1500, alpha=0.05, value=0.01)
    r = design_row(exactband.design(**kw), **kw)
    r["n"] = "1,500"  # the file's decimal mark is '.', shown by alpha = 0.05
    r2 = dict(r, n="1 500")
    p = write_csv(tmp_path / "k.csv", [r, r2])
    code, out, err = cli("audit", p)
    assert code == 0, out + err


def test_ambiguous_number_refused(cli, tmp_path):
    kw = dict(family="poisson", kind="upper", n=1.5, alpha=0.05, value=2)
    r = design_row(exactband.design(**kw), **kw)
    r["n"] = "1,500"
    r2 = dict(design_row(exactband.design(**kw), **kw))
    r2["alpha"] = "0,05"  # this file shows both marks: '1,500' cannot be settled
    p = write_csv(tmp_path / "amb.csv", [r, r2])
    code, out, err = cli("audit", p)
    assert code == 1
    assert "ambiguous" in out and "--decimal-mark" in out
    code, out, err = cli("audit", p, "--decimal-mark", ",")  # the user settles it
    assert "ambiguous" not in out


def test_bad_grouping_refused(cli, tmp_path):
    r = good_row()
    r["n"] = "2,5.0"
    p = write_csv(tmp_path / "bad.csv", [r])
    code, out, err = cli("audit", p)
    assert code == 1 and "invalid n" in out and "not a number" in out
