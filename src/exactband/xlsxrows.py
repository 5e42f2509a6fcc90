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
    """openpyxl's worksheet writer; rows of plain cells written as text (same bytes)."""

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
