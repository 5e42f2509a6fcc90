"""The five kinds of hypothesis, their side conditions and test-function semantics.

Test function phi(y) (the contract shared by API, CLI, tables and audit):

* band, point:  1 if y < c1 or y > c2; gamma1 at c1; gamma2 at c2; 0 between.
  (If c1 == c2 the two tails meet at one point, which is rejected with
  probability gamma1 + gamma2.)
* equivalence:  1 if c1 < y < c2; gamma1 at c1; gamma2 at c2; 0 outside (c1 < c2).
* upper: 1 if y > c2, gamma2 at c2.   lower: 1 if y < c1, gamma1 at c1.

Canonical form: every gamma in [0, 1).

Reference: E. L. Lehmann and J. P. Romano, Testing Statistical Hypotheses,
3rd ed., Springer 2005, sections 3.4 (one-sided UMP), 3.7 (equivalence UMP),
4.2 (two-sided UMPU for a point and for an interval).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Kind:
    name: str
    takes: tuple  # the hypothesis parameters the kind needs
    uses_c1: bool
    uses_c2: bool
    optimality: str
    summary: str  # null hypothesis with {t} for the parameter name
    sides: tuple = ()  # where the rule rejects: "below", "above" (of H0) or "inside" (the band)

    @property
    def two_point(self) -> bool:
        return self.takes == ("low", "high")

    def rejection_side(self, y, c1, c2) -> str | None:
        """Side of H0 a rejection at the observed total y points to (None: y between c1 and c2).

        "below" or "above" the band or value (the tails of band, point, lower and
        upper tests), "inside" the band (equivalence), "outside" for a band or
        point test whose two cutoffs meet at y (a rejection there names no side).
        """
        if "inside" in self.sides:
            return "inside" if c1 <= y <= c2 else None
        low_tail = self.uses_c1 and y <= c1
        high_tail = self.uses_c2 and y >= c2
        if low_tail and high_tail:
            return "outside"
        return "below" if low_tail else "above" if high_tail else None

    def side_text(self, side: str, t: str, low="low", high="high", value="value") -> str:
        """A rejection's side in words, e.g. 'below the band (p < 0.01)'."""
        where = "the band" if self.two_point else "the value"
        lo, hi = (low, high) if self.two_point else (value, value)
        if side == "below":
            return f"below {where} ({t} < {lo})"
        if side == "above":
            return f"above {where} ({t} > {hi})"
        if side == "inside":
            return f"inside the band ({lo} < {t} < {hi})"
        if side == "outside":
            return f"outside {where} ({t} < {lo} or {t} > {hi})"
        raise ValueError(f"unknown side {side!r}")

    def rejection_sides(self, t: str, low="low", high="high", value="value") -> tuple:
        """The words of each side the rule can reject on (in the order of ``sides``)."""
        return tuple(self.side_text(s, t, low, high, value) for s in self.sides)


KINDS: dict[str, Kind] = {
    k.name: k
    for k in (
        Kind("upper", ("value",), False, True, "UMP", "{t} <= {value}", ("above",)),
        Kind("lower", ("value",), True, False, "UMP", "{t} >= {value}", ("below",)),
        Kind("point", ("value",), True, True, "UMPU", "{t} = {value}", ("below", "above")),
        Kind("band", ("low", "high"), True, True, "UMPU", "{low} <= {t} <= {high}",
             ("below", "above")),
        Kind("equivalence", ("low", "high"), True, True, "UMP", "{t} <= {low} or {t} >= {high}",
             ("inside",)),
    )
}


def get_kind(name) -> Kind:
    from .strict import name as check_name

    return KINDS[check_name("kind", name, tuple(KINDS))]


def phi(kind: str, c1, g1, c2, g2, y):
    """Rejection probability phi(y) of a design (vectorised over y)."""
    y = np.asarray(y, dtype=float)
    if kind == "upper":
        return np.where(y > c2, 1.0, np.where(y == c2, g2, 0.0))
    if kind == "lower":
        return np.where(y < c1, 1.0, np.where(y == c1, g1, 0.0))
    if kind in ("band", "point"):
        out = np.where((y < c1) | (y > c2), 1.0, 0.0)
        out = out + np.where(y == c1, g1, 0.0) + np.where(y == c2, g2, 0.0)
        return out
    if kind == "equivalence":
        out = np.where((y > c1) & (y < c2), 1.0, 0.0)
        return out + np.where(y == c1, g1, 0.0) + np.where(y == c2, g2, 0.0)
    raise ValueError(f"unknown kind {kind!r}")


def expectation(kind: str, c1, g1, c2, g2, cdf, sf, pmf):
    """E phi(Y) from a law's cdf P(Y <= y), sf P(Y > y) and pmf (float or mpmath).

    The callables receive integer (or integer-valued) points; the formula works
    for numpy arrays of laws as well as for one mpmath law.
    """
    if kind == "upper":
        return sf(c2) + g2 * pmf(c2)
    if kind == "lower":
        return cdf(c1 - 1) + g1 * pmf(c1)
    if kind in ("band", "point"):
        return cdf(c1 - 1) + g1 * pmf(c1) + g2 * pmf(c2) + sf(c2)
    if kind == "equivalence":
        # P(c1 < Y < c2) (empty unless c2 > c1 + 1; with c1 == c2 phi(c) = gamma1 + gamma2)
        middle = (sf(c1) - sf(c2 - 1)) * (c2 > c1 + 1)
        return middle + g1 * pmf(c1) + g2 * pmf(c2)
    raise ValueError(f"unknown kind {kind!r}")


def in_null(kind: str, theta, low=None, high=None, value=None):
    """Whether theta lies in the null hypothesis (vectorised)."""
    t = np.asarray(theta, dtype=float)
    if kind == "upper":
        return t <= value
    if kind == "lower":
        return t >= value
    if kind == "point":
        return t == value
    if kind == "band":
        return (t >= low) & (t <= high)
    if kind == "equivalence":
        return (t <= low) | (t >= high)
    raise ValueError(f"unknown kind {kind!r}")
