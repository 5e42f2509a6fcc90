"""Verdicts for rows under the written policy (``policy``).

``stream.judge_batch`` recomputes every row (``recompute``: fast solver over the whole
file, the high-precision solver per row, on a process pool), infers the
rounding of each gamma column from the rows whose cutoffs are right (unless
given), and judges each row on its own cells:

* ``cutoff``: their rule differs from ours at a count other than their printed
  cutoffs;
* ``gamma``: the cutoffs agree but a gamma lies outside the precision its cell
  prints under the column's rounding;
* ``size``: the size their own printed numbers attain exceeds alpha (always a
  finding, whatever else holds; the excess is reported).

A row with none of these is ``ok``; a row that cannot be read or that the
solvers decline is ``invalid``.  Findings get a diagnosis (``diagnosis``) and,
for information, the lowest power of their rule outside the null.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from decimal import Decimal

from . import policy as P
from .diagnosis import NONE, diagnose
from .match import canonical
from .recompute import Recomputed

REASONS = ("cutoff", "gamma", "size")


@dataclass
class Verdict:
    row: object
    verdict: str  # "ok", "finding" or "invalid"
    reasons: list = field(default_factory=list)
    details: list = field(default_factory=list)
    error_field: str | None = None  # invalid row: the input its error names (e.g. "alpha")
    ours: tuple | None = None  # (c1, g1, c2, g2) floats
    ours_text: tuple | None = None  # (c1, "g1 decimal", c2, "g2 decimal")
    gamma_error: tuple = (None, None)  # their gamma - ours (float), where the cutoff agrees
    sizes: tuple = ()  # attained sizes of THEIR printed rule at the constraint points
    excess: float | None = None  # max(size - alpha) over the constraint points
    min_power: float | None = None  # lowest power of their rule outside the null (findings)
    at_theta: float | None = None
    diagnosis: str = ""
    also: list = field(default_factory=list)


def _printed(row, i) -> Decimal:
    num = row.numbers[i]
    return num.value if num is not None else Decimal(repr(float(row.theirs[2 * i + 1] or 0.0)))


def gamma_errors(row, rec: Recomputed):
    """(same test-function cutoffs?, [printed - exact gamma as Decimal or None] * 2)."""
    kind = row.problem.kind.name
    theirs, ours = row.theirs, rec.ours
    errs = [None, None]
    g = [None if theirs[1] is None else _printed(row, 0),
         None if theirs[3] is None else _printed(row, 1)]
    if (theirs[0], theirs[2]) != (ours[0], ours[2]):
        ct = canonical(kind, theirs)
        if (ct[0], ct[2]) != (ours[0], ours[2]):
            return False, errs
        g = [Decimal(0) if ct[2 * i + 1] != theirs[2 * i + 1] else g[i] for i in (0, 1)]
    for i in (0, 1):
        if g[i] is not None and rec.ours_exact[i] is not None:
            errs[i] = g[i] - rec.ours_exact[i]
    return True, errs


def infer_modes(rows, recs, forced=None) -> tuple:
    if forced is not None:
        return forced, forced
    modes = []
    for i in (0, 1):
        cells = []
        for r, rec in zip(rows, recs):
            if r.error is None and rec.error is None and r.problem.family.discrete:
                same, errs = gamma_errors(r, rec)
                if same and errs[i] is not None:
                    cells.append((r.decimals[i], errs[i]))
        modes.append(P.infer_mode(cells)[0])
    return tuple(modes)


def _allowance(decimals) -> float:
    """A symmetric allowance covering both roundings (for the diagnoses)."""
    if decimals is None:
        return float(P.GAMMA_FLOOR)
    return 10.0 ** (-decimals) + float(P.GAMMA_FLOOR)


def judge_row(row, rec: Recomputed, modes) -> Verdict:
    """The verdict of one row (diagnosis left for diagnose_row)."""
    if row.error is not None:
        return Verdict(row, "invalid", ["invalid"], [row.error],
                       error_field=row.error_field)
    if rec.error is not None:
        return Verdict(row, "invalid", ["invalid"], [rec.error])
    p, theirs = row.problem, row.theirs
    if not p.family.discrete:
        return _judge_real(row, rec)
    row.tol = tuple(None if theirs[2 * i] is None else _allowance(row.decimals[i]) for i in (0, 1))
    v = Verdict(row, "ok", ours=rec.ours, ours_text=rec.ours_text, sizes=rec.sizes,
                excess=rec.excess)
    same, errs = gamma_errors(row, rec)
    v.gamma_error = tuple(None if e is None else float(e) for e in errs)
    if not same:
        v.reasons.append("cutoff")
        parts = [f"{c} = {t} (ours {o})" for c, t, o in (("c1", theirs[0], rec.ours[0]),
                                                         ("c2", theirs[2], rec.ours[2])) if t != o]
        v.details.append("wrong cutoff: " + ", ".join(parts))
    else:
        bad = []
        for i, name in ((0, "gamma1"), (1, "gamma2")):
            e, d, m = errs[i], row.decimals[i], modes[i]
            if e is not None and not P.within(m, d, e):
                lo, hi = P.window(m, d)
                prec = "exact" if d is None else f"{'truncated' if m == 'truncate' else 'rounded'}"\
                    f" to {d} decimal{'s' if d != 1 else ''}"
                bad.append(f"{name} = {row.text.get(name) or theirs[2 * i + 1]} (ours "
                           f"{rec.ours_text[2 * i + 1][:12]}, off by {float(e):+.2g}; read as "
                           f"{prec}: allowed {float(lo):+.2g} to {float(hi):+.2g})")
        if bad:
            v.reasons.append("gamma")
            v.details.extend(bad)
    return _size_finding(v, rec, "numbers")


def cut_allowance(num, exact: Decimal) -> Decimal:
    """How far a printed real cutoff may lie from the exact one: one unit of its last
    printed decimal (it is rounded the way that never raises the size, so it may sit a
    whole unit out), plus 4 double-precision epsilons of the cutoff (a program printing
    doubles)."""
    return Decimal(1).scaleb(-max(num.decimals, 0)) + abs(exact) * Decimal(2.0 ** -50)


def _judge_real(row, rec: Recomputed) -> Verdict:
    """A rule with real cutoffs: each printed cutoff within one unit of its last printed
    decimal of the optimal cutoff, and the size the printed cutoffs attain at most alpha."""
    v = Verdict(row, "ok", ours=rec.ours, ours_text=rec.ours_text, sizes=rec.sizes,
                excess=rec.excess)
    bad = []
    for i, name in ((0, "c1"), (1, "c2")):
        num, exact = row.cuts[i], rec.ours_exact[i]
        if num is None or exact is None:
            continue
        if abs(num.value - exact) > cut_allowance(num, exact):
            bad.append(f"{name} = {num.text} (ours {rec.ours[2 * i]!r}; allowed one unit of "
                       f"its last decimal)")
    if bad:
        v.reasons.append("cutoff")
        v.details.append("wrong cutoff: " + ", ".join(bad))
    return _size_finding(v, rec, "cutoffs")


def _size_finding(v: Verdict, rec: Recomputed, what: str) -> Verdict:
    """Add the size finding when the printed rule's size passes alpha (beyond the
    policy's allowance); a verdict with any reason is a finding."""
    p = v.row.problem
    if not P.size_ok(rec.excess, p.alpha):
        worst = max(range(len(rec.sizes)), key=lambda j: rec.sizes[j])
        names = ("low", "high") if p.kind.two_point else ("value",)
        v.reasons.append("size")
        v.details.append(f"their printed {what} give size {rec.sizes[worst]:.6g} at "
                         f"{names[worst]} = {p.points[worst]:g}, above alpha = {p.alpha:g} by "
                         f"{rec.excess:.6g} ({100 * rec.excess / p.alpha:.3g}% of alpha)")
    if v.reasons:
        v.verdict = "finding"
    return v


def diagnose_row(v: Verdict) -> Verdict:
    """Diagnosis and lowest power of a finding (kept apart: it costs more than judging)."""
    from .power import lowest_power

    r = v.row
    if not r.problem.family.discrete:
        v.diagnosis = ("real cutoffs: no construction diagnosis (the cutoffs are compared with "
                       "the optimal ones and the size of the printed rule is checked)")
        return v
    v.diagnosis, v.also = diagnose(r.problem, r.theirs, r.tol, r.decimals, v.ours, v.ours_text,
                                   [_printed(r, i) if r.theirs[2 * i] is not None else None
                                    for i in (0, 1)])
    try:
        v.at_theta, v.min_power = lowest_power(r.problem, r.theirs)
    except (ArithmeticError, ValueError) as e:  # e.g. a cutoff outside the support
        v.details.append(f"(lowest power not computed: {' '.join(str(e).split())[:80]})")
    return v


__all__ = ["NONE", "REASONS", "Verdict", "diagnose_row", "judge_row"]
