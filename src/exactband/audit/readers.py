"""Read a third party's CSV or XLSX file as rows of cell text, with the evidence.

``open_source(path, ...)`` returns a Source: the SHA-256 of the bytes judged,
the header, the number of data rows (counted before any row is judged, so a
file with too many rows is refused in one line) and ``rows()``, a generator of
``(data_row, file_line, cells)``: ``data_row`` counts non-blank rows below the
header from 1 ("row N" everywhere), ``file_line`` is the line of a CSV file or
the row number of the sheet.  Nothing is evaluated: a spreadsheet formula
arrives as its text (``=...``) and is refused later as a value.

Evidence: a CSV file is read twice (count, then parse), each pass hashing every
byte it reads; the two hashes must agree, so the hash reported is that of the
bytes judged.  An XLSX workbook is read into memory once (at most MAX_XLSX
bytes), hashed, and parsed from those bytes.

XLSX: rows come from the sheet data itself, never from its ``<dimension>``
element (which a writer may leave stale); the work is bounded by the cells
present, and a disagreement with the dimension is reported.  Sheets are parsed
with defusedxml (no DTD, no entities: no XML bombs), streaming row by row; an
archive that would unpack to more than MAX_UNZIPPED bytes is refused unopened.
"""

from __future__ import annotations

import csv
import hashlib
import io
import posixpath
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from .errors import AuditInputError

MAX_LINE = 1_000_000  # characters in one CSV line
MAX_FIELD = 100_000  # characters in one CSV field
MAX_UNZIPPED = 256 * 2**20  # bytes an XLSX archive may unpack to
MAX_XLSX = 64 * 2**20  # bytes of an XLSX file (read into memory once)
MAX_COLUMN = 16_384  # XFD, the last spreadsheet column
DELIMITERS = (",", ";", "\t")


@dataclass
class Source:
    """A file opened for auditing (see the module docstring)."""

    name: str
    sha256: str
    header: list
    count: int  # data rows present
    rows: object  # callable: () -> iterator of (data_row, file_line, cells)
    notes: list = field(default_factory=list)


def file_format(path: Path) -> str:
    """'csv' or 'xlsx' from the name, else from the first bytes."""
    ext = path.suffix.lower()
    if ext in (".xlsx", ".xlsm"):
        return "xlsx"
    if ext in (".csv", ".tsv", ".txt"):
        return "csv"
    if ext == ".xls":
        raise AuditInputError(f"{path.name}: the old .xls format is not read; save the sheet as "
                              ".xlsx or CSV")
    with open(path, "rb") as fh:
        return "xlsx" if fh.read(4) == b"PK\x03\x04" else "csv"


def open_source(path, *, sheet=None, delimiter=None, encoding="utf-8", max_rows=None) -> Source:
    """Hash, count and open a CSV or XLSX file; refuses more than ``max_rows`` data rows."""
    p = Path(path)
    if not p.is_file():
        raise AuditInputError(f"{p}: no such file")
    if p.stat().st_size == 0:
        raise AuditInputError(f"{p.name}: the file is empty")
    if file_format(p) == "xlsx":
        if delimiter is not None:
            raise AuditInputError("--delimiter applies to CSV files only")
        src = _xlsx(p, sheet)
    else:
        if sheet is not None:
            raise AuditInputError("--sheet applies to XLSX files only")
        src = _csv_source(p, delimiter, encoding)
    if max_rows is not None and src.count > max_rows:
        raise AuditInputError(f"{p.name}: refused before judging: it holds {src.count} data rows, "
                              f"more than {max_rows} data rows (--max-rows); audit the table in "
                              "parts or raise --max-rows")
    if src.count == 0:
        raise AuditInputError(f"{p.name}: the header has no data rows below it")
    return src


# -- CSV ---------------------------------------------------------------------
class _Lines:
    """Text lines of a binary file, decoded incrementally, with a length cap.

    Decoding line by line (not by 8 KB blocks) lets a decoding error name its line.
    """

    def __init__(self, fh, name, encoding, decoder):
        self.fh, self.name, self.encoding, self.decoder = fh, name, encoding, decoder
        self.count = 0  # lines handed out
        self.pending = ""
        self.done = False

    def __iter__(self):
        return self

    def _fill(self):
        chunk = self.fh.readline(MAX_LINE + 1)
        try:
            self.pending += self.decoder.decode(chunk, final=not chunk)
        except UnicodeDecodeError as e:
            bad = e.object[e.start:e.start + 1].hex()
            line = self.count + 1 + self.pending.count("\n")
            raise AuditInputError(
                f"{self.name}: line {line} is not {self.encoding} text (byte 0x{bad}); "
                f"save the file as UTF-8 or give --encoding") from None
        if not chunk:
            self.done = True

    def __next__(self):
        while "\n" not in self.pending and not self.done:
            if len(self.pending) > MAX_LINE:
                break
            self._fill()
        i = self.pending.find("\n")
        if i < 0:
            i = len(self.pending) - 1
        if i + 1 > MAX_LINE:
            raise AuditInputError(f"{self.name}: line {self.count + 1} is longer than "
                                  f"{MAX_LINE} characters; this is not a table")
        if i < 0:
            raise StopIteration
        line, self.pending = self.pending[:i + 1], self.pending[i + 1:]
        self.count += 1
        return line


