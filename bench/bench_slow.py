"""The slowest verified designs of the whole-range draw (issue 10, class 6), before and after.

Runs the reproductions of the slow class (continuous gamma at shapes n k up to 1e6; the
discrete ones are measured too, for the report) and ~50 gamma designs drawn at large
shapes, each with ``design(..., verify=True)``, once with the source tree of ``--before``
(a git revision, exported with ``git archive`` to a temporary folder) and once with this
tree, each in its own worker process (one design at a time, in turn, never both at once).
Per design it prints the CPU seconds (``time.process_time``, which machine load barely
moves; wall seconds beside it) before and after, and whether the outcome and the cutoffs
are the same.  ``--before none`` times this tree only.

    .venv/bin/python bench/bench_slow.py [--before a1eed15] [--draw 50] [--timeout 60] [--discrete]
"""

from __future__ import annotations

import argparse
import json
import math
import shutil
import signal
import statistics
import subprocess
import sys
import tempfile
import time
from decimal import Decimal
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
BEFORE = "a1eed15"  # main before the fixed-point incomplete gamma and the started searches

REPRODUCTIONS = [  # gamma designs over 2 s in the whole-range draw (bench/validate_range.py)
    ("gamma", "band", dict(n="504000", alpha="0.17", low="8.34e-8", high="8.3400002155e-8",
                           dispersion="1")),
    ("gamma", "point", dict(n="40000", alpha="0.9999998606", value="20", dispersion="1.64")),
    ("gamma", "point", dict(n="7", alpha="0.7", value="1.7e-5", dispersion="13000")),
    ("gamma", "equivalence", dict(n="29", alpha="0.9999999999517", low="3e-4", high="3.51e-4",
                                  dispersion="3000")),
    ("gamma", "point", dict(n="9", alpha="0.091", value="19000", dispersion="15840")),
    ("gamma", "band", dict(n="10000", alpha="0.99999999905", low="1.4e5", high="140000.0519",
                           dispersion="0.198")),
    ("gamma", "band", dict(n="2", alpha="0.999999995174", low="0.0893", high="0.08935358",
                           dispersion="9000")),
    ("gamma", "point", dict(n="400000", alpha="3.221e-35", value="0.4644", dispersion="1.86")),
    ("gamma", "equivalence", dict(n="7", alpha="0.00332", low="20", high="20.0000003",
                                  dispersion="330")),
    ("gamma", "point", dict(n="10", alpha="1.132e-100", value="5.9", dispersion="20000")),
    ("gamma", "equivalence", dict(n="8", alpha="0.503", low="2e5", high="200150",
                                  dispersion="55")),
    ("gamma", "upper", dict(n="45", alpha="0.93", value="4.988e-8", dispersion="1976")),
    ("gamma", "upper", dict(n="430700", alpha="0.99998477", value="2.83e6", dispersion="0.197")),
    ("gamma", "point", dict(n="4", alpha="0.716", value="15.07", dispersion="1163")),
]
DISCRETE = [  # slow discrete designs of the same draw (their laws: families/mptails.py)
    ("negative-binomial", "point", dict(n="230000000", alpha="0.999999999997864", value="300",
                                        dispersion="240")),
    ("binomial", "equivalence", dict(n="50000000000", alpha="0.1209", low="0.0212",
                                     high="0.0212001484")),
    ("negative-binomial", "equivalence", dict(n="113400000000", alpha="1.4e-9", low="0.608",
                                              high="0.60800000091", dispersion="3e18")),
    ("binomial", "equivalence", dict(n="70000000000", alpha="0.8", low="0.989",
                                     high="0.98900002")),
    ("negative-binomial", "equivalence", dict(n="18490000000", alpha="0.628", low="0.5987",
                                              high="0.59882", dispersion="0.1")),
    ("negative-binomial", "point", dict(n="365000000", alpha="0.9999999999543", value="462",
                                        dispersion="0.9423")),
]


def short(rng, x: float, digits: int | None = None) -> str:
    """x to 1-4 significant digits, as a user would type it."""
    d = digits or int(rng.integers(1, 5))
    return f"{float(f'{x:.{d - 1}e}'):.{d - 1}e}".replace("e+", "e")


def drawn(count: int, seed: int = 20261203) -> list:
    """Gamma designs at shapes n k log-uniform in [1e4, 1e6] (where the precise law is
    costly), kinds two-tailed mostly, alpha near 0, near 1 and in the middle, band widths
    log-uniform in [1e-6, 30] standard deviations of Y."""
    import numpy as np

    rng = np.random.default_rng(seed)
    kinds = ["band", "point", "equivalence", "band", "point", "upper", "lower"]
    out = []
    while len(out) < count:
        kind = kinds[len(out) % len(kinds)]
        shape = 10 ** rng.uniform(4, 6)
        n = max(1, int(float(short(rng, 10 ** rng.uniform(0, math.log10(shape))))))
        k = short(rng, shape / n)
        if float(n) * float(k) > 1e6:
            continue
        u = rng.random()
        if u < 0.35:
            alpha = short(rng, 10 ** rng.uniform(-12 if kind == "equivalence" else -30, -2))
        elif u < 0.65:
            eps = Decimal(short(rng, 10 ** rng.uniform(-12, -2)))
            alpha = format(Decimal(1) - eps, "f")
        else:
            alpha = short(rng, rng.uniform(0.01, 0.99), 2)
        theta = Decimal(short(rng, 10 ** rng.uniform(-8, 8)))
        kw = dict(n=str(n), alpha=alpha, dispersion=k)
        if kind in ("band", "equivalence"):
            sd = float(theta) / math.sqrt(n * float(k))
            width = Decimal(short(rng, 10 ** rng.uniform(-6, 1.5) * sd))
            kw.update(low=str(theta), high=str(theta + width))
        else:
            kw.update(value=str(theta))
        out.append(("gamma", kind, kw))
    return out


