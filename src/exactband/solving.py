"""Solving problems in bulk: the fast solver over a list, the high-precision check.

``fast_solve`` runs the vectorised float solver over problems grouped by family and
kind; ``verify_one`` solves one problem with the precise solver, compares the two
as test functions (crosscheck) and builds the verified Design; ``verify_many`` does
that on a process pool.  The verifying solver's significant digits are checked by
``check_precision``.  Used by ``api.design``, ``batch.designs``, the table build,
the audit and ``decide --table``.
"""

from __future__ import annotations

import math
import sys

import mpmath as mp
import numpy as np

from . import ccheck
from .crosscheck import compare
from .design import Design
from .errors import DesignError, VerificationError, invalid
from .families.mptable import TableTooLarge
from .params import Problem
from .rule import Rule
from .solvers import cfast, cprecise, fast, precise
from .solvers.search import BIG

BIG_TEXT = f"{BIG:.0e}".replace("e+", "e")  # 1e15

MIN_PRECISION, MAX_PRECISION = 20, 1000
DEFAULT_PRECISION = 50  # significant digits of the verifying mpmath solver
DECIMALS = 30  # significant digits of the gammas given as decimal strings


def check_precision(precision) -> int:
    """The verifying solver's significant digits: a whole number in [MIN, MAX]_PRECISION."""
    allowed = f"a whole number of significant digits from {MIN_PRECISION} to {MAX_PRECISION}"
    from .strict import whole

    d = whole("precision", precision, allowed)
    if not MIN_PRECISION <= d <= MAX_PRECISION:
        raise invalid("precision", precision, allowed)
    return d


def precision_alias(precision, digits, where: str = "design"):
    """``digits=`` is the old name of ``precision=``: accepted with a DeprecationWarning."""
    if digits is None:
        return precision
    import warnings

    warnings.warn(f"{where}(digits=...) is deprecated; use precision=...", DeprecationWarning,
                  stacklevel=3)
    if precision is not None and precision != digits:
        raise DesignError(f"invalid digits = {digits}: give precision only "
                          f"(precision = {precision} was given too)", field="digits",
                          value=digits, allowed="give precision only")
    return digits


def label(p: Problem) -> str:
    """Short identification of a design for messages."""
    hyp = (f"value={p.value}" if p.kind.takes == ("value",) else f"low={p.low}, high={p.high}")
    disp = f", dispersion={p.dispersion}" if p.dispersion is not None else ""
    return f"{p.family.name} {p.kind.name} (n={p.n}, alpha={p.alpha}, {hyp}{disp})"


def check_reach(ps: list) -> None:
    """Decline (one line) a design whose cutoff would pass the searched range.

    ``ps``: problems of one discrete family and kind (one vectorised call).  The
    fast solver searches cutoffs up to ``search.BIG`` (1e15, where doubles still
    hold every integer with room for the laws' arithmetic).  A law with an
    unbounded support (Poisson, negative binomial) whose tail beyond BIG at the
    largest theta is not small against alpha (above alpha/4 for the two-tailed
    and upper kinds: the upper tail there takes at least about half of alpha;
    for the lower kind, P(Y <= BIG) at most alpha) has its cutoff beyond BIG:
    predicted from the float law's tail at BIG before any search.
    """
    L = ps[0].family.float_law
    top = np.array([max(float(t) for t in p.points) for p in ps])
    n = np.array([float(p.n) for p in ps])
    k = None if ps[0].dispersion is None else np.array([float(p.dispersion) for p in ps])
    P = L.make(top, n, k)
    if np.all(np.isfinite(L.supmax(P))):
        return
    big = np.full(len(ps), BIG)
    a = np.array([float(p.alpha) for p in ps])
    lower = not ps[0].kind.uses_c2  # rejects below c1 only: beyond BIG if all of Y is
    with np.errstate(all="ignore"):
        tail = L.cdf(big, P) if lower else L.sf(big, P)
        bad = (tail <= a) if lower else (tail > a / 4)  # (a NaN leaves the search to report)
    for j in np.flatnonzero(bad):
        p = ps[j]
        what = (f"P(Y <= {BIG_TEXT}) = {tail[j]:.3g} at theta = {top[j]:g} is not above alpha"
                if lower else
                f"P(Y > {BIG_TEXT}) = {tail[j]:.3g} at theta = {top[j]:g} is above alpha/4")
        raise DesignError(
            f"invalid n = {p.n}: the cutoff of {label(p)} would pass {BIG_TEXT}, the largest "
            f"the solvers search ({what}); use a smaller n or theta", field="n", value=p.n,
            allowed=f"a design whose cutoffs stay below {BIG_TEXT}")


