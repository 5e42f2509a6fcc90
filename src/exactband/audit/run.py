"""Audit a whole file: read it (hashed, rows counted first), judge every row, count."""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from ..api import DEFAULT_PRECISION, check_precision
from ..parallel import check_workers
from .table import Options, Table, load
from .verdicts import judge_batch


@dataclass
class AuditResult:
    path: Path
    sha256: str  # of the bytes judged
    table: Table
    verdicts: list
    precision: int
    modes: tuple = ("round", "round")  # rounding of the gamma1 / gamma2 columns
    notes: list = field(default_factory=list)  # policy notes, e.g. gammas truncated
    file_diagnosis: list = field(default_factory=list)  # file-wide causes, said once

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


def audit(path, opts: Options | None = None, *, precision=DEFAULT_PRECISION, workers=None,
          progress=None) -> AuditResult:
    """Read ``path`` (CSV or XLSX) and judge every row; raises AuditInputError if unusable.

    ``progress(total)`` may return a callback that is called as rows finish.
    """
    opts = opts or Options()
    d = check_precision(precision)
    table = load(path, opts)
    workers = check_workers(workers)  # None: every usable core (pmap caps it at the rows)
    tick = progress(len(table.rows)) if progress else None
    b = judge_batch(table.rows, d, workers, tick, opts.gamma_rounding)
    return AuditResult(Path(path), table.sha256, table, b.verdicts, d, b.modes, b.notes,
                       b.file_diagnosis)
