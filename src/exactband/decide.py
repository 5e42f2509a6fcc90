"""The field decision for an observed count, with randomisation that can be audited.

At a randomisation point (Y equal to a cutoff whose gamma is not zero) the rule
the tables print is applied: read d random digits as a whole number and reject
if it is below the threshold t = floor(gamma * 10**d).  The digits are either
the ones the inspector read from a page of random digits, or drawn from the
operating system's cryptographic generator (``secrets``); either way they are
part of the decision, so anyone can repeat it.  The conservative rule never
rejects at a cutoff (no digits needed).
"""

from __future__ import annotations

import secrets
from dataclasses import dataclass

from .design import DEFAULT_RANDOM_DIGITS, Design
from .errors import ExactbandError, invalid, recast
from .numtext import number_text
from .rule import check_random_digits
from .words import gamma_text, side_words

MODES = ("randomised", "conservative")
MODE_ALIASES = {"randomized": "randomised"}  # accepted spelling
DRAWN = "drawn from the operating system's cryptographic generator"
READ = "read by the inspector"


class DecideError(ExactbandError, ValueError):
    """Unusable input to a field decision (one line)."""


@dataclass(frozen=True)
class Decision:
    """Outcome of ``decide``: where Y fell, the digits used, reject or not, in words."""

    design: Design
    y: int
    rule: str
    region: str  # below c1, at c1, between c1 and c2, at c2, above c2 (or the one-sided forms)
    randomization_point: bool  # Y is at a cutoff with gamma > 0
    gamma: float | None
    threshold: int | None
    random_digits: int | None
    digits_read: str | None  # the random digits used (None when none were needed)
    digits_source: str | None
    reject: bool
    reason: str
    side: str | None = None  # below / above / inside / outside: where a rejection points
    notes: tuple = ()  # remarks printed before the decision (e.g. an unusual digit count)

    @property
    def side_words(self) -> str | None:
        """The side of a rejection in words, e.g. 'below the band (p < 0.01)'; None if kept."""
        return None if self.side is None else side_words(self.design, self.side)

    @property
    def conclusion(self) -> str:
        return conclusion(self.design, self.reject, self.side)

    def describe(self) -> str:
        d = self.design
        rule = self.rule if d.problem.family.discrete else "real cutoffs, no randomisation"
        lines = [f"{d.hypothesis()}; {d.problem.family.n_word} = {number_text(d.n)}, "
                 f"alpha = {number_text(d.alpha)}; rule: {rule}.",
                 f"Observed Y = {self.y}: {self.region}.", self.reason]
        if self.digits_read is not None:
            lines.append(f"Random digits used: {self.digits_read} ({self.digits_source}); "
                         f"as a number {int(self.digits_read)} "
                         f"{'<' if self.reject else '>='} threshold {self.threshold}.")
        elif not d.problem.family.discrete:
            lines.append("Random digits used: none (a continuous Y is never randomised).")
        else:
            lines.append("Random digits used: none (not needed for this Y).")
        lines += [f"Note: {n}" for n in self.notes]
        lines.append(f"Decision: {'REJECT H0' if self.reject else 'DO NOT REJECT H0'}"
                     f" - {self.conclusion}.")
        return "\n".join(lines)

    def to_dict(self) -> dict:
        d = self.design
        return {"inputs": d.problem.inputs(), "c1": d.c1, "gamma1": d.gamma1, "c2": d.c2,
                "gamma2": d.gamma2, "y": self.y, "rule": self.rule, "region": self.region,
                "randomization_point": self.randomization_point, "gamma": self.gamma,
                "random_digits": self.random_digits, "threshold": self.threshold,
                "digits_read": self.digits_read, "digits_source": self.digits_source,
                "reject": self.reject, "decision": "reject H0" if self.reject else
                "do not reject H0", "side": self.side, "side_words": self.side_words,
                "conclusion": self.conclusion, "reason": self.reason, "notes": list(self.notes),
                "hypothesis": d.hypothesis()}


def conclusion(design: Design, reject: bool, side: str | None = None) -> str:
    """What rejecting (or not) means, naming the side of H0 the data point to.

    ``side`` is ``Kind.rejection_side`` of the observed Y (below, above, inside,
    outside); without it a rejection is described by the kind's only side, or
    as 'outside'.
    """
    from .words import the

    t = design.problem.family.theta_word
    low, high = number_text(design.low), number_text(design.high)
    if not reject:
        if design.problem.kind.rejects_inside:
            return f"equivalence not shown: the data do not establish {low} < {t} < {high}"
        return "the data are consistent with " + design.hypothesis()[4:]
    sides = design.problem.kind.sides
    side = side or (sides[0] if len(sides) == 1 else "outside")
    what = f"the data indicate {the(t)} lies {side_words(design, side)}"
    return ("equivalence shown: " + what) if side == "inside" else what


