"""Verification time of the spread-out designs (issue 10: no design over 2 s).

Takes the draw of bench/validate_corners.py (same seed and count) and keeps the
negative-binomial designs whose full probability table would be long (sd-based
estimate above --terms, default 15,000: the laws the precise solver now reads
through tails at anchors, solvers/precise_tails.py, and those just below the
switch).  Verifies each one at a time in this process (table cache cleared
before each) and prints the counts, the per-design time p50/p95/max and the
slowest designs.  Not part of ``make test``; the machine is shared, so compare
figures of one run only.

    .venv/bin/python bench/bench_spread.py [--count 20000] [--terms 15000]
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from collections import Counter
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

import validate_corners as vc  # noqa: E402
from exactband.solvers import precise  # noqa: E402


def table_terms(kw) -> float:
    """Rough length of the widest full table of a design (as mptable.table_estimate)."""
    n, k = kw["n"], kw["dispersion"]
    worst = 0.0
    for t in (kw.get("value"), kw.get("low"), kw.get("high")):
        if t is None:
            continue
        r, m = n * k, n * t
        sd = math.sqrt(m + m * m / r)
        digits = 65 + 12 - math.log10(min(kw["alpha"], 0.5))
        worst = max(worst, 2 * 1.15 * math.sqrt(2 * math.log(10) * digits) * sd)
    return worst


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--count", type=int, default=20000)
    ap.add_argument("--seed", type=int, default=20261203)
    ap.add_argument("--terms", type=float, default=15000)
    a = ap.parse_args()
    rng = np.random.default_rng(a.seed)
    jobs = []
    while len(jobs) < a.count:
        fam = vc.FAMILIES[len(jobs) % 3]
        kind = vc.KINDS[(len(jobs) // 3) % 5]
        kw = vc.draw(rng, fam, kind)
        if kw is not None:
            jobs.append((fam, kind, kw))
    sel = [j for j in jobs if j[0] == "negative-binomial" and table_terms(j[2]) > a.terms]
    print(f"{len(sel)} negative-binomial designs with a table estimate above {a.terms:,.0f} "
          f"terms (of {len(jobs)} drawn)")
    counts, times = Counter(), []
    t0 = time.perf_counter()
    for job in sel:
        precise.clear_cache()
        r = vc.one(job)
        counts[r[0]] += 1
        times.append((r[5], job))
        if r[0] != "ok" or r[4]:
            print(f"  {r[0]}: {job[1]} {job[2]}: {r[4][:300]}")
    print(f"{dict(counts)} in {time.perf_counter() - t0:.1f} s")
    if times:
        ts = np.array([t for t, _ in times])
        print(f"verification time per design p50/p95/max: {np.median(ts) * 1e3:.0f} / "
              f"{np.percentile(ts, 95) * 1e3:.0f} / {ts.max() * 1e3:.0f} ms")
        for t, job in sorted(times, key=lambda x: -x[0])[:5]:
            print(f"  slow {t:.2f} s: {job[1]} {job[2]}")
    return 0 if counts.get("ok", 0) == len(sel) else 1


if __name__ == "__main__":
    raise SystemExit(main())
