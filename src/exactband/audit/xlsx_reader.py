"""XLSX input for the audit: rows from the sheet's own cells, never from <dimension>.

The workbook is read into memory once (at most MAX_XLSX bytes), hashed, and
parsed from those bytes: workbook and relationship parts find the sheet, shared
strings are read, and the sheet XML is streamed row by row with defusedxml (no
DTD, no entities: no XML bombs), each row dropped once read.  Work is bounded by
the cells present; a stale or inflated <dimension> element is reported, never
used.  Formulas arrive as their text (``=...``) and are refused later as values.
"""

from __future__ import annotations

import hashlib
import io
import posixpath
import re
import zipfile
from pathlib import Path

from .errors import AuditInputError
from .source import Source

MAX_COLUMN = 16_384  # XFD, the last spreadsheet column
MAX_UNZIPPED = 256 * 2**20  # bytes an XLSX archive may unpack to
MAX_XLSX = 64 * 2**20  # bytes of an XLSX file (read into memory once)


_REF = re.compile(r"^([A-Z]{1,3})(\d+)$")
_INT = re.compile(r"^[+-]?\d+$")
_OFFICE_DOC = "officeDocument"


def _local(tag: str) -> str:
    return tag.rsplit("}", 1)[-1]


def _col_index(letters: str) -> int:
    n = 0
    for ch in letters:
        n = n * 26 + ord(ch) - 64
    return n


def _bomb_or_broken(p: Path, what: str, e: Exception) -> AuditInputError:
    from defusedxml import DefusedXmlException

    if isinstance(e, DefusedXmlException):
        return AuditInputError(f"{p.name}: refused: the {what} XML declares entities or a DTD "
                               f"(a possible XML bomb: {type(e).__name__})")
    msg = " ".join(str(e).replace(str(p), p.name).split())[:120]
    return AuditInputError(f"{p.name}: the {what} is not readable XLSX ({type(e).__name__}: {msg})")


class _Book:
    """The parts of an XLSX archive the audit reads (workbook, sheets, shared strings)."""

    def __init__(self, p: Path, data: bytes):
        self.p = p
        try:
            self.z = zipfile.ZipFile(io.BytesIO(data))
            infos = self.z.infolist()
        except (zipfile.BadZipFile, OSError, ValueError) as e:
            raise AuditInputError(f"{p.name}: not a readable XLSX workbook ({e})") from None
        total = sum(i.file_size for i in infos)
        if total > MAX_UNZIPPED:
            raise AuditInputError(f"{p.name}: refused: the workbook would unpack to {total} bytes "
                                  f"(limit {MAX_UNZIPPED}); export the table as CSV")
        self.names = {i.filename for i in infos}

    def _xml(self, name, what):
        """Streaming (event, element) pairs of one part; refusals as AuditInputError."""
        import defusedxml.ElementTree as DET

        if name not in self.names:
            raise AuditInputError(f"{self.p.name}: not a readable XLSX workbook (no {name})")
        try:
            with self.z.open(name) as fh:
                yield from DET.iterparse(fh, events=("start", "end"), forbid_dtd=True)
        except AuditInputError:
            raise
        except Exception as e:  # ParseError, DefusedXmlException, zlib / zip errors
            raise _bomb_or_broken(self.p, what, e) from None

    def _rels(self, name) -> dict:
        out = {}
        if name not in self.names:
            return out
        for ev, el in self._xml(name, "relationships"):
            if ev == "end" and _local(el.tag) == "Relationship":
                out[el.get("Id")] = (el.get("Type") or "", el.get("Target") or "")
        return out

    @staticmethod
    def _join(base: str, target: str) -> str:
        if target.startswith("/"):
            return target.lstrip("/")
        return posixpath.normpath(posixpath.join(posixpath.dirname(base), target))

    def sheets(self) -> list:
        """[(sheet name, part name)] in workbook order."""
        wb = next((self._join("", t) for ty, t in self._rels("_rels/.rels").values()
                   if ty.endswith("/" + _OFFICE_DOC)), "xl/workbook.xml")
        rels = self._rels(posixpath.join(posixpath.dirname(wb), "_rels",
                                         posixpath.basename(wb) + ".rels"))
        out = []
        for ev, el in self._xml(wb, "workbook"):
            if ev == "end" and _local(el.tag) == "sheet":
                rid = next((v for k, v in el.attrib.items() if _local(k) == "id"), None)
                target = rels.get(rid, ("", ""))[1]
                if target:
                    out.append((el.get("name") or "", self._join(wb, target)))
        if not out:
            raise AuditInputError(f"{self.p.name}: the workbook lists no sheets")
        self.workbook = wb
        self.wb_rels = rels
        return out

    def shared_strings(self) -> list:
        name = next((self._join(self.workbook, t) for ty, t in self.wb_rels.values()
                     if ty.endswith("/sharedStrings")), None)
        if name is None or name not in self.names:
            return []
        out, parts, depth_r = [], [], 0
        for ev, el in self._xml(name, "shared strings"):
            tag = _local(el.tag)
            if ev == "start":
                if tag == "si":
                    parts = []
                elif tag == "rPh":  # phonetic hints are not part of the text
                    depth_r += 1
                continue
            if tag == "rPh":
                depth_r -= 1
            elif tag == "t" and not depth_r:
                parts.append(el.text or "")
            elif tag == "si":
                out.append("".join(parts))
                el.clear()
        return out

    def rows(self, part, strings, on_dimension):
        """(sheet row, {column: text}) for every row present with a non-blank cell."""
        expect_row, sheet_data = 0, None
        for ev, el in self._xml(part, "sheet"):
            tag = _local(el.tag)
            if ev == "start":
                if tag == "sheetData":
                    sheet_data = el
                continue
            if tag == "dimension":
                on_dimension(el.get("ref") or "")
            elif tag == "row":
                r = el.get("r")
                expect_row = int(r) if r and r.isdigit() else expect_row + 1
                cells, col = {}, 0
                for c in el:
                    if _local(c.tag) != "c":
                        continue
                    m = _REF.match(c.get("r") or "")
                    col = _col_index(m.group(1)) if m else col + 1
                    text = _cell_text(c, strings)
                    if text and text.strip() and col <= MAX_COLUMN:
                        cells[col] = text
                if sheet_data is not None:
                    sheet_data.clear()  # keep memory bounded: rows are not kept
                if cells:
                    yield expect_row, cells