def _sniff(first_line: str) -> str:
    counts = {d: first_line.count(d) for d in DELIMITERS}
    best = max(DELIMITERS, key=lambda d: counts[d])
    return best if counts[best] else ","


class _Hashing:
    """A binary file whose every byte read also feeds a SHA-256."""

    def __init__(self, fh):
        self.fh, self.h = fh, hashlib.sha256()

    def readline(self, size=-1):
        b = self.fh.readline(size)
        self.h.update(b)
        return b

    def rest(self) -> str:
        """Hash what was not read (a pass that stopped early) and return the digest."""
        for block in iter(lambda: self.fh.read(1 << 20), b""):
            self.h.update(block)
        return self.h.hexdigest()


def _check_csv_options(delimiter, encoding) -> str:
    import codecs

    try:
        codecs.lookup(encoding)
    except LookupError:
        raise AuditInputError(f"invalid --encoding = {encoding!r}: not a known text encoding") \
            from None
    if delimiter is not None and (len(delimiter) != 1 or delimiter in "\"\r\n"):
        raise AuditInputError(f"invalid --delimiter = {delimiter!r}: one character such as , ; "
                              "or a tab")
    return "utf-8-sig" if encoding.lower().replace("_", "-") in ("utf-8", "utf8") else encoding


def _csv_source(p: Path, delimiter, encoding) -> Source:
    enc = _check_csv_options(delimiter, encoding)
    count, header, digest = 0, None, None
    for item in _csv(p, delimiter, encoding, enc):
        if isinstance(item, str):
            digest = item
        elif header is None:
            header = item
        else:
            count += 1

    def rows():
        for item in _csv(p, delimiter, encoding, enc):
            if isinstance(item, str):
                if item != digest:
                    raise AuditInputError(f"{p.name}: the file changed while it was read; "
                                          "audit a copy that nothing writes to")
            elif isinstance(item, tuple):
                yield item

    return Source(p.name, digest, header, count, rows)


def _csv(p: Path, delimiter, encoding, enc):
    """Header, then (data_row, line, cells) per non-blank row, then the file's SHA-256."""
    import codecs

    with open(p, "rb") as raw:
        fh = _Hashing(raw)
        lines = _Lines(fh, p.name, encoding, codecs.getincrementaldecoder(enc)(errors="strict"))
        first = None
        for line in lines:
            if line.strip():
                first = line
                break
        if first is None:
            raise AuditInputError(f"{p.name}: the file is empty (no header line)")
        delim = delimiter or _sniff(first)
        start = lines.count

        def chained():
            yield first
            yield from lines

        reader = csv.reader(chained(), delimiter=delim, strict=False)
        old = csv.field_size_limit(MAX_FIELD)
        try:
            try:
                header = next(reader)
            except csv.Error as e:
                raise AuditInputError(f"{p.name}: line {start}: header is not CSV ({e})") from None
            yield [h.strip() for h in header]
            k = 0
            while True:
                try:
                    cells = next(reader)
                except StopIteration:
                    break
                except csv.Error as e:
                    raise AuditInputError(f"{p.name}: line {start - 1 + reader.line_num}: not "
                                          f"readable as CSV ({e})") from None
                if any(c.strip() for c in cells):
                    k += 1
                    yield k, start - 1 + reader.line_num, cells
        finally:
            csv.field_size_limit(old)
        yield fh.rest()


# -- XLSX ----------------------------------------------------------------------
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


def _xlsx(p: Path, sheet) -> Source:
    size = p.stat().st_size
    if size > MAX_XLSX:
        raise AuditInputError(f"{p.name}: refused: {size} bytes, more than {MAX_XLSX} for an XLSX "
                              "workbook; export the table as CSV")
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
                                  + ", ".join(repr(s[0]) for s in sheets))
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
        raise AuditInputError(f"{p.name}: sheet {title!r} is empty (no header row)")
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