def cli_line(family, kind, kw) -> str:
    opts = " ".join(f"--{k} {v}" for k, v in kw.items())
    return f"exactband design --family {family} --kind {kind} {opts}"


# -- worker: runs in the source tree given on its command line -----------------------------
class _Timeout(Exception):
    pass


def _alarm(signum, frame):
    raise _Timeout()


def worker(timeout: float) -> None:
    from exactband import design
    from exactband.errors import ExactbandError

    signal.signal(signal.SIGPROF, _alarm)
    for line in sys.stdin:
        family, kind, kw = json.loads(line)
        t0, w0 = time.process_time(), time.perf_counter()
        signal.setitimer(signal.ITIMER_PROF, timeout)  # CPU seconds
        try:
            d = design(family, kind, verify=True, **kw)
            res = ["verified", repr(d.c1), repr(d.gamma1), repr(d.c2), repr(d.gamma2)]
        except _Timeout:
            res = ["timeout"]
        except ExactbandError as e:
            res = [type(e).__name__, str(e)[:100]]
        except Exception as e:  # noqa: BLE001 (an internal error is a finding to print)
            res = ["internal", f"{type(e).__name__}: {str(e)[:100]}"]
        finally:
            signal.setitimer(signal.ITIMER_PROF, 0)
        cpu, wall = time.process_time() - t0, time.perf_counter() - w0
        print(json.dumps([cpu, wall, res]), flush=True)


def run_tree(src: Path, cases: list, timeout: float) -> list:
    """Each case's (cpu, wall, result) from a worker importing exactband from ``src``."""
    proc = subprocess.Popen(
        [sys.executable, __file__, "--worker", "--timeout", str(timeout)], cwd=str(src.parent),
        stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True,
        env={"PYTHONPATH": str(src), "PATH": "/usr/bin:/bin"})
    out = []
    for case in cases:
        proc.stdin.write(json.dumps(case) + "\n")
        proc.stdin.flush()
        out.append(json.loads(proc.stdout.readline()))
    proc.stdin.close()
    proc.wait()
    return out


def export(rev: str, into: Path) -> Path:
    """The src folder of revision ``rev`` (git archive) under ``into``."""
    data = subprocess.run(["git", "-C", str(ROOT), "archive", rev, "src"], check=True,
                          capture_output=True).stdout
    subprocess.run(["tar", "-x", "-C", str(into)], input=data, check=True)
    return into / "src"


def summary(label: str, times: list) -> str:
    s = sorted(times)
    p95 = s[min(len(s) - 1, int(round(0.95 * (len(s) - 1))))]
    over = sum(t > 2.0 for t in s)
    return (f"{label}: p50 {statistics.median(s):.3f} s, p95 {p95:.3f} s, max {s[-1]:.3f} s, "
            f"{over} over 2 s (CPU)")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--before", default=BEFORE, help="git revision to compare with, or none")
    ap.add_argument("--draw", type=int, default=50, help="number of drawn gamma designs")
    ap.add_argument("--timeout", type=float, default=60.0,
                    help="CPU seconds per design (then 'timeout', its time shown as >t)")
    ap.add_argument("--no-repro", action="store_true", help="drawn designs only")
    ap.add_argument("--discrete", action="store_true",
                    help="also the slow discrete designs (code this bench does not change)")
    ap.add_argument("--worker", action="store_true", help=argparse.SUPPRESS)
    a = ap.parse_args()
    if a.worker:
        worker(a.timeout)
        return 0
    cases = ([] if a.no_repro else list(REPRODUCTIONS)) + drawn(a.draw)
    cases += DISCRETE if a.discrete else []
    after = run_tree(ROOT / "src", cases, a.timeout)
    before = None
    if a.before != "none":
        tmp = Path(tempfile.mkdtemp(prefix="bench_slow_"))
        try:
            before = run_tree(export(a.before, tmp), cases, a.timeout)
        finally:
            shutil.rmtree(tmp, ignore_errors=True)
    head = f"{'#':>3} {'before cpu':>10} {'after cpu':>9} {'wall':>6}  same  outcome  design"
    print(head)
    for i, (case, aft) in enumerate(zip(cases, after)):
        b = before[i] if before else None
        same = "" if b is None else ("yes" if b[2] == aft[2] else "NO")
        bt = (f"{'>' if b[2][0] == 'timeout' else ''}{b[0]:.3f}" if b else "").rjust(10)
        print(f"{i:3d} {bt} {aft[0]:9.3f} {aft[1]:6.2f}  {same:4}  {aft[2][0]:8} "
              f"{cli_line(*case)}")
        if b is not None and b[2] != aft[2]:
            print(f"      before: {b[2]}\n      after:  {aft[2]}")
    ok = [i for i, r in enumerate(after) if r[2][0] == "verified"]
    print(summary("after, verified designs", [after[i][0] for i in ok]))
    if before:
        print(summary("before, same designs", [before[i][0] for i in ok]))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
