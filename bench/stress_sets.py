"""Stress of publishing table sets (issue 9): kill -9 at random moments, resumes, pairs.

Not part of ``make test`` or ``make bench`` (it runs for minutes).  Two versions A and
B of one spec (same name, same ~2,000-design grid, different titles) are built once
for reference.  Then, in one output folder:

* runs are killed (SIGKILL to the whole process group, pool workers included) after a
  random delay between 0 and the time of an uninterrupted run, until ``--kills`` of
  them really were killed (a resumed run may finish first); each
  run builds the version the folder does not hold yet, so every kill lands in a folder
  with an older complete set (or its remains);
* ``--resumes`` further runs are killed the same way and then rerun to completion;
  the completed set must be byte for byte the reference;
* ``--pairs`` times, A and B are started together into the same folder (the folder
  lock serialises them); both must succeed and the folder must end as one whole set.

During every run a watcher reads the folder every 20 ms.  A sample counts as

* a partial file: a file under a final name whose bytes are neither A's nor B's;
* a mixed set: a manifest present (unchanged while the files were read) and a file
  of the set that is not that manifest's version.

Printed at the end: kills, resumes seen in the logs, partial files seen, mixed sets
seen, byte mismatches after completed runs (all should be 0), the wall time of an
uninterrupted run, and the peak resident memory (largest process tree sampled, and
the largest single process from getrusage).

    .venv/bin/python bench/stress_sets.py                 # 50 kills, 20 resumes, 10 pairs
    .venv/bin/python bench/stress_sets.py --n-step 10 --kills 10 --resumes 4 --pairs 3
"""

from __future__ import annotations

import argparse
import contextlib
import os
import random
import resource
import shutil
import signal
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

NAME = "stress"
SUFFIXES = (".csv", ".print.csv", ".xlsx", ".pdf", ".manifest.json")
SPEC = """\
title = "Stress test {version}: flaw rate per bolt"
scenario = "Synthetic grid of the stress bench (invented cloth mill)."
family = "poisson"
kinds = ["band", "equivalence", "upper", "lower", "point"]
alpha = [0.1, 0.05, 0.01, 0.001]
n = {{from = {step}, to = {top}, step = {step}}}
bands = [[2.0, 2.5]]
values = [2.0]
random_seed = 5
"""


def _rss_of_group(pgid: int) -> int:
    total = 0
    for pid in os.listdir("/proc"):
        if not pid.isdigit():
            continue
        try:
            if os.getpgid(int(pid)) != pgid:
                continue
            with open(f"/proc/{pid}/statm") as fh:
                total += int(fh.read().split()[1]) * os.sysconf("SC_PAGE_SIZE")
        except (OSError, ValueError, ProcessLookupError):
            continue
    return total


class Watcher:
    """Samples the folder (and the RSS of the running process groups) every 20 ms."""

    def __init__(self, out: Path, refs: dict):
        self.out, self.refs = out, refs
        self.partial = self.mixed = self.samples = 0
        self.peak_tree = 0
        self.groups: set = set()
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._loop, daemon=True)

    def __enter__(self):
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()

    def _loop(self):
        while not self._stop.wait(0.02):
            for g in list(self.groups):
                self.peak_tree = max(self.peak_tree, _rss_of_group(g))
            self.sample()

    def sample(self) -> None:
        man = self.out / f"{NAME}.manifest.json"
        try:
            before = os.stat(man)
            mbytes = man.read_bytes()
        except FileNotFoundError:
            before, mbytes = None, None
        files = {}
        for s in SUFFIXES[:-1]:
            try:
                files[NAME + s] = (self.out / f"{NAME}{s}").read_bytes()
            except FileNotFoundError:
                pass
        try:
            after = os.stat(man)
        except FileNotFoundError:
            after = None
        if (before is None) != (after is None) or (
                before is not None and (before.st_ino, before.st_mtime_ns)
                != (after.st_ino, after.st_mtime_ns)):
            return  # the manifest changed while we read: no consistent sample
        self.samples += 1
        versions = list(self.refs.values())
        if mbytes is not None:
            files[f"{NAME}.manifest.json"] = mbytes
        for fname, data in files.items():
            if not any(data == v[fname] for v in versions):
                self.partial += 1
        if mbytes is not None:
            owner = [v for v in versions if v[f"{NAME}.manifest.json"] == mbytes]
            if owner and any(files.get(f) != owner[0][f] for f in owner[0]):
                self.mixed += 1


def _spec(folder: Path, version: str, step: int, top: int) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    p = folder / f"{NAME}.toml"
    p.write_text(SPEC.format(version=version, step=step, top=top), encoding="utf-8")
    return p


def _start(spec: Path, out: Path, workers: int) -> subprocess.Popen:
    cmd = [sys.executable, "-m", "exactband", "table", str(spec), "--out", str(out),
           "--workers", str(workers)]
    env = {k: v for k, v in os.environ.items() if k != "EXACTBAND_STOP_AT"}
    return subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                            start_new_session=True, env=env)


