"""Random designs over the WHOLE documented range: every input gets a verified design or a
one-line decline, in bounded time.

Not part of ``make test`` (minutes of work; ``make validate`` runs the default draw).  The
range is README "Range and limits" / DEVELOPERS.md "Supported ranges": the five families and
the five kinds; alpha in [1e-100, 1 - 1e-12] (equivalence from 1e-12), drawn log-uniform near
both ends and uniform in the middle; n log-uniform in [1, 1e12]; theta anywhere in the
parameter space (binomial p within 1e-8 of 0 and 1 included; Poisson / negative-binomial
means n*theta log-uniform up to 1e12; normal means of either sign; gamma means per unit
log-uniform); dispersion log-uniform in [0.05, 1e20]; band relative width log-uniform in
[1e-9, 1e3].  Every number is a short decimal as a user would type it (1 to 4 significant
digits; a complement such as 1 - 3e-11 written out in full), so the reproduction lines are
exact.  (bench/validate_corners.py draws the issue's narrower corners with the same helpers.)

Each design runs ``design(..., verify=True)`` in a worker process with a hard timeout (the
worker is killed and replaced) and is classified:

  verified   the two solvers agreed (also checked: gammas in [0, 1), sizes within 1e-9 x alpha)
  declined   a project error (one line; its class and first words are recorded)
  disagree   VerificationError (the CLI's exit 1)
  internal   any other exception (the CLI's exit 70): type and message recorded
  timeout    killed after --timeout seconds

It prints the counts per family x kind x outcome, the p50/p95/max wall time of the verified
designs, the designs over 2 s, and every design that is neither verified nor declined as the
exact CLI command that reproduces it.  Then a sample (--cli, default 50) of the declined and
failing designs is run through the CLI (a subprocess each): a decline must exit 2 and print
exactly one line "exactband: error: ..." on stderr and nothing on stdout (no traceback).

    .venv/bin/python bench/validate_range.py --count 2000 --workers 2 --json out.json
"""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import shlex
import subprocess
import sys
import time
from decimal import Decimal
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))
sys.path.insert(0, str(ROOT / "bench"))

from exactband import design  # noqa: E402
from exactband.errors import ExactbandError, VerificationError  # noqa: E402
from exactband.params import make_problem  # noqa: E402
from timeout_pool import Pool  # noqa: E402
from validate_corners import KINDS, lu  # noqa: E402

FAMILIES = ("poisson", "binomial", "negative-binomial", "normal", "gamma")
OUTCOMES = ("verified", "declined", "disagree", "internal", "timeout")
SLOW = 2.0  # seconds: the bound for one design


# -- the draw ----------------------------------------------------------------------------
def short(rng, x: float) -> str:
    """x rounded to 1-4 significant digits, as a user would write it."""
    d = int(rng.integers(1, 5))
    s = f"{x:.{d - 1}e}"
    m, e = s.split("e")
    e = int(e)
    m = m.rstrip("0").rstrip(".") if "." in m else m
    if -5 <= e <= 6:
        return format(Decimal(f"{m}e{e}"), "f")
    return f"{m}e{e}"


def text(v: Decimal) -> str:
    """A Decimal in plain or scientific notation, whichever is shorter."""
    plain = format(v.normalize(), "f")
    sci = format(v.normalize(), "e").replace("e+", "e")
    return plain if len(plain) <= len(sci) else sci


def draw_alpha(rng, kind) -> str:
    floor = 1e-12 if kind == "equivalence" else 1e-100
    u = rng.random()
    if u < 0.35:  # near 0
        return short(rng, max(lu(rng, floor, 1e-2), floor))
    if u < 0.65:  # near 1: 1 - eps, eps a short decimal in [1e-12, 1e-2]
        eps = Decimal(short(rng, lu(rng, 1e-12, 1e-2)))
        eps = max(eps, Decimal("1e-12"))
        return text(Decimal(1) - eps)
    return short(rng, float(rng.uniform(0.01, 0.99)))  # middling


def draw_p(rng) -> Decimal:
    u = rng.random()
    if u < 0.15:
        return Decimal(short(rng, lu(rng, 1e-12, 1e-8)))
    if u < 0.3:
        return Decimal(1) - Decimal(short(rng, lu(rng, 1e-12, 1e-8)))
    if u < 0.55:
        q = Decimal(short(rng, lu(rng, 1e-8, 0.5)))
        return q if rng.random() < 0.5 else Decimal(1) - q
    v = Decimal(short(rng, float(rng.uniform(0.01, 0.99))))
    return v if 0 < v < 1 else Decimal("0.5")


