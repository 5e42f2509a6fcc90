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
bytes judged.  An XLSX workbook is read into memory once (at most
xlsx_reader.MAX_XLSX bytes), hashed, and parsed from those bytes.

XLSX: rows come from the sheet data itself, never from its ``<dimension>``
element (which a writer may leave stale); the work is bounded by the cells
present, and a disagreement with the dimension is reported.  Sheets are parsed
with defusedxml (no DTD, no entities: no XML bombs), streaming row by row; an
archive that would unpack to more than xlsx_reader.MAX_UNZIPPED bytes is refused
unopened.
"""

from __future__ import annotations

import csv
import hashlib
from pathlib import Path

from .errors import AuditInputError
from .source import Source

MAX_LINE = 1_000_000  # characters in one CSV line
MAX_FIELD = 100_000  # characters in one CSV field
DELIMITERS = (",", ";", "\t")


def file_format(path: Path) -> str:
    """'csv' or 'xlsx' from the name, else from the first bytes."""
    ext = path.suffix.lower()
    if ext in (".xlsx", ".xlsm"):
        return "xlsx"
    if ext in (".csv", ".tsv", ".txt"):
        with open(path, "rb") as fh:
            _not_a_table(path, fh.read(4096))
        return "csv"
    if ext == ".xls":
        raise AuditInputError(f"{path.name}: the old .xls format is not read; save the sheet as "
                              ".xlsx or CSV")
    with open(path, "rb") as fh:
        head = fh.read(4096)
    if head.startswith(b"PK\x03\x04"):
        return "xlsx"
    _not_a_table(path, head)
    return "csv"


# first bytes of file types people send instead of a table
_MAGIC = ((b"%PDF", "a PDF document"), (b"\xd0\xcf\x11\xe0", "an old Office (.xls/.doc) file"),
          (b"\x89PNG", "a PNG image"), (b"\xff\xd8\xff", "a JPEG image"), (b"GIF8", "a GIF image"),
          (b"\x1f\x8b", "a gzip archive"), (b"PK", "a ZIP archive"), (b"{\\rtf", "an RTF document"))


def _not_a_table(path: Path, head: bytes) -> None:
    """Refuse a file that is plainly not CSV text (a PDF, an image, binary data)."""
    what = next((w for magic, w in _MAGIC if head.startswith(magic)), None)
    # a stray NUL inside a cell is one bad row (judged invalid), not a binary file
    if (what is None and head.count(b"\x00") > max(4, len(head) // 20)
            and not head.startswith((b"\xff\xfe", b"\xfe\xff"))):
        what = "binary data"
    if what is not None:
        raise AuditInputError(f"{path.name}: not a CSV or XLSX file (it is {what}); audit reads "
                              "a table saved as CSV text or as an XLSX workbook")


def sheet_names(path: Path) -> list:
    """The sheet names of an XLSX workbook ([] if they cannot be read)."""
    try:
        import openpyxl

        wb = openpyxl.load_workbook(path, read_only=True)
        try:
            return list(wb.sheetnames)
        finally:
            wb.close()
    except Exception:  # only a hint for a message
        return []


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
        from .xlsx_reader import read_xlsx

        src = read_xlsx(p, sheet)
    else:
        if sheet is not None:
            raise AuditInputError("--sheet applies to XLSX files only")
        src = _csv_source(p, delimiter, encoding)
    if max_rows is not None and src.count > max_rows:
        raise AuditInputError(f"{p.name}: refused before judging: it holds {src.count} data rows, "
                              f"more than {max_rows} data rows (--max-rows); audit the table in "
                              "parts or raise --max-rows")
    if src.count == 0:
        hint = ""
        names = sheet_names(p) if sheet is None and file_format(p) == "xlsx" else []
        if len(names) > 1:
            hint = (f"; this is sheet {names[0]!r} of {', '.join(repr(s) for s in names)}: if the "
                    "table is on another sheet, choose it with --sheet")
        raise AuditInputError(f"{p.name}: the header has no data rows below it{hint}")
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
        text_codec = getattr(codecs.lookup(encoding), "_is_text_encoding", True)
    except (LookupError, TypeError, ValueError):
        text_codec = False
    if not text_codec:
        raise AuditInputError(f"invalid --encoding = {encoding!r}: not a text encoding; "
                              "e.g. utf-8, cp1252, latin-1", field="--encoding", value=encoding,
                              allowed="a text encoding, e.g. utf-8, cp1252, latin-1")
    if delimiter is not None and (len(delimiter) != 1 or delimiter in "\"\r\n"):
        raise AuditInputError(f"invalid --delimiter = {delimiter!r}: one character such as , ; "
                              "or a tab", field="--delimiter", value=delimiter,
                              allowed="one character such as , ; or a tab")
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
