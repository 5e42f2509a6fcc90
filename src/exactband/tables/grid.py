"""Grid expansion: a validated spec -> the designs of the table, in print order.

Order (the order of the printed sections and of the CSV rows): kinds as the
spec lists them, then alpha as listed, then the band (or value) as listed, then
n as listed.  One section of the printed table is one (kind, alpha) pair.
"""

from __future__ import annotations

from ..errors import DesignError, recast
from ..params import Problem, make_problem
from .spec import TWO_POINT, SpecError, TableSpec


def hypotheses(spec: TableSpec, kind: str) -> tuple:
    """The (low, high) pairs or the (value,) singletons a kind is tabulated for."""
    return spec.bands if kind in TWO_POINT else tuple((x,) for x in spec.values)


def sections(spec: TableSpec) -> list:
    """The (kind, alpha) pairs of the printed sections, in order."""
    return [(k, a) for k in spec.kinds for a in spec.alpha]


def expand(spec: TableSpec) -> list:
    """All problems of the grid, validated by the core (make_problem), in print order."""
    out = []
    for kind, alpha in sections(spec):
        for hyp in hypotheses(spec, kind):
            point = dict(low=hyp[0], high=hyp[1]) if kind in TWO_POINT else dict(value=hyp[0])
            for n in spec.n:
                try:
                    out.append(make_problem(spec.family, kind, n=n, alpha=alpha,
                                            dispersion=spec.dispersion, **point))
                except DesignError as e:
                    where = ", ".join(f"{k}={v}" for k, v in point.items())
                    raise recast(e, SpecError, f"{spec.where or spec.source}: the design "
                                 f"{kind} (n={n}, alpha={alpha}, {where}) is unusable: ") from None
    return out


def key(p: Problem) -> str:
    """A stable text key of a problem's inputs (for the verification cache)."""
    return "|".join(repr(x) for x in (p.family.name, p.kind.name, p.n, p.alpha, p.low, p.high,
                                      p.value, p.dispersion))
