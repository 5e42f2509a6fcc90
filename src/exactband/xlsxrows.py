"""The cells of a worksheet as XML text: openpyxl's bytes, a few times faster.

openpyxl serialises every cell through an element tree (an Element per cell,
namespace bookkeeping, escaping attribute by attribute), which is most of the
time a large table set's spreadsheet takes.  ``RowsWriter`` is openpyxl's
``WorksheetWriter`` with ``write_row`` replaced: a row whose cells are plain
numbers, strings or styled blanks is written as text, in the very form
openpyxl writes it (same attributes in the same order, ``%.16g`` numbers,
inline strings with ``xml:space="preserve"`` where openpyxl sets it, ``<c ... />``
for an empty cell); style ids are taken from the workbook in the same order,
so styles.xml is unchanged too.  Any other row (formulas, dates, rich text,
comments, hyperlinks, non-finite numbers) goes through openpyxl's own
``write_row``.  ``tests/test_xlsxrows.py`` compares the bytes of both writers.

Used by ``xlsxzip.workbook_bytes`` (every workbook exactband saves).  Formats only.
"""

from __future__ import annotations

import math

from openpyxl.utils import get_column_letter
from openpyxl.worksheet._writer import WorksheetWriter


def _escape_text(s: str) -> str:
    """Character data as ElementTree escapes it."""
    if "&" in s:
        s = s.replace("&", "&amp;")
    if "<" in s:
        s = s.replace("<", "&lt;")
    if ">" in s:
        s = s.replace(">", "&gt;")
    return s


def _escape_attr(s: str) -> str:
    """An attribute value as ElementTree escapes it."""
    s = _escape_text(s)
    for a, b in (('"', "&quot;"), ("\r", "&#13;"), ("\n", "&#10;"), ("\t", "&#09;")):
        if a in s:
            s = s.replace(a, b)
    return s


class RowsWriter(WorksheetWriter):
    """openpyxl's worksheet writer; rows of plain cells written as text (same bytes),
    then the sheet's TextRows, if any."""

    def write_dimensions(self):
        extra = TextRows.of(self.ws)
        if extra is None or not extra.rows:
            return super().write_dimensions()
        from openpyxl.worksheet.dimensions import SheetDimension

        # calculate_dimension over the cells and the text rows (as if they were cells)
        rows = {r for r, _ in self.ws._cells}
        cols = {c for _, c in self.ws._cells}
        rows |= {extra.first, extra.first + len(extra.rows) - 1}
        cols |= {1, extra.width}
        ref = (f"{get_column_letter(min(cols))}{min(rows)}:"
               f"{get_column_letter(max(cols))}{max(rows)}")
        self.xf.send(SheetDimension(ref).to_tree())

    def write_rows(self):
        extra = TextRows.of(self.ws)
        if extra is None:
            return super().write_rows()
        xf = self.xf.send(True)
        raw = xf._file
        with xf.element("sheetData"):
            for row_idx, row in self.rows():
                if row_idx >= extra.first:
                    raise ValueError(f"row {row_idx} has cells and text rows")
                self.write_row(xf, row, row_idx)
            wb = self.ws.parent
            for k, (values, styles) in enumerate(extra.rows):
                raw(_text_row(wb, values, styles, extra.first + k))
        self.xf.send(None)

    def write_row(self, xf, row, row_idx):
        raw = getattr(xf, "_file", None)
        text = _row_text(self.ws, row, row_idx) if callable(raw) else None
        if text is None:  # not a row of plain cells: openpyxl writes it
            return super().write_row(xf, row, row_idx)
        raw(text)


