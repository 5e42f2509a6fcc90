"""Ordered map over a process pool, with progress callbacks (used by the slow checks)."""

from __future__ import annotations

import os


def resolve_workers(workers) -> int:
    """None: every core; otherwise at least 1."""
    if workers is None:
        return os.cpu_count() or 1
    return max(1, int(workers))


def pmap(fn, tasks, workers=None, progress=None, max_chunk: int = 64) -> list:
    """[fn(t) for t in tasks] in order, on ``workers`` processes when there are enough tasks.

    ``fn`` must be a module-level function (it is pickled); ``progress(k)`` is called
    as results arrive.
    """
    tasks = list(tasks)
    workers = resolve_workers(workers)
    out = []
    if workers == 1 or len(tasks) < 8:
        for t in tasks:
            out.append(fn(t))
            if progress:
                progress(1)
        return out
    from concurrent.futures import ProcessPoolExecutor

    chunk = max(1, min(max_chunk, len(tasks) // (4 * workers)))
    with ProcessPoolExecutor(max_workers=workers) as ex:
        for r in ex.map(fn, tasks, chunksize=chunk):
            out.append(r)
            if progress:
                progress(1)
    return out
