"""NAME.xlsx (openpyxl): cover, one sheet per section, power (spec [oc]), data, random
digits, provenance.

Print-ready: title rows repeated on every printed page, fit to page width,
landscape where a section is wide, frozen header, number formats as printed,
header and footer with the title, 'page x of y' and the spec's hash.
Deterministic (``xlsxzip.workbook_bytes``): fixed document timestamps and zip
entry dates, so the same table set gives the same bytes.  Formats only; computes nothing.
"""

from __future__ import annotations

from copy import copy

from openpyxl import Workbook
from openpyxl.cell.cell import Cell
from openpyxl.styles import Alignment, Border, Font
from openpyxl.utils import get_column_letter

from ..fileio import safe_cell_text
from ..xlsxrows import TextRows
from ..xlsxzip import workbook_bytes
from .write_csv import columns_for, csv_row
from .xlsx_power import power_sheet
from .xlsx_style import (
    BOLD,
    CENTER,
    FONT,
    MEDIUM,
    SHADE,
    THIN,
    WRAP,
    heading_rows,
    page_setup,
    text_lines,
)

COVER_WIDTH = 78  # characters: fits A4 and Letter portrait unscaled (LibreOffice does not
# scale a one-column sheet to the page width)


def _cover(wb, tset, sections, blocks) -> None:
    ws = wb.active
    ws.title = "Cover"
    ws.column_dimensions["A"].width = COVER_WIDTH
    styles = {"title": Font(name=FONT, bold=True, size=16),
              "heading": Font(name=FONT, bold=True, size=12),
              "caution": Font(name=FONT, bold=True, size=11),
              "example": Font(name=FONT, italic=True)}
    r = 0
    for style, text in blocks:
        r += 1
        if style == "heading":
            r += 1  # a blank row before each heading
        c = ws.cell(row=r, column=1, value=safe_cell_text(text))
        c.alignment = WRAP
        if style in styles:
            c.font = styles[style]
        if style == "caution":
            c.border = Border(left=MEDIUM, right=MEDIUM, top=MEDIUM, bottom=MEDIUM)
            c.fill = SHADE
        size = 20 if style == "title" else 15
        width = COVER_WIDTH * (0.7 if style == "title" else 1)
        ws.row_dimensions[r].height = size * text_lines(text, width, fill=1.0)
    r += 2
    ws.cell(row=r, column=1, value="Contents").font = Font(name=FONT, bold=True, size=12)
    for s in sections:
        r += 1
        ws.cell(row=r, column=1, value=f"Sheet '{s.sheet}': {s.heading} ({len(s.rows)} rows)")
    extra = []
    if tset.oc is not None and tset.oc.thetas:
        extra.append(("Power", "the power of every design's rules at the stated values"))
    for name, what in (*extra, ("Data", "every design at full precision (the columns of "
                                        f"{tset.spec.name}.csv)"),
                       ("Random digits", "digits for the randomisation at a cutoff"),
                       ("Provenance", "spec hash, versions, cross-check summary")):
        r += 1
        ws.cell(row=r, column=1, value=f"Sheet '{name}': {what}")
    page_setup(ws, tset.spec, False, "Cover")


def _widths(s) -> list:
    """Column widths (characters): the longest cell, and each group label on two lines."""
    out = [max(6.0, max([len(c.label)] + [len(r[i].text) for r in s.rows[:2000]]) + 2.5)
           for i, c in enumerate(s.columns)]
    start = 0
    for i in range(1, len(s.columns) + 1):
        if i == len(s.columns) or s.columns[i].group != s.columns[start].group:
            label = s.columns[start].group
            if label:
                need = max(max(len(w) for w in label.split()), len(label) / 2 + 2) + 3
                have = sum(out[start:i])
                if have < need:
                    out[start:i] = [w + (need - have) / (i - start) for w in out[start:i]]
            start = i
    return out


