"""`exactband table --check DIR`: re-verify a generated table set.

For every NAME.manifest.json in DIR: every listed file must exist with the
recorded SHA-256; NAME.csv must hold exactly the grid of the recorded spec;
every row is solved again by the high-precision solver and must agree: the
cutoffs exactly, the gammas to within 1e-15 (the 50-digit value rounded to a
double, a few units in the last place for a different mpmath build), the
sizes at the constraint points to within crosscheck.SIZE_TOL, the thresholds
exactly, and the digit-rule and conservative sizes (float law, as built) to
within 1e-12.  Findings are returned as lines; the CLI exits 1 on any.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

from .. import api
from ..crosscheck import SIZE_TOL
from ..errors import VerificationError
from . import grid
from .build import derive
from .manifest import FORMAT, sha256
from .spec import SpecError, from_mapping
from .write_csv import CONTRACT

GAMMA_TOL = 1e-15
DERIVED_TOL = 1e-12
MAX_LINES = 20  # findings listed per set; the rest are counted


def check_set(folder, *, workers=None, progress=None) -> tuple:
    """(ok, lines): re-verify every table set (manifest) in ``folder``."""
    d = Path(folder)
    if not d.is_dir():
        raise SpecError(f"invalid --check = {folder}: not a folder")
    manifests = sorted(d.glob("*.manifest.json"))
    if not manifests:
        raise SpecError(f"invalid --check = {folder}: no NAME.manifest.json in it "
                        "(not a generated table set)")
    ok, lines = True, []
    for m in manifests:
        findings, summary = _check_one(m, workers, progress)
        name = m.name[: -len(".manifest.json")]
        if findings:
            ok = False
            lines.append(f"{name}: FAILED, {len(findings)} finding(s)")
            lines += [f"  {f}" for f in findings[:MAX_LINES]]
            if len(findings) > MAX_LINES:
                lines.append(f"  ... and {len(findings) - MAX_LINES} more")
        else:
            lines.append(f"{name}: OK, {summary}")
    return ok, lines


def _check_one(mpath: Path, workers, progress) -> tuple:
    try:
        man = json.loads(mpath.read_text("utf-8"))
        if man.get("format") != FORMAT:
            return [f"{mpath.name}: unknown format {man.get('format')!r} (expected {FORMAT})"], ""
        name, files = man["name"], dict(man["files"])
        spec = from_mapping(man["spec"], name=name, source=man["spec_file"], where=mpath.name,
                            sha256=man["spec_sha256"], allow_large=True)
    except (OSError, ValueError, KeyError, TypeError, AttributeError) as e:
        return [f"{mpath.name}: unreadable manifest ({type(e).__name__}: {e})"], ""
    findings = []
    for fname, digest in sorted(files.items()):
        p = mpath.parent / fname
        if not p.is_file():
            findings.append(f"{fname}: listed in the manifest but missing")
        elif sha256(p.read_bytes()) != digest:
            findings.append(f"{fname}: SHA-256 differs from the manifest (the file was changed)")
    csv_name = f"{name}.csv"
    if csv_name not in files:
        return findings + [f"{csv_name}: not listed in the manifest"], ""
    try:
        rows = _read_csv(mpath.parent / csv_name)
    except (OSError, ValueError) as e:
        return findings + [f"{csv_name}: {e}"], ""
    findings += _check_rows(spec, rows, workers, progress)
    summary = (f"{len(files)} files match their SHA-256; {len(rows)} rows re-verified with the "
               f"{spec.precision}-digit solver: all agree")
    return findings, summary


def _read_csv(path: Path) -> list:
    with open(path, encoding="utf-8", newline="") as fh:
        reader = csv.reader(fh)
        header = next(reader, None)
        if header is None or tuple(header[:len(CONTRACT)]) != CONTRACT:
            raise ValueError("the header does not start with the contract columns")
        return [dict(zip(header, r)) for r in reader]


def _num(text: str):
    return None if text == "" else float(text)


def _int(text: str):
    return None if text == "" else int(text)


def _check_rows(spec, rows, workers, progress) -> list:
    problems = grid.expand(spec)
    if len(rows) != len(problems):
        return [f"{spec.name}.csv has {len(rows)} rows; the spec's grid has {len(problems)}"]
    findings, sols = [], []
    for i, (row, p) in enumerate(zip(rows, problems)):
        line = i + 2
        try:
            inputs = (row["family"], row["kind"], _num(row["n"]), _num(row["alpha"]),
                      _num(row["low"]), _num(row["high"]), _num(row["value"]),
                      _num(row["dispersion"]))
            sols.append((_int(row["c1"]), _num(row["gamma1"]), _int(row["c2"]),
                         _num(row["gamma2"])))
        except (ValueError, KeyError) as e:
            return findings + [f"line {line}: unreadable ({type(e).__name__}: {e})"]
        want = (p.family.name, p.kind.name, float(p.n), p.alpha, p.low, p.high, p.value,
                p.dispersion)
        if inputs != want:
            findings.append(f"line {line}: inputs {inputs} are not the grid's {want}")
    if findings:
        return findings
    if progress:
        progress(0, total=len(problems))
    try:
        designs = api.verify_many(problems, sols, spec.precision, workers=workers, progress=progress)
    except VerificationError as e:
        return [f"{spec.name}.csv: {e}"]
    for i, (row, d) in enumerate(zip(rows, designs)):
        findings += [f"line {i + 2} ({api.label(d.problem)}): {f}"
                     for f in _row_findings(spec, row, d)]
    return findings


def _close(text: str, x, tol: float) -> bool:
    if x is None:
        return text == ""
    return text != "" and abs(float(text) - x) <= tol


def _row_findings(spec, row, d) -> list:
    out = []
    for name, want in (("c1", d.c1), ("c2", d.c2)):
        if _int(row[name]) != want:
            out.append(f"{name} = {row[name]}, the precise solver gives {want}")
    for name, want in (("gamma1", d.gamma1), ("gamma2", d.gamma2)):
        if not _close(row[name], want, GAMMA_TOL):
            out.append(f"{name} = {row[name]}, the precise solver gives {want!r}")
    for name, want in (("size_low", d.size_low), ("size_high", d.size_high)):
        if not _close(row[name], want, SIZE_TOL):
            out.append(f"{name} = {row[name]}, the precise solver gives {want!r}")
    r = derive(d, spec)
    for name, want in (("threshold1", r.thresholds[0]), ("threshold2", r.thresholds[1])):
        if _int(row[name]) != want:
            out.append(f"{name} = {row[name]}, expected {want}")
    pairs = [("digit_rule_size", r.digit_sizes), ("conservative_size", r.conservative_sizes)]
    for stem, sizes in pairs:
        for j, end in enumerate(("low", "high")):
            want = None if sizes is None or j >= len(sizes) else sizes[j]
            if f"{stem}_{end}" in row and not _close(row[f"{stem}_{end}"], want, DERIVED_TOL):
                out.append(f"{stem}_{end} = {row[f'{stem}_{end}']}, expected {want!r}")
    return out
