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

from openpyxl.compat import safe_string
from openpyxl.worksheet._writer import WorksheetWriter

_PLAIN = {"n", "s"}


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


def _plain(cell) -> bool:
    """A cell this module writes itself (else openpyxl writes its row)."""
    if cell._comment is not None or cell.hyperlink is not None:
        return False
    t = cell.data_type
    if t not in _PLAIN:
        return False
    v = cell._value
    if t == "s":
        return v is None or type(v) is str
    return v is None or (type(v) in (int, float) and math.isfinite(v))


class RowsWriter(WorksheetWriter):
    """openpyxl's worksheet writer; rows of plain cells written as text (same bytes)."""

    def write_row(self, xf, row, row_idx):
        raw = getattr(xf, "_file", None)
        if not callable(raw) or not all(_plain(c) for c in row):
            return super().write_row(xf, row, row_idx)
        attrs = {"r": f"{row_idx}"}
        attrs.update(self.ws.row_dimensions.get(row_idx, {}))
        out = ["<row", *(f' {k}="{_escape_attr(v)}"' for k, v in attrs.items()), ">"]
        for cell in row:
            value, styled = cell._value, cell.has_style
            if value is None and not styled:
                continue
            head = f'<c r="{cell.coordinate}"'
            if styled:
                head += f' s="{cell.style_id}"'  # registers the style, in openpyxl's order
            if cell.data_type == "s":
                head += ' t="inlineStr"'
                if value is None or value == "":
                    out.append(head + " />")
                    continue
                stripped = value.strip()
                space = ' xml:space="preserve"' if stripped and stripped != value else ""
                out.append(f"{head}><is><t{space}>{_escape_text(value)}</t></is></c>")
            else:
                head += ' t="n"'
                if value is None:
                    out.append(head + " />")
                    continue
                out.append(f"{head}><v>{safe_string(value)}</v></c>")
        out.append("</row>")
        raw("".join(out))
