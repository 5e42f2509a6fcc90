"""Design: the immutable value object for one exact test.

A Design holds the inputs (family, kind, n, alpha and the hypothesis values),
the cutoffs and randomisation probabilities in canonical form, the sizes at the
constraint points, and whether the two solvers agreed on it.  It computes its
own test function, power and operating characteristic; it never formats tables.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from .errors import DesignError
from .numtext import number_text
from .params import Problem
from .rule import DEFAULT_RANDOM_DIGITS, Rule

__all__ = ["DEFAULT_RANDOM_DIGITS", "Design", "Rule"]


def power_at(problem: Problem, cut: tuple, thetas) -> np.ndarray:
    """E_theta phi(Y) at an array of valid thetas for a rule's (c1, g1, c2, g2) (float law).

    ``cut`` as ``Rule.filled`` gives it (an absent cutoff nan, an absent gamma 0); a
    printed (c, gamma = 1) is evaluated as printed.
    """
    fam = problem.family
    if not fam.discrete:  # real cutoffs, no gammas: the family's law gives the tails
        return fam.power(problem.kind, cut[0] if problem.kind.uses_c1 else None,
                         cut[2] if problem.kind.uses_c2 else None, thetas, problem.n,
                         problem.dispersion)
    L = fam.float_law
    P = L.make(thetas, problem.n, problem.dispersion)
    out = problem.kind.expectation(*cut, lambda c: L.cdf(c, P), lambda c: L.sf(c, P),
                                   lambda c: L.pmf(c, P))
    return np.clip(np.broadcast_to(out, thetas.shape).astype(float), 0.0, 1.0)


@dataclass(frozen=True, init=False)
class Design:
    """Exact UMP/UMPU test for one problem (see kinds for the test-function contract).

    ``rule`` is the Rule (kind, c1, gamma1, c2, gamma2); c1, gamma1, c2, gamma2
    are its values (Python int / float, None where the kind has no such cutoff;
    gammas in [0, 1)).  ``sizes`` are E_theta phi at the constraint points
    ``points`` (low and high, or value).  When ``verified`` the numbers come from
    the high-precision solver after it agreed with the fast one,
    ``gamma1_decimal``/``gamma2_decimal`` carry 30 significant digits and
    ``check`` holds the comparison.

    Made as Design(problem, c1, gamma1, c2, gamma2, sizes, ...) or
    Design(problem, rule=Rule(...), sizes=...).
    """

    problem: Problem
    rule: Rule
    sizes: tuple
    verified: bool = False
    precision: int | None = None
    gamma1_decimal: str | None = None
    gamma2_decimal: str | None = None
    check: object = field(default=None, compare=False)

    def __init__(self, problem: Problem, c1=None, gamma1=None, c2=None, gamma2=None,
                 sizes: tuple = (), verified: bool = False, precision: int | None = None,
                 gamma1_decimal: str | None = None, gamma2_decimal: str | None = None,
                 check=None, *, rule: Rule | None = None):
        if rule is None:
            rule = Rule(problem.kind, c1, gamma1, c2, gamma2)
        elif rule.kind != problem.kind:
            raise DesignError(f"invalid rule = {rule!r}: a {problem.kind.name} rule is required")
        self.__dict__.update(problem=problem, rule=rule, sizes=sizes, verified=verified,
                             precision=precision, gamma1_decimal=gamma1_decimal,
                             gamma2_decimal=gamma2_decimal, check=check)  # frozen: no setattr

    @property
    def c1(self):
        return self.rule.c1

    @property
    def gamma1(self):
        return self.rule.gamma1

    @property
    def c2(self):
        return self.rule.c2

    @property
    def gamma2(self):
        return self.rule.gamma2

    @property
    def digits(self):
        """Deprecated name of ``precision`` (the verifying solver's significant digits)."""
        warnings.warn("Design.digits is deprecated; use Design.precision", DeprecationWarning,
                      stacklevel=2)
        return self.precision

    # -- inputs ---------------------------------------------------------------
    @property
    def family(self) -> str:
        return self.problem.family.name

    @property
    def kind(self) -> str:
        return self.problem.kind.name

    @property
    def n(self):
        return self.problem.n

    @property
    def alpha(self) -> float:
        return self.problem.alpha

    @property
    def low(self):
        return self.problem.low

    @property
    def high(self):
        return self.problem.high

    @property
    def value(self):
        return self.problem.value

    @property
    def dispersion(self):
        return self.problem.dispersion

    @property
    def points(self) -> tuple:
        """Constraint points, aligned with ``sizes``."""
        return self.problem.points

    @property
    def size_low(self) -> float:
        """Size at the first constraint point (low, or value for one-point kinds)."""
        return self.sizes[0]

    @property
    def size_high(self) -> float | None:
        """Size at high (band, equivalence); None for one-point kinds."""
        return self.sizes[1] if len(self.sizes) > 1 else None

    # -- the test ---------------------------------------------------------------
    def _cut(self):
        return self.rule.filled()

    def phi(self, y):
        """Rejection probability phi(y) for an observed total y (vectorised)."""
        out = self.rule.phi(y)
        return float(out) if np.ndim(out) == 0 else out

    def power(self, theta):
        """E_theta phi(Y): probability of rejecting H0 at theta (exact sum; vectorised)."""
        fam = self.problem.family
        try:
            t = np.asarray(theta, dtype=float)
        except (TypeError, ValueError):
            raise DesignError(f"invalid theta = {theta!r}: numbers are required", field="theta",
                              value=theta, allowed="numbers are required") from None
        flat = np.atleast_1d(t).ravel()
        bad = ~fam.theta_ok_array(flat)
        if np.any(bad):
            fam.check_theta("theta", float(flat[bad][0]))  # raises the one-line message
        out = power_at(self.problem, self.rule.filled(), flat).reshape(t.shape)
        return float(out) if out.ndim == 0 else out

    def oc(self, theta):
        """Operating characteristic 1 - power: probability of not rejecting H0."""
        p = self.power(theta)
        return 1.0 - p

    def nonrandomized(self) -> "Design":
        """The conservative rule: same cutoffs, randomisation dropped (gammas 0).

        It rejects only strictly beyond the cutoffs (strictly inside for
        equivalence); its sizes never exceed alpha (float law).
        """
        return self.with_gammas(0.0, 0.0)

    def thresholds(self, random_digits: int = DEFAULT_RANDOM_DIGITS) -> tuple:
        """Field randomisation thresholds t = floor(gamma * 10**d) for (gamma1, gamma2).

        "If Y equals the cutoff, read ``random_digits`` (d) random digits as a number and
        reject if it is below t."  Flooring keeps the size at or below the
        randomised rule's.  Uses the exact decimal gammas when verified, so a
        gamma such as 0.123 is never floored to 122 by binary rounding.
        """
        return self.rule.thresholds(random_digits, (self.gamma1_decimal, self.gamma2_decimal))

    def with_gammas(self, gamma1, gamma2) -> "Design":
        """Same cutoffs, other gammas (e.g. the digit-rounded or the conservative rule).

        The result is unverified; its sizes are computed with the float law.
        """
        rule = self.rule.with_gammas(gamma1, gamma2)
        base = Design(self.problem, rule=rule, sizes=())
        sizes = tuple(float(base.power(t)) for t in self.points)
        return Design(self.problem, rule=rule, sizes=sizes)

    def digit_rule(self, random_digits: int = DEFAULT_RANDOM_DIGITS) -> "Design":
        """The rule field staff apply with d = ``random_digits`` digits: gamma = t / 10**d."""
        return self.with_gammas(*self.rule.digit_gammas(
            random_digits, (self.gamma1_decimal, self.gamma2_decimal)))

    # -- words --------------------------------------------------------------
    def hypothesis(self) -> str:
        fam, knd = self.problem.family, self.problem.kind
        return "H0: " + knd.summary.format(
            t=f"{fam.theta_word}", value=number_text(self.value), low=number_text(self.low),
            high=number_text(self.high))

    def describe(self, rule: str = "randomised", random_digits: int | None = None) -> str:
        """The decision rule in plain words, naming the side of H0 each rejection points to.

        ``rule``: "randomised" (exact gammas, the default; "randomized" accepted),
        "conservative" (never reject at a cutoff) or "digits" (the field rule
        reading ``random_digits`` digits, default DEFAULT_RANDOM_DIGITS).
        """
        from .words import ALIASES, RULE_NAMES, rule_lines

        key = ALIASES.get(rule, rule)
        if key not in RULE_NAMES:
            raise DesignError(f"invalid rule = {rule!r}: randomised, conservative or digits",
                              field="rule", value=rule,
                              allowed="randomised, conservative or digits")
        if key == "digits" and random_digits is None:
            random_digits = DEFAULT_RANDOM_DIGITS
        fam, knd = self.problem.family, self.problem.kind
        lines = []
        disp = (f", {fam.dispersion_word} = {number_text(self.dispersion)}"
                if self.dispersion is not None else "")
        lines.append(f"{knd.optimality} test, {fam.name} family, "
                     f"{fam.n_word} = {number_text(self.n)}"
                     f"{disp}, size alpha = {number_text(self.alpha)}.")
        lines.append(self.hypothesis() + ".")
        note = fam.law_note(self.problem)
        if note:
            lines.append(note)
        lines.append(f"Y = {fam.y_word}.")
        if key != "randomised" and fam.discrete:  # a continuous rule never randomises
            lines.append({"conservative": "The conservative rule (no randomisation):",
                          "digits": f"The field rule with {random_digits} random digits:"}[key])
        lines.extend(rule_lines(self, key, random_digits))
        word = fam.theta_word
        used = {"randomised": self, "conservative": self.nonrandomized()}.get(key)
        used = used if used is not None else self.digit_rule(random_digits)
        sizes = "; ".join(f"at {word} = {number_text(t)}: {s:.6g}"
                          for t, s in zip(self.points, used.sizes))
        lines.append(f"Size (probability of rejecting H0) {sizes}.")
        if self.verified:
            lines.append(f"Verified: the fast and the {self.precision}-digit solvers agree.")
        return "\n".join(lines)

    def to_dict(self) -> dict:
        """Plain dict (inputs, cutoffs, gammas, sizes, verification)."""
        out = dict(self.problem.inputs())
        out.update(c1=self.c1, gamma1=self.gamma1, c2=self.c2, gamma2=self.gamma2,
                   gamma1_decimal=self.gamma1_decimal, gamma2_decimal=self.gamma2_decimal,
                   size_low=self.size_low, size_high=self.size_high, verified=self.verified,
                   precision=self.precision)
        return out