def two_ends(rng, low: Decimal, scale: Decimal, cap: Decimal | None):
    """(low, high) with high - low = w * scale, w log-uniform in [1e-9, 1e3], high < cap."""
    d = Decimal(short(rng, lu(rng, 1e-9, 1e3))) * scale
    if cap is not None and low + d >= cap:
        d = Decimal(short(rng, float((cap - low) * Decimal("0.9"))))
        if not d > 0 or low + d >= cap:
            return None
    d = Decimal(short(rng, float(d))) if d != 0 else d  # keep the ends short decimals
    high = low + d
    if not high > low:
        return None
    return text(low), text(high)


def draw(rng, family, kind):
    """One design's keyword arguments as strings (the CLI's spelling), or None to redraw."""
    kw = {"alpha": draw_alpha(rng, kind)}
    two = kind in ("band", "equivalence")
    n = lu(rng, 1, 1e12)
    if family == "poisson":
        kw["n"] = short(rng, n)
    else:
        kw["n"] = str(max(1, int(Decimal(short(rng, n)))))
    nn = Decimal(kw["n"])
    if family in ("negative-binomial", "normal", "gamma"):
        kw["dispersion"] = short(rng, lu(rng, 0.05, 1e20))
    if family == "binomial":
        t = draw_p(rng)
        scale, cap = min(t, 1 - t), Decimal(1)
    elif family in ("poisson", "negative-binomial"):
        mean = lu(rng, 1e-3, 1e12)
        t = Decimal(short(rng, mean / float(nn)))
        scale, cap = t, None
    elif family == "gamma":
        t = Decimal(short(rng, lu(rng, 1e-8, 1e8)))
        scale, cap = t, None
    else:  # normal: the mean, any real
        u = rng.random()
        if u < 0.15:
            t = Decimal(0)
        else:
            t = Decimal(short(rng, lu(rng, 1e-8, 1e10)))
            t = -t if u < 0.55 else t
        sd = Decimal(kw["dispersion"]) / nn.sqrt()
        scale, cap = (abs(t) if t != 0 else Decimal(short(rng, float(sd)))), None
    if t <= 0 and family != "normal":
        return None
    if two:
        ends = two_ends(rng, t, scale, cap)
        if ends is None:
            return None
        kw["low"], kw["high"] = ends
    else:
        kw["value"] = text(t) if t != 0 else "0"
    return kw


