"""The five kinds of hypothesis, their side conditions and test-function semantics.

Test function phi(y) (the contract shared by API, CLI, tables and audit):

* band, point:  1 if y < c1 or y > c2; gamma1 at c1; gamma2 at c2; 0 between.
  (If c1 == c2 the two tails meet at one point, which is rejected with
  probability gamma1 + gamma2.)
* equivalence:  1 if c1 < y < c2; gamma1 at c1; gamma2 at c2; 0 outside (c1 < c2).
* upper: 1 if y > c2, gamma2 at c2.   lower: 1 if y < c1, gamma1 at c1.

Canonical form: every gamma in [0, 1).  (c, gamma = 1) is the same test as the
neighbouring cutoff with gamma 0: ``Kind.canonical`` is the one place that says
which neighbour (``Kind.step``).

A Kind answers every question about its rule (phi, E phi, the null region, the
constraint points, the cutoffs it uses, the side of a rejection in words, the
canonical form, the safe rounding direction of a printed cutoff); nobody else
branches on a kind's name.

Reference: E. L. Lehmann and J. P. Romano, Testing Statistical Hypotheses,
3rd ed., Springer 2005, sections 3.4 (one-sided UMP), 3.7 (equivalence UMP),
4.2 (two-sided UMPU for a point and for an interval).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

ALPHA_MIN = 1e-100  # smallest alpha of a design
ALPHA_MIN_EQUIVALENCE = 1e-12  # equivalence: solved as 1 - (a band of size 1 - alpha)


@dataclass(frozen=True)
class Kind:
    name: str
    takes: tuple  # the hypothesis parameters the kind needs
    uses_c1: bool
    uses_c2: bool
    optimality: str
    summary: str  # null hypothesis with {t} for the parameter name
    sides: tuple = ()  # where the rule rejects: "below", "above" (of H0) or "inside" (the band)
    title: str = ""  # e.g. "Band test"
    # Which way a printed cutoff may be rounded without raising the size: -1 down,
    # +1 up, None for a cutoff the kind does not use.  Rounding that way shrinks the
    # rejection region (outward for band and point, inward for equivalence).
    rounding: tuple = (None, None)
    alpha_min: float = ALPHA_MIN  # smallest alpha the kind's designs are computed for

    # -- what the kind is --------------------------------------------------------
    @property
    def two_point(self) -> bool:
        """The hypothesis has two constraint points (low, high)."""
        return self.takes == ("low", "high")

    @property
    def cutoffs(self) -> tuple:
        """The cutoffs the rule uses: ('c1', 'c2'), ('c2',) or ('c1',)."""
        return tuple(c for c, used in (("c1", self.uses_c1), ("c2", self.uses_c2)) if used)

    @property
    def one_sided(self) -> bool:
        """The rule has one cutoff (upper, lower)."""
        return len(self.cutoffs) == 1

    @property
    def rejects_inside(self) -> bool:
        """The rule rejects between its cutoffs (equivalence), not in the tails."""
        return "inside" in self.sides

    @property
    def two_tailed(self) -> bool:
        """The rule rejects in both tails (band, point)."""
        return self.sides == ("below", "above")

    @property
    def moment_condition(self) -> bool:
        """The second side condition is E[Y phi] = alpha E[Y] at one point (point)."""
        return self.two_tailed and not self.two_point

    @property
    def far_rejects(self) -> tuple:
        """(left, right): whether the power tends to 1 as theta goes far below / above H0."""
        return "below" in self.sides, "above" in self.sides

    @property
    def step(self) -> tuple:
        """(s1, s2): c + s with gamma 0 is the test (c, gamma = 1) at each cutoff.

        Rejecting a cutoff in full moves it against its safe rounding direction.
        """
        return tuple(None if r is None else -r for r in self.rounding)

    def points(self, low=None, high=None, value=None) -> tuple:
        """The constraint points: (low, high) or (value,)."""
        return (low, high) if self.two_point else (value,)

    # -- the test function -------------------------------------------------------
    def phi(self, c1, g1, c2, g2, y):
        """Rejection probability phi(y) of a rule (vectorised over y; module doc)."""
        y = np.asarray(y, dtype=float)
        at = np.where(y == c1, g1, 0.0) if self.uses_c1 else 0.0
        at = at + (np.where(y == c2, g2, 0.0) if self.uses_c2 else 0.0)
        if self.rejects_inside:
            return np.where((y > c1) & (y < c2), 1.0, 0.0) + at
        below = (y < c1) if self.uses_c1 else False
        above = (y > c2) if self.uses_c2 else False
        if self.one_sided:  # one cutoff: phi is exactly 1, gamma or 0
            return np.where(below | above, 1.0, at)
        return np.where(below | above, 1.0, 0.0) + at

    def expectation(self, c1, g1, c2, g2, cdf, sf, pmf):
        """E phi(Y) from a law's cdf P(Y <= y), sf P(Y > y) and pmf (float or mpmath).

        The callables receive integer (or integer-valued) points; the formula works
        for numpy arrays of laws as well as for one mpmath law.
        """
        if self.rejects_inside:
            # P(c1 < Y < c2) (empty unless c2 > c1 + 1; with c1 == c2 phi(c) = gamma1 + gamma2)
            middle = (sf(c1) - sf(c2 - 1)) * (c2 > c1 + 1)
            return middle + g1 * pmf(c1) + g2 * pmf(c2)
        if not self.uses_c1:
            return sf(c2) + g2 * pmf(c2)
        if not self.uses_c2:
            return cdf(c1 - 1) + g1 * pmf(c1)
        return cdf(c1 - 1) + g1 * pmf(c1) + g2 * pmf(c2) + sf(c2)

    # -- the null hypothesis -----------------------------------------------------
    def null_pieces(self, low=None, high=None, value=None) -> tuple:
        """The null region as closed intervals (a, b), a == b for a point, +-inf open ends."""
        inf = float("inf")
        if self.two_point:
            return ((-inf, low), (high, inf)) if self.rejects_inside else ((low, high),)
        if self.two_tailed:
            return ((value, value),)
        return ((-inf, value),) if self.sides == ("above",) else ((value, inf),)

    def in_null(self, theta, low=None, high=None, value=None):
        """Whether theta lies in the null hypothesis (vectorised)."""
        t = np.asarray(theta, dtype=float)
        out = np.zeros(t.shape, dtype=bool)
        for a, b in self.null_pieces(low, high, value):
            out = out | ((t >= a) & (t <= b))
        return out

    def crosses_null(self, lo, hi, low=None, high=None, value=None) -> bool:
        """Whether [lo, hi] holds a point of the null."""
        return any(a <= hi and b >= lo for a, b in self.null_pieces(low, high, value))

    # -- the canonical form ------------------------------------------------------
    def canonical(self, c1, g1, c2, g2, zero=0.0):
        """(c, gamma >= 1) written as the neighbouring cutoff with gamma 0 (``step``).

        The one place that knows which neighbour.  Works on numbers (an unused or
        non-randomised cutoff has gamma None; ``zero`` is the 0 written, e.g. an
        mpmath zero) and elementwise on numpy arrays.
        """
        s1, s2 = self.step
        if isinstance(g1, np.ndarray) or isinstance(g2, np.ndarray):
            out = [c1, g1, c2, g2]
            for i, s in ((0, s1), (2, s2)):
                if s is not None:
                    hit = out[i + 1] >= 1.0
                    out[i] = np.where(hit, out[i] + float(s), out[i])
                    out[i + 1] = np.where(hit, 0.0, out[i + 1])
            return tuple(out)
        if s1 is not None and g1 is not None and g1 >= 1:
            c1, g1 = c1 + s1, zero
        if s2 is not None and g2 is not None and g2 >= 1:
            c2, g2 = c2 + s2, zero
        return c1, g1, c2, g2

    def round_cutoffs(self, c1, c2, decimals: int) -> tuple:
        """Real cutoffs rounded to ``decimals`` places the way that never raises the size.

        Returns Decimals (None for a cutoff not given), rounded in ``rounding``: c1
        down and c2 up for band and point, c1 up and c2 down for equivalence.
        """
        from decimal import ROUND_CEILING, ROUND_FLOOR, Decimal

        q = Decimal(1).scaleb(-int(decimals))
        out = []
        for c, r in zip((c1, c2), self.rounding):
            if c is None or r is None:
                out.append(None)
                continue
            x = c if isinstance(c, Decimal) else Decimal(repr(float(c)))
            out.append(x.quantize(q, rounding=ROUND_CEILING if r > 0 else ROUND_FLOOR))
        return tuple(out)

    # -- words -------------------------------------------------------------------
    def rejection_side(self, y, c1, c2) -> str | None:
        """Side of H0 a rejection at the observed total y points to (None: y between c1 and c2).

        "below" or "above" the band or value (the tails of band, point, lower and
        upper tests), "inside" the band (equivalence), "outside" for a band or
        point test whose two cutoffs meet at y (a rejection there names no side).
        """
        if self.rejects_inside:
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

    def hypothesis(self, t: str, low="low", high="high", value="value") -> str:
        """H0 in words, e.g. 'H0: low <= rate <= high' (numbers given as text)."""
        return "H0: " + self.summary.format(t=t, low=low, high=high, value=value)


KINDS: dict[str, Kind] = {
    k.name: k
    for k in (
        Kind("upper", ("value",), False, True, "UMP", "{t} <= {value}", ("above",),
             "Upper test", (None, +1)),
        Kind("lower", ("value",), True, False, "UMP", "{t} >= {value}", ("below",),
             "Lower test", (-1, None)),
        Kind("point", ("value",), True, True, "UMPU", "{t} = {value}", ("below", "above"),
             "Point test", (-1, +1)),
        Kind("band", ("low", "high"), True, True, "UMPU", "{low} <= {t} <= {high}",
             ("below", "above"), "Band test", (-1, +1)),
        Kind("equivalence", ("low", "high"), True, True, "UMP", "{t} <= {low} or {t} >= {high}",
             ("inside",), "Equivalence test", (+1, -1), ALPHA_MIN_EQUIVALENCE),
    )
}


def get_kind(name) -> Kind:
    from .strict import name as check_name

    return KINDS[check_name("kind", name, tuple(KINDS))]


def as_kind(kind) -> Kind:
    """A Kind from a Kind or its name."""
    return kind if isinstance(kind, Kind) else KINDS[kind]


def phi(kind, c1, g1, c2, g2, y):
    """Rejection probability phi(y) of a design (vectorised over y); ``Kind.phi``."""
    return as_kind(kind).phi(c1, g1, c2, g2, y)


def expectation(kind, c1, g1, c2, g2, cdf, sf, pmf):
    """E phi(Y) from a law's cdf, sf and pmf; ``Kind.expectation``."""
    return as_kind(kind).expectation(c1, g1, c2, g2, cdf, sf, pmf)


def in_null(kind, theta, low=None, high=None, value=None):
    """Whether theta lies in the null hypothesis (vectorised); ``Kind.in_null``."""
    return as_kind(kind).in_null(theta, low, high, value)
