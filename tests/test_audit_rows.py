"""Every row is read and one bad row is one invalid row; new diagnoses.

* XLSX rows come from the sheet data: a stale <dimension> (under-stating the
  sheet) and a sparse one (A1:XFD1048576 with one far cell) are read right and
  reported.
* A row the solvers decline (Poisson n = 1e12) and control characters in cells
  make single invalid rows; the report is written and the exit code is 1.
* Diagnoses: gamma1 / gamma2 swapped in a row; gamma or cutoff columns swapped for
  the whole file (said once); a binomial row printed for a neighbouring n with a
  cutoff above n.
"""

from __future__ import annotations

import io
import re
import zipfile

import exactband
from exactband.audit import Options, audit
from exactband.audit.diagnosis import SWAP_CUTOFFS, SWAP_GAMMAS

from .conftest import STD, design_row, write_csv

BANDS = [dict(family="poisson", kind="band", n=n, alpha=0.05, low=2, high=2.5)
         for n in (10, 15, 20, 25, 30, 35, 40, 45, 50)]


def _rows():
    return [design_row(exactband.design(**kw), **kw) for kw in BANDS]


def _xlsx(path, rows, dimension=None, far_cell=None):
    from openpyxl import Workbook

    wb = Workbook()
    ws = wb.active
    ws.append(list(STD))
    for r in rows:
        ws.append([r[h] for h in STD])
    buf = io.BytesIO()
    wb.save(buf)
    src = zipfile.ZipFile(io.BytesIO(buf.getvalue()))
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as out:
        for info in src.infolist():
            body = src.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                if dimension is not None:
                    body = re.sub(rb'<dimension ref="[^"]*"\s*/>',
                                  f'<dimension ref="{dimension}"/>'.encode(), body)
                if far_cell is not None:
                    body = body.replace(b"</sheetData>", far_cell.encode() + b"</sheetData>")
            out.writestr(info.filename, body)
    return path


def test_stale_dimension_reads_every_row(cli, tmp_path):
    path = _xlsx(tmp_path / "stale.xlsx", _rows(), dimension="A1:L6")
    result = audit(path, workers=1)
    assert len(result.verdicts) == 9 and result.all_ok
    assert any("dimension element says 'A1:L6'" in n for n in result.table.notes)
    code, out, _ = cli("audit", path)
    assert code == 0 and "9 rows" in out and "dimension element" in out


def test_sparse_dimension_bounded_by_cells_present(cli, tmp_path):
    far = '<row r="1048576"><c r="XFD1048576" t="inlineStr"><is><t>x</t></is></c></row>'
    path = _xlsx(tmp_path / "sparse.xlsx", _rows()[:1], dimension="A1:XFD1048576", far_cell=far)
    assert path.stat().st_size < 20_000
    result = audit(path, workers=1)
    # the far row holds no cell under a header column: it is blank and not a data row
    assert [v.verdict for v in result.verdicts] == ["ok"]
    far2 = '<row r="1048576"><c r="A1048576" t="inlineStr"><is><t>poisson</t></is></c></row>'
    path2 = _xlsx(tmp_path / "sparse2.xlsx", _rows()[:1], dimension="A1:XFD1048576",
                  far_cell=far2)
    result = audit(path2, workers=1)
    assert [v.verdict for v in result.verdicts] == ["ok", "invalid"]
    assert result.verdicts[1].row.index == 2 and result.verdicts[1].row.line == 1048576


def test_max_rows_counts_rows_present(cli, tmp_path):
    path = _xlsx(tmp_path / "stale.xlsx", _rows(), dimension="A1:L6")
    code, out, err = cli("audit", path, "--max-rows", "8", "--report", tmp_path / "r")
    assert code == 2 and out == "" and "9 data rows" in err and "before judging" in err
    assert len(err.strip().splitlines()) == 1 and not (tmp_path / "r").exists()
    assert cli("audit", path, "--max-rows", "9")[0] == 0


