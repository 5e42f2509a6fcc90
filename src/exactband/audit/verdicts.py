"""One verdict per row: recompute the optimal rule in high precision and judge theirs.

For a readable row the optimal design is computed by the fast solver and by the
high-precision (mpmath) solver, which must agree (exactband.crosscheck).  Then:

* ``cutoff``: their rule differs from ours at a count other than their printed
  cutoffs (a cutoff is wrong);
* ``gamma``: the cutoffs agree but a gamma is off by more than its tolerance;
* ``size``: the size their own numbers attain at a constraint point (what a
  field user really gets; computed in high precision) exceeds alpha by more
  than printed rounding can explain;
* ``unbiasedness``: their power dips below alpha outside the null, beyond what
  printed rounding can explain (reported with the theta where it is lowest).

A row with none of these is ``ok``; a row that cannot be read is ``invalid``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import mpmath as mp

from ..api import fast_solve
from ..crosscheck import compare, sizes_with_tables
from ..solvers import precise
from .diagnosis import NONE, diagnose
from .match import canonical, mismatches
from .power import lowest_power, slack_at
from .table import Row

REASONS = ("cutoff", "gamma", "size", "unbiasedness")
OUR_DIGITS = 17  # significant digits of our gammas in reports


@dataclass
class Verdict:
    row: Row
    verdict: str  # "ok", "finding" or "invalid"
    reasons: list = field(default_factory=list)
    details: list = field(default_factory=list)
    ours: tuple | None = None  # (c1, g1, c2, g2) floats
    ours_text: tuple | None = None  # (c1, "g1 decimal", c2, "g2 decimal")
    gamma_error: tuple = (None, None)  # their gamma - ours, where the cutoff agrees
    sizes: tuple = ()  # attained sizes of THEIR rule at the constraint points
    excess: float | None = None  # max(size - alpha) over the constraint points
    min_power: float | None = None  # lowest power of their rule outside the null
    at_theta: float | None = None
    diagnosis: str = ""
    also: list = field(default_factory=list)


def _num(x) -> str:
    return f"{x:.6g}"


def _ours(p, precision):
    sol = fast_solve([p])[0]
    pd = precise.solve(p.family, p.kind.name, p.n, p.alpha, low=p.low, high=p.high,
                       value=p.value, dispersion=p.dispersion, precision=precision)
    cc = compare(p.kind.name, p.alpha, sol, pd, precision)
    if not cc.agree:
        return None, None, pd
    with mp.workdps(pd.dps):
        g = [None if x is None else x for x in (pd.gamma1, pd.gamma2)]
        floats = (pd.c1, None if g[0] is None else float(g[0]), pd.c2,
                  None if g[1] is None else float(g[1]))
        text = (pd.c1, None if g[0] is None else mp.nstr(g[0], OUR_DIGITS, min_fixed=-mp.inf,
                                                          max_fixed=mp.inf),
                pd.c2, None if g[1] is None else mp.nstr(g[1], OUR_DIGITS, min_fixed=-mp.inf,
                                                          max_fixed=mp.inf))
    return floats, text, pd


def judge(row: Row, precision: int = 50) -> Verdict:
    """The verdict for one row (with the diagnosis when there is a finding)."""
    if row.error is not None:
        return Verdict(row, "invalid", ["invalid"], [row.error])
    p, theirs, tol = row.problem, row.theirs, row.tol
    ours, text, pd = _ours(p, precision)
    if ours is None:
        return Verdict(row, "invalid", ["invalid"],
                       ["exactband's two solvers disagree on this design; no verdict (report it)"])
    v = Verdict(row, "ok", ours=ours, ours_text=text)
    kind = p.kind.name
    _compare_rules(v, kind, theirs, ours, tol)
    # the size a field user gets with their numbers, in high precision
    with mp.workdps(pd.dps):
        sizes = sizes_with_tables(kind, theirs, pd.tables, pd.dps)
        A = mp.mpf(repr(p.alpha))
        excess = [s - A for s in sizes]
        allow = []
        for T in pd.tables:
            a = mp.mpf(1e-12) * A
            for c, t in ((theirs[0], tol[0]), (theirs[2], tol[1])):
                if c is not None and t is not None:
                    a += mp.mpf(t) * T.pmf(int(c))
            allow.append(a)
        v.sizes = tuple(float(s) for s in sizes)
        v.excess = float(max(excess))
        for pt, name, e, a, s in zip(p.points, _point_names(p), excess, allow, sizes):
            if e > a:
                v.reasons.append("size")
                v.details.append(f"their numbers give size {_num(float(s))} at {name} = {pt:g}, "
                                 f"above alpha = {p.alpha:g} by {_num(float(e))} "
                                 f"({float(e / A) * 100:.3g}% of alpha)")
                break
    t, pw = lowest_power(p, theirs)
    v.min_power, v.at_theta = pw, t
    if pw is not None and pw < p.alpha - slack_at(p, theirs, tol, t):
        v.reasons.append("unbiasedness")
        v.details.append(f"their power dips to {_num(pw)} < alpha = {p.alpha:g} at theta = "
                         f"{_where(p, t)}")
    if v.reasons:
        v.verdict = "finding"
        v.diagnosis, v.also = diagnose(p, theirs, tol, row.decimals, ours, text)
    return v


def _where(p, t) -> str:
    """theta in words relative to the null (a dip often sits just beside a boundary)."""
    for name in ("low", "high", "value"):
        b = getattr(p, name)
        if b is not None and abs(t - b) <= 1e-6 * abs(b):
            side = "below" if t < b else "above"
            return f"{t:.10g} (just {side} {name} = {b:g})"
    return f"{t:.6g} (outside the null)"


def _point_names(p):
    return ("low", "high") if p.kind.two_point else ("value",)


def _compare_rules(v: Verdict, kind, theirs, ours, tol):
    bad = mismatches(kind, theirs, ours, tol)
    ct, co = canonical(kind, theirs), canonical(kind, ours)
    same_cut = (ct[0], ct[2]) == (co[0], co[2]) or (theirs[0], theirs[2]) == (ours[0], ours[2])
    errs = [None, None]
    if (theirs[0], theirs[2]) == (ours[0], ours[2]):
        errs = [None if theirs[1] is None or ours[1] is None else theirs[1] - ours[1],
                None if theirs[3] is None or ours[3] is None else theirs[3] - ours[3]]
    v.gamma_error = tuple(errs)
    if not bad:
        return
    if not same_cut:
        v.reasons.append("cutoff")
        parts = [f"{c} = {t} (ours {o})" for c, t, o in (("c1", theirs[0], ours[0]),
                                                         ("c2", theirs[2], ours[2])) if t != o]
        v.details.append("wrong cutoff: " + ", ".join(parts))
        return
    v.reasons.append("gamma")
    for i, name in ((0, "gamma1"), (1, "gamma2")):
        g_t, g_o, t = theirs[2 * i + 1], ours[2 * i + 1], tol[i]
        if g_t is None or g_o is None:
            continue
        e = g_t - g_o
        if abs(e) > t + 1e-12:
            v.details.append(f"{name} = {v.row.text.get(name) or g_t!s} (ours "
                             f"{v.ours_text[2 * i + 1][:12]}, off by {e:+.2g}; "
                             f"tolerance {t:.2g})")


__all__ = ["NONE", "REASONS", "Verdict", "judge"]
