"""The audit reports written as the rows are judged (bounded memory).

``Writer`` is the ``sink`` of ``run.audit``: each verdict becomes a CSV row at
once (into a temporary file next to the report), and a row that is not ok is
also spooled as its JSON record; at the end the JSON summary is written with
the spooled records copied after it, the XLSX report is rendered, and every
file is renamed into place.  If the run fails, the temporary files are removed
and nothing appears under the report names.  The bytes are those of
``reports.csv_bytes`` / ``json_bytes`` / ``xlsx_bytes`` for the same result.

The XLSX report lists at most ``XLSX_ROWS`` rows (the first ones, in file order)
and says so at the top when the file has more; the CSV and JSON reports list
every row (the JSON: every row that is not ok).
"""

from __future__ import annotations

import contextlib
import csv
import json
import shutil
import tempfile
import textwrap
from pathlib import Path

from ..fileio import atomic_open, atomic_write_bytes
from .report_data import COLUMNS, HEADERS, json_record, record
from .reports import CSV_NAME, JSON_NAME, XLSX_NAME, csv_text, json_head
from .xlsx_report import xlsx_bytes

XLSX_ROWS = 20_000  # rows listed in the XLSX report (the default --max-rows)
_EMPTY = '"rows_with_findings": []\n}'


class Writer:
    def __init__(self, report_dir, xlsx_rows: int = XLSX_ROWS):
        self.dir, self.xlsx_rows = Path(report_dir), xlsx_rows
        self.stack = contextlib.ExitStack()
        self.kept: list = []  # verdicts listed in the XLSX report
        self.spooled = 0

    def start(self, result) -> None:
        self.modes = result.modes
        fh = self.stack.enter_context(atomic_open(self.dir / CSV_NAME, "w", "utf-8", ""))
        self.csv = csv.writer(fh, lineterminator="\n")
        self.csv.writerow(HEADERS)
        self.spool = self.stack.enter_context(tempfile.TemporaryFile(
            "w+", encoding="utf-8", prefix="exactband-audit-json-"))

    def row(self, v) -> None:
        rec = record(v, self.modes)
        self.csv.writerow([csv_text(rec.get(c), k) for c, k in COLUMNS])
        if v.verdict != "ok":
            text = json.dumps(json_record(v, self.modes), indent=2, allow_nan=False)
            self.spool.write((",\n" if self.spooled else "") + textwrap.indent(text, "    "))
            self.spooled += 1
        if len(self.kept) < self.xlsx_rows:
            self.kept.append(v)

    def finish(self, result) -> None:
        atomic_write_bytes(self.dir / XLSX_NAME, xlsx_bytes(result, self.kept))
        head = json_head(result)
        assert head.endswith(_EMPTY)
        with atomic_open(self.dir / JSON_NAME, "w", "utf-8", "") as fh:
            if not self.spooled:
                fh.write(head + "\n")
            else:
                fh.write(head[:-len(_EMPTY)] + '"rows_with_findings": [\n')
                self.spool.seek(0)
                shutil.copyfileobj(self.spool, fh)
                fh.write("\n  ]\n}\n")
        self.stack.close()  # the CSV is renamed into place

    def abort(self, exc: BaseException) -> None:
        """Remove the temporary files (nothing is written under the report names)."""
        self.stack.__exit__(type(exc), exc, exc.__traceback__)

    def paths(self) -> list:
        return [self.dir / n for n in (CSV_NAME, XLSX_NAME, JSON_NAME)]
