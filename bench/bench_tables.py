"""Benchmark of the table set (issue 3): a 10,000-design spec, verified and written.

Prints, from one run on this machine:
* wall time of ``exactband table SPEC --out DIR`` (a real command, all cores) and the
  peak resident memory of its process tree (the command and its verification workers,
  summed, sampled from /proc every 20 ms), with the largest single process's peak
  (getrusage of the children);
* the sizes of the files written;
* where the time goes (an in-process run of the same stages, timed one by one):
  grid expansion, fast solver, high-precision verification (per design, by kind),
  the derived digit-rule and conservative sizes, and each writer.

Targets: at most 120 s wall and under 1 GB for the whole tree.  The machine is shared
(2 cores); compare only figures from one run.  ``--designs-only`` skips the breakdown.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from collections import defaultdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

SPEC = """\
title = "Benchmark: 10,000 designs"
scenario = "Synthetic grid of the benchmark (invented)."
family = "poisson"
kinds = ["band", "equivalence", "upper", "lower", "point"]
alpha = [0.1, 0.05, 0.01, 0.001]
n = {from = 5, to = 500, step = 5}
bands = [[0.5, 0.6], [1.0, 1.2], [2.0, 2.5], [3.0, 3.5], [4.0, 5.0]]
values = [0.5, 1.0, 2.0, 3.5, 5.0]
"""
TARGET_S, TARGET_MB = 120.0, 1024.0
PAGE = os.sysconf("SC_PAGE_SIZE")


def _children() -> dict:
    """pid -> parent pid of every process (from /proc)."""
    out = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                with open(f"/proc/{entry}/stat") as fh:
                    fields = fh.read().rsplit(")", 1)[1].split()
                out[int(entry)] = int(fields[1])
            except (OSError, IndexError, ValueError):
                pass
    return out


def tree_rss(root: int) -> int:
    """Resident bytes of ``root`` and all its descendants, now."""
    parents = _children()
    tree, frontier = {root}, [root]
    while frontier:
        p = frontier.pop()
        for pid, ppid in parents.items():
            if ppid == p and pid not in tree:
                tree.add(pid)
                frontier.append(pid)
    total = 0
    for pid in tree:
        try:
            with open(f"/proc/{pid}/statm") as fh:
                total += int(fh.read().split()[1]) * PAGE
        except (OSError, IndexError, ValueError):
            pass
    return total


class PeakSampler:
    """Samples the process tree of ``pid`` every ``every`` seconds; keeps the peak."""

    def __init__(self, pid: int, every: float = 0.02):
        self.pid, self.every, self.peak = pid, every, 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def _run(self):
        while not self._stop.is_set():
            self.peak = max(self.peak, tree_rss(self.pid))
            self._stop.wait(self.every)

    def __enter__(self):
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()


def run_command(spec: Path, out: Path, src: Path | None = None) -> dict:
    """One run of the command; ``src``: import exactband from that source tree instead."""
    cmd = [sys.executable, "-m", "exactband", "table", str(spec), "--out", str(out)]
    env = dict(os.environ)
    if src is not None:
        env["PYTHONPATH"] = str(src)
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    with PeakSampler(proc.pid) as sampler:
        stdout, stderr = proc.communicate()
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    # CPU of the command and every process it waited for (pool workers, the PDF child):
    # on a shared machine this moves far less with the load than the wall time
    cpu = (after.ru_utime + after.ru_stime) - (before.ru_utime + before.ru_stime)
    if proc.returncode != 0:
        raise SystemExit(f"exactband table failed ({proc.returncode}): {stderr.decode()}")
    single = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss * 1024
    return {"wall": wall, "cpu": cpu, "tree_peak": sampler.peak, "single_peak": single,
            "files": [Path(p) for p in stdout.decode().split()]}


def breakdown(spec_path: Path, out: Path) -> None:
    """Time the stages of generate() one by one, in this process (verification on all cores)."""
    from exactband import api
    from exactband.tables import grid
    from exactband.tables.build import (
        DIGITS_PER_PAGE,
        TableSet,
        derive_all,
        random_digits,
        summarise,
    )
    from exactband.tables.publish import render
    from exactband.tables.spec import load_spec

    spec = load_spec(spec_path)
    times = {}
    t = time.perf_counter()
    problems = grid.expand(spec)
    times["spec + grid expansion"] = time.perf_counter() - t
    t = time.perf_counter()
    sols = api.fast_solve(problems)
    times["fast solver (all designs)"] = time.perf_counter() - t
    t = time.perf_counter()
    designs = api.verify_many(problems, sols, spec.precision)
    times[f"high-precision verification ({os.cpu_count()} processes)"] = time.perf_counter() - t
    t = time.perf_counter()
    rows = derive_all(designs, spec)
    times["digit-rule and conservative sizes (vectorised)"] = time.perf_counter() - t
    tset = TableSet(spec, rows, summarise(designs, spec.precision),
                    random_digits(spec.seed, spec.random_digit_pages * DIGITS_PER_PAGE))
    import exactband.tables.publish as gen

    stage = {}
    for name in ("csv_bytes", "print_csv_bytes", "xlsx_bytes", "pdf_bytes", "manifest_bytes"):
        real = getattr(gen, name)

        def timed(*a, _real=real, _name=name, **k):
            t0 = time.perf_counter()
            try:
                return _real(*a, **k)
            finally:
                stage[_name] = time.perf_counter() - t0
        setattr(gen, name, timed)
    import exactband.tables.forked as forked

    cores = forked.usable_cores
    forked.usable_cores = lambda: 1  # each writer timed alone, in this process
    t = time.perf_counter()
    try:
        render(tset)
    finally:
        forked.usable_cores = cores
    total_render = time.perf_counter() - t
    for name, secs in stage.items():
        times[f"writer {name} (alone)"] = secs
    times["layout and texts"] = total_render - sum(stage.values())
    t = time.perf_counter()
    render(tset)
    together = time.perf_counter() - t
    print("where the time goes (in-process run of the same stages):")
    width = max(len(k) for k in times)
    for k, v in times.items():
        print(f"  {k:<{width}}  {v:8.2f} s")
    print(f"  {'total':<{width}}  {sum(times.values()):8.2f} s")
    print(f"  all writers as the command runs them (pdf in a child beside the xlsx): "
          f"{together:.2f} s instead of {total_render:.2f} s")
    # per-design cost of the high-precision solver, by kind, on one process
    import random

    rng = random.Random(20261202)
    sample = rng.sample(range(len(problems)), 400)
    per = defaultdict(list)
    for i in sample:
        t0 = time.perf_counter()
        api.verify_one(problems[i], sols[i], spec.precision)
        per[problems[i].kind.name].append(time.perf_counter() - t0)
    print("high-precision verification per design, one process (400 random designs):")
    for kind, xs in sorted(per.items()):
        print(f"  {kind:<12} median {1e3 * statistics.median(xs):6.1f} ms   "
              f"mean {1e3 * statistics.fmean(xs):6.1f} ms   max {1e3 * max(xs):6.1f} ms   "
              f"({len(xs)} designs)")
    allx = [x for xs in per.values() for x in xs]
    print(f"  all          mean {1e3 * statistics.fmean(allx):6.1f} ms -> "
          f"{statistics.fmean(allx) * len(problems):.0f} s of CPU for the grid")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--designs-only", action="store_true", help="skip the stage breakdown")
    ap.add_argument("--repeat", type=int, default=1,
                    help="run the command this many times; report the median wall time")
    ap.add_argument("--baseline", type=Path, default=None,
                    help="an older source tree (its src/ folder, e.g. from git archive): its "
                         "command runs alternately with this one, same spec, and both medians "
                         "and the byte equality of the two sets are printed")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory(prefix="bench-tables-") as tmp:
        spec = Path(tmp) / "bench10k.toml"
        spec.write_text(SPEC)
        from exactband.tables.spec import load_spec

        size = load_spec(spec).size()
        print(f"spec: {size} designs (poisson; band, equivalence, upper, lower, point; "
              f"4 alphas; n 5..500; rates 0.5..5); {os.cpu_count()} cores; "
              f"load average {os.getloadavg()[0]:.2f}")
        walls, base, cpus, base_cpus = [], [], [], []
        for k in range(max(1, args.repeat)):
            if args.baseline is not None:
                b = run_command(spec, Path(tmp) / f"base{k}", args.baseline.resolve())
                base.append(b["wall"])
                base_cpus.append(b["cpu"])
            r = run_command(spec, Path(tmp) / f"out{k}")
            walls.append(r["wall"])
            cpus.append(r["cpu"])
        if len(walls) > 1 or base:
            print("wall times of exactband table, s: this tree "
                  + " ".join(f"{w:.1f}" for w in walls) + f"  (median {statistics.median(walls):.1f})")
            print("CPU seconds (all processes),  this tree "
                  + " ".join(f"{w:.1f}" for w in cpus) + f"  (median {statistics.median(cpus):.1f})")
        if base:
            print("                      baseline " + " ".join(f"{w:.1f}" for w in base)
                  + f"  (median {statistics.median(base):.1f})")
            print("CPU seconds (all processes),  baseline "
                  + " ".join(f"{w:.1f}" for w in base_cpus)
                  + f"  (median {statistics.median(base_cpus):.1f})")
            same = all((Path(tmp) / "base0" / f.name).read_bytes() == f.read_bytes()
                       for f in r["files"])
            print(f"the two trees wrote byte-identical sets: {same}")
        r["wall"] = statistics.median(walls)
        ok_t = "ok" if r["wall"] <= TARGET_S else "OVER TARGET"
        ok_m = "ok" if r["tree_peak"] / 2**20 < TARGET_MB else "OVER TARGET"
        print(f"exactband table: wall {r['wall']:.1f} s (target <= {TARGET_S:.0f} s: {ok_t})")
        print(f"peak RSS of the process tree {r['tree_peak'] / 2**20:.0f} MB "
              f"(target < {TARGET_MB:.0f} MB: {ok_m}); largest single process "
              f"{r['single_peak'] / 2**20:.0f} MB")
        for f in r["files"]:
            print(f"  {f.name:<28} {f.stat().st_size / 2**20:8.2f} MB")
        if not args.designs_only:
            breakdown(spec, Path(tmp) / "out2")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
