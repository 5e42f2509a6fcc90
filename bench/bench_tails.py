"""Verification time of Poisson designs over means 1e8 to 1e12 (issue 10: no design over 2 s).

Below a standard deviation of about 5e4 (at alpha 0.05) the precise solver tabulates
the law (families/mptable.py); beyond the table limits it reads the tails from
continued fractions at a few anchors (families/mptails.py, solvers/precise_tails.py)
and declines, before any work, a design predicted to take more than
precise_tails.MAX_CF_TERMS fraction terms.  For each mean this verifies a fixed
set of designs (every kind, alpha from 1e-50 to 0.3, narrow and wide bands), one
at a time with the table cache cleared, and prints the per-design time p50/max,
the declines and how each design was read (table or tails).  Not part of ``make
test``; the machine is shared, so compare figures of one run only.

    .venv/bin/python bench/bench_tails.py [--means 1e8,1e9,1e10,1e11,1e12]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from exactband import design  # noqa: E402
from exactband.errors import DesignError  # noqa: E402
from exactband.solvers import precise, precise_tails  # noqa: E402


def designs(mu: float):
    """The fixed set of designs at one mean (kind, keywords)."""
    out = []
    for alpha in (1e-50, 1e-6, 0.05, 0.3):
        out.append(("upper", dict(value=mu, alpha=alpha)))
        out.append(("lower", dict(value=mu, alpha=alpha)))
        out.append(("point", dict(value=mu, alpha=alpha)))
        out.append(("band", dict(low=mu, high=mu * (1 + 3e-6), alpha=alpha)))
        out.append(("band", dict(low=mu, high=mu * 1.01, alpha=alpha)))
        if alpha >= 1e-12:
            out.append(("equivalence", dict(low=mu, high=mu * 1.001, alpha=alpha)))
    return out


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--means", default="1e8,1e9,1e10,1e11,1e12")
    a = ap.parse_args()
    print(f"{'mean':>8} {'designs':>7} {'tables':>6} {'tails':>5} {'declined':>8} "
          f"{'other':>5} {'p50 s':>7} {'max s':>7}  slowest")
    for mu in (float(x) for x in a.means.split(",")):
        times, counts, slow = [], {"table": 0, "tails": 0, "declined": 0, "other": 0}, None
        for kind, kw in designs(mu):
            precise.clear_cache()
            t0 = time.perf_counter()
            try:
                d = design("poisson", kind, n=1, **kw)
                how = "tails" if any(isinstance(T, precise_tails.TailTable)
                                     for T in (precise._CACHE or {}).values()) else "table"
                assert d.verified
            except DesignError as e:
                how = "declined" if "too spread out" in str(e) else "other"
            except Exception:  # noqa: BLE001 - counted, reported by kind below
                how = "other"
            dt = time.perf_counter() - t0
            counts[how] += 1
            if how != "declined":
                times.append(dt)
                if slow is None or dt > slow[0]:
                    slow = (dt, kind, kw)
        times.sort()
        p50 = times[len(times) // 2] if times else float("nan")
        mx = times[-1] if times else float("nan")
        s = f"{slow[1]} {slow[2]}" if slow else ""
        print(f"{mu:8.0e} {sum(counts.values()):7d} {counts['table']:6d} {counts['tails']:5d} "
              f"{counts['declined']:8d} {counts['other']:5d} {p50:7.2f} {mx:7.2f}  {s}", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