def fast_solve(problems: list) -> list:
    """Run the fast solver over problems (grouped by family and kind); tuples per problem.

    Each group is first checked to have its cutoffs within reach (``check_reach``)."""
    out = [None] * len(problems)
    groups: dict = {}
    for i, p in enumerate(problems):
        groups.setdefault((p.family.name, p.kind.name), []).append(i)
    for idx in groups.values():
        ps = [problems[i] for i in idx]
        fam, kind = ps[0].family, ps[0].kind.name
        if not fam.discrete:
            for i, p in zip(idx, ps):
                out[i] = continuous_fast(p)
            continue
        check_reach(ps)

        def col(name):
            vals = [getattr(p, name) for p in ps]
            return None if vals[0] is None else np.array(vals, dtype=float)

        res = fast.solve(fam, kind, col("n"), col("alpha"), low=col("low"), high=col("high"),
                         value=col("value"), dispersion=col("dispersion"))
        for j, i in enumerate(idx):
            out[i] = tuple(None if np.isnan(r[j]) else (int(r[j]) if q % 2 == 0 else float(r[j]))
                           for q, r in enumerate(res))
    return out


def _decimal(g) -> str | None:
    if g is None:
        return None
    if g == 0:
        return "0"
    return mp.nstr(g, DECIMALS, min_fixed=-mp.inf, max_fixed=mp.inf, strip_zeros=False)


def from_fast(p: Problem, sol: tuple) -> Design:
    """Unverified Design from the fast solver, sizes from the float law."""
    rule = Rule.canonical(p.kind, *sol)  # float gammas that round to 1.0: the neighbour
    base = Design(p, rule=rule, sizes=())
    sizes = tuple(float(base.power(t)) for t in p.points)
    return Design(p, rule=rule, sizes=sizes)


def continuous_fast(p: Problem) -> tuple:
    """(c1, None, c2, None) of a continuous family's rule from the float solver.

    A design whose cutoffs, written as doubles, cannot hold its size to 1e-9
    (``ccheck.representable``) is declined with a one-line DesignError."""
    law = p.family.continuous_float(p.n, p.dispersion)
    try:
        sol = cfast.solve(law, p.kind, p.alpha, p.low, p.high, p.value)
    except (FloatingPointError, ValueError, OverflowError) as e:
        raise DesignError(f"the float solver failed on {label(p)}: {e}", field="alpha",
                          value=p.alpha) from None
    tiny = [c for c in (sol.c1, sol.c2) if c is not None and abs(c) < sys.float_info.min]
    if law.lower == 0.0 and tiny:  # a scale family's cutoff at 0 or among the subnormals
        raise DesignError(
            f"invalid alpha = {p.alpha}: a cutoff of {label(p)} lies below 2.2e-308, the "
            "smallest normal double, where it cannot hold its size; use a larger alpha, or "
            "state the mean in a smaller unit", field="alpha", value=p.alpha,
            allowed="a design whose cutoffs are normal doubles")
    if not ccheck.representable(sol.conditioning):
        raise DesignError(
            f"invalid alpha = {p.alpha}: the cutoffs of {label(p)} written as 17-digit numbers "
            f"cannot hold its size to 1e-9 (size moves {sol.conditioning:.3g} times a cutoff's "
            "relative change); use a larger alpha or a wider band, or measure from an origin "
            "nearer the values (e.g. as a difference from a reference value)", field="alpha",
            value=p.alpha, allowed="a design whose cutoffs hold its size to 1e-9")
    return sol.c1, None, sol.c2, None


def _beyond(p: Problem, e: TableTooLarge) -> DesignError:
    return DesignError(f"invalid n = {p.n}: the law of Y is beyond the high-precision "
                       f"check ({e}); use a smaller n or the unverified fast path",
                       field="n", value=p.n)


