"""Read a third party's CSV or XLSX file as rows of cell text, streaming.

Both readers are generators: the first item is the header (a list of names),
then one ``(row_number, cells)`` per non-blank row, where ``row_number`` is the
line of a CSV file or the row of the sheet and ``cells`` are strings.  Nothing
is evaluated: a spreadsheet formula arrives as its text (``=...``) and is
refused later as a value.  Memory stays bounded: CSV lines longer than
MAX_LINE characters are refused, the caller stops after its row cap, and an
XLSX archive that would unpack to more than MAX_UNZIPPED bytes is refused
before it is opened.  XLSX files are parsed by openpyxl in read-only mode with
defusedxml, which refuses entity declarations (XML bombs).
"""

from __future__ import annotations

import csv
import zipfile
from pathlib import Path

from .errors import AuditInputError

MAX_LINE = 1_000_000  # characters in one CSV line
MAX_FIELD = 100_000  # characters in one CSV field
MAX_UNZIPPED = 256 * 2**20  # bytes an XLSX archive may unpack to
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
    if what is None and b"\x00" in head and not head.startswith((b"\xff\xfe", b"\xfe\xff")):
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


def read(path, *, sheet=None, delimiter=None, encoding="utf-8"):
    """Header, then (row_number, cells) tuples, from a CSV or XLSX file."""
    p = Path(path)
    if not p.is_file():
        raise AuditInputError(f"{p}: no such file")
    if p.stat().st_size == 0:
        raise AuditInputError(f"{p.name}: the file is empty")
    if file_format(p) == "xlsx":
        if delimiter is not None:
            raise AuditInputError("--delimiter applies to CSV files only")
        return _xlsx(p, sheet)
    if sheet is not None:
        raise AuditInputError("--sheet applies to XLSX files only")
    return _csv(p, delimiter, encoding)


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


def _csv(p: Path, delimiter, encoding):
    import codecs

    try:
        text_codec = getattr(codecs.lookup(encoding), "_is_text_encoding", True)
    except (LookupError, TypeError, ValueError):
        text_codec = False
    if not text_codec:
        raise AuditInputError(f"invalid --encoding = {encoding!r}: not a text encoding; "
                              "e.g. utf-8, cp1252, latin-1")
    if delimiter is not None and (len(delimiter) != 1 or delimiter in "\"\r\n"):
        raise AuditInputError(f"invalid --delimiter = {delimiter!r}: one character such as , ; "
                              "or a tab")
    enc = "utf-8-sig" if encoding.lower().replace("_", "-") in ("utf-8", "utf8") else encoding
    fh = open(p, "rb")
    lines = _Lines(fh, p.name, encoding, codecs.getincrementaldecoder(enc)(errors="strict"))
    try:
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
            while True:
                try:
                    cells = next(reader)
                except StopIteration:
                    break
                except csv.Error as e:
                    raise AuditInputError(f"{p.name}: line {start - 1 + reader.line_num}: not "
                                          f"readable as CSV ({e})") from None
                if any(c.strip() for c in cells):
                    yield start - 1 + reader.line_num, cells
        finally:
            csv.field_size_limit(old)
    finally:
        fh.close()


# -- XLSX ----------------------------------------------------------------------
def _check_archive(p: Path) -> None:
    try:
        with zipfile.ZipFile(p) as z:
            total = sum(i.file_size for i in z.infolist())
    except (zipfile.BadZipFile, OSError) as e:
        raise AuditInputError(f"{p.name}: not a readable XLSX workbook ({e})") from None
    if total > MAX_UNZIPPED:
        raise AuditInputError(f"{p.name}: refused: the workbook would unpack to {total} bytes "
                              f"(limit {MAX_UNZIPPED}); export the table as CSV")


def _text(v) -> str:
    if v is None:
        return ""
    if isinstance(v, bool):
        return "TRUE" if v else "FALSE"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(v)
    if isinstance(v, str):
        return v
    return f"{type(v).__name__} {v}"  # dates, times: refused later as numbers


def _defused(e: BaseException, kind):
    """The defusedxml refusal behind an exception (openpyxl wraps it), or None."""
    seen = 0
    while e is not None and seen < 10:
        if isinstance(e, kind):
            return e
        e = e.__cause__ or e.__context__
        seen += 1
    return None


def _xlsx(p: Path, sheet):
    from openpyxl.xml import DEFUSEDXML

    if not DEFUSEDXML:
        raise AuditInputError("XLSX files are read only with defusedxml installed (it guards "
                              "against XML bombs); install defusedxml or export the table as CSV")
    import openpyxl
    from defusedxml import DefusedXmlException

    _check_archive(p)
    try:
        wb = openpyxl.load_workbook(p, read_only=True, data_only=False, keep_links=False)
    except Exception as e:  # openpyxl raises (and wraps) many types for a broken archive
        bomb = _defused(e, DefusedXmlException)
        if bomb is not None:
            raise AuditInputError(f"{p.name}: refused: the workbook's XML declares entities or a "
                                  f"DTD (a possible XML bomb: {type(bomb).__name__})") from None
        msg = " ".join(str(e).replace(str(p), p.name).split())[:120]
        raise AuditInputError(f"{p.name}: not a readable XLSX workbook ({type(e).__name__}: "
                              f"{msg})") from None
    try:
        if sheet is None:
            ws = wb.worksheets[0]
        elif sheet in wb.sheetnames:
            ws = wb[sheet]
        else:
            raise AuditInputError(f"invalid --sheet = {sheet!r}: sheets are "
                                  + ", ".join(repr(s) for s in wb.sheetnames))
        try:
            header = None
            for r, row in enumerate(ws.iter_rows(values_only=True), start=1):
                cells = [_text(v) for v in row]
                if not any(c.strip() for c in cells):
                    continue
                if header is None:
                    header = [c.strip() for c in cells]
                    yield header
                else:
                    yield r, cells
        except AuditInputError:
            raise
        except Exception as e:
            bomb = _defused(e, DefusedXmlException)
            if bomb is not None:
                raise AuditInputError(f"{p.name}: refused: the sheet's XML declares entities or a "
                                      f"DTD (a possible XML bomb: {type(bomb).__name__})") from None
            msg = " ".join(str(e).split())[:120]
            raise AuditInputError(f"{p.name}: sheet {ws.title!r} is not readable "
                                  f"({type(e).__name__}: {msg})") from None
        if header is None:
            others = [s for s in wb.sheetnames if s != ws.title]
            hint = (f"; the workbook's other sheets: {', '.join(repr(s) for s in others)} "
                    "(choose one with --sheet)") if others else ""
            raise AuditInputError(f"{p.name}: sheet {ws.title!r} is empty (no header row){hint}")
    finally:
        wb.close()
