"""`exactband table --check DIR`: regenerate every set in DIR and compare the bytes.

For every NAME.manifest.json in DIR the set is built again from the spec the
manifest records (every design solved by the fast solver and confirmed by the
high-precision solver, as in the build), all its files are rendered in memory,
and each file in DIR must be byte for byte the regenerated one.  Whatever the
recorded hashes say, any edit anywhere is caught; where a file differs the
finding names it in plain words (CSV: data row, 1-based, and column;
spreadsheet: sheet and cell; PDF: page; manifest: key).

Also findings: files of a set with no manifest (an interrupted or partial set,
or a manifest deleted), a folder with no manifest at all, a manifest whose name
or file list is not its own.  Only the fixed file names of a set are opened, in
DIR itself: a manifest naming a path elsewhere (absolute, with '..' or a
folder) is refused without opening it, and so is a symbolic link.
"""

from __future__ import annotations

import json
import os
import re
import tempfile
from pathlib import Path

from ..errors import VerificationError
from .build import build
from .compare import describe
from .manifest import FORMAT
from .publish import MANIFEST, render, set_files
from .spec import SpecError, from_mapping
from .versions import versions

MAX_LINES = 20  # findings listed per set; the rest are counted
MAX_MANIFEST = 4 * 1024 * 1024
SET_SUFFIXES = (".csv", ".xlsx", ".pdf", ".json")
_NAME_RE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]*")


def check_set(folder, *, workers=None, progress=None) -> tuple:
    """(ok, lines): regenerate every table set (manifest) in ``folder`` and compare."""
    d = Path(folder)
    if str(folder).strip() == "" or not d.is_dir():
        raise SpecError(f"invalid --check = {folder}: not a folder", field="--check",
                        value=folder, allowed="a folder")
    entries = sorted(p.name for p in d.iterdir() if not p.name.startswith("."))
    manifests = [n for n in entries if n.endswith(MANIFEST)]
    ok, lines, owned = True, [], set()
    if not manifests:
        ok = False
        lines.append(f"{folder}: FAILED, no table set: no NAME{MANIFEST} in the folder")
    for m in manifests:
        name = m[: -len(MANIFEST)]
        owned.update(set_files(name))
        findings, summary = _check_one(d, m, workers, progress)
        if findings:
            ok = False
            lines.append(f"{name}: FAILED, {len(findings)} finding(s)")
            lines += [f"  {f}" for f in findings[:MAX_LINES]]
            if len(findings) > MAX_LINES:
                lines.append(f"  ... and {len(findings) - MAX_LINES} more")
        else:
            lines.append(f"{name}: OK, {summary}")
    for stale in sorted(d.glob(".*.staging")):
        lines.append(f"note: {stale.name}/ is left by an interrupted build (it is not part "
                     "of any set; the next build of that spec removes it)")
    orphans = [n for n in entries if n.endswith(SET_SUFFIXES) and n not in owned]
    if orphans:
        ok = False
        lines.append(f"{len(orphans)} file(s) belong to no set (no manifest beside them; an "
                     "interrupted or partial set?):")
        lines += [f"  {n}" for n in orphans[:MAX_LINES]]
        if len(orphans) > MAX_LINES:
            lines.append(f"  ... and {len(orphans) - MAX_LINES} more")
    return ok, lines


def _plain_name(fname) -> bool:
    """A bare file name in the set's folder (no folder part, not '.' or '..')."""
    return (isinstance(fname, str) and fname not in ("", ".", "..") and "/" not in fname
            and "\\" not in fname and "\0" not in fname and not os.path.isabs(fname))


class _Refused(Exception):
    """A manifest that cannot be used (the message says why)."""


def _read_manifest(folder: Path, mname: str) -> dict:
    path = folder / mname
    if path.is_symlink():
        raise _Refused("is a symbolic link; refused (a set's files live in its folder)")
    try:
        if path.stat().st_size > MAX_MANIFEST:
            raise _Refused(f"is larger than {MAX_MANIFEST} bytes; not a manifest")
        man = json.loads(path.read_text("utf-8"))
    except OSError as e:
        raise _Refused(f"cannot be read ({e.strerror or e})") from None
    except ValueError as e:
        raise _Refused(f"is not valid UTF-8 JSON ({type(e).__name__})") from None
    if not isinstance(man, dict):
        raise _Refused("is not a JSON object")
    if man.get("format") != FORMAT:
        raise _Refused(f"has an unknown format {man.get('format')!r} (expected {FORMAT})")
    return man


def _check_one(folder: Path, mname: str, workers, progress) -> tuple:
    name = mname[: -len(MANIFEST)]
    try:
        man = _read_manifest(folder, mname)
    except _Refused as e:
        return [f"{mname}: {e}"], ""
    findings = []
    if man.get("name") != name or not _NAME_RE.fullmatch(name):
        return [f"{mname}: names the set {man.get('name')!r}; a manifest must be called "
                f"NAME{MANIFEST} after its own set"], ""
    listed = man.get("files")
    if not isinstance(listed, dict):
        return [f"{mname}: has no list of files"], ""
    bad = [f for f in listed if not _plain_name(f)]
    if bad:
        findings += [f"{mname}: lists {f!r}, a path outside the set's folder; refused "
                     "(not opened)" for f in bad]
    try:
        spec = from_mapping(man["spec"], name=name, source=str(man["spec_file"]),
                            where=mname, sha256=str(man["spec_sha256"]), allow_large=True)
    except (SpecError, KeyError, TypeError, AttributeError) as e:
        return findings + [f"{mname}: its spec cannot be rebuilt ({e})"], ""
    try:
        with tempfile.TemporaryDirectory(prefix="exactband-check-") as tmp:
            files = render(build(spec, Path(tmp), workers=workers, progress=progress))
    except (VerificationError, SpecError) as e:
        return findings + [f"{name}: regenerating the set failed: {e}"], ""
    for fname, want in files.items():
        findings += _compare_file(folder, fname, want)
    if findings and man.get("versions") != versions(spec.oc is not None):
        findings.append(f"note: the set was made with {_versions_text(man.get('versions'))}; "
                        f"this check runs {_versions_text(versions(spec.oc is not None))}; "
                        "files can differ for that reason alone")
    summary = (f"all {len(files)} files are byte for byte the set regenerated from its spec "
               f"({len(spec_rows(files, name))} rows re-verified with the {spec.precision}-digit "
               "solver)")
    return findings, summary


def spec_rows(files: dict, name: str) -> list:
    """The data rows of the regenerated NAME.csv (for the summary line)."""
    return files[f"{name}.csv"].decode("utf-8").split("\r\n")[1:-1]


def _compare_file(folder: Path, fname: str, want: bytes) -> list:
    path = folder / fname
    if path.is_symlink():
        return [f"{fname}: is a symbolic link; refused (a set's files live in its folder)"]
    if not path.exists():
        return [f"{fname}: missing (the set lists it)"]
    if not path.is_file():
        return [f"{fname}: is not a file"]
    try:
        size = path.stat().st_size
        if size == len(want):
            have = path.read_bytes()
            if have == want:
                return []
        elif size > 2 * len(want) + 1024 * 1024:
            return [f"{fname}: {size} bytes in the file, {len(want)} regenerated"]
        else:
            have = path.read_bytes()
    except OSError as e:
        return [f"{fname}: cannot be read ({e.strerror or e})"]
    return describe(fname, have, want)


def _versions_text(v) -> str:
    if not isinstance(v, dict):
        return "unrecorded versions"
    return ", ".join(f"{k} {v[k]}" for k in sorted(v))