def check_verifiable(p: Problem, precision: int = DEFAULT_PRECISION) -> None:
    """Decline at once a design whose laws the precise solver would decline for their cost
    (a gamma shape above its limit; a discrete law too spread out for its tables and too
    slow from its tails: ``precise.preflight``), before the fast solver spends any time
    on it."""
    if p.family.discrete:
        try:
            precise.preflight(p.family, p.kind.name, p.n, p.alpha, low=p.low, high=p.high,
                              value=p.value, dispersion=p.dispersion, precision=precision)
        except TableTooLarge as e:
            raise _too_spread(p, precision, e) from None
        return
    try:
        with mp.workdps(20):
            p.family.continuous_mp(p.n, p.dispersion)
    except TableTooLarge as e:
        raise _beyond(p, e) from None


def continuous_verify(p: Problem, sol: tuple, precision: int) -> Design:
    """The precise continuous solver, the cross-check of the rules (ccheck), the Design."""
    law = p.family.continuous_float(p.n, p.dispersion)
    fast_sol = cfast.solve(law, p.kind, p.alpha, p.low, p.high, p.value)
    try:
        pd = cprecise.solve(p.family, p.kind, p.n, p.alpha, low=p.low, high=p.high,
                            value=p.value, dispersion=p.dispersion, precision=precision,
                            start=(fast_sol.c1, fast_sol.c2))
    except TableTooLarge as e:
        raise _beyond(p, e) from None
    sizes = cprecise.sizes_of(p.family, p.kind, p.n, p.dispersion, fast_sol.c1, fast_sol.c2,
                              p.points, precision)
    floor = float(law.sd(p.points[0])) if law.floor_scale else 0.0
    between = cprecise.mass_between(p.family, p.n, p.dispersion, (fast_sol.c1, fast_sol.c2),
                                    (pd.c1, pd.c2), p.points, precision)
    cc = ccheck.compare(fast_sol, pd, sizes, p.alpha, floor, precision, between)
    if not cc.agree:
        raise VerificationError(f"the two solvers disagree on {label(p)}: {cc.reason}")
    with mp.workdps(pd.dps):
        c1 = None if pd.c1 is None else float(pd.c1)
        c2 = None if pd.c2 is None else float(pd.c2)
        psizes = tuple(float(s) for s in pd.sizes)
    return Design(p, rule=Rule(p.kind, c1, None, c2, None), sizes=psizes, verified=True,
                  precision=precision, check=cc)


def beyond_double(p: Problem, cc) -> DesignError:
    """Decline of a design whose gamma double precision cannot check (crosscheck.floor_dg)."""
    from .crosscheck import PHI_CEIL, SIZE_TOL

    if cc.floor > PHI_CEIL:
        what = (f"its gamma's floor there is {cc.floor:.2g} (condition number times roundoff), "
                f"above the cross-check's ceiling {PHI_CEIL:g}, and the fast gamma differs by "
                f"{cc.max_phi_diff:.2g}")
        allowed = f"a design whose gamma double precision resolves to {PHI_CEIL:g}"
    else:
        what = (f"the fast rule's size can only be held to {cc.size_floor:.2g} x alpha there "
                f"(its gamma's floor times the mass at the cutoffs), above the check's "
                f"{SIZE_TOL:g} x alpha")
        allowed = f"a design whose size double precision holds to {SIZE_TOL:g} x alpha"
    return DesignError(
        f"invalid alpha = {p.alpha}: {label(p)} cannot be verified in double precision: "
        f"{what}; use a larger alpha or a smaller spread, or the unverified fast path",
        field="alpha", value=p.alpha, allowed=allowed)


def _too_spread(p: Problem, precision: int, e: TableTooLarge) -> DesignError:
    return DesignError(f"invalid n = {p.n}: the law of Y is too spread out for the "
                       f"high-precision check at {precision} digits ({e}); use a smaller "
                       "n, a lower precision, or the unverified fast path", field="n",
                       value=p.n)