def _cell_text(c, strings) -> str:
    kind = c.get("t") or "n"
    v = f = None
    inline = []
    for part in c:
        tag = _local(part.tag)
        if tag == "v":
            v = part.text or ""
        elif tag == "f":
            f = part.text or ""
        elif tag == "is":
            inline.extend(t.text or "" for t in part.iter() if _local(t.tag) == "t")
    if f is not None:
        return "=" + f  # never evaluated: refused later as a value
    if kind == "s":
        try:
            return strings[int(v)]
        except (TypeError, ValueError, IndexError):
            return ""
    if kind == "inlineStr":
        return "".join(inline)
    if kind == "b":
        return "TRUE" if (v or "").strip() == "1" else "FALSE"
    if kind == "n" and v and not _INT.match(v.strip()):
        try:  # the number as a spreadsheet shows it: the shortest decimal of the stored double
            x = float(v)
            return repr(x) if x == x and abs(x) != float("inf") else v
        except ValueError:
            return v
    return v or ""


def _dimension_rows(ref: str):
    m = re.match(r"^\$?[A-Z]{1,3}\$?(\d+)(?::\$?([A-Z]{1,3})\$?(\d+))?$", ref.strip().upper())
    if not m:
        return None
    return int(m.group(3) or m.group(1)), (_col_index(m.group(2)) if m.group(2) else None)


def read_xlsx(p: Path, sheet) -> Source:
    """Hash, count and open one sheet of an XLSX workbook (see the module docstring)."""
    size = p.stat().st_size
    if size > MAX_XLSX:
        raise AuditInputError(f"{p.name}: refused: {size} bytes, more than {MAX_XLSX} for an "
                              "XLSX workbook; export the table as CSV")
    data = p.read_bytes()
    digest = hashlib.sha256(data).hexdigest()
    book = _Book(p, data)
    sheets = book.sheets()
    if sheet is None:
        title, part = sheets[0]
    else:
        found = [s for s in sheets if s[0] == sheet]
        if not found:
            raise AuditInputError(f"invalid --sheet = {sheet!r}: sheets are "
                                  + ", ".join(repr(s[0]) for s in sheets), field="--sheet",
                                  value=sheet, allowed=", ".join(repr(s[0]) for s in sheets))
        title, part = found[0]
    strings = book.shared_strings()
    dim = []
    header, header_row, count, last_row, last_col = None, None, 0, 0, 0
    for r, cells in book.rows(part, strings, dim.append):
        last_row, last_col = r, max(last_col, max(cells))
        if header is None:
            header, header_row = _as_list(cells), r
        elif min(cells) <= len(header):  # cells right of the header are not read
            count += 1
    if header is None:
        others = [s[0] for s in sheets if s[0] != title]
        hint = (f"; the workbook's other sheets: {', '.join(repr(s) for s in others)} "
                "(choose one with --sheet)") if others else ""
        raise AuditInputError(f"{p.name}: sheet {title!r} is empty (no header row){hint}")
    notes = []
    d = _dimension_rows(dim[0]) if dim else None
    if d is not None and (d[0] != last_row or (d[1] is not None and d[1] != last_col)):
        notes.append(f"sheet {title!r}: its dimension element says {dim[0]!r}, but cells are "
                     f"present up to row {last_row} (column {last_col}); every row present was "
                     "read, the dimension element was not used")
    width = len(header)

    def rows():
        k = 0
        for r, cells in book.rows(part, strings, lambda ref: None):
            if r == header_row or min(cells) > width:
                continue
            k += 1
            yield k, r, _as_list(cells, width)

    return Source(p.name, digest, [h.strip() for h in header], count, rows, notes)


def _as_list(cells: dict, width: int | None = None) -> list:
    n = max(cells) if width is None else width
    return [cells.get(i, "") for i in range(1, n + 1)]
