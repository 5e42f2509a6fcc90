"""Ordered map over a process pool, with progress callbacks, and the number of workers.

One rule for the number of worker processes everywhere (API and every command):
the default is every core this process may run on (``os.sched_getaffinity``),
and the number used never exceeds the usable cores nor the number of tasks.
Pool workers die with their parent (Linux: PR_SET_PDEATHSIG), so a killed run
leaves no process behind.
"""

from __future__ import annotations

import os

from .strict import whole

MAX_WORKERS = 1024  # what --workers / workers= accepts; the number used is capped below


def usable_cores() -> int:
    """Cores this process may run on (its CPU affinity), at least 1."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # not Linux
        return max(1, os.cpu_count() or 1)


def check_workers(workers, field: str = "workers"):
    """None (the default) or a whole number from 1 to MAX_WORKERS (DesignError otherwise)."""
    if workers is None:
        return None
    w = whole(field, workers, f"a whole number of processes from 1 to {MAX_WORKERS}")
    if not 1 <= w <= MAX_WORKERS:
        from .errors import invalid

        raise invalid(field, workers, f"a whole number of processes from 1 to {MAX_WORKERS}")
    return w


def resolve_workers(workers, tasks: int | None = None) -> int:
    """Processes to use: None -> the usable cores; never more than the cores or the tasks."""
    w = check_workers(workers)
    cores = usable_cores()
    w = cores if w is None else min(w, cores)
    if tasks is not None:
        w = min(w, max(1, tasks))
    return max(1, w)


def die_with_parent(parent: int) -> None:
    """Ask Linux to kill this process when its parent dies (pool initializer, forked child)."""
    import signal
    import sys

    if sys.platform.startswith("linux"):
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            PR_SET_PDEATHSIG = 1
            libc.prctl(PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0)
        except (OSError, AttributeError):  # no libc prctl: best effort only
            pass
    if parent is not None and os.getppid() != parent:  # the parent died before the request
        os._exit(1)


def pmap(fn, tasks, workers=None, progress=None, max_chunk: int = 64, each=None,
         min_tasks: int = 8) -> list:
    """[fn(t) for t in tasks] in order, on ``workers`` processes when there are at least
    ``min_tasks`` tasks (fewer are done here).

    ``fn`` must be a module-level function (it is pickled); ``progress(1)`` and
    ``each(k, result)`` are called as the results arrive, in order.
    """
    tasks = list(tasks)
    workers = resolve_workers(workers, len(tasks))
    out = []
    if workers == 1 or len(tasks) < min_tasks:
        for k, t in enumerate(tasks):
            out.append(fn(t))
            if each:
                each(k, out[-1])
            if progress:
                progress(1)
        return out
    from concurrent.futures import ProcessPoolExecutor

    chunk = max(1, min(max_chunk, len(tasks) // (4 * workers)))
    import multiprocessing

    parent = os.getpid() if multiprocessing.get_start_method() == "fork" else None
    with ProcessPoolExecutor(max_workers=workers, initializer=die_with_parent,
                             initargs=(parent,)) as ex:
        for k, r in enumerate(ex.map(fn, tasks, chunksize=chunk)):
            out.append(r)
            if each:
                each(k, r)
            if progress:
                progress(1)
    return out
