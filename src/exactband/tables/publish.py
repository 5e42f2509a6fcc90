"""Generate a table set: spec -> build (verified) -> every file, written atomically.

All bytes are produced in memory first; only then are the files written, each
to a temporary file in DIR that is flushed and renamed (exactband.fileio), the
manifest last.  A run stopped at any point leaves no partial file under a final
name, and the verification cache lets the next run resume.
"""

from __future__ import annotations

import contextlib
import os
from pathlib import Path

from ..errors import VerificationError
from ..fileio import atomic_write_bytes
from .build import build
from .cache import VerifyCache
from .layout import build_sections
from .manifest import manifest_bytes, sha256
from .spec import SpecError, load_spec
from .spec_oc import curve_pages
from .texts import cover_blocks, provenance_rows
from .write_csv import csv_bytes, print_csv_bytes
from .write_pdf import pdf_bytes
from .write_xlsx import xlsx_bytes

SUFFIXES = (".csv", ".print.csv", ".xlsx", ".pdf", ".manifest.json")


def check_out_dir(out) -> Path:
    p = Path(out)
    if p.exists() and not p.is_dir():
        raise SpecError(f"invalid --out = {out}: it exists and is not a folder")
    for parent in p.absolute().parents:
        if parent.exists():
            if not parent.is_dir():
                raise SpecError(f"invalid --out = {out}: {parent} is not a folder")
            break
    return p


def render(tset) -> dict:
    """name -> bytes of every file of the set, the manifest last."""
    name = tset.spec.name
    sections = build_sections(tset)
    blocks = cover_blocks(tset, sections)
    files = {f"{name}.csv": csv_bytes(tset), f"{name}.print.csv": print_csv_bytes(sections)}
    prov = provenance_rows(tset, sha256(files[f"{name}.csv"]))
    files[f"{name}.xlsx"] = xlsx_bytes(tset, sections, blocks, prov)
    files[f"{name}.pdf"] = pdf_bytes(tset, sections, blocks, prov)
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
    _remove_stale_parts(out, spec.name)
    try:
        tset = build(spec, out, workers=workers, progress=progress, log=log)
    except (VerificationError, SpecError):
        if not existed:
            with contextlib.suppress(OSError):
                out.rmdir()
        raise
    if progress and log:  # on a terminal: say what the pause after the bar is
        pages = curve_pages(spec.kinds, len(spec.alpha), len(spec.bands), len(spec.values),
                            spec.oc) if spec.oc is not None else 0
        extra = f" with {pages} pages of OC curves (about a second each)" if pages else ""
        log(f"{len(tset.rows)} designs verified; writing the table set{extra}")
    files = render(tset)
    mode = _file_mode()
    paths = []
    for fname, data in files.items():
        atomic_write_bytes(out / fname, data)
        os.chmod(out / fname, mode)  # the temporary file was private (0600)
        paths.append(out / fname)
    VerifyCache(out, spec).clear()
    return paths


def _file_mode() -> int:
    """Permissions of an ordinary new file under the current umask."""
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def _remove_stale_parts(out: Path, name: str) -> None:
    """Temporary files a killed run of this spec left behind (never a final name)."""
    if not out.is_dir():
        return
    for suffix in SUFFIXES:
        for tmp in out.glob(f".{name}{suffix}.*.part"):
            with contextlib.suppress(OSError):
                tmp.unlink()
