"""A process pool with a hard timeout per job, for the bench scripts.

Each worker (forked, so the parent's imports are shared) takes one job at a time from
a pipe and returns fn(job), a dict; a job past ``timeout`` seconds of wall time is
recorded as {"outcome": "timeout", ...} and its worker killed and replaced, so one
stuck design never stalls a run.  A worker that dies is recorded as "internal".
"""

from __future__ import annotations

import multiprocessing as mproc
import time
from multiprocessing.connection import wait


def _worker(conn, fn):
    while True:
        try:
            job = conn.recv()
        except EOFError:
            return
        if job is None:
            return
        conn.send(fn(job))


class Pool:
    """Worker processes fed one job at a time; a job past its timeout kills its worker."""

    def __init__(self, workers: int, timeout: float, fn):
        self.ctx = mproc.get_context("fork")
        self.timeout, self.fn = timeout, fn
        self.slots = [self._start() for _ in range(workers)]

    def _start(self):
        parent, child = self.ctx.Pipe()
        p = self.ctx.Process(target=_worker, args=(child, self.fn), daemon=True)
        p.start()
        child.close()
        return {"proc": p, "conn": parent, "job": None, "t0": 0.0}

    def run(self, jobs, progress=None):
        results = [None] * len(jobs)
        todo = list(range(len(jobs)))[::-1]
        done = 0
        while done < len(jobs):
            for s in self.slots:
                if s["job"] is None and todo:
                    i = todo.pop()
                    s["job"], s["t0"] = i, time.perf_counter()
                    s["conn"].send(jobs[i])
            busy = [s for s in self.slots if s["job"] is not None]
            now = time.perf_counter()
            left = min(self.timeout - (now - s["t0"]) for s in busy)
            ready = wait([s["conn"] for s in busy], timeout=max(0.0, left))
            now = time.perf_counter()
            for k, s in enumerate(self.slots):
                if s["job"] is None:
                    continue
                if s["conn"] in ready:
                    try:
                        results[s["job"]] = s["conn"].recv()
                    except EOFError:  # the worker died (e.g. killed for memory)
                        results[s["job"]] = dict(outcome="internal", cls="worker died",
                                                 msg="worker process died",
                                                 time=now - s["t0"])
                        self._replace(k)
                elif now - s["t0"] >= self.timeout:
                    results[s["job"]] = dict(outcome="timeout", cls="timeout",
                                             msg=f"over {self.timeout:g} s", time=now - s["t0"])
                    self._replace(k)
                else:
                    continue
                self.slots[k]["job"] = None
                done += 1
                if progress:
                    progress(done, len(jobs))
        return results

    def _replace(self, k):
        s = self.slots[k]
        s["proc"].kill()
        s["proc"].join()
        s["conn"].close()
        self.slots[k] = self._start()

    def close(self):
        for s in self.slots:
            try:
                s["conn"].send(None)
            except OSError:
                pass
            s["proc"].join(5)
            if s["proc"].is_alive():
                s["proc"].kill()
