"""Public entry points: ``design`` for one test, ``designs`` for a DataFrame of them.

Data flow: parameters -> params.make_problem (validation) -> solvers.fast ->
solvers.precise -> crosscheck -> Design.  Nothing here formats output.
"""

from __future__ import annotations

import mpmath as mp
import numpy as np

from .crosscheck import compare
from .design import Design
from .errors import DesignError, VerificationError, invalid
from .families.mptable import TableTooLarge
from .params import Problem, make_problem
from .solvers import fast, precise

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
                          f"(precision = {precision} was given too)")
    return digits


def label(p: Problem) -> str:
    """Short identification of a design for messages."""
    hyp = (f"value={p.value}" if p.kind.takes == ("value",) else f"low={p.low}, high={p.high}")
    disp = f", dispersion={p.dispersion}" if p.dispersion is not None else ""
    return f"{p.family.name} {p.kind.name} (n={p.n}, alpha={p.alpha}, {hyp}{disp})"


def fast_solve(problems: list) -> list:
    """Run the fast solver over problems (grouped by family and kind); tuples per problem."""
    out = [None] * len(problems)
    groups: dict = {}
    for i, p in enumerate(problems):
        groups.setdefault((p.family.name, p.kind.name), []).append(i)
    for idx in groups.values():
        ps = [problems[i] for i in idx]
        fam, kind = ps[0].family, ps[0].kind.name

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


def _canonical(c1, g1, c2, g2, kind):
    """Float gammas that round to 1.0 become the neighbouring cutoff with gamma 0."""
    if g1 is not None and g1 >= 1.0:
        c1, g1 = (c1 + 1, 0.0) if kind != "equivalence" else (c1 - 1, 0.0)
    if g2 is not None and g2 >= 1.0:
        c2, g2 = (c2 - 1, 0.0) if kind != "equivalence" else (c2 + 1, 0.0)
    return c1, g1, c2, g2


def from_fast(p: Problem, sol: tuple) -> Design:
    """Unverified Design from the fast solver, sizes from the float law."""
    c1, g1, c2, g2 = _canonical(*sol, p.kind.name)
    base = Design(p, c1, g1, c2, g2, ())
    sizes = tuple(float(base.power(t)) for t in p.points)
    return Design(p, c1, g1, c2, g2, sizes)


def verify_one(p: Problem, sol: tuple, precision: int) -> Design:
    """Solve p with the precise solver, compare with the fast solution, build the Design."""
    try:
        pd = precise.solve(p.family, p.kind.name, p.n, p.alpha, low=p.low, high=p.high,
                           value=p.value, dispersion=p.dispersion, precision=precision)
    except TableTooLarge as e:
        raise DesignError(f"invalid n = {p.n}: the law of Y is too spread out for the "
                          f"high-precision check at {precision} digits ({e}); use a smaller "
                          "n, a lower precision, or the unverified fast path") from None
    cc = compare(p.kind.name, p.alpha, sol, pd, precision)
    if not cc.agree:
        raise VerificationError(f"the two solvers disagree on {label(p)}: {cc.reason}")
    with mp.workdps(pd.dps):
        g1 = None if pd.gamma1 is None else float(pd.gamma1)
        g2 = None if pd.gamma2 is None else float(pd.gamma2)
        d1, d2 = _decimal(pd.gamma1), _decimal(pd.gamma2)
        sizes = tuple(float(s) for s in pd.sizes)
    c1, g1n, c2, g2n = _canonical(pd.c1, g1, pd.c2, g2, p.kind.name)
    if g1n != g1:
        d1 = "0"
    if g2n != g2:
        d2 = "0"
    return Design(p, c1, g1n, c2, g2n, sizes, verified=True, precision=precision,
                  gamma1_decimal=d1, gamma2_decimal=d2, check=cc)


def design(family, kind, *, n, alpha, low=None, high=None, value=None, dispersion=None,
           precision=None, verify=True, digits=None) -> Design:
    """Exact optimal test for one problem.

    Parameters
    ----------
    family : {"poisson", "binomial", "negative-binomial"}
    kind : {"upper", "lower", "point", "band", "equivalence"}
    n : exposure (poisson, real > 0) or number of trials/units (integer >= 1)
    alpha : size, 0 < alpha < 1
    low, high : band ends (band, equivalence); value : (upper, lower, point)
    dispersion : known k > 0 (negative-binomial only)
    precision : significant digits of the verifying mpmath solver (default 50)
    verify : compute with both solvers and require agreement (default True)
    digits : deprecated alias of ``precision``

    Returns
    -------
    Design with c1, gamma1, c2, gamma2, phi(y), power(theta), sizes, describe().

    Raises
    ------
    DesignError for unusable input (one line naming the parameter);
    VerificationError if the two solvers disagree.

    Examples
    --------
    >>> d = design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    >>> (d.c1, d.c2)
    (39, 76)
    """
    if not isinstance(verify, (bool, np.bool_)):
        raise DesignError(f"invalid verify = {verify!r}: True or False")
    p = make_problem(family, kind, n=n, alpha=alpha, low=low, high=high, value=value,
                     dispersion=dispersion)
    precision = precision_alias(precision, digits)
    d = check_precision(DEFAULT_PRECISION if precision is None else precision)
    sol = fast_solve([p])[0]
    if not verify:
        return from_fast(p, sol)
    return verify_one(p, sol, d)


def _verify_task(args):
    p, sol, precision = args
    return verify_one(p, sol, precision)


def verify_many(problems, sols, precision, workers=None, progress=None) -> list:
    """verify_one over many problems, in order, on ``workers`` processes (None: all cores)."""
    from .parallel import pmap

    return pmap(_verify_task, [(p, s, precision) for p, s in zip(problems, sols)], workers,
                progress)


from .batch import COLUMNS, designs  # noqa: E402,F401  (batch form re-exported)
