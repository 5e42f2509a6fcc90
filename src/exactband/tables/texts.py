"""The words of a table set: caution, how to use it, the rules, the randomisation.

The spreadsheet cover sheet and the PDF cover page print the same blocks, so
the two never say different things.  A block is (style, text) with style one
of title, subtitle, heading, para, caution, step, example, note.
"""

from __future__ import annotations

from ..families import get_family
from ..kinds import KINDS
from .tablewords import KIND_TITLE, WORDS, gamma_places, plain

CAUTION = ("Caution: these tables compute statistical decision rules. Acceptance limits, "
           "sampling plans and the consequences of a decision come from the governing "
           "standard, local regulation and qualified professionals, not from these tables.")

def hypothesis_text(kind: str, family: str) -> str:
    symbol, what, _ = WORDS[family]
    return KINDS[kind].hypothesis(symbol) + f", where {symbol} is {what}"


def hypothesis_at(kind: str, family: str, points) -> str:
    """H0 with its numbers, e.g. 'H0: 2 <= rate <= 2.5' (points: (low, high) or (value,))."""
    names = ("low", "high") if len(points) == 2 else ("value",)
    return KINDS[kind].hypothesis(WORDS[family][0], **{k: plain(x) for k, x in zip(names, points)})


def y_text(family: str) -> str:
    return f"Y = {get_family(family).y_inspected}"


def _digits(d: int) -> str:
    return f"read {d} random digits as a number (0 to {10 ** d - 1})"


def _sides(kind: str, family: str) -> dict:
    """Each side the kind rejects on, in words with the family's symbol."""
    k = KINDS[kind]
    return dict(zip(k.sides, k.rejection_sides(WORDS[family][0])))


def rule_text(kind: str, d: int, family: str = "poisson") -> str:
    """The rule of one section in words, naming the side of each rejection, with the
    random-digit procedure."""
    if not get_family(family).discrete:
        from . import realtexts

        return realtexts.rule_text(kind, family)
    read = _digits(d)
    side = _sides(kind, family)
    k = KINDS[kind]
    if k.two_tailed:
        return (f"Reject H0 if Y < c1 ({side['below']}) or Y > c2 ({side['above']}). "
                f"If Y = c1, {read}: reject ({side['below'].split(' (')[0]}) if it is below "
                f"t1. If Y = c2, the same with t2 ({side['above'].split(' (')[0]}). Otherwise "
                f"(c1 < Y < c2) do not reject. If c1 = c2, read the digits once and reject if "
                f"the number is below t1 + t2.")
    if k.sides == ("above",):
        return (f"Reject H0 if Y > c2 ({side['above']}). If Y = c2, {read}: reject if it is "
                f"below t2. Otherwise (Y < c2) do not reject.")
    if k.sides == ("below",):
        return (f"Reject H0 if Y < c1 ({side['below']}). If Y = c1, {read}: reject if it is "
                f"below t1. Otherwise (Y > c1) do not reject.")
    return (f"Reject H0 if c1 < Y < c2 (equivalence shown: {side['inside']}). If Y = c1, "
            f"{read}: reject if it is below t1. If Y = c2, the same with t2. "
            f"Otherwise (Y < c1 or Y > c2) do not reject.")


def conservative_text(kind: str) -> str:
    k = KINDS[kind]
    if k.rejects_inside:
        return "reject H0 only if c1 < Y < c2"
    return "reject H0 only if " + " or ".join(
        w for w, used in (("Y < c1", k.uses_c1), ("Y > c2", k.uses_c2)) if used)


def _pad(x: int, d: int) -> str:
    return str(x).zfill(d)


def _side_short(kind: str, cutoff: str) -> str:
    """'below the band' for a rejection at c1 of a band test (the side without numbers)."""
    k = KINDS[kind]
    side = "inside" if "inside" in k.sides else "below" if cutoff == "c1" else "above"
    return k.side_text(side, "").split(" (")[0]


