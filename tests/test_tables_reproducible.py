"""Reproducible bytes, --check, a solver disagreement, the resumable cache, interruption."""

from __future__ import annotations

import hashlib
import json
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import openpyxl
import pytest

from exactband import api
from exactband.cli import main
from exactband.errors import VerificationError
from exactband.tables import build as build_mod
from exactband.tables import cache as cache_mod
from exactband.tables import generate
from .tables_support import OC, SMALL, built, write_spec

FINAL = (".csv", ".print.csv", ".xlsx", ".pdf", ".manifest.json")


@pytest.fixture(scope="module")
def root(tmp_path_factory):
    return tmp_path_factory.mktemp("repro")


@pytest.fixture(scope="module")
def ref(root):
    return built(str(root), "small", SMALL)


def _files(folder: Path) -> dict:
    if not folder.exists():
        return {}
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


def _sheet_values(path) -> dict:
    wb = openpyxl.load_workbook(path)
    return {ws.title: [[c.value for c in row] for row in ws.iter_rows()] for ws in wb}


def test_same_spec_same_bytes(root, ref):
    oc_ref = built(str(root), "oc", OC)  # with the [oc] table: Power sheet, OC pages
    time.sleep(2.1)  # zip entry times have a 2-second resolution: make a clock leak visible
    for name, first in (("small", ref), ("oc", oc_ref)):
        again = root / f"again-{name}"
        generate(root / f"{name}.toml", again, workers=1)
        a, b = _files(first), _files(again)
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
    # change one gamma in its 13th digit: the hash and the row check both catch it
    csv_path = folder / "small.csv"
    lines = csv_path.read_bytes().decode("utf-8").split("\r\n")
    cells = lines[1].split(",")
    g = float(cells[9])
    cells[9] = repr(g + 1e-13)
    lines[1] = ",".join(cells)
    csv_path.write_bytes("\r\n".join(lines).encode("utf-8"))
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    out = capsys.readouterr().out
    assert "FAILED" in out and "small.csv: SHA-256 differs" in out and "gamma1 = " in out
    # a forger who also updates the manifest hash is still caught by the re-verification
    man_path = folder / "small.manifest.json"
    man = json.loads(man_path.read_text())
    man["files"]["small.csv"] = hashlib.sha256(csv_path.read_bytes()).hexdigest()
    man_path.write_text(json.dumps(man))
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    out = capsys.readouterr().out
    assert "SHA-256 differs" not in out and "line 2 (poisson band" in out
    # a wrong threshold is a finding too
    cells[9] = repr(g)
    cells[16] = str(int(cells[16]) + 1)
    lines[1] = ",".join(cells)
    csv_path.write_bytes("\r\n".join(lines).encode("utf-8"))
    man["files"]["small.csv"] = hashlib.sha256(csv_path.read_bytes()).hexdigest()
    man_path.write_text(json.dumps(man))
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    assert "threshold1 = " in capsys.readouterr().out
    (folder / "small.pdf").unlink()
    assert main(["table", "--check", str(folder), "--workers", "1"]) == 1
    assert "small.pdf: listed in the manifest but missing" in capsys.readouterr().out


def test_disagreement_stops_before_writing(tmp_path, monkeypatch, capsys):
    real = api.fast_solve

    def wrong(problems):
        sols = real(problems)
        c1, g1, c2, g2 = sols[3]
        sols[3] = (c1, g1, c2 + 2, g2)  # a wrong upper cutoff in the fourth design
        return sols

    monkeypatch.setattr(api, "fast_solve", wrong)
    spec = write_spec(tmp_path, "small", SMALL)
    with pytest.raises(VerificationError, match=r"poisson band \(n=10.0, alpha=0.01, low=2.0"):
        generate(spec, tmp_path / "out", workers=1)
    assert not (tmp_path / "out").exists()
    rc = main(["table", str(spec), "--out", str(tmp_path / "out"), "--workers", "1"])
    err = capsys.readouterr().err.splitlines()
    assert rc == 1 and len(err) == 1 and "the two solvers disagree on poisson band" in err[0]
    assert not (tmp_path / "out").exists()


