"""Styles and print setup shared by the table set's sheets (write_xlsx, xlsx_power).

Fonts, borders and fills; ``page_setup`` (paper, orientation, fit to width, header
and footer with the title, 'page x of y' and the spec's hash); ``heading_rows``
(wrapped title rows merged across a table) and ``text_lines`` (rows a wrapped text
needs).  Formats only.
"""

from __future__ import annotations

import math

from openpyxl.styles import Alignment, Font, PatternFill, Side

PAPER = {"A4": "9", "Letter": "1"}  # OOXML paperSize codes
FONT = "Calibri"
BOLD = Font(name=FONT, bold=True)
THIN = Side(style="thin")
MEDIUM = Side(style="medium")
WRAP = Alignment(wrap_text=True, vertical="top")
CENTER = Alignment(horizontal="center", vertical="center", wrap_text=True)
SHADE = PatternFill("solid", fgColor="EEEEEE")


def _hf(text: str) -> str:
    """Text for a header/footer field ('&' is a control character there)."""
    text = text if len(text) <= 90 else text[:87] + "..."
    return text.replace("&", "&&")


def page_setup(ws, spec, landscape: bool, heading: str) -> None:
    """Paper, orientation, fit to width, margins, header and footer of a printed sheet."""
    ws.page_setup.paperSize = PAPER[spec.paper]
    ws.page_setup.orientation = "landscape" if landscape else "portrait"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_options.horizontalCentered = True
    ws.page_margins.left = ws.page_margins.right = 0.5
    ws.page_margins.top = ws.page_margins.bottom = 0.75
    ws.oddHeader.left.text = _hf(spec.title)
    ws.oddHeader.right.text = _hf(heading)
    ws.oddFooter.left.text = f"spec SHA-256 {spec.sha256[:16]}"
    ws.oddFooter.center.text = "Page &P of &N"
    ws.oddFooter.right.text = _hf(f"{spec.name}.xlsx")
    for part in (ws.oddHeader.left, ws.oddHeader.right, ws.oddFooter.left, ws.oddFooter.center,
                 ws.oddFooter.right):
        part.size = 8


def text_lines(text: str, width: float, fill: float = 0.8) -> int:
    """Lines a wrapped text needs in a cell ``width`` characters wide (an estimate that
    errs on the high side: a cut line is worse than a blank one)."""
    return sum(max(1, math.ceil(len(p) / (width * fill))) for p in text.split("\n"))


def heading_rows(ws, rows, last: str, widths) -> None:
    """Rows 1, 2, ... of (text, font, line height): wrapped, merged across columns A..last."""
    for r, (text, font, size) in enumerate(rows, start=1):
        cell = ws.cell(row=r, column=1, value=text)
        cell.alignment = WRAP
        if font is not None:
            cell.font = font
        ws.merge_cells(f"A{r}:{last}{r}")
        ws.row_dimensions[r].height = size * text_lines(text, sum(widths) * (0.85 if font else 1))