def make_jobs(seed: int, count: int, families) -> list:
    rng = np.random.default_rng(seed)
    jobs = []
    while len(jobs) < count:
        i = len(jobs)
        fam = families[i % len(families)]
        kind = KINDS[(i // len(families)) % len(KINDS)]
        kw = draw(rng, fam, kind)
        if kw is None:
            continue
        try:  # an input outside the documented range (a rounding of the draw): redraw
            make_problem(fam, kind, **api_kwargs(fam, kw))
        except ExactbandError:
            continue
        jobs.append((fam, kind, kw))
    return jobs


def cli_args(family, kind, kw) -> list:
    args = ["design", "--family", family, "--kind", kind]
    for name in ("n", "alpha", "low", "high", "value", "dispersion"):
        if name in kw:
            args.append(f"--{name}={kw[name]}")  # '=': a negative value is not an option
    return args


def cli_line(family, kind, kw) -> str:
    return "exactband " + " ".join(shlex.quote(a) for a in cli_args(family, kind, kw))


# -- one design ----------------------------------------------------------------------------
def api_kwargs(family, kw) -> dict:
    out = {}
    for name, v in kw.items():
        if name == "n" and family != "poisson":
            out[name] = int(v)
        else:
            out[name] = float(v)  # repr of the float is the short decimal: read back exactly
    return out


def declass(msg: str) -> str:
    """A decline's class: its first words with the numbers blanked."""
    words = re.sub(r"[-+]?\d[\w.+-]*", "#", msg).split()
    return " ".join(words[:7])


def run_one(job) -> dict:
    out = _run_one(job)
    out["cpu"] = time.process_time() - out.pop("cpu0")
    return out


def _run_one(job) -> dict:
    family, kind, kw = job
    cpu0 = time.process_time()
    t0 = time.perf_counter()
    try:
        d = design(family, kind, verify=True, **api_kwargs(family, kw))
    except VerificationError as e:
        return dict(outcome="disagree", cls="VerificationError", msg=str(e),
                    time=time.perf_counter() - t0, cpu0=cpu0)
    except ExactbandError as e:
        m = str(e)
        return dict(outcome="declined", cls=f"{type(e).__name__}: {declass(m)}", msg=m,
                    time=time.perf_counter() - t0, cpu0=cpu0, lines=len(m.splitlines()))
    except Exception as e:  # noqa: BLE001 - a bug: record it, keep going
        return dict(outcome="internal", cls=type(e).__name__, msg=f"{type(e).__name__}: {e}",
                    time=time.perf_counter() - t0, cpu0=cpu0)
    dt = time.perf_counter() - t0
    bad = []
    for g in (d.gamma1, d.gamma2):
        if g is not None and not 0.0 <= g < 1.0:
            bad.append(f"gamma {g!r} outside [0, 1)")
    a = d.alpha
    for s in d.sizes:
        if not abs(s - a) <= 1e-9 * a:
            bad.append(f"size {s!r} vs alpha {a!r}")
    rule = (d.c1, d.gamma1, d.c2, d.gamma2)
    if bad:
        return dict(outcome="internal", cls="bad verified design", msg="; ".join(bad),
                    time=dt, cpu0=cpu0, rule=repr(rule))
    return dict(outcome="verified", cls="", msg="", time=dt, cpu0=cpu0, rule=repr(rule))


# -- the CLI check -------------------------------------------------------------------------
def cli_check(family, kind, kw, timeout: float) -> dict:
    exe = ROOT / ".venv" / "bin" / "exactband"
    cmd = [str(exe)] if exe.exists() else [sys.executable, "-m", "exactband"]
    env = dict(os.environ)
    env.pop("EXACTBAND_DEBUG", None)
    try:
        r = subprocess.run(cmd + cli_args(family, kind, kw), capture_output=True, text=True,
                           timeout=timeout, env=env)
    except subprocess.TimeoutExpired:
        return dict(code=None, ok=False, why="timeout")
    err = r.stderr.splitlines()
    why = []
    if r.returncode == 2:
        if r.stdout:
            why.append("stdout not empty")
        if len(err) != 1:
            why.append(f"{len(err)} lines on stderr")
        elif not err[0].startswith("exactband: error: "):
            why.append("stderr line lacks 'exactband: error: '")
    if "Traceback" in r.stderr:
        why.append("traceback")
    return dict(code=r.returncode, ok=r.returncode == 2 and not why, why="; ".join(why),
                stderr=r.stderr[:400])


# -- report --------------------------------------------------------------------------------
def pct(xs, q):
    return float(np.percentile(xs, q)) if len(xs) else math.nan


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--count", type=int, default=2000)
    ap.add_argument("--seed", type=int, default=20261203)
    ap.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1))
    ap.add_argument("--family", action="append", choices=FAMILIES,
                    help="only this family (repeatable; default all five)")
    ap.add_argument("--timeout", type=float, default=60.0, help="seconds per design")
    ap.add_argument("--cli", type=int, default=50,
                    help="declined and failing designs rerun through the CLI (0: none)")
    ap.add_argument("--json", metavar="OUT", help="write every design's record here")
    a = ap.parse_args(argv)
    fams = tuple(a.family) if a.family else FAMILIES
    jobs = make_jobs(a.seed, a.count, fams)

    def progress(done, total):
        if done % 100 == 0 or done == total:
            print(f"  {done}/{total} designs, {time.perf_counter() - t0:.0f} s",
                  file=sys.stderr, flush=True)

    t0 = time.perf_counter()
    pool = Pool(a.workers, a.timeout, run_one)
    try:
        res = pool.run(jobs, progress)
    finally:
        pool.close()
    wall = time.perf_counter() - t0
    recs = [dict(family=f, kind=k, kw=kw, cli=cli_line(f, k, kw), **r)
            for (f, k, kw), r in zip(jobs, res)]
    report(recs, a, wall)
    if a.cli:
        check_cli(recs, a)
    if a.json:
        out = Path(a.json)
        tmp = out.with_name(out.name + ".tmp")
        tmp.write_text(json.dumps(dict(seed=a.seed, count=a.count, workers=a.workers,
                                       timeout=a.timeout, wall=wall, designs=recs),
                                  indent=1, sort_keys=True) + "\n")
        os.replace(tmp, out)
    bad = sum(r["outcome"] in ("disagree", "internal", "timeout") for r in recs)
    return 1 if bad else 0


