"""Recompute one row: the optimal rule (both solvers) and the sizes THEIR printed numbers attain.

The fast solver runs once over the whole file (``fast_all``, vectorised); each
row then runs the high-precision solver, which must agree with the fast one
(exactband.crosscheck), and sums the exact decimals the row prints with the
high-precision tables, at every constraint point.  A design the solvers
decline (a law too spread out to tabulate, a parameter out of range) gives a
Recomputed with ``error`` set: that row is invalid, the others go on.

Only small values leave a worker (no probability tables), so a large file is
judged in bounded memory per row.
"""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Decimal

import mpmath as mp

from ..crosscheck import compare, sizes_with_tables
from ..errors import ExactbandError
from ..mpnum import dec
from ..solvers import precise
from ..solving import fast_solve

OUR_DIGITS = 17  # significant digits of our gammas shown in reports
EXACT_DIGITS = 40  # significant digits of our gammas used to judge theirs


@dataclass(frozen=True)
class Recomputed:
    ours: tuple | None = None  # (c1, g1, c2, g2), gammas as floats
    ours_text: tuple | None = None  # (c1, "g1", c2, "g2") with OUR_DIGITS digits
    ours_exact: tuple = (None, None)  # our gammas as Decimals (EXACT_DIGITS digits)
    sizes: tuple = ()  # sizes of THEIR printed rule at the constraint points (floats)
    excess: float | None = None  # max over the points of (their size - alpha)
    error: str | None = None  # why the row could not be recomputed


def fast_all(problems: list) -> list:
    """Fast solutions for every problem (None for a problem the fast solver declines)."""
    try:
        return fast_solve(problems)
    except (ExactbandError, ArithmeticError, ValueError):
        out = []
        for p in problems:
            try:
                out.append(fast_solve([p])[0])
            except (ExactbandError, ArithmeticError, ValueError):
                out.append(None)
        return out


def _declined(e: BaseException) -> str:
    from ..families.mptable import TableTooLarge

    if isinstance(e, TableTooLarge):
        return (f"declined: the law of Y is too spread out for the high-precision solver ({e} "
                "per probability table); no verdict for this row")
    msg = " ".join(str(e).split()) or type(e).__name__
    return f"declined by the solver: {msg}"


def printed_rule(row) -> tuple:
    """Their rule with the gammas as the exact decimals printed (strings; '0' if no column)."""
    c1, g1, c2, g2 = row.theirs
    out = []
    for c, g, num in ((c1, g1, row.numbers[0]), (c2, g2, row.numbers[1])):
        if c is None:
            out += [None, None]
        else:
            out += [c, str(num.value) if num is not None else repr(float(g or 0.0))]
    return tuple(out)


def recompute_real(row, precision: int) -> Recomputed:
    """A continuous family: the optimal real cutoffs (both solvers, ``solving``) and the
    sizes THEIR printed cutoffs attain (their exact decimals, the mpmath law)."""
    from ..solvers import cprecise
    from ..solving import continuous_fast, continuous_verify

    p = row.problem
    try:
        d = continuous_verify(p, continuous_fast(p), precision)
        printed = tuple(None if c is None else str(c.value) for c in row.cuts)
        sizes = cprecise.sizes_of(p.family, p.kind, p.n, p.dispersion, printed[0], printed[1],
                                  p.points, precision)
    except (ExactbandError, ArithmeticError, ValueError, cprecise.PreciseFailure) as e:
        return Recomputed(error=_declined(e))
    with mp.workdps(precision + 15):
        A = dec(p.alpha)
        excess = float(max(s - A for s in sizes))
        fsizes = tuple(float(s) for s in sizes)
    exact = tuple(None if c is None else Decimal(repr(c)) for c in (d.c1, d.c2))
    return Recomputed((d.c1, None, d.c2, None), (d.c1, None, d.c2, None),
                      exact, fsizes, excess)


def recompute(row, fast, precision: int) -> Recomputed:
    """The optimal rule for ``row.problem`` and the sizes of the row's printed rule."""
    p = row.problem
    if not p.family.discrete:
        return recompute_real(row, precision)
    try:
        if fast is None:
            fast = fast_solve([p])[0]
        pd = precise.solve(p.family, p.kind.name, p.n, p.alpha, low=p.low, high=p.high,
                           value=p.value, dispersion=p.dispersion, precision=precision)
        cc = compare(p.kind.name, p.alpha, fast, pd, precision)
    except (ExactbandError, ArithmeticError, ValueError, precise.PreciseFailure) as e:
        return Recomputed(error=_declined(e))
    if not cc.agree:
        return Recomputed(error="exactband's two solvers disagree on this design; no verdict "
                                f"(please report it: {cc.reason})")
    with mp.workdps(pd.dps):
        gs = (pd.gamma1, pd.gamma2)
        ours = (pd.c1, None if gs[0] is None else float(gs[0]), pd.c2,
                None if gs[1] is None else float(gs[1]))
        text = tuple(None if g is None else mp.nstr(g, OUR_DIGITS, min_fixed=-mp.inf,
                                                     max_fixed=mp.inf) for g in gs)
        exact = tuple(None if g is None else Decimal(mp.nstr(g, EXACT_DIGITS, min_fixed=-mp.inf,
                                                             max_fixed=mp.inf)) for g in gs)
        sizes = sizes_with_tables(p.kind.name, printed_rule(row), pd.tables, pd.dps)
        A = dec(p.alpha)
        excess = float(max(s - A for s in sizes))
        fsizes = tuple(float(s) for s in sizes)
    return Recomputed((ours[0], ours[1], ours[2], ours[3]), (pd.c1, text[0], pd.c2, text[1]),
                      exact, fsizes, excess)


def task(args) -> Recomputed:
    """recompute() for a process pool: (row, fast solution, precision)."""
    return recompute(*args)