def test_resume_from_cache_and_invalidation(tmp_path, ref, monkeypatch):
    spec = write_spec(tmp_path, "small", SMALL)
    out = tmp_path / "out"
    monkeypatch.setattr(build_mod, "CHUNK", 5)
    seen = []

    def stop_after_12(k, total=None):
        seen.append(k)
        if sum(seen) >= 12:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        generate(spec, out, workers=1, progress=stop_after_12)
    assert not [p for p in out.iterdir() if p.name.endswith(FINAL)]
    parts = sorted((out / ".small.verify-cache").glob("part-*.json"))
    assert len(parts) == 2  # two chunks of 5 saved before the interruption
    notes = []
    generate(spec, out, workers=1, log=notes.append)
    assert notes == ["resumed 10 of 30 verified designs from the cache"]
    assert _files(out) == _files(ref)
    assert not (out / ".small.verify-cache").exists()
    # a cache from another spec version or package version is not used
    for change in ("spec", "version"):
        seen.clear()
        with pytest.raises(KeyboardInterrupt):
            generate(spec, out, workers=1, progress=stop_after_12)
        if change == "spec":
            spec.write_text(SMALL + "# edited\n")
        else:
            monkeypatch.setattr(cache_mod, "versions", lambda: {"exactband": "other"})
        notes.clear()
        generate(spec, out, workers=1, log=notes.append)
        assert notes == []


def _run(spec, out, **kw):
    cmd = [sys.executable, "-m", "exactband", "table", str(spec), "--out", str(out),
           "--workers", "1"]
    return subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, **kw)


def _kill_when(proc, ready, sig, timeout=120.0) -> None:
    """Send ``sig`` to ``proc`` as soon as ``ready()`` is true (polled every millisecond)."""
    end = time.monotonic() + timeout
    while not ready() and proc.poll() is None and time.monotonic() < end:
        time.sleep(0.001)
    proc.send_signal(sig)


def test_interrupted_runs_leave_no_partial_file(tmp_path):
    """Stop real runs (Ctrl-C, kill -9) while verifying and while writing: every file under
    a final name is complete (equal to an uninterrupted run's), and the rerun completes with
    identical bytes and no leftovers."""
    text = SMALL.replace("n = {from = 10, to = 30, step = 10}", "n = {from = 10, to = 100, "
                         "step = 10}").replace("[[2.0, 2.5]]", "[[2.0, 2.5], [1.0, 1.5]]")
    spec = write_spec(tmp_path, "slow", text)  # 140 designs
    t0 = time.monotonic()
    proc = _run(spec, tmp_path / "ref")
    assert proc.wait(timeout=300) == 0
    full = time.monotonic() - t0
    ref = _files(tmp_path / "ref")
    out = tmp_path / "out"
    started = time.monotonic()

    def parts(suffix):
        return lambda: out.exists() and any(out.glob(f".slow{suffix}.*.part"))

    stops = [
        (lambda: time.monotonic() - started > 0.6 * full, signal.SIGINT),  # while verifying
        (lambda: (out / "slow.csv").exists(), signal.SIGKILL),  # while writing the set
        (parts(".pdf"), signal.SIGKILL),  # inside one file's write: leaves a temporary file
        (lambda: (out / "slow.pdf").exists(), signal.SIGINT),
    ]
    for i, (ready, sig) in enumerate(stops):
        started = time.monotonic()
        proc = _run(spec, out)
        _kill_when(proc, ready, sig)
        _, err = proc.communicate(timeout=300)
        if sig == signal.SIGINT and proc.returncode == 130:  # (-2: still starting Python)
            assert err.decode().splitlines()[-1] == "exactband: interrupted"
        assert proc.returncode in (0, 130, -signal.SIGINT, -signal.SIGKILL)
        for name, data in _files(out).items():
            if not name.startswith("."):
                assert data == ref[name], f"partial or different {name} after stop {i}"
        if i == 2 and proc.returncode == -signal.SIGKILL:  # killed inside the PDF's write
            assert not (out / "slow.pdf").exists() and parts(".pdf")()
    proc = _run(spec, out)
    assert proc.wait(timeout=300) == 0
    assert _files(out) == ref
    assert not [p for p in out.iterdir() if p.name.startswith(".")]
