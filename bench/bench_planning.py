"""Benchmark of power/OC, plan and decide (median of repeated runs, one process).

Run: .venv/bin/python bench/bench_planning.py (or make bench)
"""

from __future__ import annotations

import statistics
import time

import exactband
from exactband.decide import decide
from exactband.oc import operating_characteristics
from exactband.planning import plan

BAND = dict(low=2, high=2.5, alpha=0.05)


def timed(fn, repeat=5):
    out = []
    for _ in range(repeat):
        t = time.perf_counter()
        res = fn()
        out.append(time.perf_counter() - t)
    return statistics.median(out), res


def main() -> int:
    d = exactband.design("poisson", "band", n=25, **BAND)
    rows = [
        ("OC frame, 201 thetas x 3 rules (default range)",
         lambda: operating_characteristics(d)),
        ("plan randomised, fast solver only",
         lambda: plan("poisson", "band", alternatives=[1.6, 3.0], target=0.9, verify=False,
                      **BAND)),
        ("plan randomised, boundary designs verified (50 digits)",
         lambda: plan("poisson", "band", alternatives=[1.6, 3.0], target=0.9, **BAND)),
        ("plan conservative, verified",
         lambda: plan("poisson", "band", alternatives=[1.6, 3.0], target=0.9,
                      rule="conservative", **BAND)),
        ("plan conservative, exposure step 0.01, fast only",
         lambda: plan("poisson", "band", alternatives=[1.6, 3.0], target=0.9,
                      rule="conservative", step=0.01, verify=False, **BAND)),
        ("plan conservative, binomial upper p0=0.1 vs 0.11, target 0.95, fast only",
         lambda: plan("binomial", "upper", value=0.1, alpha=0.05, alternatives=[0.11],
                      target=0.95, rule="conservative", verify=False)),
        ("decide at a cutoff (design given)", lambda: decide(d, 39, digits_read="482")),
    ]
    for name, fn in rows:
        sec, res = timed(fn, 3 if "step 0.01" in name or "0.11" in name else 5)
        extra = ""
        if hasattr(res, "evaluations"):
            extra = (f"  n={res.n:g} n_from={res.n_from:g} designs solved={res.evaluations}")
        print(f"{sec * 1000:9.1f} ms  {name}{extra}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