def report(recs, a, wall):
    print(f"{len(recs)} designs (seed {a.seed}) in {wall:.0f} s on {a.workers} workers, "
          f"timeout {a.timeout:g} s")
    head = f"{'family':18} {'kind':12} " + " ".join(f"{o:>9}" for o in OUTCOMES)
    print(head)
    fams = sorted({r["family"] for r in recs}, key=FAMILIES.index)
    for f in fams:
        for k in KINDS:
            row = [sum(r["family"] == f and r["kind"] == k and r["outcome"] == o for r in recs)
                   for o in OUTCOMES]
            print(f"{f:18} {k:12} " + " ".join(f"{c:9d}" for c in row))
    tot = [sum(r["outcome"] == o for r in recs) for o in OUTCOMES]
    print(f"{'total':31} " + " ".join(f"{c:9d}" for c in tot))
    ok = [r["time"] for r in recs if r["outcome"] == "verified"]
    dec = [r["time"] for r in recs if r["outcome"] == "declined"]
    okc = [r["cpu"] for r in recs if r["outcome"] == "verified"]
    decc = [r["cpu"] for r in recs if r["outcome"] == "declined"]
    for name, xs in (("verified wall", ok), ("verified CPU", okc), ("declined wall", dec),
                     ("declined CPU", decc)):
        if xs:
            print(f"{name} time per design p50/p95/max: {pct(xs, 50) * 1e3:.1f} / "
                  f"{pct(xs, 95) * 1e3:.1f} / {max(xs) * 1e3:.0f} ms")
    print(f"load average at the end: {' '.join(f'{x:.1f}' for x in os.getloadavg())} "
          "(wall times grow with the machine's load; CPU times do not)")
    classes = {}
    for r in recs:
        if r["outcome"] == "declined":
            classes.setdefault(r["cls"], []).append(r)
    print("decline classes:")
    for c, rs in sorted(classes.items(), key=lambda kv: -len(kv[1])):
        multi = sum(r.get("lines", 1) != 1 for r in rs)
        print(f"  {len(rs):5d}  {c}" + (f"  [{multi} not one line]" if multi else ""))
    slow = sorted((r for r in recs if r["outcome"] in ("verified", "declined")
                   and r["time"] > SLOW), key=lambda r: -r["time"])
    print(f"designs over {SLOW:g} s of wall time: {len(slow)} "
          f"({sum(r.get('cpu', 0) > SLOW for r in slow)} over {SLOW:g} s of CPU)")
    for r in slow:
        print(f"  {r['time']:6.1f} s ({r.get('cpu', math.nan):.1f} s CPU) {r['outcome']}: "
              f"{r['cli']}")
    fails = [r for r in recs if r["outcome"] in ("disagree", "internal", "timeout")]
    print(f"not verified, not declined: {len(fails)}")
    for r in sorted(fails, key=lambda r: (r["outcome"], r["cls"], r["family"], r["kind"])):
        print(f"  {r['outcome']} [{r['cls']}] {r['time']:.1f} s: {r['cli']}")
        print(f"      {r['msg'][:300]}")


def check_cli(recs, a):
    pick = [r for r in recs if r["outcome"] in ("disagree", "internal", "timeout")]
    pick = [r for r in pick if r["outcome"] != "timeout"][: a.cli // 2]
    dec = [r for r in recs if r["outcome"] == "declined"]
    # one of each decline class first, then the rest in draw order
    seen, first, rest = set(), [], []
    for r in dec:
        (rest if r["cls"] in seen else first).append(r)
        seen.add(r["cls"])
    pick += (first + rest)[: max(0, a.cli - len(pick))]
    bad = 0
    print(f"CLI check of {len(pick)} designs (declines must exit 2 with one line):")
    for r in pick:
        c = cli_check(r["family"], r["kind"], r["kw"], a.timeout)
        r["cli_check"] = c
        expect = {"declined": 2, "disagree": 1, "internal": 70}[r["outcome"]]
        good = c["ok"] if r["outcome"] == "declined" else (c["code"] == expect and not c["why"])
        if not good:
            bad += 1
            print(f"  BAD ({r['outcome']}, exit {c['code']}, {c['why']}): {r['cli']}")
            print(f"      {c.get('stderr', '')[:300]!r}")
    print(f"CLI check: {len(pick) - bad} as expected, {bad} not")


if __name__ == "__main__":
    raise SystemExit(main())
