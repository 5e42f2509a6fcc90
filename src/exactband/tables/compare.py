"""Say in plain words where a file of a set differs from the same file regenerated.

Used by ``table --check`` after the byte comparison failed: CSV files by data
row (1-based, the header not counted) and column name, spreadsheets by sheet
and cell, the PDF by page text, the manifest by key.  Reads bytes only; every
function returns a list of one-line findings (at most ``limit``).
"""

from __future__ import annotations

import csv
import io
import json
import zipfile

MAX_PARSE = 64 * 1024 * 1024  # a file this far above the regenerated one is not parsed


def describe(fname: str, have: bytes, want: bytes, limit: int = 10) -> list:
    """Findings for a file whose bytes ``have`` differ from the regenerated ``want``."""
    if len(have) > MAX_PARSE + len(want):
        return [f"{fname}: {len(have)} bytes in the file, {len(want)} regenerated"]
    if fname.endswith(".csv"):
        out = csv_diff(fname, have, want, limit)
    elif fname.endswith(".xlsx"):
        out = xlsx_diff(fname, have, want, limit)
    elif fname.endswith(".pdf"):
        out = pdf_diff(fname, have, want, limit)
    elif fname.endswith(".json"):
        out = json_diff(fname, have, want, limit)
    else:
        out = []
    return out or [f"{fname}: the bytes differ from the regenerated file (first difference "
                   f"at byte {_first_difference(have, want)}); its visible content agrees"]


def _first_difference(a: bytes, b: bytes) -> int:
    for i, (x, y) in enumerate(zip(a, b)):
        if x != y:
            return i
    return min(len(a), len(b))


def _show(text) -> str:
    s = "empty" if text in (None, "") else str(text)
    s = " ".join(s.split())
    return s if len(s) <= 60 else s[:57] + "..."


def csv_diff(fname: str, have: bytes, want: bytes, limit: int) -> list:
    try:
        a = list(csv.reader(io.StringIO(have.decode("utf-8"), newline="")))
    except (UnicodeDecodeError, csv.Error) as e:
        return [f"{fname}: not a readable UTF-8 CSV ({type(e).__name__})"]
    b = list(csv.reader(io.StringIO(want.decode("utf-8"), newline="")))
    out = []
    if not a or a[0] != b[0]:
        out.append(f"{fname}: the header row differs from the regenerated one")
        return out
    header = b[0]
    for k, (ra, rb) in enumerate(zip(a[1:], b[1:]), start=1):
        for j in range(max(len(ra), len(rb))):
            x = ra[j] if j < len(ra) else None
            y = rb[j] if j < len(rb) else None
            if x != y:
                col = header[j] if j < len(header) else f"column {j + 1}"
                out.append(f"{fname} row {k}: {col} is {_show(x)} in the file, "
                           f"recomputed {_show(y)}")
                if len(out) >= limit:
                    return out
    if len(a) != len(b):
        out.append(f"{fname}: {len(a) - 1} data rows in the file, {len(b) - 1} recomputed")
    return out


def _cells(data: bytes) -> dict:
    import openpyxl

    wb = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=False)
    try:
        return {ws.title: {c.coordinate: c.value for row in ws.iter_rows() for c in row
                           if c.value is not None and hasattr(c, "coordinate")}
                for ws in wb.worksheets}
    finally:
        wb.close()


def xlsx_diff(fname: str, have: bytes, want: bytes, limit: int) -> list:
    try:
        a = _cells(have)
    except (zipfile.BadZipFile, KeyError, ValueError, OSError, TypeError) as e:
        return [f"{fname}: not a readable spreadsheet ({type(e).__name__})"]
    b = _cells(want)
    out = []
    if list(a) != list(b):
        return [f"{fname}: sheets {list(a)} in the file, recomputed {list(b)}"]
    for sheet in b:
        for ref in sorted(set(a[sheet]) | set(b[sheet]), key=_cell_order):
            x, y = a[sheet].get(ref), b[sheet].get(ref)
            if x != y:
                out.append(f"{fname} sheet '{sheet}' cell {ref}: {_show(x)} in the file, "
                           f"recomputed {_show(y)}")
                if len(out) >= limit:
                    return out
    return out


def _cell_order(ref: str) -> tuple:
    letters = "".join(ch for ch in ref if ch.isalpha())
    digits = "".join(ch for ch in ref if ch.isdigit())
    return int(digits or 0), len(letters), letters


def _page_texts(data: bytes) -> list:
    from pypdf import PdfReader

    return [p.extract_text() or "" for p in PdfReader(io.BytesIO(data)).pages]


def pdf_diff(fname: str, have: bytes, want: bytes, limit: int) -> list:
    try:
        a = _page_texts(have)
    except Exception as e:  # noqa: BLE001 - any parse failure of a foreign file is a finding
        return [f"{fname}: not a readable PDF ({type(e).__name__})"]
    b = _page_texts(want)
    out = []
    if len(a) != len(b):
        out.append(f"{fname}: {len(a)} pages in the file, {len(b)} recomputed")
    for k, (x, y) in enumerate(zip(a, b), start=1):
        if x != y:
            la, lb = x.splitlines(), y.splitlines()
            line = next((i for i, (p, q) in enumerate(zip(la, lb)) if p != q),
                        min(len(la), len(lb)))
            got = la[line] if line < len(la) else ""
            exp = lb[line] if line < len(lb) else ""
            out.append(f"{fname} page {k}: the text reads {_show(got)!s} where the "
                       f"regenerated page reads {_show(exp)}")
            if len(out) >= limit:
                break
    return out


def json_diff(fname: str, have: bytes, want: bytes, limit: int) -> list:
    try:
        a = json.loads(have.decode("utf-8"))
    except (UnicodeDecodeError, ValueError) as e:
        return [f"{fname}: not readable JSON ({type(e).__name__})"]
    b = json.loads(want.decode("utf-8"))
    out = []
    _walk(a, b, "", out, limit)
    return [f"{fname}: {line}" for line in out]


def _walk(a, b, path: str, out: list, limit: int) -> None:
    if len(out) >= limit:
        return
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b), key=str):
            p = f"{path}.{k}" if path else str(k)
            if k not in a:
                out.append(f"{p} is missing (recomputed {_show(json.dumps(b[k]))})")
            elif k not in b:
                out.append(f"{p} is not in the regenerated manifest")
            else:
                _walk(a[k], b[k], p, out, limit)
            if len(out) >= limit:
                return
    elif a != b:
        out.append(f"{path or 'the document'} is {_show(json.dumps(a))} in the file, "
                   f"recomputed {_show(json.dumps(b))}")