def check_count(design: Design, y) -> int:
    """Y must be a whole number in the support of the family (0..n for binomial)."""
    top = design.problem.family.support_max(design.n)
    allowed = ("a whole number from 0 to " + str(top) if top is not None
               else "a whole number >= 0")
    from .strict import whole

    try:
        x = whole("y", y, allowed)
    except ExactbandError as e:
        raise recast(e, DecideError) from None
    if x < 0 or (top is not None and x > top):
        raise invalid("y", y, allowed, DecideError)
    return x


def check_observation(design: Design, y) -> float:
    """An observed Y of a continuous family: a finite number in the support (the family's
    lower end, e.g. 0 for a total of lifetimes, or none)."""
    from .strict import real

    lower = design.problem.family.continuous_float(design.n, design.dispersion).lower
    what = f"Y = {design.problem.family.y_word}"
    allowed = (f"a finite number >= {number_text(lower)} ({what})" if lower > float("-inf")
               else f"a finite number ({what})")
    try:
        x = real("y", y, allowed)
    except ExactbandError as e:
        raise recast(e, DecideError) from None
    if x < lower:
        raise invalid("y", y, allowed, DecideError)
    return x


def _decide_real(design: Design, y, mode, digits_read, random_digits, thresholds) -> Decision:
    """Decision for a continuous Y: real cutoffs, never randomised (no digits)."""
    if thresholds is not None and all(t is None for t in thresholds):
        thresholds = None  # a table row of real cutoffs prints no thresholds
    for name, v in (("digits-read", digits_read), ("random-digits", random_digits),
                    ("thresholds", thresholds)):
        if v is not None:
            raise invalid(name, v, f"the {design.problem.family.name} family is continuous: "
                          "its rules never randomise; leave it out", DecideError)
    yy = check_observation(design, y)
    words, at, reject = _region(design, yy)
    side = design.problem.kind.rejection_side(yy, design.c1, design.c2)
    if at is not None:
        reject, why = False, ("Y equals a cutoff: the rule does not reject there (a cutoff "
                              "belongs to the region that keeps H0).")
    else:
        inside = design.problem.kind.rejects_inside
        why = (("strictly between the cutoffs" if reject else "outside the cutoffs") if inside
               else ("outside the cutoffs" if reject else "inside the cutoffs"))
        why = f"Y is {why}: the rule {'rejects' if reject else 'does not reject'}."
    return Decision(design, yy, mode, words, False, None, None, None, None, None, bool(reject),
                    why, side=side if reject else None)


def check_digits_text(digits, need: int | None) -> str:
    """Random digits as typed: ASCII digits only, exactly ``need`` of them when fixed."""
    s = str(digits).strip()
    if not s or not s.isascii() or not s.isdigit():
        raise invalid("digits-read", digits, "only the digits 0-9, e.g. 482", DecideError)
    if need is not None and len(s) != need:
        raise invalid("digits-read", digits, f"the rule reads exactly {need} random digits "
                                             f"({len(s)} given)", DecideError)
    if len(s) > 9:
        raise invalid("digits-read", digits, "at most 9 random digits", DecideError)
    return s


def _region(design: Design, y: int):
    """(words, cutoff index 1/2 or None, reject when not at a cutoff)."""
    kind, c1, c2 = design.problem.kind, design.c1, design.c2
    if kind.one_sided:  # upper rejects above its c2, lower below its c1
        i, c, reject_above = (2, c2, True) if kind.uses_c2 else (1, c1, False)
        if y == c:
            return f"at c{i} = {c}", i, None
        above = y > c
        return f"{'above' if above else 'below'} c{i} = {c}", None, above == reject_above
    outside = not kind.rejects_inside  # band, point reject outside; equivalence inside
    if y < c1:
        return f"below c1 = {c1}", None, outside
    if y > c2:
        return f"above c2 = {c2}", None, outside
    if y == c1 and c1 == c2:
        return f"at c1 = c2 = {c1}", 0, None
    if y == c1:
        return f"at c1 = {c1}", 1, None
    if y == c2:
        return f"at c2 = {c2}", 2, None
    return f"between c1 = {c1} and c2 = {c2}", None, not outside