def _row_text(ws, row, row_idx) -> str | None:
    """The XML of one row as openpyxl writes it, or None if a cell is not plain (a
    number, a string or nothing: no formula, date, rich text, comment or link)."""
    attrs = {"r": f"{row_idx}"}
    attrs.update(ws.row_dimensions.get(row_idx, {}))
    out = ["<row", *(f' {k}="{_escape_attr(v)}"' for k, v in attrs.items()), ">"]
    r = f"{row_idx}"
    for cell in row:
        if cell._comment is not None or cell.hyperlink is not None:
            return None
        value, t = cell._value, cell.data_type
        if value is None:
            if not cell.has_style:
                continue
        elif t == "s":
            if type(value) is not str:
                return None
        elif t != "n" or type(value) not in (int, float) or not math.isfinite(value):
            return None
        head = f'<c r="{get_column_letter(cell.column)}{r}"'
        if cell.has_style:
            head += f' s="{cell.style_id}"'  # registers the style, in openpyxl's order
        if t == "s":
            head += ' t="inlineStr"'
            if value is None or value == "":
                out.append(head + " />")
                continue
            stripped = value.strip()
            space = ' xml:space="preserve"' if stripped and stripped != value else ""
            out.append(f"{head}><is><t{space}>{_escape_text(value)}</t></is></c>")
        elif t == "n":
            head += ' t="n"'
            if value is None:
                out.append(head + " />")
                continue
            out.append(f"{head}><v>{'%.16g' % value}</v></c>")  # openpyxl's safe_string
        else:
            return None
    out.append("</row>")
    return "".join(out)


# -- rows given as values, never made into openpyxl cells --------------------------
class TextRows:
    """Rows appended below a worksheet's cells as plain values and style arrays, written
    as openpyxl would write the same values put in cells (``ws.append``) with those
    styles, without the cost of a Cell per value.

    ``add(values, styles)``: a row of numbers (int or float), strings and None;
    ``styles`` None or one openpyxl StyleArray (or None) per value, e.g. a copy of
    a prototype cell's ``_style``.  Strings openpyxl would not store as plain text
    (formulas, error codes, control characters, over 32,767 characters) are refused.
    """

    ATTR = "_exactband_text_rows"

    def __init__(self, ws):
        self.ws = ws
        self.first = ws.max_row + 1 if ws._cells else 1
        self.rows: list = []
        self.width = 0
        setattr(ws, self.ATTR, self)

    def add(self, values, styles=None) -> None:
        values = list(values)
        for v in values:
            _check_value(v)
        self.rows.append((values, styles))
        self.width = max(self.width, len(values))

    @staticmethod
    def of(ws):
        return getattr(ws, TextRows.ATTR, None)

    def as_cells(self) -> None:
        """Put the rows into the sheet as openpyxl cells (what openpyxl's own writer
        needs; the reference the tests compare with)."""
        from copy import copy

        for values, styles in self.rows:
            self.ws.append(values)
            if styles is not None:
                r = self.ws.max_row
                for j, st in enumerate(styles, start=1):
                    if st is not None:
                        self.ws.cell(row=r, column=j)._style = copy(st)
        self.rows = []
        delattr(self.ws, self.ATTR)


_ILLEGAL = None


def _check_value(v) -> None:
    global _ILLEGAL
    if v is None or (type(v) in (int, float) and math.isfinite(v)):
        return
    if type(v) is not str:
        raise ValueError(f"not a plain cell value: {v!r}")
    if _ILLEGAL is None:
        from openpyxl.cell.cell import ERROR_CODES, ILLEGAL_CHARACTERS_RE

        _ILLEGAL = (ILLEGAL_CHARACTERS_RE, ERROR_CODES)
    if (len(v) > 32767 or (len(v) > 1 and v.startswith("=")) or v in _ILLEGAL[1]
            or _ILLEGAL[0].search(v)):
        raise ValueError(f"not plain text for a cell: {v[:40]!r}")


def _text_row(wb, values, styles, row_idx) -> str:
    """One TextRows row as openpyxl writes the same cells."""
    out = [f'<row r="{row_idx}">']
    r = f"{row_idx}"
    cell_styles = wb._cell_styles
    for j, value in enumerate(values):
        st = styles[j] if styles is not None else None
        styled = st is not None and any(st)
        if value is None and not styled:
            continue
        head = f'<c r="{get_column_letter(j + 1)}{r}"'
        if styled:
            head += f' s="{cell_styles.add(st)}"'
        if type(value) is str:
            head += ' t="inlineStr"'
            if value == "":
                out.append(head + " />")
                continue
            stripped = value.strip()
            space = ' xml:space="preserve"' if stripped and stripped != value else ""
            out.append(f"{head}><is><t{space}>{_escape_text(value)}</t></is></c>")
        elif value is None:
            out.append(head + ' t="n" />')
        else:
            out.append(f"{head} t=\"n\"><v>{'%.16g' % value}</v></c>")
    out.append("</row>")
    return "".join(out)
