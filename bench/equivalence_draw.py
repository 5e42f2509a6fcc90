"""Random equivalence designs at a small alpha with wide and narrow windows: outcomes.

Not part of ``make test`` (a few minutes).  Draw (fixed seed): the three discrete
families in turn; alpha 1e-12 in a third of the draws, else log-uniform in
[1e-12, 1e-6] (and [1e-6, 0.5] in a tenth); the mean at ``low`` log-uniform in
[1, 1e8]; the distance of the two means log-uniform in [0.1, 1e4] standard
deviations of the law at ``low`` (binomial p log-uniform in [1e-8, 0.5], mirrored
above 1/2 in half of the draws; negative-binomial dispersion log-uniform in
[0.05, 1e20]).  Each design is solved by the fast path and verified
(``api.verify_one``, one process, 30 s alarm).  Prints the counts by outcome and
one line per design that was not verified; ``--json`` keeps every row (the fast
solution among them, to compare two versions of the solver).

    .venv/bin/python bench/equivalence_draw.py --count 300
"""

from __future__ import annotations

import argparse
import collections
import json
import math
import signal
import time

import numpy as np

from exactband import api
from exactband.errors import DesignError, VerificationError
from exactband.params import make_problem

FAMILIES = ("poisson", "binomial", "negative-binomial")


class _Timeout(Exception):
    pass


def _alarm(*_):
    raise _Timeout()


def lu(rng, lo, hi):
    return float(10 ** rng.uniform(math.log10(lo), math.log10(hi)))


def draw(rng, family):
    u = rng.random()
    alpha = 1e-12 if u < 1 / 3 else (lu(rng, 1e-6, 0.5) if u > 0.9 else lu(rng, 1e-12, 1e-6))
    alpha = float(f"{alpha:.3g}")
    gap = lu(rng, 0.1, 1e4)  # distance of the means in sd at low
    if family == "binomial":
        n = int(lu(rng, 10, 1e9))
        p = float(f"{lu(rng, max(1e-8, 1.0 / n), 0.5):.6g}")
        sd = math.sqrt(n * p * (1 - p))
        q = min(p + gap * sd / n, 0.5 + 0.5 * p)
        lo, hi = p, float(f"{q:.12g}")
        if rng.random() < 0.5:
            lo, hi = float(f"{1 - hi:.12g}"), float(f"{1 - lo:.12g}")
        if not 0 < lo < hi < 1:
            return None
        return dict(n=n, alpha=alpha, low=lo, high=hi)
    mean = lu(rng, 1.0, 1e8)
    if family == "poisson":
        n, k, var = 1, None, mean
    else:
        n = int(lu(rng, 1, 1e5))
        k = float(f"{lu(rng, 0.05, 1e20):.3g}")
        var = mean + mean * mean / (n * k)
    lo = float(f"{mean / n:.6g}")
    hi = float(f"{(mean + gap * math.sqrt(var)) / n:.12g}")
    if not hi > lo:
        return None
    kw = dict(n=n, alpha=alpha, low=lo, high=hi)
    if k is not None:
        kw["dispersion"] = k
    return kw


def one(family, kw):
    p = make_problem(family, "equivalence", **kw)
    t = time.perf_counter()
    sol = None
    signal.alarm(30)
    try:
        sol = api.fast_solve([p])[0]
        d = api.verify_one(p, sol, 50)
        out = "verified"
        note = f"phi diff {d.check.max_phi_diff:.2e} / tol {d.check.phi_tol:.1e}"
    except _Timeout:
        out, note = "timeout", "over 30 s"
    except DesignError as e:
        out, note = "declined", str(e)
    except VerificationError as e:
        out, note = "disagree", str(e)
    except Exception as e:  # noqa: BLE001 - a bug: report it, keep going
        out, note = type(e).__name__, str(e)
    finally:
        signal.alarm(0)
    return out, note, sol, time.perf_counter() - t


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--count", type=int, default=300)
    ap.add_argument("--seed", type=int, default=20261203)
    ap.add_argument("--json", default=None, help="write every row here")
    a = ap.parse_args()
    signal.signal(signal.SIGALRM, _alarm)
    rng = np.random.default_rng(a.seed)
    jobs = []
    while len(jobs) < a.count:
        fam = FAMILIES[len(jobs) % 3]
        kw = draw(rng, fam)
        if kw is not None:
            jobs.append((fam, kw))
    counts = collections.Counter()
    rows = []
    slow = 0.0
    for fam, kw in jobs:
        out, note, sol, dt = one(fam, kw)
        counts[(fam, out)] += 1
        slow = max(slow, dt)
        rows.append(dict(family=fam, kw=kw, outcome=out, note=note, fast=sol, seconds=dt))
        if out not in ("verified", "declined"):
            print(f"{out}: {fam} {kw}: {note[:160]}", flush=True)
    for (fam, out), c in sorted(counts.items()):
        print(f"{fam:18s} {out:10s} {c}")
    print(f"slowest design {slow:.2f} s")
    if a.json:
        with open(a.json, "w") as f:
            json.dump(rows, f, indent=0, default=str)


if __name__ == "__main__":
    main()
