"""forked.start: a writer run in a child gives the parent its bytes or its error."""

from __future__ import annotations

import os

import pytest

from exactband.tables import forked


def _pid_and_bytes(n):
    return os.getpid(), bytes(range(256)) * n


def _fails(text):
    raise ValueError(text)


def test_result_from_child_equals_call_here(monkeypatch):
    job = forked.start(_pid_and_bytes, 4096)  # 1 MB: more than a pipe buffer
    pid, data = job.result()
    assert data == _pid_and_bytes(4096)[1]
    if forked.usable_cores() >= 2:
        assert pid != os.getpid()
    monkeypatch.setattr(forked, "usable_cores", lambda: 1)
    job = forked.start(_pid_and_bytes, 2)
    assert job.result() == (os.getpid(), bytes(range(256)) * 2)


def test_error_in_child_is_raised_in_parent():
    job = forked.start(_fails, "no such column")
    with pytest.raises(ValueError, match="no such column"):
        job.result()


def test_cancel_reaps_the_child():
    job = forked.start(_pid_and_bytes, 1)
    job.cancel()
    if isinstance(job, forked._Child):
        with pytest.raises(ChildProcessError):
            os.waitpid(job._pid, 0)
