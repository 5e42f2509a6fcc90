"""Random designs over the corners of the documented range: refusals, disagreements,
and the worst cross-check error as a fraction of its per-design tolerance.

Not part of ``make test`` (minutes of work).  Draw: every family and kind; alpha
log-uniform in [1e-8, 0.5] or 1 - 10**U(-12, -1) (equivalence: alpha >= 1e-12);
relative band width high/low - 1 log-uniform in [1e-9, 1e3]; means n*theta
log-uniform in [0.01, 1e6] (both band ends); binomial theta within 1e-8 of 0 or 1 in a fifth of
the draws; dispersion log-uniform in [0.05, 1e20].  Each design is solved by the
fast path and verified (api.verify_one).  Prints counts, the worst fractions of
tolerance, the precise sizes' worst relative error and the slowest designs.

    .venv/bin/python bench/validate_corners.py --count 20000 --workers 2
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from exactband import api  # noqa: E402
from exactband.errors import DesignError, VerificationError  # noqa: E402
from exactband.params import make_problem  # noqa: E402

FAMILIES = ("poisson", "binomial", "negative-binomial")
KINDS = ("upper", "lower", "point", "band", "equivalence")


def lu(rng, lo, hi):
    return float(10 ** rng.uniform(np.log10(lo), np.log10(hi)))


def draw(rng, family, kind):
    if rng.random() < 0.2:
        alpha = 1.0 - lu(rng, 1e-12, 1e-1)
    else:
        alpha = lu(rng, 1e-8, 0.5)
    two = kind in ("band", "equivalence")
    width = lu(rng, 1e-9, 1e3) if two else 0.0
    k = lu(rng, 0.05, 1e20) if family == "negative-binomial" else None
    if family == "binomial":
        n = int(lu(rng, 1, 1e6))
        edge = rng.random()
        if edge < 0.1:
            t = lu(rng, 1e-9, 1e-8)
        elif edge < 0.2:
            t = 1.0 - lu(rng, 1e-9, 1e-8)
        else:
            t = float(rng.uniform(0.001, 0.999))
        t = float(f"{t:.12g}")
        if two:
            d = min(t * width, 0.5 * (1 - t)) if t < 0.5 else min((1 - t) * width, 0.5 * (1 - t))
            lo, hi = (t, t + d) if d > 0 else (t, t * (1 + 1e-9))
            lo, hi = float(f"{lo:.15g}"), float(f"{hi:.15g}")
            if not 0 < lo < hi < 1:
                return None
            return dict(n=n, alpha=alpha, low=lo, high=hi)
        return dict(n=n, alpha=alpha, value=t)
    mean = lu(rng, 0.01, 1e6)
    n = int(lu(rng, 1, 1e4)) if family == "negative-binomial" else lu(rng, 0.1, 1e4)
    theta = float(f"{mean / n:.12g}")
    extra = dict(dispersion=k) if k is not None else {}
    if two:
        width = min(width, 1e6 / mean - 1.0)  # the range: means up to 1e6 at both ends
        high = float(f"{theta * (1 + width):.15g}")
        if not high > theta:
            return None
        return dict(n=n, alpha=alpha, low=theta, high=high, **extra)
    return dict(n=n, alpha=alpha, value=theta, **extra)


def one(args):
    family, kind, kw = args
    try:
        p = make_problem(family, kind, **kw)
    except DesignError as e:
        return ("input", family, kind, kw, str(e), 0.0, None)
    t = time.perf_counter()
    try:
        sol = api.fast_solve([p])[0]
        d = api.verify_one(p, sol, 50)
    except DesignError as e:
        return ("declined", family, kind, kw, str(e), time.perf_counter() - t, None)
    except VerificationError as e:
        return ("disagree", family, kind, kw, str(e), time.perf_counter() - t, None)
    except Exception as e:  # a bug: report it, keep going
        return ("error", family, kind, kw, f"{type(e).__name__}: {e}", time.perf_counter() - t,
                None)
    cc = d.check
    frac = max(cc.max_phi_diff / cc.phi_tol, cc.fast_size_error / cc.size_tol)
    rel = max(abs(s - p.alpha) / p.alpha for s in d.sizes)
    ok_g = all(g is None or 0.0 <= g < 1.0 for g in (d.gamma1, d.gamma2))
    return ("ok", family, kind, kw, "" if ok_g else "gamma outside [0, 1)",
            time.perf_counter() - t, (frac, rel, cc.max_phi_diff, cc.phi_tol))


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--count", type=int, default=20000)
    ap.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1))
    ap.add_argument("--seed", type=int, default=20261203)
    a = ap.parse_args()
    rng = np.random.default_rng(a.seed)
    jobs = []
    while len(jobs) < a.count:
        fam = FAMILIES[len(jobs) % 3]
        kind = KINDS[(len(jobs) // 3) % 5]
        kw = draw(rng, fam, kind)
        if kw is not None:
            jobs.append((fam, kind, kw))
    t0 = time.perf_counter()
    with ProcessPoolExecutor(a.workers) as ex:
        res = list(ex.map(one, jobs, chunksize=20))
    wall = time.perf_counter() - t0
    counts = {}
    for r in res:
        counts[r[0]] = counts.get(r[0], 0) + 1
    print(f"{len(res)} designs in {wall:.1f} s on {a.workers} workers: {counts}")
    for r in res:
        if r[0] not in ("ok",) or r[4]:
            print(f"  {r[0]}: {r[1]} {r[2]} {r[3]}: {r[4][:300]}")
    ok = [r for r in res if r[0] == "ok"]
    if ok:
        worst = max(ok, key=lambda r: r[6][0])
        print(f"worst fraction of tolerance {worst[6][0]:.3g} (|phi diff| {worst[6][2]:.2e}, "
              f"phi_tol {worst[6][3]:.2e}): {worst[1]} {worst[2]} {worst[3]}")
        print(f"worst relative size error of the verified designs "
              f"{max(r[6][1] for r in ok):.2e}")
        times = np.array([r[5] for r in ok])
        print(f"verification time per design p50/p95/max: {np.median(times) * 1e3:.1f} / "
              f"{np.percentile(times, 95) * 1e3:.1f} / {times.max() * 1e3:.0f} ms")
        for r in sorted(ok, key=lambda r: -r[5])[:5]:
            print(f"  slow {r[5]:.2f} s: {r[1]} {r[2]} {r[3]}")
    return 0 if counts.get("ok", 0) == len(res) - counts.get("input", 0) else 1


if __name__ == "__main__":
    raise SystemExit(main())
