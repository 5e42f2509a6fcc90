"""Benchmark of the core engine (issue: core engine performance targets).

Prints, from one run on this machine:
* designs/s of ``designs(frame, verify=False)`` on a 20,000-design Poisson band frame
  (n 5..400, rate 0.3..6, high/low 1.05..1.6, alpha in {0.01, 0.05, 0.1});
* designs/s of the obvious pair-enumeration method on a random subset of that frame
  (for every pair of integer cutoffs solve the 2x2 linear system for the gammas and keep
  the pair whose gammas lie in [0, 1]), implemented with numpy over blocks of pairs;
* their ratio;
* designs/s of the 50-digit solver on designs of the frame with n*theta <= 1000.

Timings are medians over repeats; the machine is shared, so compare only figures from
one run.  Targets: >= 20,000 designs/s, >= 400x the enumeration, >= 50 designs/s precise.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import stats

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from exactband import designs  # noqa: E402
from exactband.families import get_family  # noqa: E402
from exactband.solvers import precise  # noqa: E402


def make_frame(size: int, seed: int = 20261202) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    n = rng.integers(5, 401, size).astype(float)
    low = rng.uniform(0.3, 6.0, size)
    ratio = rng.uniform(1.05, 1.6, size)
    alpha = rng.choice([0.01, 0.05, 0.1], size)
    return pd.DataFrame({"family": "poisson", "kind": "band", "n": n, "alpha": alpha,
                         "low": low, "high": low * ratio})


def enumerate_pairs(mu_l: float, mu_h: float, alpha: float, block: int = 256):
    """The obvious method: try every cutoff pair (c1 <= c2) and solve for the gammas."""
    top = int(stats.poisson.isf(1e-15, mu_h)) + 2
    y = np.arange(top + 1, dtype=float)
    fl, fh = stats.poisson.pmf(y, mu_l), stats.poisson.pmf(y, mu_h)
    Fl = np.concatenate(([0.0], stats.poisson.cdf(y, mu_l)))  # Fl[c] = P(Y <= c-1)
    Fh = np.concatenate(([0.0], stats.poisson.cdf(y, mu_h)))
    Sl, Sh = stats.poisson.sf(y, mu_l), stats.poisson.sf(y, mu_h)
    c2 = np.arange(top + 1)
    for start in range(0, top + 1, block):
        c1 = np.arange(start, min(start + block, top + 1))[:, None]
        a11, a12 = fl[c1], fl[c2][None, :]
        a21, a22 = fh[c1], fh[c2][None, :]
        b1 = alpha - Fl[c1] - Sl[c2][None, :]
        b2 = alpha - Fh[c1] - Sh[c2][None, :]
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            det = a11 * a22 - a12 * a21
            g1 = (b1 * a22 - a12 * b2) / det
            g2 = (a11 * b2 - a21 * b1) / det
        ok = (c1 < c2[None, :]) & (g1 >= 0) & (g1 <= 1) & (g2 >= 0) & (g2 <= 1)
        hit = np.argwhere(ok)
        if hit.size:
            i, j = hit[0]
            return int(c1[i, 0]), float(g1[i, j]), int(j), float(g2[i, j])
    return None


def median_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", type=int, default=20_000)
    ap.add_argument("--enum-subset", type=int, default=40)
    ap.add_argument("--precise-subset", type=int, default=100)
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args(argv)

    frame = make_frame(args.size)
    designs(frame.head(50), verify=False)  # warm up imports and caches
    t_fast = median_time(lambda: designs(frame, verify=False), args.repeats)
    fast_rate = args.size / t_fast
    print(f"fast solver: {args.size} Poisson band designs in {t_fast:.3f} s (median of "
          f"{args.repeats}) = {fast_rate:,.0f} designs/s")

    sub = frame.sample(args.enum_subset, random_state=1)
    result = designs(sub, verify=False)
    t0 = time.perf_counter()
    agree = 0
    for row, ours in zip(sub.itertuples(), result.itertuples()):
        e = enumerate_pairs(row.n * row.low, row.n * row.high, row.alpha)
        agree += e is not None and (e[0], e[2]) == (ours.c1, ours.c2)
    t_enum = time.perf_counter() - t0
    enum_rate = args.enum_subset / t_enum
    t_fast_sub = median_time(lambda: designs(sub, verify=False), args.repeats)
    print(f"pair enumeration: {args.enum_subset} designs in {t_enum:.2f} s = {enum_rate:,.1f} "
          f"designs/s (cutoffs equal to the fast solver's on {agree}/{args.enum_subset})")
    print(f"fast solver on the same subset: {args.enum_subset / t_fast_sub:,.0f} designs/s")
    print(f"ratio fast / enumeration: {fast_rate / enum_rate:,.0f}x "
          f"(full-frame fast rate over subset enumeration rate)")

    small = frame[frame.n * frame.high <= 1000].sample(args.precise_subset, random_state=2)
    fam = get_family("poisson")
    t0 = time.perf_counter()
    for row in small.itertuples():
        precise.solve(fam, "band", row.n, row.alpha, low=row.low, high=row.high, precision=50)
    t_prec = time.perf_counter() - t0
    print(f"precise solver (50 digits): {args.precise_subset} band designs with n*theta <= 1000 "
          f"in {t_prec:.2f} s = {args.precise_subset / t_prec:,.1f} designs/s "
          f"(mean n*high = {float((small.n * small.high).mean()):.0f})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
