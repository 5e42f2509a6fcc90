"""Run one writer in a forked child process while the parent runs another.

The spreadsheet and the PDF writers only format what the build computed and
share nothing, so on two or more cores the PDF is typeset in a child while the
parent writes the spreadsheet.  The child is a fork: it sees the TableSet as it
is in memory (nothing is pickled on the way in) and sends back only the bytes it
produced, or the exception it raised, which the parent raises again.  The bytes
are those of the same function called in the parent, so the set stays
byte-identical; with one usable core, or where fork is not available, the call
is made in the parent.  The child dies with its parent (PR_SET_PDEATHSIG).
"""

from __future__ import annotations

import os
import pickle
import traceback

from ..parallel import die_with_parent, usable_cores


class _Here:
    """A call made in this process (the fallback)."""

    def __init__(self, fn, args):
        self._fn, self._args = fn, args

    def result(self):
        return self._fn(*self._args)

    def cancel(self):
        pass


class _Child:
    """A call made in a forked child; result() collects its bytes or re-raises its error."""

    def __init__(self, fn, args):
        parent = os.getpid()
        r, w = os.pipe()
        pid = os.fork()
        if pid == 0:  # the child: compute, send, leave without running the parent's cleanup
            status = 0
            try:
                os.close(r)
                die_with_parent(parent)
                try:
                    payload = pickle.dumps((True, fn(*args)), protocol=pickle.HIGHEST_PROTOCOL)
                except BaseException as e:  # noqa: BLE001 - every failure goes to the parent
                    try:
                        payload = pickle.dumps((False, e))
                    except Exception:  # an exception that cannot be pickled: send its text
                        payload = pickle.dumps((False, RuntimeError(traceback.format_exc())))
                with os.fdopen(w, "wb") as fh:
                    fh.write(payload)
            except BaseException:  # noqa: BLE001
                status = 1
            finally:
                os._exit(status)
        os.close(w)
        self._pid, self._r = pid, r

    def result(self):
        with os.fdopen(self._r, "rb") as fh:
            data = fh.read()
        _, status = os.waitpid(self._pid, 0)
        if not data:
            raise RuntimeError(f"the writer process ended without a result (status {status})")
        ok, value = pickle.loads(data)
        if not ok:
            raise value
        return value

    def cancel(self):
        """Stop the child (the parent failed; its result is not wanted)."""
        import signal

        try:
            os.kill(self._pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        os.waitpid(self._pid, 0)
        os.close(self._r)


def start(fn, *args):
    """Begin ``fn(*args)``: in a forked child when 2+ cores are usable, else here, lazily.

    Returns an object whose ``result()`` gives fn's return value (or raises its error).
    """
    if usable_cores() >= 2 and hasattr(os, "fork"):
        return _Child(fn, args)
    return _Here(fn, args)
