"""File output helpers shared by every writer: atomic writes and safe cell text.

Convention: a file is written to a temporary file in the target folder,
flushed, fsync'ed and renamed over the final name, so an interrupted run never
leaves a partial file under a final name.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path

from .errors import ExactbandError

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


class OutputError(ExactbandError, OSError):
    """A file or folder cannot be written (one line naming the path; CLI exit 2)."""


@contextlib.contextmanager
def atomic_open(path, mode: str = "wb", encoding: str | None = None, newline: str | None = None):
    """Open a temporary file next to ``path``; on success fsync and rename it into place."""
    path = Path(path)
    if (path.exists() or path.is_symlink()) and not path.is_file():
        # a folder, device, pipe or socket: renaming over it would destroy it
        raise OutputError(f"cannot write {path}: it exists and is not a regular file")
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    except OSError as e:
        blocker = next((q for q in path.parents if q.exists() and not q.is_dir()), None)
        why = f"{blocker} is not a folder" if blocker else (e.strerror or type(e).__name__)
        raise OutputError(f"cannot write {path}: {why}") from None
    try:
        kwargs = {} if "b" in mode else {"encoding": encoding or "utf-8", "newline": newline}
        with os.fdopen(fd, mode, **kwargs) as fh:
            yield fh
            fh.flush()
            os.chmod(tmp, file_mode())  # mkstemp makes 0600; give a normal file's mode
            os.fsync(fh.fileno())
        try:
            os.replace(tmp, path)
        except OSError as e:
            raise OutputError(f"cannot write {path}: {e.strerror or type(e).__name__}") from None
        fsync_dir(path.parent)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def file_mode() -> int:
    """Permissions of an ordinary new file under the current umask (0o666 less the mask).

    The umask can only be read by setting it; it is set back at once."""
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def fsync_dir(folder: Path) -> None:
    with contextlib.suppress(OSError):
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)


def atomic_write_bytes(path, data: bytes) -> None:
    with atomic_open(path, "wb") as fh:
        fh.write(data)


def atomic_write_text(path, text: str) -> None:
    atomic_write_bytes(path, text.encode("utf-8"))


def safe_cell_text(text) -> str:
    """User text for a spreadsheet/CSV cell that can never be read as a formula.

    Text starting with = + - @ (or a tab / carriage return) gets a leading
    apostrophe (a single quote character is prefixed), the common practice of
    spreadsheet tools for literal text.
    """
    s = "" if text is None else str(text)
    return "'" + s if s.startswith(_FORMULA_START) else s
