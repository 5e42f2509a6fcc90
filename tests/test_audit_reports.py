"""Reports: contents, safe cells, visible failures, deterministic bytes, exit codes, mapping."""

from __future__ import annotations

import csv
import json

import pytest

import exactband

from .conftest import design_row, write_csv

BAD_START = ("=", "+", "-", "@")
KW = dict(family="poisson", kind="band", n=25, alpha=0.05, low=2, high=2.5)


@pytest.fixture(scope="module")
def vendor(tmp_path_factory):
    d = exactband.design(**KW)
    ok = design_row(d, **KW)
    wrong = dict(ok, c1=str(d.c1 + 1))
    evil = dict(ok, family="@SUM(1+1)")
    p = write_csv(tmp_path_factory.mktemp("rep") / "vendor.csv", [ok, wrong, evil])
    return p


def test_reports_written_and_safe(cli, vendor, tmp_path):
    code, out, err = cli("audit", vendor, "--report", tmp_path / "r")
    assert code == 1 and err == ""
    assert "ok        1" in out and "finding   1" in out and "invalid   1" in out
    rows = list(csv.reader(open(tmp_path / "r" / "audit-report.csv", encoding="utf-8")))
    assert len(rows) == 4
    for r in rows:
        for cell in r:
            assert not cell.startswith(BAD_START), cell
    head = rows[0]
    rec = dict(zip(head, rows[2]))
    assert rec["verdict"] == "finding" and rec["reasons"].startswith("cutoff")
    assert rec["diagnosis"].startswith("cutoff convention shifted by one")
    assert float(rec["size_excess"]) > 0.017  # c1 one too high: about 0.0178 above alpha
    doc = json.loads((tmp_path / "r" / "audit-summary.json").read_text())
    assert doc["summary"]["finding"] == 1 and doc["summary"]["exit_code"] == 1
    assert doc["provenance"]["input"]["sha256"]


def test_xlsx_shows_failures(cli, vendor, tmp_path):
    from openpyxl import load_workbook

    cli("audit", vendor, "--report", tmp_path / "r")
    wb = load_workbook(tmp_path / "r" / "audit-report.xlsx")
    ws = wb["audit"]
    header = [c.value for c in ws[6]]
    col = header.index("verdict") + 1
    fills = {ws.cell(r, col).value: ws.cell(r, col).fill.fgColor.rgb for r in range(7, 10)}
    assert len(set(fills.values())) == 3  # ok, finding, invalid: three different colours
    for row in ws.iter_rows():
        for c in row:
            if isinstance(c.value, str):
                assert not c.value.startswith(BAD_START), c.value
    assert "NOT ALL ROWS OK" in ws["A1"].value
    assert "summary" in wb.sheetnames


def test_reports_are_deterministic(cli, vendor, tmp_path):
    cli("audit", vendor, "--report", tmp_path / "a")
    cli("audit", vendor, "--report", tmp_path / "b")
    for name in ("audit-report.csv", "audit-report.xlsx", "audit-summary.json"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()


@pytest.mark.parametrize("decimals", [4, 9, 15])
def test_all_ok_exit_zero(cli, tmp_path, decimals):
    rows = [design_row(exactband.design(**KW), decimals=decimals, **KW)] * 2
    p = write_csv(tmp_path / "good.csv", rows)
    code, out, _ = cli("audit", p)
    assert code == 0 and "ok        2" in out, out


def test_mapping_flags_and_file(cli, tmp_path):
    d = exactband.design(**KW)
    header = ("Units", "Level", "Lower rate", "Upper rate", "Lo cut", "P lo", "Hi cut", "P hi")
    row = {"Units": "25", "Level": "0.05", "Lower rate": "2", "Upper rate": "2.5",
           "Lo cut": str(d.c1), "P lo": d.gamma1_decimal[:10], "Hi cut": str(d.c2),
           "P hi": d.gamma2_decimal[:10]}  # 8 decimals, truncated
    p = write_csv(tmp_path / "theirs.csv", [row], header=header)
    code, out, _ = cli("audit", p, "--family", "poisson", "--kind", "band",
                       "--map", "n=Units", "--map", "alpha=level", "--map", "low=Lower rate",
                       "--map", "high=Upper rate", "--map", "c1=Lo cut", "--map", "gamma1=P lo",
                       "--map", "c2=Hi cut", "--map", "gamma2=P hi")
    assert code == 0, out
    m = tmp_path / "map.toml"
    m.write_text('family = "poisson"\nkind = "band"\n[columns]\nn = "Units"\nalpha = "Level"\n'
                 'low = "Lower rate"\nhigh = "Upper rate"\nc1 = "Lo cut"\ngamma1 = "P lo"\n'
                 'c2 = "Hi cut"\ngamma2 = "P hi"\n', encoding="utf-8")
    code, out, _ = cli("audit", p, "--mapping", m)
    assert code == 0, out
    m.write_text('[columns]\nc9 = "Lo cut"\n', encoding="utf-8")
    code, _, err = cli("audit", p, "--mapping", m)
    assert code == 2 and "invalid column 'c9'" in err


def test_non_randomised_table_without_gamma_columns(cli, tmp_path):
    d = exactband.design(**KW)
    p = write_csv(tmp_path / "nr.csv", [dict(KW, c1=d.c1, c2=d.c2)],
                  header=("family", "kind", "n", "alpha", "low", "high", "c1", "c2"))
    code, out, _ = cli("audit", p)
    assert code == 1
    assert "conservative non-randomised" in out and "no gamma columns" in out


def test_unusable_options(cli, vendor, tmp_path):
    for args, words in ((("--gamma-tol", "x"), "--gamma-tol"), (("--max-rows", "0"), "--max-rows"),
                        (("--precision", "5"), "invalid precision"), (("--sheet", "S"), "XLSX files only")):
        code, _, err = cli("audit", vendor, "--report", tmp_path / "r", *args)
        assert code == 2 and words in err and err.count("\n") == 1
        assert not (tmp_path / "r").exists()
