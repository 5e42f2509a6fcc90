"""Reproducible bytes, --check, a solver disagreement, the resumable cache.

(Interruptions at named stop points: test_tables_sets.py.)"""

from __future__ import annotations

import hashlib
import json
import shutil
import time

import openpyxl
import pytest

from exactband import solving
from exactband.cli import main
from exactband.errors import VerificationError
from exactband.tables import cache as cache_mod
from exactband.tables import generate

from .tables_support import FINAL, OC, SMALL, built, interrupted_build, set_files, write_spec


@pytest.fixture(scope="module")
def root(tmp_path_factory):
    return tmp_path_factory.mktemp("repro")


@pytest.fixture(scope="module")
def ref(root):
    return built(str(root), "small", SMALL)


def _sheet_values(path) -> dict:
    wb = openpyxl.load_workbook(path)
    return {ws.title: [[c.value for c in row] for row in ws.iter_rows()] for ws in wb}


def test_same_spec_same_bytes(root, ref):
    oc_ref = built(str(root), "oc", OC)  # with the [oc] table: Power sheet, OC pages
    time.sleep(2.1)  # zip entry times have a 2-second resolution: make a clock leak visible
    for name, first in (("small", ref), ("oc", oc_ref)):
        again = root / f"again-{name}"
        generate(root / f"{name}.toml", again, workers=1)
        a, b = set_files(first), set_files(again)
        assert sorted(a) == sorted(f"{name}{s}" for s in FINAL)
        for fname in a:  # CSVs, PDF, manifest and even the xlsx archive: byte for byte
            assert a[fname] == b[fname], fname
        assert _sheet_values(first / f"{name}.xlsx") == _sheet_values(again / f"{name}.xlsx")


def test_check_ok_and_tampering(root, ref, capsys):
    folder = root / "checked"
    shutil.copytree(ref, folder)
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 0
    out = capsys.readouterr().out
    assert "small: OK" in out and "30 rows re-verified" in out
    # change one gamma in its 13th digit and rewrite the manifest's hash to match: the
    # regenerated file still differs, and the finding names the row and the column
    csv_path = folder / "small.csv"
    lines = csv_path.read_bytes().decode("utf-8").split("\r\n")
    cells = lines[1].split(",")
    g = float(cells[9])
    cells[9] = repr(g + 1e-13)
    lines[1] = ",".join(cells)
    csv_path.write_bytes("\r\n".join(lines).encode("utf-8"))
    man_path = folder / "small.manifest.json"
    man = json.loads(man_path.read_text())
    man["files"]["small.csv"] = hashlib.sha256(csv_path.read_bytes()).hexdigest()
    man_path.write_text(json.dumps(man))
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    out = capsys.readouterr().out
    assert "small: FAILED" in out
    assert f"small.csv row 1: gamma1 is {cells[9]} in the file, recomputed {g!r}" in out
    assert "small.manifest.json: files.small.csv is" in out
    # a wrong threshold is a finding too
    cells[9] = repr(g)
    cells[16] = str(int(cells[16]) + 1)
    lines[1] = ",".join(cells)
    csv_path.write_bytes("\r\n".join(lines).encode("utf-8"))
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    assert "small.csv row 1: threshold1 is " in capsys.readouterr().out
    (folder / "small.pdf").unlink()
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    assert "small.pdf: missing (the set lists it)" in capsys.readouterr().out


def test_disagreement_stops_before_writing(tmp_path, monkeypatch, capsys):
    real = solving.fast_solve

    def wrong(problems):
        sols = real(problems)
        c1, g1, c2, g2 = sols[3]
        sols[3] = (c1, g1, c2 + 2, g2)  # a wrong upper cutoff in the fourth design
        return sols

    monkeypatch.setattr(solving, "fast_solve", wrong)
    spec = write_spec(tmp_path, "small", SMALL)
    with pytest.raises(VerificationError, match=r"poisson band \(n=10.0, alpha=0.01, low=2.0"):
        generate(spec, tmp_path / "out", workers=1)
    assert not (tmp_path / "out").exists()
    rc = main(["table", str(spec), "--out", str(tmp_path / "out"), "--workers", "1"])
    err = capsys.readouterr().err.splitlines()
    assert rc == 1 and len(err) == 1 and "the two solvers disagree on poisson band" in err[0]
    assert not (tmp_path / "out").exists()


def test_resume_from_cache_and_invalidation(tmp_path, ref, monkeypatch):
    spec, out, _ = interrupted_build(tmp_path, monkeypatch)
    assert not [p for p in out.iterdir() if p.name.endswith(FINAL)]
    notes = []
    generate(spec, out, workers=1, log=notes.append)
    assert notes == ["resumed 10 of 30 verified designs from the cache"]
    assert set_files(out) == set_files(ref)
    assert not (out / ".small.verify-cache").exists()
    # a cache from another spec version or package version is not used
    for change in ("spec", "version"):
        interrupted_build(tmp_path, monkeypatch, spec=spec)
        if change == "spec":
            spec.write_text(SMALL + "# edited\n")
        else:
            monkeypatch.setattr(cache_mod, "versions", lambda: {"exactband": "other"})
        notes.clear()
        generate(spec, out, workers=1, log=notes.append)
        assert notes == []
