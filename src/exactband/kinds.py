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

    @property
    def two_point(self) -> bool:
        return self.takes == ("low", "high")


KINDS: dict[str, Kind] = {
    k.name: k
    for k in (
        Kind("upper", ("value",), False, True, "UMP", "{t} <= {value}"),
        Kind("lower", ("value",), True, False, "UMP", "{t} >= {value}"),
        Kind("point", ("value",), True, True, "UMPU", "{t} = {value}"),
        Kind("band", ("low", "high"), True, True, "UMPU", "{low} <= {t} <= {high}"),
        Kind("equivalence", ("low", "high"), True, True, "UMP", "{t} <= {low} or {t} >= {high}"),
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
