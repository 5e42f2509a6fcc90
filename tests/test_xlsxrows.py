"""xlsxrows.RowsWriter writes the same bytes as openpyxl's own worksheet writer."""

from __future__ import annotations

import datetime

from openpyxl import Workbook
from openpyxl.comments import Comment
from openpyxl.styles import Border, Font, PatternFill, Side

from exactband.xlsxzip import workbook_bytes


def _workbook():
    wb = Workbook()
    ws = wb.active
    ws.title = "Plain"
    values = [0, 1, -7, 12345678901234567, 0.1, 1 / 3, -2.5e-300, 1e300, 5e-324, 0.0,
              "text", " leading", "trailing ", "  ", "", "a & b < c > d \"q\" 'r'",
              "two\nlines", "tab\there", "ünïcödé ✓", None]
    bold, thin = Font(bold=True), Border(top=Side(style="medium"))
    shade = PatternFill("solid", fgColor="DDDDDD")
    for r in range(1, 6):
        for j, v in enumerate(values, start=1):
            c = ws.cell(row=r, column=j, value=v)
            if (r + j) % 3 == 0:
                c.font = bold
            if (r + j) % 4 == 0:
                c.border = thin
            if r == 4:
                c.fill = shade
                c.number_format = "0.000"
    ws.row_dimensions[2].height = 30
    ws.cell(row=8, column=3).font = bold  # a styled cell without a value
    ws.merge_cells("A10:D10")
    ws["A10"] = "merged"
    ws.append([None, None, "after a gap"])
    # rows openpyxl writes itself: a formula, a date, a bool, a comment, a link, NaN
    other = wb.create_sheet("Other")
    other.append(["=1+2", 3])
    other.append([datetime.datetime(2000, 1, 2, 3, 4, 5), "x"])
    other.append([True, False, 2])
    other["A4"] = "noted"
    other["A4"].comment = Comment("a note", "exactband")
    other["B5"] = "link"
    other["B5"].hyperlink = "https://example.invalid/"
    other["C6"] = float("nan")
    other.append(["plain", 1.5])
    return wb


def test_rows_writer_bytes_equal_openpyxl():
    fast, slow = workbook_bytes(_workbook()), workbook_bytes(_workbook(), fast=False)
    assert fast == slow


def test_table_set_workbook_bytes_equal_openpyxl(tmp_path):
    """The spreadsheet of a table set with every sheet kind (cover, sections, power,
    data, random digits, provenance) both ways."""
    from exactband.tables import write_xlsx
    from exactband.tables.build import build
    from exactband.tables.layout import build_sections
    from exactband.tables.spec import load_spec
    from exactband.tables.texts import cover_blocks, provenance_rows

    from .tables_support import OC

    (tmp_path / "oc.toml").write_text(OC)
    tset = build(load_spec(tmp_path / "oc.toml"), tmp_path, workers=1)
    sections = build_sections(tset)
    args = (tset, sections, cover_blocks(tset, sections), provenance_rows(tset, "0" * 64))
    fast = write_xlsx.xlsx_bytes(*args)
    real = write_xlsx.workbook_bytes
    try:
        write_xlsx.workbook_bytes = lambda wb: real(wb, fast=False)
        slow = write_xlsx.xlsx_bytes(*args)
    finally:
        write_xlsx.workbook_bytes = real
    assert fast == slow


def _text_rows_workbook():
    from copy import copy

    from openpyxl.cell.cell import Cell

    from exactband.xlsxrows import TextRows

    wb = Workbook()
    ws = wb.active
    ws.append(["header", "x", "y"])
    ws["A1"].font = Font(bold=True)
    proto = Cell(ws)
    proto.border = Border(top=Side(style="thin"))
    proto.number_format = "@"
    ruled = copy(proto._style)
    rows = TextRows(ws)
    rows.add(["a", 1, 2.5, None, "", " pad", "0.1234567890123456789"])
    rows.add([None, None, None], [ruled, None, ruled])  # styled blanks only
    rows.add(["x & <y>", -3, 1e-310], [None, ruled, ruled])
    return wb


def test_text_rows_bytes_equal_the_same_cells():
    """TextRows are written as openpyxl writes the same values and styles put in cells."""
    assert workbook_bytes(_text_rows_workbook()) == workbook_bytes(_text_rows_workbook(),
                                                                   fast=False)


def test_text_rows_refuse_what_openpyxl_would_not_store_as_text():
    import pytest

    from exactband.xlsxrows import TextRows

    rows = TextRows(Workbook().active)
    for bad in ("=1+2", "#N/A", "bell\x07", float("nan"), True, b"bytes"):
        with pytest.raises(ValueError):
            rows.add(["ok", bad])
