"""Table sets under faults and tampering (issue 9, items 1-5 and 9).

A poisoned verification cache, an edited row used by ``decide --table``, edits
that ``table --check`` must catch whatever the recorded hashes say, a set
published as a unit (named stop points instead of wall-clock kills), name
collisions, the folder lock, and SOURCE_DATE_EPOCH.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import openpyxl
import pytest

from exactband.cli import main
from exactband.decide import DecideError
from exactband.tables import check_set, generate
from exactband.tables.publish import folder_lock
from exactband.tableverify import verified_table_rule

from .tables_support import FINAL, SMALL, built, interrupted_build, set_files, write_spec


@pytest.fixture(scope="module")
def root(tmp_path_factory):
    return tmp_path_factory.mktemp("sets")


@pytest.fixture(scope="module")
def ref(root):
    return built(str(root), "small", SMALL)


def _copy(ref: Path, dest: Path) -> Path:
    shutil.copytree(ref, dest)
    return dest


def _edit_csv(path: Path, row: int, changes: dict) -> None:
    """Set cells of data row ``row`` (1-based) of a generated CSV, keeping its bytes otherwise."""
    lines = path.read_bytes().decode("utf-8").split("\r\n")
    header = lines[0].split(",")
    cells = lines[row].split(",")
    for name, value in changes.items():
        cells[header.index(name)] = value
    lines[row] = ",".join(cells)
    path.write_bytes("\r\n".join(lines).encode("utf-8"))


def _rehash(folder: Path, name: str = "small") -> None:
    """What a forger does after an edit: make the manifest's hashes match the files."""
    mp = folder / f"{name}.manifest.json"
    man = json.loads(mp.read_text("utf-8"))
    for f in man["files"]:
        man["files"][f] = hashlib.sha256((folder / f).read_bytes()).hexdigest()
    mp.write_text(json.dumps(man, sort_keys=True, indent=2) + "\n", encoding="utf-8")


# -- 1. a poisoned verification cache is never published -------------------------------
@pytest.mark.parametrize("forger, why", [
    (None, "digest does not match"),  # an edit alone breaks the chunk's digest
    ("rule", "differs from the fast solution"),  # a forger who recomputes the digest
    ("sizes", "are not alpha"),
])
def test_poisoned_cache_is_discarded(tmp_path, monkeypatch, ref, forger, why):
    spec, out, parts = interrupted_build(tmp_path, monkeypatch)
    doc = json.loads(parts[0].read_text("utf-8"))
    rec = doc["records"][0]  # a two-point design (equivalence n=10, alpha=0.01: the build
    # verifies by law, the most demanding design first)
    assert len(rec["sizes"]) == 2
    if forger == "sizes":
        rec["sizes"][1] = 0.06
    else:
        rec["c1"], rec["gamma1"] = rec["c1"] + 6, 0.5
    if forger:  # recompute the chunk digest as the code does: only the fast check remains
        stamp = (out / ".small.verify-cache" / "stamp.json").read_text("utf-8")
        body = stamp + "\n" + json.dumps(doc["records"], sort_keys=True)
        doc["digest"] = hashlib.sha256(body.encode("utf-8")).hexdigest()
    parts[0].write_text(json.dumps(doc), encoding="utf-8")
    notes = []
    generate(spec, out, workers=1, log=notes.append)
    assert len(notes) == 1 and "verification cache failed its check" in notes[0], notes
    assert why in notes[0] and "every design is verified again" in notes[0]
    assert set_files(out) == set_files(ref)  # the published set is the honest one


# -- 2. decide --table refuses an edited row ------------------------------------------
def test_decide_table_refuses_an_edited_row(tmp_path, ref, capsys):
    folder = _copy(ref, tmp_path / "t")
    csv_path = folder / "small.csv"
    args = ["decide", "--table", str(csv_path), "--row", "1", "--y", "16", "--digits-read", "123"]
    assert main(args) == 0  # the row as published: c1 = 13, Y = 16 lies inside
    assert "DO NOT REJECT" in capsys.readouterr().out
    # c1 13 -> 17 with a gamma and its threshold: the rule would now reject Y = 16
    _edit_csv(csv_path, 1, {"c1": "17", "gamma1": "0.5", "threshold1": "500",
                            "gamma1_decimal": "0.5"})
    assert main(args) == 2
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and "SHA-256 differs from small.manifest.json" in err[0]
    (folder / "small.manifest.json").unlink()  # no manifest: the fresh solve still refuses
    assert main(args) == 2
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and err[0].startswith("exactband: error: ")
    assert "row 1: c1 is 17 in the table, but solving the row's design gives 13" in err[0]


