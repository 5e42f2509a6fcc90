"""Audit reports: stdout summary, CSV, JSON summary (XLSX in xlsx_report).

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
import platform
from pathlib import Path

from ..fileio import atomic_write_bytes, safe_cell_text
from . import text as T
from .diagnosis import NONE
from .policy import POLICY
from .verdicts import REASONS

CSV_NAME, XLSX_NAME, JSON_NAME = "audit-report.csv", "audit-report.xlsx", "audit-summary.json"

# (header, kind of value) in report order; kind: text / int / prob / sci / pct
COLUMNS = [
    ("row", "int"), ("file_line", "int"), ("id", "text"), ("verdict", "text"), ("reasons", "text"),
    ("size_excess_pct_of_alpha", "pct"), ("power_shortfall_pct_of_alpha", "pct"),
    ("diagnosis", "text"), ("detail", "text"),
    ("family", "text"), ("kind", "text"), ("n", "text"), ("alpha", "text"), ("low", "text"),
    ("high", "text"), ("value", "text"), ("dispersion", "text"),
    ("their_c1", "text"), ("our_c1", "int"), ("their_gamma1", "text"), ("our_gamma1", "text"),
    ("gamma1_abs_error", "sci"), ("gamma1_read_as", "text"),
    ("their_c2", "text"), ("our_c2", "int"), ("their_gamma2", "text"), ("our_gamma2", "text"),
    ("gamma2_abs_error", "sci"), ("gamma2_read_as", "text"),
    ("their_size_low", "prob"), ("their_size_high", "prob"), ("size_excess", "sci"),
    ("min_power_outside_null", "prob"), ("at_theta", "num"), ("also_consistent_with", "text"),
]
HEADERS = [c for c, _ in COLUMNS]


def _read_as(v, i, modes) -> str | None:
    r = v.row
    if v.verdict == "invalid" or r.theirs is None or r.theirs[2 * i] is None:
        return None
    d = r.decimals[i]
    if d is None:
        return "exact"
    how = "truncated" if modes[i] == "truncate" else "rounded"
    return f"{how} to {d} decimal{'s' if d != 1 else ''}"


def record(v, modes=("round", "round")) -> dict:
    """One report row (typed values; None for empty) from a Verdict."""
    r, t = v.row, v.row.text
    alpha = r.problem.alpha if r.problem is not None else None
    out = {
        "row": r.index, "file_line": r.line, "id": r.ident, "verdict": v.verdict,
        "reasons": ", ".join(v.reasons), "detail": "; ".join(v.details),
        "diagnosis": v.diagnosis if v.verdict == "finding" else "",
        "also_consistent_with": "; ".join(v.also),
    }
    for k in ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion"):
        out[k] = t.get(k, "")
    for k in ("c1", "gamma1", "c2", "gamma2"):
        out[f"their_{k}"] = t.get(k, "")
    if v.ours_text is not None:
        c1, g1, c2, g2 = v.ours_text
        out.update(our_c1=c1, our_gamma1=g1, our_c2=c2, our_gamma2=g2)
    # unsigned numbers only: no report cell starts with a minus sign (the sign is in the detail)
    out["gamma1_abs_error"], out["gamma2_abs_error"] = (None if e is None else abs(e)
                                                        for e in v.gamma_error)
    out["gamma1_read_as"], out["gamma2_read_as"] = _read_as(v, 0, modes), _read_as(v, 1, modes)
    sizes = list(v.sizes) + [None, None]
    out["their_size_low"], out["their_size_high"] = sizes[0], sizes[1]
    excess = None if v.excess is None else max(v.excess, 0.0)
    out["size_excess"] = excess  # how far the larger attained size exceeds alpha (0: it does not)
    out["size_excess_pct_of_alpha"] = None if excess is None or not alpha else 100.0 * excess / alpha
    out["min_power_outside_null"], out["at_theta"] = v.min_power, v.at_theta
    short = None if v.min_power is None or not alpha else max(alpha - v.min_power, 0.0)
    out["power_shortfall_pct_of_alpha"] = None if short is None else 100.0 * short / alpha
    return out


def _csv_text(value, kind) -> str:
    if value is None:
        return ""
    if kind == "text":
        return safe_cell_text(T.report(value))
    if kind == "int":
        return str(int(value))
    if kind == "pct":
        return f"{value:.4g}"
    return repr(float(value)) if kind == "num" else f"{value:.10g}"


def csv_bytes(result) -> bytes:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(HEADERS)
    for v in result.verdicts:
        rec = record(v, result.modes)
        w.writerow([_csv_text(rec.get(c), k) for c, k in COLUMNS])
    return buf.getvalue().encode("utf-8")


def provenance(result) -> dict:
    import mpmath
    import scipy

    from .. import __version__

    t = result.table
    return {
        "input": {"file": t.name, "sha256": result.sha256, "rows": result.tally.rows,
                  "columns": t.columns, "ignored_columns": t.ignored,
                  "decimal_mark": t.decimal_mark},
        "exactband": __version__, "python": platform.python_version(),
        "scipy": scipy.__version__, "mpmath": mpmath.__version__,
        "solver_precision": result.precision, "verdict_policy": POLICY,
        "gamma_rounding": {"gamma1": result.modes[0], "gamma2": result.modes[1]},
        "notes": list(t.notes) + list(result.notes),
    }


def worst_excess(result):
    """The verdict whose printed numbers exceed alpha the most (None if none does)."""
    return result.tally.worst


def summary(result) -> dict:
    c = result.counts
    worst = worst_excess(result)
    return {
        "rows": result.tally.rows, "ok": c.get("ok", 0), "finding": c.get("finding", 0),
        "invalid": c.get("invalid", 0),
        "findings_by_reason": {r: result.by_reason[r] for r in REASONS if result.by_reason[r]},
        "diagnoses": dict(sorted(result.by_diagnosis.items(), key=lambda kv: (-kv[1], kv[0]))),
        "rows_above_alpha": result.tally.above_alpha,
        "worst_excess_over_alpha": None if worst is None else worst.excess,
        "worst_excess_pct_of_alpha": None if worst is None
        else 100 * worst.excess / worst.row.problem.alpha,
        "worst_excess_row": None if worst is None else worst.row.index,
        "file_diagnosis": list(result.file_diagnosis),
        "exit_code": 0 if result.all_ok else 1,
    }


def json_bytes(result) -> bytes:
    doc = {"verdict_policy": POLICY, "summary": summary(result), "provenance": provenance(result),
           "rows_with_findings": [_json_record(v, result.modes) for v in result.verdicts
                                  if v.verdict != "ok"]}
    return (json.dumps(doc, indent=2, allow_nan=False) + "\n").encode("utf-8")


def json_head(result) -> str:
    """The JSON summary with an empty list of rows (report_stream appends the rows)."""
    doc = {"verdict_policy": POLICY, "summary": summary(result), "provenance": provenance(result),
           "rows_with_findings": []}
    return json.dumps(doc, indent=2, allow_nan=False)


def _json_record(v, modes) -> dict:
    return {k: (T.report(x) if isinstance(x, str) else x) for k, x in record(v, modes).items()}


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
    from .xlsx_report import xlsx_bytes

    d = Path(report_dir)
    files = {CSV_NAME: csv_bytes(result), XLSX_NAME: xlsx_bytes(result),
             JSON_NAME: json_bytes(result)}
    out = []
    for name, data in files.items():
        atomic_write_bytes(d / name, data)
        out.append(d / name)
    return out


__all__ = ["COLUMNS", "CSV_NAME", "JSON_NAME", "NONE", "XLSX_NAME", "csv_bytes", "json_bytes",
           "summary", "summary_text", "write"]
