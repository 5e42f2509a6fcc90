"""Sweep of narrow bands near alpha = 1 (and the equivalence complement): outcome counts.

Usage: python bench/validate_narrow_bands.py SEED COUNT OUT.jsonl

Draws COUNT designs over the three discrete families (cycling poisson, binomial,
negative-binomial): means 1e6 to 1e11, relative band width 1e-9 to 1e-3, alpha
within 1e-12 to 1e-3 of 1 (about a quarter of them as the equivalence design at
1 - alpha), and verifies each (``design(..., verify=True)``), one JSON line per
design: ok, decline (a one-line DesignError), disagree (VerificationError),
fail:<exception>, or timeout (60 s).  Figures: docs/tolerances.md section 9.
"""

from __future__ import annotations

import collections
import json
import math
import random
import signal
import sys
import time

from exactband import design
from exactband.errors import DesignError, VerificationError


def sig(x, d=12):
    return float(f"{x:.{d}g}")


def draw(rng, fam):
    mean = 10 ** rng.uniform(6, 11)
    rel = 10 ** rng.uniform(-9, -3)
    alpha = sig(1 - 10 ** rng.uniform(-12, -3), 15)
    if alpha >= 1:
        alpha = 1 - 1e-12
    if fam == "poisson":
        n = sig(10 ** rng.uniform(0, 3), 4)
        lo = sig(mean / n, 12)
        return dict(n=n, low=lo, high=sig(lo * (1 + rel), 15), alpha=alpha)
    if fam == "binomial":
        p = 10 ** rng.uniform(-4, math.log10(0.5))
        n = int(min(1e12, max(10, mean / p)))
        p = sig(mean / n, 10)
        lo, hi = p, sig(p * (1 + rel), 15)
        if rng.random() < 0.3:
            lo, hi = sig(1 - hi, 15), sig(1 - lo, 15)
        if not 0 < lo < hi < 1:
            return None
        return dict(n=n, low=lo, high=hi, alpha=alpha)
    n = int(10 ** rng.uniform(0, 3))
    k = sig(10 ** rng.uniform(-1.3, 4), 4)
    lo = sig(mean / n, 12)
    return dict(n=n, low=lo, high=sig(lo * (1 + rel), 15), alpha=alpha, dispersion=k)


class Timeout(Exception):
    pass


def _alarm(*_):
    raise Timeout()


def main(seed, count, out):
    signal.signal(signal.SIGALRM, _alarm)
    rng = random.Random(seed)
    fams = ["poisson", "binomial", "negative-binomial"]
    counts = collections.Counter()
    with open(out, "w") as fh:
        for i in range(count):
            fam = fams[i % 3]
            kw = draw(rng, fam)
            if kw is None:
                continue
            kind = "band"
            if rng.random() < 0.25:
                kind = "equivalence"
                kw["alpha"] = sig(1 - kw["alpha"], 15)
            t = time.time()
            res, msg = "ok", ""
            signal.alarm(60)
            try:
                design(fam, kind, **kw)
            except DesignError as e:
                res, msg = "decline", str(e)[:200]
            except VerificationError as e:
                res, msg = "disagree", str(e)[-160:]
            except Timeout:
                res = "timeout"
            except Exception as e:  # noqa: BLE001 - counted, never hidden
                res, msg = "fail:" + type(e).__name__, str(e)[:200]
            finally:
                signal.alarm(0)
            counts[res] += 1
            rec = dict(fam=fam, kind=kind, **kw, res=res, t=round(time.time() - t, 2), msg=msg)
            fh.write(json.dumps(rec) + "\n")
            fh.flush()
    print(dict(counts))


if __name__ == "__main__":
    main(int(sys.argv[1]), int(sys.argv[2]), sys.argv[3])