def decide(design: Design, y, *, rule="randomised", digits_read=None, random_digits=None,
           thresholds=None, digits=None) -> Decision:
    """Decision for an observed total Y under ``design``.

    Parameters
    ----------
    design : Design (from ``exactband.design`` or a table row)
    y : observed total count
    rule : "randomised" (default; randomise at the cutoffs with random digits;
        "randomised" is accepted) or "conservative" (never reject at a cutoff)
    digits_read : the random digits the inspector read (a string such as "482");
        None draws them from the operating system's cryptographic generator
    random_digits : d, the number of digits the rule reads (a table fixes it);
        default len(digits_read), or design.DEFAULT_RANDOM_DIGITS (3, as tables,
        power and plan) when drawing; a d other than 3 taken from the digits
        read adds a note
    digits : deprecated alias of ``digits_read``
    thresholds : (t1, t2) as printed in a table; default floor(gamma * 10**d)

    Examples
    --------
    >>> import exactband
    >>> from exactband.decide import decide
    >>> d = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    >>> decide(d, 39, digits_read="0999").reject      # t1 = floor(0.13399... * 10**4) = 1339
    True
    """
    if digits is not None:
        import warnings

        warnings.warn("decide(digits=...) is deprecated; use digits_read=...",
                      DeprecationWarning, stacklevel=2)
        if digits_read is not None and digits_read != digits:
            raise invalid("digits", digits, "give digits_read only (digits is its old name)",
                          DecideError)
        digits_read = digits
    if not isinstance(design, Design):
        raise DecideError(f"invalid design = {type(design).__name__}: a Design from "
                          "exactband.design() or a table row", field="design",
                          value=type(design).__name__,
                          allowed="a Design from exactband.design() or a table row")
    mode = rule.strip().lower() if isinstance(rule, str) else rule
    mode = MODE_ALIASES.get(mode, mode) if isinstance(mode, str) else mode
    if mode not in MODES:
        raise invalid("rule", rule, "randomised or conservative", DecideError)
    if not design.problem.family.discrete:
        return _decide_real(design, y, mode, digits_read, random_digits, thresholds)
    yy = check_count(design, y)
    need = None
    if random_digits is not None:
        try:
            need = check_random_digits(random_digits, "random-digits",
                                       "a whole number from 1 to 9", text=True)
        except ExactbandError as e:
            raise recast(e, DecideError) from None
    text = None if digits_read is None else check_digits_text(digits_read, need)
    d = need if need is not None else (len(text) if text is not None else DEFAULT_RANDOM_DIGITS)
    notes = ()
    if need is None and d != DEFAULT_RANDOM_DIGITS:
        notes = (f"the rule reads {d} random digit{'s' if d > 1 else ''}, as many as were "
                 f"read; printed tables, power and plan use {DEFAULT_RANDOM_DIGITS} unless "
                 f"told otherwise (--random-digits).",)
    words, at, reject = _region(design, yy)
    gammas = (design.gamma1 or 0.0, design.gamma2 or 0.0)
    exacts = (design.gamma1_decimal, design.gamma2_decimal)
    side = design.problem.kind.rejection_side(yy, design.c1, design.c2)

    def made(*args, **kw):
        rej = args[-2]
        return Decision(design, yy, mode, *args, side=side if rej else None, notes=notes, **kw)

    if at is None:
        why = "outside the cutoffs" if reject else "inside the cutoffs"
        if design.problem.kind.rejects_inside:
            why = "strictly between the cutoffs" if reject else "outside the cutoffs"
        return made(words, False, None, None, None, None, None, bool(reject),
                    f"Y is {why}: the rule "
                    f"{'rejects' if reject else 'does not reject'} without randomisation.")
    gamma = sum(gammas) if at == 0 else gammas[at - 1]
    exact = None if at == 0 else exacts[at - 1]
    if gamma == 0.0:
        return made(words, False, 0.0, None, None, None, None, False,
                    "At this cutoff gamma = 0: the rule does not reject.")
    if mode == "conservative":
        return made(words, True, gamma, None, None, None, None, False,
                    f"At this cutoff the randomised rule rejects with probability "
                    f"{gamma_text(gamma, exact)}; the conservative rule does not reject.")
    ts = design.thresholds(d) if thresholds is None else thresholds
    t = (ts[0] or 0) + (ts[1] or 0) if at == 0 else ts[at - 1]
    g = gamma_text(gamma, exact, d)
    if t == 0:
        return made(words, True, gamma, 0, d, None, None, False,
                    f"At this cutoff gamma = {g} and the {d}-digit threshold is 0: "
                    "the field rule does not reject.")
    source = READ
    if text is None:
        text, source = f"{secrets.randbelow(10 ** d):0{d}d}", DRAWN
    name = "t1 + t2" if at == 0 else f"t{at}"
    return made(words, True, gamma, int(t), d, text, source, int(text) < t,
                f"Randomise: gamma = {g}; read {d} random digits as a number and reject if it "
                f"is below {name} = {t} (floor(gamma x 10^{d})).")