def _section(wb, tset, s) -> None:
    ws = wb.create_sheet(s.sheet)
    ncol = len(s.columns)
    last = get_column_letter(ncol)
    widths = _widths(s)
    # title, heading with H0, rule: each merged across the table so nothing spills past it
    heading_rows(ws, [(safe_cell_text(tset.spec.title), Font(name=FONT, bold=True, size=12), 17),
                      (f"{s.heading}.  {s.hypothesis}", BOLD, 15),
                      (s.rule, None, 15)], last, widths)
    # group header (row 4, merged over each group) and labels (row 5)
    start = 0
    for i in range(1, ncol + 1):
        if i == ncol or s.columns[i].group != s.columns[start].group:
            cell = ws.cell(row=4, column=start + 1, value=s.columns[start].group or None)
            if i - start > 1:
                ws.merge_cells(start_row=4, start_column=start + 1, end_row=4, end_column=i)
            cell.font, cell.alignment = BOLD, CENTER
            start = i
    for j, col in enumerate(s.columns, start=1):
        cell = ws.cell(row=5, column=j, value=col.label)
        cell.font, cell.alignment = BOLD, CENTER
        cell.border = Border(bottom=THIN)
        ws.column_dimensions[get_column_letter(j)].width = widths[j - 1]
    ws.row_dimensions[4].height = 30
    formats = [("0." + "0" * c.decimals) if c.decimals else "0" if c.key in (
        "c1", "c2", "t1", "t2") else "General" for c in s.columns]
    starts = set(s.group_starts)
    band = -1
    styled = {}  # (column, rule above, shaded) -> the style of the first such cell
    for i, cells in enumerate(s.rows):
        r = 6 + i
        band += i in starts or i == 0
        line, shade = i in starts and i > 0, bool(band % 2)
        for j, cell in enumerate(cells, start=1):
            x = ws.cell(row=r, column=j, value=cell.value)
            key = (j, line, shade)
            if key in styled:  # the same style again: copied, not looked up attribute by attribute
                x._style = copy(styled[key])
                continue
            x.number_format = formats[j - 1]
            if line:
                x.border = Border(top=MEDIUM)  # the line between bands, as in the PDF
            if shade:
                x.fill = SHADE  # every other band shaded, as in the PDF
            styled[key] = copy(x._style)
    ws.freeze_panes = "A6"
    ws.print_title_rows = "1:5"
    ws.print_options.gridLines = True
    page_setup(ws, tset.spec, sum(widths) > 100, s.heading)


def _data(wb, tset) -> None:
    """Every design at full precision: columns as wide as their text, a rule under the
    header and between bands, a page break before each printed table's rows.

    The rows are TextRows (values and styles, written as openpyxl writes such cells;
    no Cell per value): the decimals as text ("@"), a rule above each band."""
    from openpyxl.worksheet.pagebreak import Break

    ws = wb.create_sheet("Data")
    COLUMNS = columns_for(tset)
    ws.append(list(COLUMNS))
    for c in ws[1]:
        c.font, c.alignment, c.border = BOLD, CENTER, Border(bottom=THIN)
    text = {"family", "kind", "gamma1_decimal", "gamma2_decimal"}
    numeric = {i for i, k in enumerate(COLUMNS) if k not in text}
    decimal = [k.endswith("_decimal") for k in COLUMNS]
    styles = {}  # rule above (None, MEDIUM, THIN) -> the style of each column

    def row_styles(top):
        if top not in styles:  # made when first needed: styles register in that order
            styles[top] = [_style(ws, Border(top=top) if top else None, d) for d in decimal]
        return styles[top]

    rows = TextRows(ws)
    longest = [len(k) for k in COLUMNS]
    before = None
    for n, row in enumerate(tset.rows):
        vals = csv_row(row, tset.spec.random_digits)
        longest = [max(a, len(v)) for a, v in zip(longest, vals)]
        d = row.design
        table, group = (d.kind, d.alpha), (d.kind, d.alpha, d.points)
        top = None
        if before is not None and group != before[1]:
            top = MEDIUM if table != before[0] else THIN
            if table != before[0]:
                ws.row_breaks.append(Break(id=n + 1))  # each table on new pages
        rows.add([None if v == "" else (float(v) if "." in v or "e" in v else int(v))
                  if i in numeric else v for i, v in enumerate(vals)], row_styles(top))
        before = (table, group)
    for j, k in enumerate(COLUMNS, start=1):
        letter = get_column_letter(j)
        ws.column_dimensions[letter].width = min(40, max(8, longest[j - 1] + 2))
    ws.freeze_panes = "C2"
    ws.print_title_rows = "1:1"
    ws.print_title_cols = "A:C"
    page_setup(ws, tset.spec, True, "Data (full precision)")
    ws.page_setup.fitToWidth = 2  # 25 wide columns: two pages across keep them legible


