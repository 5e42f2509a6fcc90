"""The XLSX audit report: failing rows visible at a glance.

Sheet "audit": a banner with the counts, then one row per input row.  The
verdict column is filled (finding: dark red with white text, invalid: amber,
ok: pale green) and every finding / invalid row is tinted across its width;
reasons, the excess of the attained size over alpha (in % of alpha) and the
diagnosis come right after the verdict, before the numbers.  Sheet "summary":
counts, findings by reason, diagnoses, provenance and the caution.  Bytes are
deterministic (``xlsxzip.workbook_bytes``: fixed document dates and zip entries).
"""

from __future__ import annotations

from ..xlsxzip import workbook_bytes
from . import text as T
from .policy import POLICY
from .report_data import COLUMNS, provenance, record, summary

CAUTION = ("exactband computes statistical decision rules; acceptance limits, sampling plans and "
           "consequences come from the governing standard, local regulation and qualified "
           "professionals.")
FILLS = {"finding": ("9C1C1C", "FFFFFF", "FBE3E3"), "invalid": ("E8A317", "000000", "FFF3D1"),
         "ok": ("D5EDD7", "1E4620", None)}
WRONG = ("F4B6B6", "7A0000")  # a cell holding a wrong number: stronger fill, dark red bold
WIDTHS = {"row": 6, "file_line": 6, "id": 10, "verdict": 10, "reasons": 14,
          "size_excess_pct_of_alpha": 11, "power_shortfall_pct_of_alpha": 11, "diagnosis": 36,
          "detail": 60, "family": 10, "kind": 10, "n": 8, "alpha": 8, "low": 8, "high": 8,
          "value": 8, "dispersion": 9, "their_c1": 7, "our_c1": 7, "their_c2": 7, "our_c2": 7,
          "their_gamma1": 11, "their_gamma2": 11, "our_gamma1": 20, "our_gamma2": 20,
          "gamma1_read_as": 14, "gamma2_read_as": 14, "also_consistent_with": 34}
WRAP = ("reasons", "diagnosis", "detail", "also_consistent_with", "gamma1_read_as",
        "gamma2_read_as")
FORMATS = {"prob": "0.000000", "sci": "0.00E+00", "pct": '0.00"%";-0.00"%";"\u2013"',
           "num": "General", "int": "0"}
HEADINGS = {"row": "row (data row)", "file_line": "line in file", "size_excess_pct_of_alpha": "size above alpha, % of alpha",
            "power_shortfall_pct_of_alpha": "power below alpha off H0, % of alpha"}
LINE_HEIGHT = 15  # points per line of 11-point text
HEADER_ROW = 6


def _cell_value(value, kind):
    if value is None or value == "":
        return None
    if kind == "text":
        return T.xlsx_cell(value)
    return value


