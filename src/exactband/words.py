"""The words of one design's rule: gammas as text, the rule line by line, the side of a rejection.

Shared by ``Design.describe``, ``decide`` and the captions of the figures, so the
same rule reads the same everywhere.  Formatting only: every number comes from
the Design (its cutoffs, gammas, exact decimal gammas and thresholds).
"""

from __future__ import annotations

from decimal import ROUND_FLOOR, Decimal, localcontext

from .numtext import number_text

RULE_NAMES = ("randomised", "conservative", "digits")
ALIASES = {"randomized": "randomised"}  # accepted spelling
GAMMA_PLACES = 6  # decimals a gamma shows at least


def _exact(gamma, exact=None) -> Decimal:
    return Decimal(exact) if exact is not None else Decimal(repr(float(gamma)))


def gamma_text(gamma, exact: str | None = None, random_digits: int | None = None,
               places: int = GAMMA_PLACES) -> str:
    """A gamma truncated (never rounded) so the field threshold visibly follows from it.

    The text keeps max(``places``, ``random_digits``) decimals, cut off, with
    '...' when digits were dropped: its first d decimals are the threshold
    t = floor(gamma * 10**d).  An exact gamma of 0.49999999999999999837 prints
    as 0.49999999... beside t = 4 (d = 1), never as 0.500000.
    ``exact`` is the solver's decimal text (Design.gamma1_decimal), else the
    float's shortest repr is used.
    """
    x = _exact(gamma, exact)
    k = max(places, random_digits or 0)
    if x == 0:
        return "0"
    with localcontext(prec=80):
        cut = x.quantize(Decimal(1).scaleb(-k), rounding=ROUND_FLOOR)
    text = format(cut, "f")
    if cut != x:
        return text + "..."
    return text.rstrip("0").rstrip(".") if "." in text else text


def side_words(design, side: str) -> str:
    """A rejection's side with this design's numbers, e.g. 'below the band (p < 0.01)'."""
    return design.problem.kind.side_text(side, design.problem.family.theta_word,
                                         number_text(design.low), number_text(design.high),
                                         number_text(design.value))


def _g(design, i):
    return ((design.gamma1, design.gamma1_decimal) if i == 1
            else (design.gamma2, design.gamma2_decimal))


def the(word: str) -> str:
    """'the rate per unit' but 'p' (a symbol takes no article)."""
    return word if len(word) <= 2 else "the " + word


def _at_cutoff(design, i: int, c: int, side: str, rule: str, d: int | None) -> str:
    """The line for Y = c_i under the chosen rule (the side named without its numbers)."""
    g, exact = _g(design, i)
    name = f"gamma{i}"
    if not g:
        return f"If Y = {c}: do not reject ({name} = 0)."
    kind = design.problem.kind
    where = kind.side_text(side, "").split(" (")[0]  # 'below the band'
    if rule == "conservative":
        return (f"If Y = {c}: do not reject (the conservative rule never rejects at a cutoff; "
                f"the randomised rule rejects here, {where}, with probability "
                f"{name} = {gamma_text(g, exact)}).")
    if rule == "digits":
        t = design.thresholds(d)[i - 1]
        if t == 0:
            return (f"If Y = {c}: do not reject (t{i} = 0: {name} = {gamma_text(g, exact, d)} is "
                    f"below 1/{10 ** d}).")
        return (f"If Y = {c}: read {d} random digits as a number; if it is below t{i} = {t} "
                f"(= floor({name} x 10^{d}), {name} = {gamma_text(g, exact, d)}) reject, "
                f"{where}; else do not reject.")
    return (f"If Y = {c}: with probability {name} = {gamma_text(g, exact)} reject, {where}; "
            f"else do not reject.")


