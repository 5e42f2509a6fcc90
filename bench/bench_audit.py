"""Benchmark of the audit (issue 8: audit speed and bounded memory).

Prints, from one run on this machine (2 workers, as `exactband audit --workers 2`):
* rows/s and peak memory of auditing a 1,056-row table set written by exactband
  (binomial; band, point, upper, equivalence; alpha 0.05 and 0.01; n 30..1340):
  NAME.csv (full precision) and NAME.print.csv (gammas truncated to 4 decimals);
* the time per stage of the full-precision audit in one process (reading, fast
  solver over the file, high-precision solver per row, judging);
* a 10^6-row CSV (the same rows repeated): time and peak memory of the refusal
  with the default --max-rows (counted before judging, streaming);
* its first 25,000 rows (all 10^6 with --full) judged with --max-rows raised and
  --report: rows/s and peak memory (rows judged in chunks, reports streamed).

Peak memory is the largest resident set of the audit's process tree (the parent
or a worker), from getrusage(RUSAGE_CHILDREN).  Wall times are medians of
REPEATS runs; the machine is shared, so compare only figures from one run.
Target (issue 8): the 1,056-row audit at least 10x faster than the 37 s measured
before (14-50 ms a row).
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))

REPEATS = 3
# row counts of the big CSV judged in full (--max-rows raised); pass --full for 10^6
# (about half an hour on 2 cores)
JUDGED = [10**6] if "--full" in sys.argv else [25_000]
SPEC = textwrap.dedent("""\
    title = "Bench set (1,056 designs)"
    family = "binomial"
    kinds = ["band", "point", "upper", "equivalence"]
    alpha = [0.05, 0.01]
    n = { from = 30, to = 1340, step = 10 }
    bands = [[0.1, 0.12]]
    values = [0.1]
    gamma_decimals = 4
    random_digit_pages = 0
    """)


def run_audit(args) -> tuple[float, float, int]:
    """(wall seconds, peak MB of the process tree, exit code) of one audit run."""
    cmd = [sys.executable, "-c", "import sys; from exactband.cli import main; "
           "sys.exit(main(sys.argv[1:]))", "audit", *map(str, args)]
    code = """
import resource, subprocess, sys, time
t = time.perf_counter()
r = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
dt = time.perf_counter() - t
print(dt, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024, r.returncode)
"""
    out = subprocess.run([sys.executable, "-c", code, *cmd], capture_output=True, text=True,
                         check=True, env={"PYTHONPATH": str(ROOT / "src"), "PATH": "/usr/bin"})
    dt, mb, rc = out.stdout.split()
    return float(dt), float(mb), int(rc)


def stages(path) -> dict:
    """Seconds per stage of the full-precision audit, in this process, one worker."""
    from exactband.audit.recompute import fast_all, recompute
    from exactband.audit.table import Options, load
    from exactband.audit.verdicts import infer_modes, judge_row

    out = {}
    t = time.perf_counter()
    table = load(path, Options())
    out["read and check"] = time.perf_counter() - t
    rows = table.rows
    t = time.perf_counter()
    fast = fast_all([r.problem for r in rows])
    out["fast solver (whole file)"] = time.perf_counter() - t
    from exactband.audit.stream import _order

    t = time.perf_counter()
    todo = [(r, f, 50) for r, f in zip(rows, fast)]
    recs = [None] * len(todo)
    for j in _order(todo):  # the engine's order: rows of one law share the table cache
        recs[j] = recompute(*todo[j])
    out["precise solver + sizes (per row)"] = time.perf_counter() - t
    t = time.perf_counter()
    modes = infer_modes(rows, recs)
    [judge_row(r, rec, modes) for r, rec in zip(rows, recs)]
    out["judging"] = time.perf_counter() - t
    return out


def main() -> int:
    from exactband.tables.publish import generate

    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        (d / "bench.toml").write_text(SPEC, encoding="utf-8")
        generate(d / "bench.toml", d / "set", workers=2)
        full, printed = d / "set" / "bench.csv", d / "set" / "bench.print.csv"
        rows = sum(1 for _ in open(full, encoding="utf-8")) - 1
        print(f"audit of a {rows}-row table set, --workers 2, median of {REPEATS}")
        for label, path, extra in (("full precision (NAME.csv)", full, []),
                                   ("printed (NAME.print.csv)", printed,
                                    ["--family", "binomial"])):
            runs = [run_audit([path, "--workers", "2", *extra]) for _ in range(REPEATS)]
            dt = statistics.median(r[0] for r in runs)
            mb = max(r[1] for r in runs)
            assert all(r[2] == 0 for r in runs), runs
            print(f"  {label:28s} {dt:6.2f} s  {rows / dt:7.0f} rows/s  peak {mb:6.0f} MB  "
                  f"({1000 * dt / rows:.1f} ms a row, start-up included)")
        print("stages of the full-precision audit, one process:")
        for k, v in stages(full).items():
            print(f"  {k:36s} {v:6.2f} s  ({1000 * v / rows:.2f} ms a row)")
        big = d / "big.csv"
        lines = full.read_text(encoding="utf-8").splitlines(keepends=True)
        with open(big, "w", encoding="utf-8") as fh:
            fh.write(lines[0])
            body = "".join(lines[1:])
            for _ in range(10**6 // rows):
                fh.write(body)
            fh.write("".join(lines[1:1 + 10**6 % rows]))
        size = big.stat().st_size / 2**20
        dt, mb, rc = run_audit([big, "--workers", "2"])
        print(f"10^6-row CSV ({size:.0f} MB), default --max-rows: refused (exit {rc}) in "
              f"{dt:.2f} s, peak {mb:.0f} MB")
        for k in JUDGED:  # judged in chunks, reports streamed (XLSX capped at 20,000 rows)
            part = d / f"big{k}.csv"
            with open(big, encoding="utf-8") as src, open(part, "w", encoding="utf-8") as fh:
                for i, line in enumerate(src):
                    if i > k:
                        break
                    fh.write(line)
            dt, mb, rc = run_audit([part, "--workers", "2", "--max-rows", k,
                                    "--report", d / f"rep{k}"])
            assert rc == 0, rc
            print(f"{k}-row CSV judged with --max-rows {k} --report: {dt:.1f} s, "
                  f"{k / dt:.0f} rows/s, peak {mb:.0f} MB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