def xlsx_bytes(result, listed=None) -> bytes:
    """The XLSX report of ``result``, listing the verdicts ``listed`` (default: all kept)."""
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font, PatternFill
    from openpyxl.utils import get_column_letter

    listed = result.verdicts if listed is None else listed
    cols = [(c, k) for c, k in COLUMNS if c != "id" or any(v.row.ident for v in listed)]
    s = summary(result)
    wb = Workbook()
    ws = wb.active
    ws.title = "audit"
    bold = Font(bold=True)
    state = "ALL ROWS OK" if result.all_ok else "NOT ALL ROWS OK"
    ws.cell(1, 1, T.xlsx_cell(f"exactband audit of {result.table.name}: {state}")).font = \
        Font(bold=True, size=14, color="9C1C1C" if not result.all_ok else "1E4620")
    ws.cell(2, 1, f"{s['rows']} rows: {s['ok']} ok, {s['finding']} with findings, "
                  f"{s['invalid']} invalid.  Findings are tinted red, invalid rows amber, and the "
                  "numbers behind each finding are marked in dark red.").font = bold
    ws.cell(3, 1, POLICY).font = Font(italic=True, color="555555")
    said = list(result.file_diagnosis) + list(result.table.notes) + list(result.notes)
    if len(listed) < result.tally.rows:
        said.append(f"this sheet lists the first {len(listed)} of {result.tally.rows} rows; the "
                    "CSV report lists every row")
    if said:
        ws.cell(4, 1, T.xlsx_cell("; ".join(said))).font = Font(bold=True, color="9C1C1C")
    ws.cell(5, 1, CAUTION).font = Font(italic=True, color="555555")
    for j, (name, _) in enumerate(cols, start=1):
        c = ws.cell(HEADER_ROW, j, HEADINGS.get(name, name.replace("_", " ")))
        c.font = Font(bold=True, color="FFFFFF")
        c.fill = PatternFill("solid", fgColor="3A3A3A")
        c.alignment = Alignment(wrap_text=True, vertical="top")
        ws.column_dimensions[get_column_letter(j)].width = WIDTHS.get(name, 12)
    ws.row_dimensions[HEADER_ROW].height = 4 * LINE_HEIGHT
    top = Alignment(vertical="top")
    right = Alignment(vertical="top", horizontal="right")  # printed numbers line up with ours
    wrap = Alignment(vertical="top", wrap_text=True)
    printed = {"n", "alpha", "low", "high", "value", "dispersion", "their_c1", "their_gamma1",
               "their_c2", "their_gamma2", "our_gamma1", "our_gamma2"}
    for i, v in enumerate(listed, start=HEADER_ROW + 1):
        rec = record(v, result.modes)
        wrong = _wrong_cells(v, rec)
        strong, text_colour, tint = FILLS[v.verdict]
        ws.row_dimensions[i].height = LINE_HEIGHT * _lines(rec)
        for j, (name, kind) in enumerate(cols, start=1):
            c = ws.cell(i, j, _cell_value(rec.get(name), kind))
            c.alignment = wrap if name in WRAP else (right if name in printed else top)
            if kind == "cut":  # a whole-number cutoff as an integer, a real one in full
                c.number_format = FORMATS["int" if isinstance(rec.get(name), int) else "num"]
            elif kind in FORMATS:
                c.number_format = FORMATS[kind]
            if tint:
                c.fill = PatternFill("solid", fgColor=tint)
            if name == "verdict":
                c.fill = PatternFill("solid", fgColor=strong)
                c.font = Font(bold=True, color=text_colour)
            elif name in wrong:
                c.fill = PatternFill("solid", fgColor=WRONG[0])
                c.font = Font(bold=True, color=WRONG[1])
            elif name in ("reasons", "diagnosis") and v.verdict == "finding":
                c.font = Font(bold=True, color="9C1C1C")
            elif v.verdict == "ok" and kind != "text":
                c.font = Font(color="808080")  # within tolerance: the numbers recede
    last = get_column_letter(len(cols))
    ws.freeze_panes = ws.cell(HEADER_ROW + 1, [c for c, _ in cols].index("verdict") + 2)
    ws.auto_filter.ref = f"A{HEADER_ROW}:{last}{HEADER_ROW + len(listed)}"
    ws.print_title_rows = f"{HEADER_ROW}:{HEADER_ROW}"
    print_setup(ws, pages_wide=2)  # 30-odd columns: two A4 pages wide stay legible
    ws.print_title_cols = "A:" + get_column_letter([c for c, _ in cols].index("verdict") + 1)
    _summary_sheet(wb.create_sheet("summary"), result, s, bold)
    return workbook_bytes(wb)


def _lines(rec) -> int:
    """Lines the tallest wrapped cell of a row needs (LibreOffice does not fit heights)."""
    import math

    need = 1
    for name in WRAP:
        text = str(rec.get(name) or "")
        per_line = max(WIDTHS.get(name, 12) - 4, 8)  # bold text runs wider than the width unit
        words, lines, used = text.split(), 1, 0
        for w in words:
            if used and used + 1 + len(w) > per_line:
                lines, used = lines + 1, len(w)
            else:
                used += len(w) + (1 if used else 0)
            lines += (len(w) - 1) // per_line if len(w) > per_line else 0
        need = max(need, lines if text else 1)
    return min(need, 12) if math.isfinite(need) else 1