def rule_lines(design, rule: str = "randomised", random_digits: int | None = None) -> list:
    """The rule in plain words, one line per region of Y, naming the side of each rejection.

    ``rule``: "randomised" (the exact gammas), "conservative" (never reject at a
    cutoff) or "digits" (the field rule with ``random_digits`` digits).
    """
    rule = ALIASES.get(rule, rule)
    if rule not in RULE_NAMES:
        raise ValueError(f"unknown rule {rule!r}")
    kind, c1, c2 = design.problem.kind, design.c1, design.c2
    if not design.problem.family.discrete:
        return real_rule_lines(design)
    d = random_digits
    out = []
    if kind.rejects_inside:  # equivalence: reject in the middle
        where = side_words(design, "inside")
        if c2 - c1 > 1:
            out.append(f"Reject H0 if {c1 + 1} <= Y <= {c2 - 1}: the data indicate "
                       f"{the(design.problem.family.theta_word)} lies {where}.")
        out += [_at_cutoff(design, 1, c1, "inside", rule, d),
                _at_cutoff(design, 2, c2, "inside", rule, d)]
        out.append(f"If Y <= {c1 - 1} or Y >= {c2 + 1}: do not reject." if c1 > 0
                   else f"If Y >= {c2 + 1}: do not reject.")
        return out
    word = the(design.problem.family.theta_word)
    if c1 is not None and c2 is not None and c1 == c2:
        g = (design.gamma1 or 0.0) + (design.gamma2 or 0.0)
        where = side_words(design, "outside")
        out.append(f"Reject H0 if Y != {c1}: the data indicate {word} lies {where}.")
        if rule == "conservative" or not g:
            out.append(f"If Y = {c1}: do not reject.")
        elif rule == "digits":
            t = sum(x or 0 for x in design.thresholds(d))
            out.append(f"If Y = {c1}: read {d} random digits once; reject if the number is "
                       f"below t1 + t2 = {t}.")
        else:
            out.append(f"If Y = {c1}: reject with probability gamma1 + gamma2 = "
                       f"{gamma_text(g)}.")
        return out
    if c1 is not None:
        if c1 > 0:
            out.append(f"Reject H0 if Y <= {c1 - 1}: the data indicate {word} lies "
                       f"{side_words(design, 'below')}.")
        else:
            out.append("Y cannot fall below c1 = 0: no outright rejection on the low side.")
    if c2 is not None:
        out.append(f"Reject H0 if Y >= {c2 + 1}: the data indicate {word} lies "
                   f"{side_words(design, 'above')}.")
    if c1 is not None:
        out.append(_at_cutoff(design, 1, c1, "below", rule, d))
    if c2 is not None:
        out.append(_at_cutoff(design, 2, c2, "above", rule, d))
    lo = c1 + 1 if c1 is not None else None
    hi = c2 - 1 if c2 is not None else None
    if lo is None:
        out.append(f"If Y <= {hi}: do not reject.")
    elif hi is None:
        out.append(f"If Y >= {lo}: do not reject.")
    elif hi >= lo:
        out.append(f"If {lo} <= Y <= {hi}: do not reject.")
    return out


def real_rule_lines(design) -> list:
    """The rule of a continuous Y (real cutoffs, no randomisation: every rule is this one).

    Y equals a cutoff with probability 0; the cutoff itself is counted with the
    region that does not reject."""
    kind, c1, c2 = design.problem.kind, design.c1, design.c2
    word = the(design.problem.family.theta_word)
    a, b = number_text(c1), number_text(c2)
    if kind.rejects_inside:
        return [f"Reject H0 if {a} < Y < {b}: the data indicate {word} lies "
                f"{side_words(design, 'inside')}.",
                f"If Y <= {a} or Y >= {b}: do not reject."]
    out = []
    if c1 is not None:
        out.append(f"Reject H0 if Y < {a}: the data indicate {word} lies "
                   f"{side_words(design, 'below')}.")
    if c2 is not None:
        out.append(f"Reject H0 if Y > {b}: the data indicate {word} lies "
                   f"{side_words(design, 'above')}.")
    if c1 is None:
        out.append(f"If Y <= {b}: do not reject.")
    elif c2 is None:
        out.append(f"If Y >= {a}: do not reject.")
    else:
        out.append(f"If {a} <= Y <= {b}: do not reject.")
    return out