def verify_one(p: Problem, sol: tuple, precision: int) -> Design:
    """Solve p with the precise solver, compare with the fast solution, build the Design."""
    if not p.family.discrete:
        return continuous_verify(p, sol, precision)
    try:
        pd = precise.solve(p.family, p.kind.name, p.n, p.alpha, low=p.low, high=p.high,
                           value=p.value, dispersion=p.dispersion, precision=precision)
    except TableTooLarge as e:
        raise _too_spread(p, precision, e) from None
    cc = compare(p.kind.name, p.alpha, sol, pd, precision)
    if cc.beyond_double:
        raise beyond_double(p, cc)
    if not cc.agree:
        raise VerificationError(f"the two solvers disagree on {label(p)}: {cc.reason}")
    with mp.workdps(pd.dps):
        g1 = None if pd.gamma1 is None else float(pd.gamma1)
        g2 = None if pd.gamma2 is None else float(pd.gamma2)
        d1, d2 = _decimal(pd.gamma1), _decimal(pd.gamma2)
        sizes = tuple(float(s) for s in pd.sizes)
    rule = Rule.canonical(p.kind, pd.c1, g1, pd.c2, g2)
    if rule.gamma1 != g1:
        d1 = "0"
    if rule.gamma2 != g2:
        d2 = "0"
    return Design(p, sizes=sizes, verified=True, precision=precision,
                  gamma1_decimal=d1, gamma2_decimal=d2, check=cc, rule=rule)


def law_order(problems, precision) -> list:
    """Positions of ``problems`` grouped by law (family, n, dispersion), the most
    demanding design of a group first (most working digits, then smallest alpha).

    The precise solver keeps its probability tables in a cache and reuses a table
    of at least the precision and at most the truncation threshold a design needs
    (solvers.precise._table), so designs taken in this order on one process build
    each law's tables once.  Only the order of work changes: callers put the
    results back in their own order.
    """
    from .solvers.precise import working_dps

    def key(i):
        p = problems[i]
        dps = working_dps(precision, p.kind.name, p.low, p.high, p.alpha)
        return (p.family.name, p.n, p.dispersion or 0.0, -dps, p.alpha, i)
    return sorted(range(len(problems)), key=key)


def _law(p: Problem) -> tuple:
    return (p.family.name, p.n, p.dispersion)


def law_batches(problems, precision, workers: int) -> list:
    """Lists of positions, in law order (``law_order``), each holding whole law groups
    where it can: the work of one process, which then reuses its tables.

    About 8 batches per worker (so the last ones balance the load), the costliest
    first; a group larger than two batches is cut.  On one worker every design is
    its own batch, in law order.
    """
    order = law_order(problems, precision)
    if workers <= 1:  # one process keeps its tables anyway: one design per batch
        return [[i] for i in order]
    size = max(1, -(-len(order) // (8 * workers)))
    out, cur = [], []
    for k, i in enumerate(order):
        if cur and len(cur) >= size and _law(problems[i]) != _law(problems[order[k - 1]]):
            out.append(cur)
            cur = []
        cur.append(i)
        if len(cur) >= 2 * size:  # one huge law group: cut it
            out.append(cur)
            cur = []
    if cur:
        out.append(cur)
    # the costliest batches first (so no worker is left with a large one at the end):
    # a table's length grows like the spread of Y, here sqrt(n) as a rough measure
    out.sort(key=lambda b: -sum(math.sqrt(problems[i].n) for i in b))
    return out


def _verify_batch(args):
    tasks, precision = args
    return [verify_one(p, s, precision) for p, s in tasks]


def verify_many(problems, sols, precision, workers=None, progress=None, saved=None) -> list:
    """verify_one over many problems, on ``workers`` processes (None: all cores); the
    Designs in the order of ``problems``.

    The work is cut into law batches (``law_batches``) so each process builds a
    law's probability tables once.  ``progress(k)`` is called as k more designs
    are verified; ``saved(positions, designs)``, if given, as each batch arrives
    (the table build saves its resumable cache there).
    """
    from .parallel import pmap, resolve_workers

    problems, sols = list(problems), list(sols)
    w = resolve_workers(workers, len(problems))
    batches = law_batches(problems, precision, w)

    def arrived(k, ds):  # batch k is verified (pmap gives the results in order)
        if saved is not None:
            saved(batches[k], ds)
        if progress:
            progress(len(ds))

    results = pmap(_verify_batch, [([(problems[i], sols[i]) for i in idx], precision)
                                   for idx in batches], w, max_chunk=1, each=arrived,
                   min_tasks=2 if len(problems) >= 8 else 8)  # as many designs as before
    out = [None] * len(problems)
    for idx, ds in zip(batches, results):
        for i, d in zip(idx, ds):
            out[i] = d
    return out