def _wrong_cells(v, rec) -> set:
    """Report columns that hold the numbers behind a finding (highlighted cell by cell)."""
    out = set()
    if v.verdict == "invalid":  # the input the row's error names (Verdict.error_field)
        if v.error_field in rec:
            out.add(v.error_field)
        elif f"their_{v.error_field}" in rec:
            out.add(f"their_{v.error_field}")
        return out
    if v.verdict != "finding":
        return out
    if "cutoff" in v.reasons:
        for c in ("c1", "c2"):
            if str(rec.get(f"their_{c}") or "") != str(rec.get(f"our_{c}") or ""):
                out.add(f"their_{c}")
    if "gamma" in v.reasons:
        for i in (1, 2):
            if any(d.startswith(f"gamma{i} = ") for d in v.details):
                out.update((f"their_gamma{i}", f"gamma{i}_abs_error"))
    if "size" in v.reasons:
        out.update(("size_excess_pct_of_alpha", "size_excess"))
        for name, s in (("their_size_low", rec.get("their_size_low")),
                        ("their_size_high", rec.get("their_size_high"))):
            if s is not None and s > v.row.problem.alpha:
                out.add(name)
    return out


def _summary_sheet(ws, result, s, bold):
    from openpyxl.styles import Alignment

    rows = [("exactband audit", None), ("rows", s["rows"]), ("ok", s["ok"]),
            ("finding", s["finding"]), ("invalid", s["invalid"]), (None, None),
            ("findings by reason", None)]
    rows += [(f"  {k}", n) for k, n in s["findings_by_reason"].items()] or [("  (none)", None)]
    rows += [(None, None), ("diagnoses of the findings", None)]
    rows += [(f"  {d}", n) for d, n in s["diagnoses"].items()] or [("  (none)", None)]
    prov = provenance(result)
    rows += [(None, None), ("provenance", None), ("input file", prov["input"]["file"]),
             ("input sha256", prov["input"]["sha256"]),
             ("decimal mark", prov["input"]["decimal_mark"] or "(none needed)"),
             ("columns used", ", ".join(f"{k} <- {v}" for k, v in prov["input"]["columns"].items())),
             ("ignored columns", ", ".join(prov["input"]["ignored_columns"]) or "(none)"),
             ("exactband", prov["exactband"]), ("scipy", prov["scipy"]), ("mpmath", prov["mpmath"]),
             ("python", prov["python"]), ("solver precision", prov["solver_precision"]),
             ("gamma rounding", ", ".join(f"{k} {m}" for k, m in prov["gamma_rounding"].items())),
             ("verdict policy", POLICY)]
    rows += [("file diagnosis", d) for d in result.file_diagnosis]
    rows += [("note", n) for n in prov["notes"]]
    rows += [(None, None), ("caution", CAUTION)]
    for i, (k, val) in enumerate(rows, start=1):
        if k is not None:
            c = ws.cell(i, 1, T.xlsx_cell(k))
            c.alignment = Alignment(vertical="top")
            if not k.startswith("  "):
                c.font = bold
        if val is not None:
            c = ws.cell(i, 2, T.xlsx_cell(val) if isinstance(val, str) else val)
            c.alignment = Alignment(wrap_text=True, vertical="top", horizontal="left")
            if isinstance(val, str) and len(val) > 80:
                ws.row_dimensions[i].height = LINE_HEIGHT * (len(val) // 70 + 1)
    ws.column_dimensions["A"].width = 40
    ws.column_dimensions["B"].width = 90
    print_setup(ws, pages_wide=1)


def print_setup(ws, pages_wide: int = 1) -> None:
    """A4 landscape, ``pages_wide`` pages wide (as many long as needed), narrow margins, footer."""
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = pages_wide
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.page_margins.left = ws.page_margins.right = 0.4
    ws.page_margins.top = ws.page_margins.bottom = 0.5
    ws.print_options.gridLines = True
    ws.oddFooter.center.text = "Page &P of &N"
    ws.oddFooter.left.text = "exactband audit"
