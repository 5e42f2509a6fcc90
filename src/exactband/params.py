"""Validated inputs of one design (family, kind, n, alpha and hypothesis values)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from .errors import invalid
from .families import Family, get_family
from .families.base import as_real
from .kinds import ALPHA_MIN, ALPHA_MIN_EQUIVALENCE, Kind, get_kind

# Supported range of alpha (inside (0, 1)).  Below 1e-100 (ALPHA_MIN) tail
# probabilities approach the double-precision underflow; an equivalence design is
# solved through its complement of size 1 - alpha, which a double resolves only for
# alpha >= 1e-12 (ALPHA_MIN_EQUIVALENCE): ``Kind.alpha_min``.
__all__ = ["ALPHA_MAX", "ALPHA_MIN", "ALPHA_MIN_EQUIVALENCE", "Problem", "make_problem"]
ALPHA_MAX = 1.0 - 1e-12


@dataclass(frozen=True)
class Problem:
    """Everything that defines a design, checked; build it with ``make_problem``."""

    family: Family
    kind: Kind
    n: float | int
    alpha: float
    low: float | None
    high: float | None
    value: float | None
    dispersion: float | None

    @property
    def points(self) -> tuple:
        """The constraint points: (value,) or (low, high)."""
        return self.kind.points(self.low, self.high, self.value)

    def inputs(self) -> dict:
        return {
            "family": self.family.name, "kind": self.kind.name, "n": self.n,
            "alpha": self.alpha, "low": self.low, "high": self.high,
            "value": self.value, "dispersion": self.dispersion,
        }


def _missing(x) -> bool:
    return x is None


def make_problem(family, kind, *, n, alpha, low=None, high=None, value=None,
                 dispersion=None) -> Problem:
    """Check every input; raise DesignError with one line naming the first bad one."""
    fam = family if isinstance(family, Family) else get_family(family)
    knd = kind if isinstance(kind, Kind) else get_kind(kind)
    if n is None:
        raise invalid("n", n, f"n is required ({fam.n_word})")
    n_ok = fam.check_n(n)
    if alpha is None:
        raise invalid("alpha", alpha, "alpha is required, a number with 0 < alpha < 1")
    a = as_real("alpha", alpha)
    if not 0.0 < a < 1.0:
        raise invalid("alpha", alpha, "alpha must satisfy 0 < alpha < 1")
    given = {"low": low, "high": high, "value": value}
    for name in ("low", "high", "value"):
        x = given[name]
        if name in knd.takes and _missing(x):
            need = " and ".join(knd.takes)
            raise invalid(name, x, f"the {knd.name} kind needs {need}")
        if name not in knd.takes and not _missing(x):
            need = " and ".join(knd.takes)
            raise invalid(name, x, f"the {knd.name} kind takes only {need}; leave {name} out")
    vals = {name: fam.check_theta(name, given[name]) for name in knd.takes}
    if knd.two_point and not vals["low"] < vals["high"]:
        raise invalid("low", given["low"], f"low must be smaller than high (high = {given['high']})")
    k = fam.check_dispersion(dispersion)
    lo_alpha = knd.alpha_min
    if not lo_alpha <= a <= ALPHA_MAX:
        raise invalid("alpha", alpha, f"{knd.name} designs are computed for "
                      f"{lo_alpha:g} <= alpha <= 1 - {1 - ALPHA_MAX:.0e}")
    for name, x in vals.items():
        if fam.integer_n is False and not math.isfinite(n_ok * x):
            raise invalid(name, given[name], "n * theta overflows")
    return Problem(fam, knd, n_ok, a, vals.get("low"), vals.get("high"), vals.get("value"), k)
