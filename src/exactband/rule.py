"""Rule: the immutable value of one decision rule (kind, c1, gamma1, c2, gamma2).

The test function phi is the kind's (``kinds`` module doc).  A Rule is checked
when it is made: the kind's cutoffs are present and the others absent, every
gamma lies in [0, 1) (the canonical form; ``Rule.canonical`` writes a
(c, gamma = 1) as the neighbouring cutoff with gamma 0, which ``Kind.canonical``
knows).  Cutoffs are whole numbers for discrete families and real numbers for
continuous ones; a gamma of None means no randomisation at that cutoff.

>>> r = Rule("band", 3, 0.25, 9, 0.5)
>>> float(r.phi(3)), float(r.phi(5)), float(r.phi(10))
(0.25, 0.0, 1.0)
>>> r.thresholds(2)
(25, 50)
>>> Rule.canonical("band", 3, 1.0, 9, 0.5).c1
4
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass
from decimal import ROUND_FLOOR, Decimal, localcontext

import numpy as np

from .errors import DesignError, invalid, show
from .kinds import Kind, as_kind, get_kind

DEFAULT_RANDOM_DIGITS = 3  # random digits of the field rule: decide, tables, power, plan


def check_random_digits(d, field: str = "random_digits",
                        allowed: str = "a whole number from 1 to 9", text: bool = False) -> int:
    """Number of random digits of a field rule: a whole number from 1 to 9 (DesignError).

    The one check of random digits (planning's ``oc.check_random_digits`` recasts it).
    ``text=True`` also takes a whole number written as text or as an integral float
    (``strict.whole``: command line, planning calls); ``field`` and ``allowed`` name the
    input as the caller's user wrote it.
    """
    if text:
        from .strict import whole

        x = whole(field, d, allowed)
    elif isinstance(d, bool) or not isinstance(d, numbers.Integral):
        x = None
    else:
        x = int(d)
    if x is None or not 1 <= x <= 9:
        raise DesignError(f"invalid {field} = {show(d)}: {allowed}", field=field, value=d,
                          allowed=allowed)
    return x


def threshold(gamma, random_digits: int, exact: str | None = None) -> int:
    """t = floor(gamma * 10**d), from the exact decimal text when given, else repr(gamma).

    Decimal arithmetic: a gamma such as 0.123 is never floored to 122 by binary
    rounding, and 30 digits never round up to t + 1.
    """
    x = Decimal(exact) if exact is not None else Decimal(repr(float(gamma)))
    with localcontext(prec=80):
        return int((x * Decimal(10) ** random_digits).to_integral_value(rounding=ROUND_FLOOR))


def _missing(x) -> bool:
    return x is None


def _real(field: str, x, allowed: str) -> float:
    if isinstance(x, (bool, str, bytes)):
        raise invalid(field, x, allowed)
    try:
        return float(x)
    except (TypeError, ValueError, ArithmeticError):
        raise invalid(field, x, allowed) from None


def _cutoff(field: str, c):
    if not math.isfinite(_real(field, c, "a cutoff is a finite number")):
        raise invalid(field, c, "a cutoff is a finite number")


def check_gamma(field: str, g) -> None:
    """A gamma of a Rule: a real number in [0, 1) (DesignError naming ``field``)."""
    allowed = "a randomisation probability in [0, 1)"
    _real(field, g, allowed)
    if not 0 <= g < 1:  # compared as given: an mpmath gamma just below 1 is fine
        raise invalid(field, g, allowed + " (gamma = 1 is the neighbouring cutoff with "
                                          "gamma 0: Rule.canonical)")


@dataclass(frozen=True)
class Rule:
    """Reject with probability phi(y): the kind's tails or middle, gamma at a cutoff."""

    kind: Kind
    c1: object = None
    gamma1: object = None
    c2: object = None
    gamma2: object = None

    def __post_init__(self):
        kind = self.kind
        if not isinstance(kind, Kind):
            kind = get_kind(kind)
            object.__setattr__(self, "kind", kind)
        for i, used, c, g in ((1, kind.uses_c1, self.c1, self.gamma1),
                              (2, kind.uses_c2, self.c2, self.gamma2)):
            if used and type(c) is int and (g is None or type(g) is float and 0.0 <= g < 1.0):
                continue  # the common case, checked without the general path
            if not used:
                if not _missing(c) or not _missing(g):
                    name = f"c{i}" if not _missing(c) else f"gamma{i}"
                    raise invalid(name, c if not _missing(c) else g,
                                  f"the {kind.name} kind uses only {', '.join(kind.cutoffs)}; "
                                  f"leave c{i} and gamma{i} out")
                continue
            if _missing(c):
                raise invalid(f"c{i}", None, f"the {kind.name} kind needs c{i}")
            _cutoff(f"c{i}", c)
            if not _missing(g):
                check_gamma(f"gamma{i}", g)

    def __repr__(self) -> str:
        return (f"Rule({self.kind.name!r}, {self.c1!r}, {self.gamma1!r}, {self.c2!r}, "
                f"{self.gamma2!r})")

    @classmethod
    def canonical(cls, kind, c1=None, gamma1=None, c2=None, gamma2=None) -> "Rule":
        """The Rule of (c1, gamma1, c2, gamma2) with a gamma of 1 moved to its neighbour."""
        k = kind if isinstance(kind, Kind) else get_kind(kind)
        return cls(k, *k.canonical(c1, gamma1, c2, gamma2))

    # -- values ------------------------------------------------------------------
    def astuple(self) -> tuple:
        """(c1, gamma1, c2, gamma2)."""
        return self.c1, self.gamma1, self.c2, self.gamma2

    @property
    def randomised(self) -> bool:
        """Whether some cutoff is rejected with a probability (a gamma is given)."""
        return self.gamma1 is not None or self.gamma2 is not None

    def filled(self) -> tuple:
        """(c1, g1, c2, g2) for arithmetic: an absent cutoff nan, an absent gamma 0."""
        nan = float("nan")
        return (nan if self.c1 is None else self.c1, 0.0 if self.gamma1 is None else self.gamma1,
                nan if self.c2 is None else self.c2, 0.0 if self.gamma2 is None else self.gamma2)

    def with_gammas(self, gamma1, gamma2) -> "Rule":
        """Same cutoffs, other gammas (as floats) where this rule has gammas."""
        return Rule(self.kind, self.c1, None if self.gamma1 is None else float(gamma1),
                    self.c2, None if self.gamma2 is None else float(gamma2))

    # -- the test ----------------------------------------------------------------
    def phi(self, y):
        """Rejection probability phi(y) for observed y (vectorised)."""
        return self.kind.phi(*self.filled(), y)

    def expectation(self, cdf, sf, pmf):
        """E phi(Y) from a law's cdf, sf and pmf (``Kind.expectation``)."""
        return self.kind.expectation(*self.filled(), cdf, sf, pmf)

    def distance(self, other: "Rule") -> float:
        """max_y |phi_self(y) - phi_other(y)| over the support (two rules of one kind)."""
        if other.kind != self.kind:
            raise ValueError(f"rules of two kinds: {self.kind.name}, {other.kind.name}")
        return phi_distance(self.kind, self.astuple(), other.astuple())

    def thresholds(self, random_digits: int = DEFAULT_RANDOM_DIGITS,
                   exact: tuple = (None, None)) -> tuple:
        """(t1, t2) = floor(gamma * 10**d) for d random digits; None where no gamma.

        ``exact``: the gammas' decimal texts (e.g. 30 digits of a verified design).
        """
        d = check_random_digits(random_digits)
        return tuple(None if g is None else threshold(g, d, text)
                     for g, text in zip((self.gamma1, self.gamma2), exact))

    def digit_gammas(self, random_digits: int = DEFAULT_RANDOM_DIGITS,
                     exact: tuple = (None, None)) -> tuple:
        """The field rule's gammas t / 10**d (None where no gamma)."""
        scale = 10 ** check_random_digits(random_digits)
        return tuple(None if t is None else t / scale
                     for t in self.thresholds(random_digits, exact))


def phi_distance(kind, a: tuple, b: tuple) -> float:
    """max_y |phi_a(y) - phi_b(y)| for two rules (c1, g1, c2, g2) of one kind, as tuples.

    The tuples need not be canonical.  phi is constant between cutoffs, so for
    whole-number cutoffs the cutoffs and their neighbours (y >= 0) are a complete
    set of points to look at; with real cutoffs, the cutoffs, the midpoints
    between them and a point beyond each end.
    """
    k = as_kind(kind)
    cuts = [float(c) for c in (a[0], a[2], b[0], b[2])
            if c is not None and not (isinstance(c, float) and np.isnan(c))]
    if all(float(c).is_integer() for c in cuts):
        pts = set()
        for c in cuts:
            pts.update((int(c) - 1, int(c), int(c) + 1))
        pts = np.array(sorted(p for p in pts if p >= 0), dtype=float)
    else:
        s = sorted(set(cuts))
        mids = [(x + y) / 2 for x, y in zip(s, s[1:])]
        pts = np.array(sorted(s + mids + [s[0] - 1.0, s[-1] + 1.0]), dtype=float)
    if pts.size == 0:
        return 0.0

    def ev(d):
        c1, g1, c2, g2 = (np.nan if v is None else float(v) for v in d)
        return k.phi(c1, 0.0 if np.isnan(g1) else g1, c2, 0.0 if np.isnan(g2) else g2, pts)

    return float(np.max(np.abs(ev(a) - ev(b))))
