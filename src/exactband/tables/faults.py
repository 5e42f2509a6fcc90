"""Named stop points: deterministic interruption of a build, for tests and benches.

``EXACTBAND_STOP_AT=NAME`` (or ``NAME#K``: the K-th time the point is reached)
makes the process kill itself with SIGKILL at that point, exactly as ``kill -9``
would: no cleanup handler runs, nothing is flushed.  Without the variable the
points cost one dictionary look-up.  Points of a table build, in order:

* ``chunk-saved``      a chunk of verified designs was saved to the cache
* ``inside-write``     half of one file's bytes are in the staging folder
* ``staged``           every file of the set is complete in the staging folder
* ``manifest-removed`` the old set's manifest is gone (its files are still there)
* ``moved``            one more file of the new set is under its final name
* ``published``        the new manifest is in place (before the cleanup)
"""

from __future__ import annotations

import os
import signal

ENV = "EXACTBAND_STOP_AT"
_seen: dict = {}


def _target() -> tuple | None:
    text = os.environ.get(ENV, "").strip()
    if not text:
        return None
    name, _, count = text.partition("#")
    try:
        k = int(count) if count else 1
    except ValueError:
        k = 1
    return name, k


def stop_at(name: str) -> None:
    """Kill this process (SIGKILL) if ``EXACTBAND_STOP_AT`` names this point (and count)."""
    target = _target()
    if target is None or target[0] != name:
        return
    _seen[name] = _seen.get(name, 0) + 1
    if _seen[name] == target[1]:
        os.kill(os.getpid(), signal.SIGKILL)