def _files(folder: Path) -> dict:
    return {NAME + s: (folder / f"{NAME}{s}").read_bytes() for s in SUFFIXES}


def _held(out: Path, refs: dict) -> str | None:
    try:
        m = (out / f"{NAME}.manifest.json").read_bytes()
    except FileNotFoundError:
        return None
    return next((k for k, v in refs.items() if v[f"{NAME}.manifest.json"] == m), None)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n-step", type=int, default=5, help="n from STEP to 100*STEP by STEP "
                    "(100 n: 2,000 designs)")
    ap.add_argument("--n-count", type=int, default=100)
    ap.add_argument("--kills", type=int, default=50)
    ap.add_argument("--resumes", type=int, default=20)
    ap.add_argument("--pairs", type=int, default=10)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--seed", type=int, default=1)
    a = ap.parse_args()
    rng = random.Random(a.seed)
    top = a.n_step * a.n_count
    tmp = Path(tempfile.mkdtemp(prefix="exactband-stress-"))
    try:
        specs = {v: _spec(tmp / f"spec-{v}", v, a.n_step, top) for v in "AB"}
        refs, full = {}, 0.0
        for v, spec in specs.items():
            t0 = time.monotonic()
            proc = _start(spec, tmp / f"ref-{v}", a.workers)
            _, err = proc.communicate()
            full = max(full, time.monotonic() - t0)
            if proc.returncode != 0:
                print(err.decode(), file=sys.stderr)
                return 1
            refs[v] = _files(tmp / f"ref-{v}")
        designs = refs["A"][f"{NAME}.csv"].count(b"\r\n") - 1
        print(f"{designs} designs per set; an uninterrupted run takes {full:.1f} s "
              f"(workers={a.workers})", flush=True)
        out = tmp / "out"
        shutil.copytree(tmp / "ref-A", out)
        kills = attempts = resumes_seen = mismatches = completed = 0
        with Watcher(out, refs) as w:
            # runs killed at a random moment until --kills runs really were killed (a
            # run that resumes from the cache may finish before its moment comes), then
            # --resumes runs killed and rerun to completion
            i = 0
            while i < a.kills + a.resumes and attempts < 3 * (a.kills + a.resumes):
                attempts += 1
                target = "B" if _held(out, refs) == "A" else "A"
                proc = _start(specs[target], out, a.workers)
                w.groups.add(proc.pid)
                try:
                    proc.wait(timeout=rng.uniform(0, full))
                except subprocess.TimeoutExpired:
                    pass
                with contextlib.suppress(ProcessLookupError):
                    os.killpg(proc.pid, signal.SIGKILL)
                _, err = proc.communicate()
                w.groups.discard(proc.pid)
                killed = proc.returncode == -signal.SIGKILL
                kills += killed
                resumes_seen += b"resumed" in err
                if i >= a.kills:  # a resume: run to completion, compare bytes
                    proc = _start(specs[target], out, a.workers)
                    w.groups.add(proc.pid)
                    _, err = proc.communicate()
                    w.groups.discard(proc.pid)
                    resumes_seen += b"resumed" in err
                    completed += 1
                    mismatches += proc.returncode != 0 or _files(out) != refs[target]
                    i += 1
                elif killed:
                    i += 1
                print(f"run {attempts}: {'killed' if killed else 'finished first'}; folder "
                      f"holds {_held(out, refs) or 'no set'}; partial {w.partial}, "
                      f"mixed {w.mixed}", flush=True)
            for i in range(a.pairs):
                procs = [_start(specs[v], out, a.workers) for v in "AB"]
                w.groups.update(p.pid for p in procs)
                codes = [p.wait() for p in procs]
                w.groups.difference_update(p.pid for p in procs)
                held = _held(out, refs)
                completed += 1
                mismatches += (codes != [0, 0] or held is None or _files(out) != refs[held])
                print(f"pair {i + 1}: exit codes {codes}, folder holds {held}", flush=True)
        leftovers = sorted(p.name for p in out.iterdir() if p.name.startswith("."))
        single = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
        print(f"\nkills {kills} (of {attempts} runs), completed reruns/pairs {completed}, "
              f"runs that resumed from "
              f"the cache {resumes_seen}, folder samples {w.samples}")
        print(f"partial files seen: {w.partial}")
        print(f"mixed sets seen: {w.mixed}")
        print(f"byte mismatches after completed runs: {mismatches}")
        print(f"hidden leftovers at the end: {leftovers or 'none'}")
        print(f"peak memory: process tree {w.peak_tree / 2**20:.0f} MB, largest single "
              f"process {single:.0f} MB")
        return 0 if (w.partial, w.mixed, mismatches) == (0, 0, 0) else 1
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    raise SystemExit(main())
