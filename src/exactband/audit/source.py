"""Source: a file opened for auditing (made by readers for CSV, xlsx_reader for XLSX)."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass
class Source:
    """A file opened for auditing (see the docstring of readers)."""

    name: str
    sha256: str
    header: list
    count: int  # data rows present
    rows: object  # callable: () -> iterator of (data_row, file_line, cells)
    notes: list = field(default_factory=list)
