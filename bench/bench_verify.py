"""Cost of verification (issue 10): the verified path against the fast path.

Prints, from one run on this machine (the machine is shared: compare figures of
one run only):
* designs/s of ``designs(frame, verify=False)`` and of ``designs(frame,
  verify=True, workers=1)`` on a mixed frame of 400 designs (every family and
  kind, n 10-400, moderate parameters) and their ratio (target <= 5x);
* verified designs/s per core and the per-design verification time p50/p95/max
  (``api.verify_one`` one design at a time, table cache cleared before each);
* how the verification time of a Poisson band (high/low = 1.25, alpha 0.05)
  grows with the mean n*low from 10 to 10^7.

    .venv/bin/python bench/bench_verify.py [--size 400]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from exactband import api, designs  # noqa: E402
from exactband.params import make_problem  # noqa: E402
from exactband.solvers import precise  # noqa: E402

FAMILIES = ("poisson", "binomial", "negative-binomial")
KINDS = ("upper", "lower", "point", "band", "equivalence")


def mixed_frame(size: int, seed: int = 20261203) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(size):
        fam, kind = FAMILIES[i % 3], KINDS[(i // 3) % 5]
        n = int(rng.integers(10, 401))
        alpha = float(rng.choice([0.01, 0.05, 0.1])) if rng.random() < 0.7 else \
            float(f"{10 ** rng.uniform(-6, -1):.3g}")
        if fam == "binomial":
            t = float(f"{rng.uniform(0.02, 0.9):.3g}")
            top = min(0.99, t * float(rng.uniform(1.05, 1.6)))
        else:
            t = float(f"{rng.uniform(0.3, 6.0):.3g}")
            top = t * float(rng.uniform(1.05, 1.6))
        row = dict(family=fam, kind=kind, n=n, alpha=alpha, low=np.nan, high=np.nan,
                   value=np.nan, dispersion=np.nan)
        if kind in ("band", "equivalence"):
            row.update(low=t, high=float(f"{top:.4g}"))
        else:
            row.update(value=t)
        if fam == "negative-binomial":
            row["dispersion"] = float(f"{10 ** rng.uniform(-0.3, 1.7):.3g}")
        rows.append(row)
    return pd.DataFrame(rows)


def problem_of(row):
    def v(x):
        return None if pd.isna(x) else x

    return make_problem(row.family, row.kind, n=row.n, alpha=row.alpha, low=v(row.low),
                        high=v(row.high), value=v(row.value), dispersion=v(row.dispersion))


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--size", type=int, default=400)
    a = ap.parse_args()
    frame = mixed_frame(a.size)
    fast_times = []
    for _ in range(5):
        t = time.perf_counter()
        designs(frame, verify=False)
        fast_times.append(time.perf_counter() - t)
    tf = statistics.median(fast_times)
    precise.clear_cache()
    t = time.perf_counter()
    designs(frame, verify=True, workers=1)
    tv = time.perf_counter() - t
    print(f"mixed frame of {a.size}: fast {a.size / tf:,.0f} designs/s, verified (workers=1) "
          f"{a.size / tv:,.1f} designs/s per core; verified/fast cost ratio {tv / tf:.1f}x")
    per = []
    for row in frame.itertuples():
        p = problem_of(row)
        sol = api.fast_solve([p])[0]
        precise.clear_cache()
        t = time.perf_counter()
        api.verify_one(p, sol, api.DEFAULT_PRECISION)
        per.append(time.perf_counter() - t)
    per = np.array(per) * 1e3
    print(f"per-design verification p50/p95/max: {np.median(per):.1f} / "
          f"{np.percentile(per, 95):.1f} / {per.max():.1f} ms")
    print("Poisson band (high/low 1.25, alpha 0.05), verification time by mean n*low:")
    for mean in (10, 100, 1e3, 1e4, 1e5, 1e6, 1e7):
        p = make_problem("poisson", "band", n=mean, low=1.0, high=1.25, alpha=0.05)
        sol = api.fast_solve([p])[0]
        precise.clear_cache()
        t = time.perf_counter()
        try:
            api.verify_one(p, sol, api.DEFAULT_PRECISION)
            what = f"{(time.perf_counter() - t) * 1e3:9.1f} ms"
        except Exception as e:  # declined: say so
            what = f"declined after {(time.perf_counter() - t) * 1e3:.1f} ms: {e}"
        print(f"  mean {mean:>10,.0f}: {what}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
