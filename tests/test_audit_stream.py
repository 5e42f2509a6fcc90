"""The audit judged in chunks with streamed reports: same verdicts and bytes as in one piece.

The chunk size is made tiny (3 rows) so that chunk boundaries fall everywhere:
verdicts, the inferred rounding, notes, file diagnosis and the report bytes
must not depend on it.  Expected values come from the same code run on the
whole file in one chunk (the per-row checks against scipy.stats are in
test_audit_policy).
"""

from __future__ import annotations

import csv
import textwrap

import pytest

from exactband.audit import audit, reports
from exactband.audit import stream as S
from exactband.audit.report_stream import Writer
from exactband.tables.publish import generate

SPEC = textwrap.dedent("""\
    title = "Weaving flaws per bolt (stream test)"
    family = "poisson"
    kinds = ["band", "upper"]
    alpha = [0.05]
    n = { from = 10, to = 30, step = 2 }
    bands = [[2.0, 2.5]]
    values = [2.5]
    gamma_decimals = 4
    random_digit_pages = 0
    """)


@pytest.fixture(scope="module")
def mixed_file(tmp_path_factory):
    """Full-precision rows, rows with gammas cut to 2 decimals, wrong cutoffs, one unreadable
    row."""
    d = tmp_path_factory.mktemp("stream")
    (d / "s.toml").write_text(SPEC, encoding="utf-8")
    generate(d / "s.toml", d / "out", workers=1)
    with open(d / "out" / "s.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    for i, r in enumerate(rows):
        if i % 3 == 1:
            for g in ("gamma1", "gamma2"):
                if r[g]:
                    r[g] = f"{float(r[g]):.2f}"
        if i % 4 == 2 and r["c2"]:
            r["c2"] = str(int(r["c2"]) + 1)
    rows[4]["n"] = "twelve"
    path = d / "mixed.csv"
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    return path


def _key(v):
    return (v.row.index, v.verdict, v.reasons, v.details, v.diagnosis, v.also, v.excess, v.sizes)


def test_chunks_change_nothing(mixed_file, tmp_path, monkeypatch):
    whole = audit(mixed_file, workers=1)
    reports.write(whole, tmp_path / "whole")
    monkeypatch.setattr(S, "CHUNK", 3)
    sink = Writer(tmp_path / "streamed")
    chunked = audit(mixed_file, workers=1, sink=sink, keep=False)
    assert chunked.verdicts == []  # nothing kept: memory does not grow with the file
    again = audit(mixed_file, workers=1)
    assert [_key(v) for v in again.verdicts] == [_key(v) for v in whole.verdicts]
    for r in (chunked, again):
        assert (r.modes, r.notes, r.file_diagnosis) == (whole.modes, whole.notes,
                                                        whole.file_diagnosis)
        assert reports.summary(r) == reports.summary(whole)
        assert reports.summary_text(r) == reports.summary_text(whole)
    c = whole.counts
    assert c["finding"] >= 3 and c["invalid"] == 1 and c["ok"] >= 3  # all three kinds present
    for name in (reports.CSV_NAME, reports.JSON_NAME, reports.XLSX_NAME):
        assert (tmp_path / "streamed" / name).read_bytes() == \
            (tmp_path / "whole" / name).read_bytes(), name
    assert sorted(p.name for p in (tmp_path / "streamed").iterdir()) == sorted(
        [reports.CSV_NAME, reports.JSON_NAME, reports.XLSX_NAME])


def test_xlsx_lists_at_most_its_cap(mixed_file, tmp_path):
    from openpyxl import load_workbook

    result = audit(mixed_file, workers=1, sink=Writer(tmp_path, xlsx_rows=2), keep=False)
    with open(tmp_path / reports.CSV_NAME, newline="", encoding="utf-8") as fh:
        assert len(list(csv.reader(fh))) == 1 + result.tally.rows
    ws = load_workbook(tmp_path / reports.XLSX_NAME)["audit"]
    top = " ".join(str(ws.cell(r, 1).value) for r in range(1, 6))
    assert f"lists the first 2 of {result.tally.rows} rows" in top
    rows = [r for r in ws.iter_rows(min_row=1, values_only=True) if isinstance(r[0], int)]
    assert [r[0] for r in rows] == [1, 2]


class _Failing(Writer):
    def row(self, v):
        if v.row.index == 3:
            raise RuntimeError("stop here")
        super().row(v)


def test_a_failed_run_writes_nothing(mixed_file, tmp_path, monkeypatch):
    monkeypatch.setattr(S, "CHUNK", 2)
    with pytest.raises(RuntimeError, match="stop here"):
        audit(mixed_file, workers=1, sink=_Failing(tmp_path / "rep"), keep=False)
    assert list((tmp_path / "rep").iterdir()) == []  # no report, no temporary file


def test_tally_counts_every_row(mixed_file):
    r = audit(mixed_file, workers=1)
    t = r.tally
    assert t.rows == len(r.verdicts) == sum(t.counts.values())
    assert t.bad == sum(v.verdict != "ok" for v in r.verdicts)
    assert t.first_bad == [v for v in r.verdicts if v.verdict != "ok"][:S.LISTED]
    over = [v for v in r.verdicts if "size" in v.reasons]
    assert t.above_alpha == len(over)
    if over:
        assert t.worst is max(over, key=lambda v: v.excess / v.row.problem.alpha)
