"""Generate a table set and publish it as a unit: spec -> build (verified) -> every file.

Publishing (the manifest is the commit point):

1. one build at a time per output folder: an exclusive ``fcntl.flock`` on
   ``DIR/.exactband.lock`` (a second build waits, and says so);
2. a spec whose file names would collide with another set in the folder
   (``x.toml`` beside ``x.print.toml``: both would write ``x.print.csv``) is
   refused before anything is computed, and again just before the move;
3. all bytes are produced in memory, then written and fsync'ed into the
   staging folder ``DIR/.NAME.staging/``;
4. the old set's manifest is removed, the new files are renamed into place,
   the new manifest is renamed in last; then the staging folder and the
   verification cache are removed.

So a reader who finds ``NAME.manifest.json`` finds the complete set it lists;
files with no manifest beside them are not a set (``table --check`` reports
them).  A run stopped at any point leaves either the old set, or files without
a manifest that the next run replaces; the next run also removes a stale
staging folder, and the verification cache lets it resume.
"""

from __future__ import annotations

import contextlib
import errno
import fcntl
import json
import os
import shutil
from pathlib import Path

from ..errors import VerificationError
from ..fileio import file_mode, fsync_dir
from . import forked
from .build import build
from .faults import stop_at
from .layout import build_sections
from .manifest import manifest_bytes, sha256
from .spec import SpecError, load_spec
from .spec_oc import curve_pages
from .texts import cover_blocks, provenance_rows
from .write_csv import csv_bytes, print_csv_bytes
from .write_pdf import pdf_bytes
from .write_xlsx import xlsx_bytes

SUFFIXES = (".csv", ".print.csv", ".xlsx", ".pdf", ".manifest.json")
MANIFEST = ".manifest.json"
LOCK = ".exactband.lock"


def set_files(name: str) -> tuple:
    """The file names of the set called ``name``, the manifest last."""
    return tuple(name + s for s in SUFFIXES)


def check_out_dir(out) -> Path:
    if str(out).strip() == "":
        raise SpecError(f"invalid --out = {out!r}: a folder name is required", field="--out",
                        value=out, allowed="a folder name is required")
    p = Path(out)
    if p.exists() and not p.is_dir():
        raise SpecError(f"invalid --out = {out}: it exists and is not a folder", field="--out",
                        value=out)
    for parent in p.absolute().parents:
        if parent.exists():
            if not parent.is_dir():
                raise SpecError(f"invalid --out = {out}: {parent} is not a folder",
                                field="--out", value=out)
            break
    return p


def render(tset) -> dict:
    """name -> bytes of every file of the set, the manifest last."""
    name = tset.spec.name
    sections = build_sections(tset)
    blocks = cover_blocks(tset, sections)
    files = {f"{name}.csv": csv_bytes(tset)}
    prov = provenance_rows(tset, sha256(files[f"{name}.csv"]))
    pdf = forked.start(pdf_bytes, tset, sections, blocks, prov)  # typeset beside the xlsx
    try:
        files[f"{name}.print.csv"] = print_csv_bytes(sections)
        files[f"{name}.xlsx"] = xlsx_bytes(tset, sections, blocks, prov)
    except BaseException:
        pdf.cancel()
        raise
    files[f"{name}.pdf"] = pdf.result()
    files[f"{name}.manifest.json"] = manifest_bytes(tset, dict(files))
    return files


def generate(spec_path, out_dir, *, allow_large=False, workers=None, progress=None,
             log=None) -> list:
    """Write the table set of ``spec_path`` into ``out_dir``; return the paths written."""
    spec = load_spec(spec_path, allow_large=allow_large)
    for note in spec.notes if log else ():
        log(note)
    out = check_out_dir(out_dir)
    existed = out.exists()
    check_collisions(out, spec.name)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise SpecError(f"invalid --out = {out_dir}: cannot create the folder "
                        f"({e.strerror or e})") from None
    try:
        with folder_lock(out, log):
            check_collisions(out, spec.name)  # another build may have published meanwhile
            _remove_stale(out, spec.name)
            tset = build(spec, out, workers=workers, progress=progress, log=log)
            if progress and log:  # on a terminal: say what the pause after the bar is
                pages = curve_pages(spec.kinds, len(spec.alpha), len(spec.bands),
                                    len(spec.values), spec.oc) if spec.oc is not None else 0
                extra = f" with {pages} pages of OC curves (about a second each)" if pages else ""
                log(f"{len(tset.rows)} designs verified; writing the table set{extra}")
            paths = publish(out, spec.name, render(tset))
    except (VerificationError, SpecError):
        if not existed:
            with contextlib.suppress(OSError):
                out.rmdir()  # nothing was written (the lock file is gone with the lock)
        raise
    return paths