def _style(ws, border, text: bool):
    """The style array of a cell with ``border`` and, if ``text``, the format "@"."""
    proto = Cell(ws)  # never placed in the sheet: only its style is used
    if border is not None:
        proto.border = border
    if text:
        proto.number_format = "@"
    return copy(proto._style)


def _digits(wb, tset) -> None:
    """The random digits grouped as they are read, one printed page per page of digits."""
    from openpyxl.worksheet.pagebreak import Break

    from .build import DIGITS_PER_PAGE
    from .layout import digit_pages

    ws = wb.create_sheet("Random digits")
    spec = tset.spec
    d = spec.random_digits
    layout = digit_pages(tset.random_digits, d, DIGITS_PER_PAGE)
    size = len(layout[0][0][1][0]) if layout and layout[0] else d
    how = (f"grouped {size} at a time as they are read" if size == d else
           f"in groups of {size} for the eye; read them {d} at a time across the groups")
    ws["A1"] = (f"Random digits, {len(tset.random_digits)} from Python "
                f"random.Random({spec.seed}), {how}")
    ws["A1"].font = BOLD
    ws["A2"] = ("Use in order from where your supervisor says; cross digits out as you use "
                "them; never use them twice.")
    mono = Font(name="Courier New", size=10)
    groups = max((len(g) for page in layout for _, g in page), default=1)
    r = 3
    for p, lines in enumerate(layout):
        if p:
            ws.row_breaks.append(Break(id=r))  # one page of digits per printed page
        for number, g in lines:
            r += 1
            ws.cell(row=r, column=1, value=number).font = mono
            for k, text in enumerate(g):
                cell = ws.cell(row=r, column=2 + k, value=text)
                cell.font, cell.alignment = mono, Alignment(horizontal="center")
                cell.number_format = "@"
            ws.row_dimensions[r].height = 12.0
    ws.column_dimensions["A"].width = 6
    for k in range(groups):
        ws.column_dimensions[get_column_letter(2 + k)].width = max(4.5, size + 2.5)
    ws.print_title_rows = "1:2"
    page_setup(ws, spec, False, "Random digits")
    ws.page_setup.fitToHeight = len(layout)  # each page of digits on one sheet of paper


def _provenance(wb, tset, rows) -> None:
    ws = wb.create_sheet("Provenance")
    ws["A1"] = "Provenance"
    ws["A1"].font = Font(name=FONT, bold=True, size=12)
    for i, (label, value) in enumerate(rows, start=3):
        ws.cell(row=i, column=1, value=label).font = BOLD
        ws.cell(row=i, column=2, value=safe_cell_text(value)).alignment = WRAP
    ws.column_dimensions["A"].width = 36
    ws.column_dimensions["B"].width = 90
    page_setup(ws, tset.spec, False, "Provenance")


def xlsx_bytes(tset, sections, blocks, provenance) -> bytes:
    """The workbook as bytes (deterministic for a given table set and library versions)."""
    wb = Workbook()
    wb.properties.creator = "exactband"
    wb.properties.title = tset.spec.title
    _cover(wb, tset, sections, blocks)
    for s in sections:
        _section(wb, tset, s)
    power_sheet(wb, tset)  # only when the spec states thetas ([oc])
    _data(wb, tset)
    if tset.random_digits:
        _digits(wb, tset)
    _provenance(wb, tset, provenance)
    return workbook_bytes(wb)
