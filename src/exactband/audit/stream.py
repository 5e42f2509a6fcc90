"""Judging a file in chunks, in bounded memory (the engine behind ``audit``).

Two passes over the rows, ``CHUNK`` rows at a time:

1. recompute: the fast solver over the chunk, the high-precision solver per row
   (process pool); each chunk's Recomputed values (small: no probability
   tables) are spooled to a temporary file, and the evidence for the rounding
   of each gamma column (how many cells each rounding explains) is counted;
2. judge: the rows are read again, chunk by chunk, paired with their spooled
   Recomputed values, judged under the inferred rounding and, for findings,
   diagnosed; verdicts are handed out in row order and then dropped.

Only counts, the worst excess over alpha and the first few rows that are not
ok stay in memory (``Tally``), so memory does not grow with the file.
"""

from __future__ import annotations

import pickle
import tempfile
from collections import Counter
from dataclasses import dataclass

from . import policy as P
from .diagnosis import FileLevel
from .recompute import Recomputed, fast_all, task
from .verdicts import diagnose_row, gamma_errors, judge_row

CHUNK = 4096  # rows per chunk
LISTED = 20  # rows that are not ok kept for the terminal summary


class Tally:
    """Counts of verdicts, reasons and diagnoses; the worst excess; the first rows not ok."""

    def __init__(self):
        self.rows = 0
        self.counts: Counter = Counter()
        self.by_reason: Counter = Counter()
        self.by_diagnosis: Counter = Counter()
        self.above_alpha = 0
        self.worst = None  # the verdict whose printed numbers exceed alpha the most
        self.first_bad: list = []  # the first LISTED verdicts that are not ok
        self.bad = 0

    def add(self, v) -> None:
        self.rows += 1
        self.counts[v.verdict] += 1
        if "size" in v.reasons:
            self.above_alpha += 1
        if v.verdict == "finding":
            self.by_reason.update(v.reasons)
            self.by_diagnosis[v.diagnosis] += 1
            if "size" in v.reasons:
                rel = v.excess / v.row.problem.alpha
                if self.worst is None or rel > self.worst.excess / self.worst.row.problem.alpha:
                    self.worst = v
        if v.verdict != "ok":
            self.bad += 1
            if len(self.first_bad) < LISTED:
                self.first_bad.append(v)


def _order(todo) -> list:
    """Task positions grouped by law, the most demanding design of a law first
    (solving.law_order), so that the next tasks on the same worker find its tables
    in the high-precision solver's cache.  Only the order of work changes; results
    are put back in row order."""
    from ..solving import law_order

    return law_order([row.problem for row, _, _ in todo], todo[0][2] if todo else 0)


class Judging:
    """Pass 1 runs on construction (``modes``, ``notes`` are then known); iterating yields
    the verdicts in row order (pass 2); ``file_diagnosis`` is set when it ends."""

    def __init__(self, chunks, precision=50, workers=1, progress=None, rounding=None,
                 chunk=None):
        from ..parallel import pmap

        chunk = chunk or CHUNK
        self.chunks, self.chunk, self.workers = chunks, chunk, workers
        self.file_diagnosis: list = []
        fits = (Counter(), Counter())
        decimals = (Counter(), Counter())
        self.spool = tempfile.TemporaryFile(prefix="exactband-audit-")
        try:
            for rows in chunks(chunk):
                valid = [i for i, r in enumerate(rows) if r.error is None]
                fast = fast_all([rows[i].problem for i in valid])
                todo = [(rows[i], f, precision) for i, f in zip(valid, fast)]
                order = _order(todo)
                done = pmap(task, [todo[j] for j in order], workers, progress, max_chunk=32)
                recs = [Recomputed()] * len(rows)
                for j, rec in zip(order, done):
                    recs[valid[j]] = rec
                if progress:
                    progress(len(rows) - len(valid))
                for r, rec in zip(rows, recs):
                    if r.error is not None:
                        continue
                    for i in (0, 1):
                        if r.numbers[i] is not None:
                            decimals[i][r.decimals[i]] += 1
                    if rec.error is not None:
                        continue
                    same, errs = gamma_errors(r, rec)
                    for i in (0, 1):
                        d = r.decimals[i]
                        if same and errs[i] is not None and d is not None:
                            fits[i].update(m for m in P.MODES if P.within(m, d, errs[i]))
                pickle.dump(recs, self.spool, protocol=pickle.HIGHEST_PROTOCOL)
        except BaseException:
            self.spool.close()
            raise
        self.modes = (rounding, rounding) if rounding is not None else \
            tuple(P.mode_of(f) for f in fits)
        self.notes = _notes(decimals, self.modes, rounding)

    def __iter__(self):
        from ..parallel import pmap

        acc = FileLevel()
        try:
            self.spool.seek(0)
            for rows in self.chunks(self.chunk):
                recs = pickle.load(self.spool)
                verdicts = [judge_row(r, rec, self.modes) for r, rec in zip(rows, recs)]
                idx = [i for i, v in enumerate(verdicts) if v.verdict == "finding"]
                for i, v in zip(idx, pmap(diagnose_row, [verdicts[i] for i in idx],
                                          self.workers, None, 8)):
                    verdicts[i] = v
                for v in verdicts:
                    acc.add(v)
                    yield v
        finally:
            self.spool.close()
        self.file_diagnosis = acc.result()


def _notes(decimals, modes, rounding) -> list:
    """'gamma1, gamma2: gammas truncated to 4 decimals' and the like, once per file."""
    said = {}
    for i, name in ((0, "gamma1"), (1, "gamma2")):
        if not decimals[i]:
            continue
        col = P.column_decimals(Counter({d: k for d, k in decimals[i].items() if d}))
        if rounding is not None:
            text = f"read as {'truncated' if rounding == 'truncate' else 'rounded'} " \
                   "(--gamma-rounding)"
        elif modes[i] == "truncate" and col is not None:
            text = f"gammas truncated to {col} decimals"
        else:
            continue
        said.setdefault(text, []).append(name)
    return [f"{', '.join(names)}: {text}" for text, names in said.items()]


@dataclass
class Batch:
    """The verdicts of ``judge_batch`` with the rounding, notes and file diagnosis."""

    verdicts: list
    modes: tuple  # rounding of the gamma1 / gamma2 columns
    notes: list  # policy notes (e.g. "gammas truncated to 4 decimals")
    file_diagnosis: list  # said once at the top of the report


def judge_batch(rows, precision=50, workers=1, progress=None, rounding=None) -> Batch:
    """Verdicts for ``rows`` in order, all in memory (a whole file is judged in chunks
    by ``Judging``; see the docstring of verdicts for the policy)."""
    j = Judging(lambda size: iter([rows]), precision, workers, progress, rounding)
    verdicts = list(j)
    return Batch(verdicts, j.modes, j.notes, j.file_diagnosis)
