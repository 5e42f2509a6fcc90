"""Audit a whole file: read it, judge every row (optionally on a process pool), count."""

from __future__ import annotations

import hashlib
import os
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

from ..api import DEFAULT_PRECISION, check_precision
from .table import Options, Table, load
from .verdicts import Verdict, judge


@dataclass
class AuditResult:
    path: Path
    sha256: str
    table: Table
    verdicts: list
    precision: int

    @property
    def counts(self) -> Counter:
        return Counter(v.verdict for v in self.verdicts)

    @property
    def by_reason(self) -> Counter:
        return Counter(r for v in self.verdicts if v.verdict == "finding" for r in v.reasons)

    @property
    def by_diagnosis(self) -> Counter:
        return Counter(v.diagnosis for v in self.verdicts if v.verdict == "finding")

    @property
    def all_ok(self) -> bool:
        return all(v.verdict == "ok" for v in self.verdicts)


def _task(args) -> Verdict:
    row, precision = args
    return judge(row, precision)


def judge_rows(rows, precision=DEFAULT_PRECISION, workers=1, progress=None) -> list:
    """judge() over rows in order, on ``workers`` processes when there are many."""
    from ..parallel import pmap

    return pmap(_task, [(r, precision) for r in rows], workers, progress, max_chunk=32)


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def audit(path, opts: Options | None = None, *, precision=DEFAULT_PRECISION, workers=1, progress=None) -> AuditResult:
    """Read ``path`` (CSV or XLSX) and judge every row; raises AuditInputError if unusable.

    ``progress(total)`` may return a callback that is called as rows finish.
    """
    opts = opts or Options()
    d = check_precision(precision)
    table = load(path, opts)
    workers = (os.cpu_count() or 1) if workers is None else max(1, int(workers))
    tick = progress(len(table.rows)) if progress else None
    verdicts = judge_rows(table.rows, d, workers, tick)
    return AuditResult(Path(path), _sha256(Path(path)), table, verdicts, d)
