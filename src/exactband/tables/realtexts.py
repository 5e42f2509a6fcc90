"""The words of a table set whose family has real cutoffs (a continuous Y, no randomisation).

Used by ``texts.cover_blocks`` / ``texts.rule_text`` / ``texts.legend`` when the
family is continuous (``Family.discrete`` is False): the same blocks, without
random digits, with the rounding of the printed cutoffs stated.
"""

from __future__ import annotations

from ..kinds import KINDS
from .tablewords import KIND_TITLE, WORDS, plain


def _sides(kind: str, family: str) -> dict:
    k = KINDS[kind]
    return dict(zip(k.sides, k.rejection_sides(WORDS[family][0])))


def rule_text(kind: str, family: str) -> str:
    """The rule of one section in words; a Y equal to a printed cutoff does not reject."""
    k, side = KINDS[kind], _sides(kind, family)
    if k.rejects_inside:
        return (f"Reject H0 if c1 < Y < c2 (equivalence shown: {side['inside']}). Otherwise "
                f"(Y <= c1 or Y >= c2) do not reject.")
    parts = []
    if k.uses_c1:
        parts.append(f"Y < c1 ({side['below']})")
    if k.uses_c2:
        parts.append(f"Y > c2 ({side['above']})")
    keep = ("c1 <= Y <= c2" if k.uses_c1 and k.uses_c2 else "Y >= c1" if k.uses_c1
            else "Y <= c2")
    return f"Reject H0 if {' or '.join(parts)}. Otherwise ({keep}) do not reject."


def rounding_text(kinds, decimals: int) -> str:
    """How the printed cutoffs were rounded, per kind (``Kind.rounding``)."""
    def way(kind):
        k = KINDS[kind]
        words = []
        for name, r in zip(("c1", "c2"), k.rounding):
            if r is not None:
                words.append(f"{name} {'up' if r > 0 else 'down'}")
        return f"{kind}: {' and '.join(words)}"
    return (f"The cutoffs are printed with {decimals} decimals, rounded the way that never "
            f"raises the size: the rejection region only shrinks ({'; '.join(map(way, kinds))}). "
            "The columns 'Size of the printed rule' give the size the printed cutoffs attain; "
            "it never exceeds alpha.")


def cover_blocks(tset, sections_, caution: str, y_text: str, hypothesis_text) -> list:
    """The cover of a continuous set: title, scenario, caution, how to use, rules, columns."""
    spec = tset.spec
    kinds = list(dict.fromkeys(s.kind for s in sections_))
    b = [("title", spec.title)]
    if spec.scenario:
        b += [("para", p.strip()) for p in spec.scenario.split("\n\n") if p.strip()]
    b += [("caution", caution), ("heading", "How to use these tables")]
    b += [("step", "1. Find the table for your kind of hypothesis and your alpha (the size: "
                   "the largest probability of rejecting H0 when it is true), then the row for "
                   "your band or value and your sample size n."),
          ("step", f"2. Measure the sample and compute {y_text}."),
          ("step", "3. Compare Y with the printed cutoffs and apply the rule of the table "
                   "(below, and at the top of every page). No random digits are needed."),
          ("step", "4. Record n, Y and the decision.")]
    b.append(("heading", "The rules"))
    for k in kinds:
        b.append(("para", f"{KIND_TITLE[k]}, {hypothesis_text(k, spec.family)}: "
                          f"{rule_text(k, spec.family)}"))
    b.append(("heading", "The printed cutoffs"))
    b.append(("para", rounding_text(kinds, spec.cutoff_decimals)))
    b.append(("heading", "Columns"))
    b += [("note", text) for text in legend(spec)]
    return b


def legend(spec) -> list:
    symbol, what, n_is = WORDS[spec.family]
    from ..families import get_family

    fam = get_family(spec.family)
    return [
        f"low, high / value: the null hypothesis H0 about {symbol}, {what}. n: {n_is}. "
        f"{fam.dispersion_word.capitalize()} = {plain(spec.dispersion)} throughout.",
        f"c1, c2: the cutoffs for Y, rounded to {spec.cutoff_decimals} decimals as stated "
        f"above (full precision in {spec.name}.csv).",
        "Size of the printed rule: the probability of rejecting H0 at the ends of the null "
        "hypothesis (at low and high, or at value) with the printed cutoffs, truncated.",
        f"Every row was computed by the fast solver and confirmed by an independent "
        f"{spec.precision}-digit solver before anything was written (see the provenance page).",
    ]
