"""Audit a whole file: read it (hashed, rows counted first), judge every row, count.

The rows are judged in chunks (``stream.Judging``); each verdict goes to an
optional ``sink`` (the streamed reports) as it is made, and is kept in
``AuditResult.verdicts`` only when ``keep`` is true (the API default; the CLI
keeps none, so memory does not grow with the file).  Counts, the worst excess
over alpha and the first rows that are not ok are always in ``tally``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ..parallel import check_workers
from ..solving import DEFAULT_PRECISION, check_precision
from .stream import Judging, Tally
from .table import Options, Table, open_table


@dataclass
class AuditResult:
    path: Path
    sha256: str  # of the bytes judged
    table: Table  # without its rows (see verdicts)
    verdicts: list  # every verdict in row order when kept, else empty
    precision: int
    modes: tuple = ("round", "round")  # rounding of the gamma1 / gamma2 columns
    notes: list = field(default_factory=list)  # policy notes, e.g. gammas truncated
    file_diagnosis: list = field(default_factory=list)  # file-wide causes, said once
    tally: Tally = field(default_factory=Tally)

    @property
    def counts(self):
        return self.tally.counts

    @property
    def by_reason(self):
        return self.tally.by_reason

    @property
    def by_diagnosis(self):
        return self.tally.by_diagnosis

    @property
    def all_ok(self) -> bool:
        return self.tally.counts.get("ok", 0) == self.tally.rows


def audit(path, opts: Options | None = None, *, precision=DEFAULT_PRECISION, workers=None,
          progress=None, sink=None, keep=True) -> AuditResult:
    """Read ``path`` (CSV or XLSX) and judge every row; raises AuditInputError if unusable.

    ``progress(total)`` may return a callback that is called as rows finish.
    ``sink`` (e.g. reports.Writer) gets ``start(result)``, ``row(verdict)`` for each row
    in order, and ``finish(result)``; ``abort(exc)`` if the run fails (it then writes nothing).
    """
    opts = opts or Options()
    d = check_precision(precision)
    table, chunks = open_table(path, opts)
    workers = check_workers(workers)  # None: every usable core (pmap caps it at the rows)
    tick = progress(table.count) if progress else None
    j = Judging(chunks, d, workers, tick, opts.gamma_rounding)
    result = AuditResult(Path(path), table.sha256, table, [], d, j.modes, j.notes)
    if sink is not None:
        sink.start(result)
    try:
        for v in j:
            result.tally.add(v)
            if keep:
                result.verdicts.append(v)
            if sink is not None:
                sink.row(v)
        result.file_diagnosis = j.file_diagnosis
        if sink is not None:
            sink.finish(result)
    except BaseException as e:
        if sink is not None:
            sink.abort(e)
        raise
    return result