def publish(out: Path, name: str, files: dict) -> list:
    """Stage ``files`` (name -> bytes, the manifest last) and move them into ``out``."""
    staging = out / f".{name}.staging"
    shutil.rmtree(staging, ignore_errors=True)
    staging.mkdir()
    mode = file_mode()
    for fname, data in files.items():
        _write_synced(staging / fname, data, mode)
    fsync_dir(staging)
    stop_at("staged")
    check_collisions(out, name)
    manifest = f"{name}{MANIFEST}"
    with contextlib.suppress(FileNotFoundError):
        os.unlink(out / manifest)  # de-commit the old set before touching its files
    fsync_dir(out)
    stop_at("manifest-removed")
    paths = []
    for fname in [f for f in files if f != manifest] + [manifest]:
        if fname == manifest:
            fsync_dir(out)  # the files' renames are durable before the commit point
        os.replace(staging / fname, out / fname)
        stop_at("published" if fname == manifest else "moved")
        paths.append(out / fname)
    fsync_dir(out)
    shutil.rmtree(staging, ignore_errors=True)
    shutil.rmtree(out / f".{name}.verify-cache", ignore_errors=True)
    return paths


def _write_synced(path: Path, data: bytes, mode: int) -> None:
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, mode)
    with os.fdopen(fd, "wb") as fh:
        half = len(data) // 2
        fh.write(data[:half])
        if half:
            fh.flush()
            stop_at("inside-write")
        fh.write(data[half:])
        fh.flush()
        os.fsync(fh.fileno())
    os.chmod(path, mode)  # os.open's mode is filtered by the umask already; be explicit


def _remove_stale(out: Path, name: str) -> None:
    """What a killed run of this spec left behind: its staging folder and temporary files."""
    shutil.rmtree(out / f".{name}.staging", ignore_errors=True)
    for suffix in SUFFIXES:
        for tmp in out.glob(f".{name}{suffix}.*.part"):
            with contextlib.suppress(OSError):
                tmp.unlink()


# -- collisions between sets in one folder -----------------------------------------
def claimed(out: Path) -> dict:
    """file name -> the set (manifest name) that owns it, for every manifest in ``out``."""
    owners = {}
    if not out.is_dir():
        return owners
    for m in sorted(out.glob(f"*{MANIFEST}")):
        other = m.name[: -len(MANIFEST)]
        for f in set_files(other):
            owners.setdefault(f, other)
    return owners


def check_collisions(out: Path, name: str) -> None:
    """Refuse a set whose file names another set in ``out`` uses (or the other way round)."""
    mine = set(set_files(name))
    for fname, other in sorted(claimed(out).items()):
        if other != name and fname in mine:
            raise SpecError(f"invalid spec name = {name}: its file {fname} belongs to the set "
                            f"'{other}' already in {out}; rename one of the two specs")


# -- the folder lock -----------------------------------------------------------------
@contextlib.contextmanager
def folder_lock(out: Path, log=None):
    """Exclusive lock on ``out`` for one build (fcntl.flock on DIR/.exactband.lock).

    The lock file is removed on release; a waiter that then finds a different
    file (or none) under the name takes the lock again on the new one.
    """
    path = out / LOCK
    while True:
        try:
            fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as e:
            raise SpecError(f"invalid --out = {out}: cannot write into the folder "
                            f"({e.strerror or e})") from None
        try:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError as e:
                if e.errno not in (errno.EAGAIN, errno.EACCES):
                    raise
                if log:
                    log(f"another build is writing into {out}; waiting for it to finish")
                fcntl.flock(fd, fcntl.LOCK_EX)
            try:
                same = os.fstat(fd).st_ino == os.stat(path).st_ino
            except FileNotFoundError:
                same = False
            if same:
                break
        except BaseException:
            os.close(fd)
            raise
        os.close(fd)
    try:
        os.write(fd, json.dumps({"pid": os.getpid()}).encode() + b"\n")
        yield
    finally:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(path)
        os.close(fd)
