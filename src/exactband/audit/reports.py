"""Audit reports: stdout summary, CSV, JSON summary (XLSX in xlsx_report; the
records and summary they share in report_data).

Writers only format: every number comes from the AuditResult.  Cells holding
third-party text pass through ``text`` (control and non-printing characters
escaped; no cell begins with = + - @).  The report header carries the written
verdict policy (``policy.POLICY``).  "row N" is the N-th data row (1-based,
the header not counted); ``file_line`` is the line of the CSV file or the row
of the sheet.
``write`` renders a kept result in memory and writes it atomically; the CLI
streams the same bytes as rows are judged (``report_stream.Writer``).  Either
way a failed audit leaves nothing under the report names.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from ..fileio import atomic_write_bytes, safe_cell_text
from . import text as T
from .diagnosis import NONE
from .policy import POLICY
from .report_data import COLUMNS, HEADERS, json_record, provenance, record, summary, worst_excess
from .xlsx_report import xlsx_bytes

CSV_NAME, XLSX_NAME, JSON_NAME = "audit-report.csv", "audit-report.xlsx", "audit-summary.json"

def csv_text(value, kind) -> str:
    """A report value as CSV cell text (third-party text escaped, no formula start)."""
    if value is None:
        return ""
    if kind == "text":
        return safe_cell_text(T.report(value))
    if kind == "int" or (kind == "cut" and isinstance(value, int)):
        return str(int(value))
    if kind == "cut":
        return repr(float(value))
    if kind == "pct":
        return f"{value:.4g}"
    return repr(float(value)) if kind == "num" else f"{value:.10g}"


def csv_bytes(result) -> bytes:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(HEADERS)
    for v in result.verdicts:
        rec = record(v, result.modes)
        w.writerow([csv_text(rec.get(c), k) for c, k in COLUMNS])
    return buf.getvalue().encode("utf-8")


def json_bytes(result) -> bytes:
    doc = {"verdict_policy": POLICY, "summary": summary(result), "provenance": provenance(result),
           "rows_with_findings": [json_record(v, result.modes) for v in result.verdicts
                                  if v.verdict != "ok"]}
    return (json.dumps(doc, indent=2, allow_nan=False) + "\n").encode("utf-8")


def json_head(result) -> str:
    """The JSON summary with an empty list of rows (report_stream appends the rows)."""
    doc = {"verdict_policy": POLICY, "summary": summary(result), "provenance": provenance(result),
           "rows_with_findings": []}
    return json.dumps(doc, indent=2, allow_nan=False)


def summary_text(result, report_dir=None, listed: int = 20) -> str:
    """The stdout summary (every piece of their text escaped for the terminal)."""
    return T.terminal(_summary_lines(result, report_dir, listed))


def _summary_lines(result, report_dir, listed) -> str:
    s = summary(result)
    t = result.table
    lines = [f"audit of {t.name}: {s['rows']} row{'s' if s['rows'] != 1 else ''} "
             f"(sha256 {result.sha256[:12]}...)"]
    for d in result.file_diagnosis:
        lines.append(f"file diagnosis: {d}")
    lines.append(f"  ok        {s['ok']}")
    reasons = ", ".join(f"{k} {n}" for k, n in s["findings_by_reason"].items())
    lines.append(f"  finding   {s['finding']}" + (f"   (by reason: {reasons})" if reasons else ""))
    lines.append(f"  invalid   {s['invalid']}")
    if s["diagnoses"]:
        lines.append("diagnosis of the findings:")
        for d, n in s["diagnoses"].items():
            lines.append(f"  {n:4d}  {d}")
    if s["worst_excess_over_alpha"] is not None:
        lines.append(f"printed numbers above alpha in {s['rows_above_alpha']} row(s); largest "
                     f"+{s['worst_excess_over_alpha']:.3g} ({s['worst_excess_pct_of_alpha']:.3g}% "
                     f"of alpha) at row {s['worst_excess_row']}")
    bad = result.tally.first_bad
    if bad:
        lines.append("rows that are not ok:")
        for v in bad[:listed]:
            label = f"row {v.row.index} (line {v.row.line})" + \
                (f" ({v.row.ident})" if v.row.ident else "")
            what = v.verdict + (f" [{', '.join(v.reasons)}]" if v.verdict == "finding" else "")
            diag = f"; diagnosis: {v.diagnosis}" if v.verdict == "finding" else ""
            lines.append(f"  {label}: {what}: {v.details[0] if v.details else ''}{diag}")
        shown = min(listed, len(bad))
        if result.tally.bad > shown:
            lines.append(f"  ... and {result.tally.bad - shown} more (see the report)")
    for note in list(t.notes) + list(result.notes):
        lines.append(f"note: {note}")
    if t.ignored:
        lines.append("ignored columns: " + ", ".join(t.ignored))
    if report_dir is not None:
        d = Path(report_dir)
        lines.append(f"reports: {d / CSV_NAME}, {d / XLSX_NAME}, {d / JSON_NAME}")
    return "\n".join(lines)


def write(result, report_dir) -> list:
    """Render every report, then write them (atomically); returns the paths."""
    d = Path(report_dir)
    files = {CSV_NAME: csv_bytes(result), XLSX_NAME: xlsx_bytes(result),
             JSON_NAME: json_bytes(result)}
    out = []
    for name, data in files.items():
        atomic_write_bytes(d / name, data)
        out.append(d / name)
    return out


__all__ = ["COLUMNS", "CSV_NAME", "HEADERS", "JSON_NAME", "NONE", "XLSX_NAME", "csv_bytes",
           "csv_text", "json_bytes", "json_record", "provenance", "record", "summary",
           "summary_text", "worst_excess", "write"]