def test_declined_row_is_one_invalid_row(cli, tmp_path):
    rows = _rows()[:3]
    huge = dict(rows[0], n="1e12", alpha="0.5")  # cutoffs at the centre of a huge law
    path = write_csv(tmp_path / "huge.csv", [rows[0], huge, rows[1]])
    code, out, err = cli("audit", path, "--report", tmp_path / "r")
    assert code == 1 and err == ""
    assert "ok        2" in out and "invalid   1" in out and "row 2 (line 3): invalid" in out
    assert (tmp_path / "r" / "audit-report.xlsx").exists()
    result = audit(path, workers=1)
    assert "declined" in result.verdicts[1].details[0]


def test_control_characters_escaped(cli, tmp_path):
    from openpyxl import load_workbook

    rows = _rows()[:2]
    rows[0]["id"] = "A\x1b]0;owned\x07\x1b[2J"
    rows[0]["c1"] = str(int(rows[0]["c1"]) + 1)  # a finding, so the id is listed
    rows[1]["gamma1"] = "0.3\x0017"
    header = list(STD) + ["id"]
    path = write_csv(tmp_path / "ctl.csv", rows, header=header)
    code, out, err = cli("audit", path, "--report", tmp_path / "r")
    assert code == 1 and err == ""
    assert "\x1b" not in out and "\x00" not in out and "\\x1b]0;owned" in out
    wb = load_workbook(tmp_path / "r" / "audit-report.xlsx")
    cells = [c.value for row in wb["audit"].iter_rows() for c in row if isinstance(c.value, str)]
    assert any("\\x1b" in c for c in cells) and not any("\x1b" in c for c in cells)
    text = (tmp_path / "r" / "audit-report.csv").read_text(encoding="utf-8")
    assert "\x1b" not in text and "\x00" not in text


def _swap(rows, a, b):
    out = []
    for r in rows:
        r = dict(r)
        r[a], r[b] = r[b], r[a]
        out.append(r)
    return out


def test_swapped_gamma_columns_said_once(cli, tmp_path):
    path = write_csv(tmp_path / "sw.csv", _swap(_rows(), "gamma1", "gamma2"))
    result = audit(path, workers=2)
    assert all(v.verdict == "finding" for v in result.verdicts)
    assert all(v.diagnosis == SWAP_GAMMAS for v in result.verdicts)
    assert len(result.file_diagnosis) == 1 and "gamma1 and gamma2 columns" in \
        result.file_diagnosis[0]
    code, out, _ = cli("audit", path)
    assert code == 1 and out.count("file diagnosis:") == 1


def test_swapped_gammas_in_one_row(tmp_path):
    rows = _rows()
    rows[3] = _swap([rows[3]], "gamma1", "gamma2")[0]
    result = audit(write_csv(tmp_path / "one.csv", rows), workers=2)
    bad = [v for v in result.verdicts if v.verdict != "ok"]
    assert [v.row.index for v in bad] == [4] and bad[0].diagnosis == SWAP_GAMMAS
    assert result.file_diagnosis == []


def test_swapped_cutoff_columns(tmp_path):
    result = audit(write_csv(tmp_path / "c.csv", _swap(_rows(), "c1", "c2")), workers=2)
    assert all(v.diagnosis == SWAP_CUTOFFS for v in result.verdicts)
    assert any("c1 and c2 columns" in d for d in result.file_diagnosis)


def test_neighbouring_n_with_cutoff_above_n(tmp_path):
    kw = dict(family="binomial", kind="upper", n=20, alpha=0.05, value=0.9)
    d21 = exactband.design(**dict(kw, n=21))
    assert d21.c2 > 20  # the n = 21 design rejects only above a count that n = 20 cannot reach
    row = design_row(d21, **kw)
    result = audit(write_csv(tmp_path / "nb.csv", [row]), workers=1)
    v = result.verdicts[0]
    assert v.verdict == "finding" and "cutoff" in v.reasons
    assert v.diagnosis.startswith("design for the neighbouring n = 21"), (v.diagnosis, v.also)


def test_row_numbers_are_data_rows(tmp_path):
    rows = _rows()[:3]
    rows[2] = dict(rows[2], alpha="0.O5")
    path = tmp_path / "gaps.csv"
    text = ",".join(STD) + "\n\n" + "\n".join(",".join(r[h] for h in STD) for r in rows) + "\n"
    path.write_text(text, encoding="utf-8")
    result = audit(path, workers=1, opts=Options())
    assert [(v.row.index, v.row.line) for v in result.verdicts] == [(1, 3), (2, 4), (3, 5)]