@pytest.mark.parametrize("column, value", [
    ("threshold1", "316"),  # one below floor(gamma1 * 1000) = 317
    ("gamma2", "0.75038311612170"),  # the 14th digit
    ("size_high", "0.051"),
    ("gamma2_decimal", "0.750383116121707963807635065706"),  # the 30th digit
])
def test_verified_row_names_the_field(tmp_path, ref, column, value):
    folder = _copy(ref, tmp_path / "t")
    (folder / "small.manifest.json").unlink()
    _edit_csv(folder / "small.csv", 1, {column: value})
    with pytest.raises(DecideError, match=rf"row 1: {column} is {value} in the table"):
        verified_table_rule(folder / "small.csv", 1)
    assert verified_table_rule(folder / "small.csv", 2).row == 2  # other rows still verify


# -- 3. --check regenerates and compares bytes ----------------------------------------
def test_check_catches_edits_whatever_the_hashes_say(tmp_path, ref):
    folder = _copy(ref, tmp_path / "t")
    _edit_csv(folder / "small.csv", 3, {"gamma1_decimal": "0.1"})
    text = (folder / "small.print.csv").read_bytes().decode("utf-8").split("\r\n")
    text[2] = text[2].replace(",", ";", 1)
    (folder / "small.print.csv").write_bytes("\r\n".join(text).encode("utf-8"))
    wb = openpyxl.load_workbook(folder / "small.xlsx")
    ws = wb.worksheets[1]
    ws["C8"] = 999
    wb.save(folder / "small.xlsx")
    _rehash(folder)
    ok, lines = check_set(folder, workers=1)
    text = "\n".join(lines)
    assert not ok and "small: FAILED" in text
    assert "small.csv row 3: gamma1_decimal is 0.1 in the file, recomputed 0." in text
    assert "small.print.csv row 2:" in text
    assert f"small.xlsx sheet '{ws.title}' cell C8: 999 in the file, recomputed" in text


def test_check_orphans_missing_manifest_and_hostile_paths(tmp_path, ref, capsys, monkeypatch):
    folder = _copy(ref, tmp_path / "t")
    for suffix in FINAL[:-1]:  # a second set whose manifest was deleted
        shutil.copy(folder / f"small{suffix}", folder / f"other{suffix}")
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    out = capsys.readouterr().out
    assert "small: OK" in out and "4 file(s) belong to no set" in out and "other.pdf" in out
    for suffix in FINAL[:-1]:
        (folder / f"other{suffix}").unlink()
    # a hostile manifest: an absolute path and '..' are refused, never opened
    man = json.loads((folder / "small.manifest.json").read_text("utf-8"))
    man["files"]["/etc/passwd"] = man["files"].pop("small.pdf")
    man["files"]["../small.csv"] = "0" * 64
    (folder / "small.manifest.json").write_text(json.dumps(man), encoding="utf-8")
    opened = []
    for method in ("read_bytes", "read_text", "open"):
        real = getattr(Path, method)

        def spy(self, *a, _real=real, **kw):
            opened.append(Path(self).absolute())
            return _real(self, *a, **kw)

        monkeypatch.setattr(Path, method, spy)
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    monkeypatch.undo()
    assert opened and all(p.parent == folder.absolute() for p in opened), opened
    out = capsys.readouterr().out
    assert "lists '/etc/passwd', a path outside the set's folder; refused" in out
    assert "lists '../small.csv', a path outside" in out
    # a set file that is a symbolic link to a file elsewhere is refused
    outside = tmp_path / "elsewhere.pdf"
    shutil.copy(ref / "small.pdf", outside)
    (folder / "small.pdf").unlink()
    (folder / "small.pdf").symlink_to(outside)
    shutil.copy(ref / "small.manifest.json", folder / "small.manifest.json")
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    assert "small.pdf: is a symbolic link; refused" in capsys.readouterr().out
    # the only manifest gone: exit 1 (a finding), not 2, and the files are named
    (folder / "small.manifest.json").unlink()
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    out = capsys.readouterr().out
    assert "no table set: no NAME.manifest.json" in out and "small.csv" in out


