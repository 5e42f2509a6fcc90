"""Reproducible XLSX bytes: the one way every workbook exactband writes is saved.

``workbook_bytes(wb)`` fixes the document's created/modified dates and writes
the archive through ``FixedZip``, whose entries all carry one fixed date and
mode (also the worksheets openpyxl adds from temporary files), so the same
workbook gives the same bytes on every run and machine.  Used by the table
set's spreadsheet, the audit report and the challenge set.
"""

from __future__ import annotations

import datetime
import io
import zipfile

FIXED_TIME = datetime.datetime(2000, 1, 1, 0, 0, 0)  # document created / modified
ZIP_TIME = (2000, 1, 1, 0, 0, 0)  # date of every zip entry
ENTRY_MODE = 0o644  # permissions recorded for every zip entry


class FixedZip(zipfile.ZipFile):
    """ZipFile whose entries all carry one fixed date and mode (reproducible archives)."""

    def writestr(self, zinfo_or_arcname, data, compress_type=None, compresslevel=None):
        if not isinstance(zinfo_or_arcname, zipfile.ZipInfo):
            zinfo_or_arcname = zipfile.ZipInfo(zinfo_or_arcname, date_time=ZIP_TIME)
            zinfo_or_arcname.compress_type = zipfile.ZIP_DEFLATED
            zinfo_or_arcname.external_attr = ENTRY_MODE << 16
        super().writestr(zinfo_or_arcname, data, compress_type, compresslevel)

    def write(self, filename, arcname=None, compress_type=None, compresslevel=None):
        """openpyxl adds worksheets from temporary files: use their bytes, not their mtime."""
        with open(filename, "rb") as fh:
            data = fh.read()
        self.writestr(arcname if arcname is not None else str(filename), data)


def _excel_writer():
    """openpyxl's ExcelWriter whose worksheets are written by xlsxrows.RowsWriter."""
    from openpyxl.drawing.spreadsheet_drawing import SpreadsheetDrawing
    from openpyxl.writer.excel import ExcelWriter

    from .xlsxrows import RowsWriter

    class Writer(ExcelWriter):
        def write_worksheet(self, ws):
            if self.workbook.write_only:
                return super().write_worksheet(ws)
            # ExcelWriter.write_worksheet (openpyxl 3.1) with the faster rows writer
            ws._drawing = SpreadsheetDrawing()
            ws._drawing.charts = ws._charts
            ws._drawing.images = ws._images
            writer = RowsWriter(ws)
            writer.write()
            ws._rels = writer._rels
            self._archive.write(writer.out, ws.path[1:])
            self.manifest.append(ws)
            writer.cleanup()

    return Writer


def workbook_bytes(wb, fast: bool = True) -> bytes:
    """The openpyxl workbook ``wb`` as XLSX bytes with fixed dates (same workbook, same bytes).

    ``fast``: worksheets written by xlsxrows.RowsWriter (the same bytes as openpyxl's
    own writer, which ``fast=False`` uses, with any xlsxrows.TextRows put in cells).
    """
    from openpyxl.writer.excel import ExcelWriter

    wb.properties.created = FIXED_TIME
    wb.properties.modified = FIXED_TIME
    if not fast:
        from .xlsxrows import TextRows

        for ws in wb.worksheets:
            if TextRows.of(ws) is not None:
                TextRows.of(ws).as_cells()
    buf = io.BytesIO()
    archive = FixedZip(buf, "w", zipfile.ZIP_DEFLATED, allowZip64=True)
    (_excel_writer() if fast else ExcelWriter)(wb, archive).save()
    return buf.getvalue()