def example_lines(section, d: int) -> list:
    """A worked example on the first row of a section (real numbers of the table)."""
    if not section.rows:
        return []
    cells = {c.key: cell.text for c, cell in zip(section.columns, section.rows[0])}
    where = (f"band {cells['low']} to {cells['high']}" if "low" in cells
             else f"value {cells['value']}")
    parts = [f"{k} = {cells[k]}" for k in ("c1", "t1", "c2", "t2") if k in cells]
    lines = [f"Example: {section.heading}, {where}, n = {cells['n']}: " + ", ".join(parts) + "."]
    top = 10 ** d
    if "c1" in cells and "c2" in cells and cells["c1"] == cells["c2"]:
        tv = int(cells["t1"]) + int(cells["t2"])
        return lines + [f"Here c1 = c2: if Y = {cells['c1']}, read {d} digits once and reject "
                        f"if the number is below t1 + t2 = {tv}."]
    for c, t in (("c1", "t1"), ("c2", "t2")):
        if c not in cells:
            continue
        tv = int(cells[t])
        if tv == 0:
            lines.append(f"If Y = {cells[c]}: {t} = 0, no number is below 0: do not reject "
                         f"(the randomisation probability is below 1/{top}).")
            continue
        low, high = _pad(tv // 2, d), _pad(tv + (top - tv) // 2, d)
        lines.append(f"If Y = {cells[c]}: read {d} digits, say {low}; {int(low)} is below "
                     f"{tv}: reject ({_side_short(section.kind, c)}). Had they been {high}: "
                     f"{int(high)} is not below {tv}: "
                     f"do not reject.")
    return lines


def cover_blocks(tset, sections_) -> list:
    """The cover: title, scenario, caution, how to use, rules, randomisation, legend."""
    spec = tset.spec
    if not get_family(spec.family).discrete:
        from . import realtexts

        return realtexts.cover_blocks(tset, sections_, CAUTION, y_text(spec.family),
                                      hypothesis_text)
    d = spec.random_digits
    kinds = list(dict.fromkeys(s.kind for s in sections_))
    b = [("title", spec.title)]
    if spec.scenario:
        b += [("para", p.strip()) for p in spec.scenario.split("\n\n") if p.strip()]
    b += [("caution", CAUTION), ("heading", "How to use these tables")]
    b += [("step", "1. Find the table for your kind of hypothesis and your alpha (the size: "
                   "the largest probability of rejecting H0 when it is true), then the row for "
                   "your band or value and your sample size n."),
          ("step", f"2. Inspect the sample and count {y_text(spec.family)}."),
          ("step", "3. Apply the rule of the table (below, and at the top of every page). "
                   "At a cutoff, decide with random digits as described below."),
          ("step", "4. Record n, Y, the random digits read (if any) and the decision.")]
    b.append(("heading", "The rules"))
    for k in kinds:
        b.append(("para", f"{KIND_TITLE[k]}, {hypothesis_text(k, spec.family)}: "
                          f"{rule_text(k, d, spec.family)}"))
    b.append(("heading", f"Randomisation at a cutoff with {d} random digits"))
    b.append(("para", f"Each gamma in the tables is the probability of rejecting H0 when Y "
                      f"falls exactly on its cutoff. In the field it is applied with random "
                      f"digits: if Y equals c1, {_digits(d)} and reject if the number is below "
                      f"the threshold t1 = floor(gamma1 x {10 ** d}); if Y equals c2, the same "
                      f"with t2. Take the digits from the random-digit page in order, starting "
                      f"where your supervisor says, cross them out as you use them and never "
                      f"use them twice. Flooring makes the rejection chance t/{10 ** d}, never "
                      f"above gamma, so the size stays at or below alpha; the columns 'Size "
                      f"with random digits' give the sizes attained this way."))
    b += [("example", line) for line in example_lines(sections_[0], d)]
    if spec.conservative:
        b.append(("heading", "Without random digits: the conservative rule"))
        rules = "; ".join(f"{k}: {conservative_text(k)}" for k in kinds)
        b.append(("para", f"A rule that never randomises ignores the thresholds and never "
                          f"rejects at a cutoff ({rules}). Its sizes, in the columns 'Size, "
                          f"no randomisation', never exceed alpha and can be much smaller: "
                          f"it rejects less often when H0 is false."))
    if spec.oc is not None:
        b += oc_blocks(spec)
    b.append(("heading", "Columns"))
    b += [("note", text) for text in legend(spec)]
    return b


def oc_blocks(spec) -> list:
    """The cover's words on the operating characteristics ([oc] in the spec)."""
    from ..oc import rule_label

    oc, d = spec.oc, spec.random_digits
    symbol = WORDS[spec.family][0]
    out = [("heading", "Operating characteristics: what the rules catch")]
    out.append(("para", f"The power of a rule at a value of {symbol} is the probability that it "
                        f"rejects H0 there; the OC (operating characteristic) is the probability "
                        f"that it does not, 1 - power. Inside H0 the power is at most alpha; "
                        f"outside, the larger the better. All values are exact sums of "
                        f"probabilities, not simulations."))
    if oc.curves:
        rules = ", ".join(rule_label(r, d) for r in oc.rules)
        out.append(("para", f"The PDF has pages of OC curves for every kind and band (or value) "
                            f"after the tables: each row of charts holds one alpha and a few n, "
                            f"one column per rule: {rules}. The field rule with {d} random "
                            f"digits rejects with a probability within {2 / 10 ** d:g} of the "
                            f"randomised rule's at every {symbol}."))
    if oc.thetas:
        at = ", ".join(plain(t) for t in oc.thetas)
        out.append(("para", f"The spreadsheet's sheet 'Power' gives, for every row of the "
                            f"tables, the power at {symbol} = {at} of the randomised rule, the "
                            f"field rule with {d} random digits and the conservative rule; "
                            f"values where {symbol} lies inside H0 are shaded."))
    return out


def legend(spec) -> list:
    symbol, what, n_is = WORDS[spec.family]
    return [
        f"low, high / value: the null hypothesis H0 about {symbol}, {what}. "
        f"n: {n_is}." + (f" Dispersion k = {plain(spec.dispersion)} throughout."
                                   if spec.dispersion is not None else ""),
        f"c1, c2: the cutoffs for Y. gamma1, gamma2: the randomisation probabilities at the "
        f"cutoffs, truncated to {gamma_places(spec)} decimals (full precision in "
        f"{spec.name}.csv). t1, t2: the thresholds for {spec.random_digits} random digits.",
        "Sizes: the probability of rejecting H0 at the ends of the null hypothesis (at low and "
        "high, or at value), truncated; 'random digits' for the rule with thresholds, "
        "'no randomisation' for the conservative rule.",
        f"Every row was computed by the fast solver and confirmed by an independent "
        f"{spec.precision}-digit solver before anything was written (see the provenance page).",
    ]


def provenance_rows(tset, csv_sha256: str) -> list:
    """(label, value) pairs of the provenance page and sheet."""
    from ..crosscheck import PHI_TOL, SIZE_TOL
    from .build import DIGITS_PER_PAGE
    from .versions import versions

    spec, v = tset.spec, tset.verification
    rows = [("Title", spec.title), ("Spec file", spec.source), ("Spec SHA-256", spec.sha256)]
    rows += [(name, ver) for name, ver in versions(tset.oc is not None).items()]
    rows += [
        ("Verifying solver", f"mpmath, {v.precision} significant digits, independent of the fast "
                             f"(scipy) solver"),
        ("Designs verified", f"{v.rows} of {v.rows}"),
        ("Largest |phi difference|", f"{v.max_phi_diff:.3g} (tolerance {PHI_TOL:g}"
                                     + (")" if v.max_phi_diff <= PHI_TOL else
                                        ", or an ill-conditioned gamma's floor)")),
        ("Largest size error, fast solver", f"{v.max_fast_size_error:.3g} "
                                            f"(tolerance {SIZE_TOL:g})"),
        ("Largest size error, precise solver", f"{v.max_precise_size_error:.3g}"),
        ("Random digits", "none (real cutoffs, no randomisation)"
         if not get_family(spec.family).discrete else f"{spec.random_digit_pages} "
                          f"page{'s' if spec.random_digit_pages != 1 else ''} of "
                          f"{DIGITS_PER_PAGE:,} digits from Python random.Random({spec.seed})"),
        ("Machine-readable table", f"{spec.name}.csv, SHA-256 {csv_sha256}"),
        ("Hashes of all files", f"{spec.name}.manifest.json"),
    ]
    if tset.oc is not None:
        rows.insert(-2, ("Operating characteristics", oc_provenance(tset)))
    return rows


def oc_provenance(tset) -> str:
    """How the power values and OC curves were obtained (provenance page and sheet)."""
    from .oc_build import CURVE_POINTS

    oc, spec = tset.oc, tset.spec
    parts = []
    if oc.thetas:
        parts.append(f"sheet 'Power': {len(oc.powers)} designs x {len(oc.thetas)} values x 3 "
                     f"rules")
    if oc.groups:
        charts = sum(len(g.charts) for g in oc.groups)
        parts.append(f"OC curves: {charts} charts, {CURVE_POINTS} values of "
                     f"{WORDS[spec.family][0]} per curve, the designs verified above")
    return ("; ".join(parts) + ". Each value is a sum of the exact probabilities of Y "
            "(the law of the verified design), evaluated in double precision with scipy's "
            "distribution functions; no simulation.")