# -- 4. a set is published as a unit ---------------------------------------------------
def _run(spec: Path, out: Path, stop: str | None = None, **kw):
    env = dict(os.environ)
    env.pop("EXACTBAND_STOP_AT", None)
    if stop:
        env["EXACTBAND_STOP_AT"] = stop
    cmd = [sys.executable, "-m", "exactband", "table", str(spec), "--out", str(out),
           "--workers", "1"]
    return subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env,
                            cwd=spec.parent, **kw)


def _state(folder: Path, old: dict, new: dict) -> str:
    """'old' or 'new' (a manifest and exactly its set), 'none' (no manifest), else 'MIXED'."""
    have = {k: v for k, v in set_files(folder).items() if not k.startswith(".")}
    if "small.manifest.json" not in have:
        return "none"
    for label, want in (("old", old), ("new", new)):
        if have == want:
            return label
    return "MIXED"


def test_stop_points_never_leave_a_mixed_set(tmp_path, ref):
    """kill -9 (SIGKILL from inside, at named points) while verifying, staging and moving
    files into a folder that holds an older version of the set: the folder always shows
    the old set, the new set, or no manifest (files without a manifest are no set, and
    --check says so); the rerun publishes the new set and leaves nothing behind."""
    spec = write_spec(tmp_path, "small", SMALL.replace("Test table:", "Test table (v2):"))
    (tmp_path / "v1").mkdir()
    write_spec(tmp_path / "v1", "small", SMALL)
    out = tmp_path / "out"
    generate(tmp_path / "v1" / "small.toml", out, workers=1)
    old = set_files(out)
    generate(spec, tmp_path / "want", workers=1)
    new = set_files(tmp_path / "want")
    assert old != new
    seen = []
    for stop in ("chunk-saved", "inside-write", "staged", "manifest-removed", "moved#2",
                 "published"):
        proc = _run(spec, out, stop)
        proc.communicate(timeout=300)
        assert proc.returncode == -9, (stop, proc.returncode)
        state = _state(out, old, new)
        seen.append(state)
        assert state != "MIXED", stop
        if state == "none":
            ok, lines = check_set(out, workers=1)
            assert not ok and "no table set" in lines[0]
            assert "note: .small.staging/ is left by an interrupted build" in lines[1]
    assert seen == ["old", "old", "old", "none", "none", "new"]
    proc = _run(spec, out)
    assert proc.wait(timeout=300) == 0
    assert set_files(out) == new  # no staging folder, cache, lock or temporary file left


def test_colliding_names_are_refused(tmp_path, capsys):
    a = write_spec(tmp_path, "x", SMALL)
    b = write_spec(tmp_path, "x.print", SMALL)
    out = tmp_path / "out"
    assert main(["table", str(a), "--out", str(out), "--workers", "1"]) == 0
    capsys.readouterr()
    before = set_files(out)
    assert main(["table", str(b), "--out", str(out), "--workers", "1"]) == 2
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and "its file x.print.csv belongs to the set 'x'" in err[0]
    assert set_files(out) == before
    other = tmp_path / "other"  # the other order: x.print first, then x
    assert main(["table", str(b), "--out", str(other), "--workers", "1"]) == 0
    assert main(["table", str(a), "--out", str(other), "--workers", "1"]) == 2
    assert "its file x.print.csv belongs to the set 'x.print'" in capsys.readouterr().err


def test_second_build_waits_for_the_folder_lock(tmp_path, ref):
    spec = write_spec(tmp_path, "small", SMALL)
    out = tmp_path / "out"
    out.mkdir()
    with folder_lock(out):
        proc = _run(spec, out)
        line = proc.stderr.readline().decode()  # printed before it blocks: no timing involved
        assert "another build is writing into" in line and proc.poll() is None
        assert not [p for p in out.iterdir() if p.name.endswith(FINAL)]
    assert proc.wait(timeout=300) == 0
    assert set_files(out) == set_files(ref)


# -- 5. no environment variable changes a byte -----------------------------------------
def test_source_date_epoch_changes_no_byte(tmp_path, ref, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1234567890")
    monkeypatch.setenv("TZ", "Pacific/Kiritimati")
    spec = write_spec(tmp_path, "small", SMALL)
    generate(spec, tmp_path / "out", workers=1)
    assert set_files(tmp_path / "out") == set_files(ref)
    assert os.environ["SOURCE_DATE_EPOCH"] == "1234567890"  # left as it was
