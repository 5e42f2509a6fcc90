"""Which known construction a wrong row matches, within the printed tolerance.

Candidates are tried in a fixed order (the first match is the diagnosis, the
others are listed as also consistent):

1. the conservative non-randomised design (our cutoffs, gammas 0); gamma1 and
   gamma2 swapped within the row; the c1 and c2 columns (or both pairs) swapped;
2. equal-tailed: alpha/2 in each tail, each at its own end of the null;
3. end-anchored tails: the left tail of size alpha at low, the right tail of
   size alpha at high (equivalence: two one-sided tests of size alpha);
4. the point design at one band end;
5. our gammas rounded (half up) or truncated to k >= 1 decimals: first k = the
   decimals the row prints, then fewer (compared as exact decimals; tried right
   after the swaps, before the looser constructions 2-4);
6. a cutoff convention shifted by one;
7. the design for a neighbouring n (n - 1, n + 1; a binomial cutoff above n
   is judged, so a row shifted by one n is found) or alpha (alpha/2, 2 alpha,
   the usual levels 0.1 ... 0.001).

Otherwise: "no known construction".  ``FileLevel`` then looks across the
findings for a file-wide cause (gamma or cutoff columns swapped), said once.
"""

from __future__ import annotations

from decimal import ROUND_FLOOR, ROUND_HALF_UP, Decimal

from ..solving import fast_solve, from_fast
from . import constructions as X
from .match import agrees

NONE = "no known construction"
CANDIDATE_SLACK = 1e-9  # float arithmetic of the candidate constructions
EXACT = (1e-12, 1e-12)  # printed decimals against our gammas rounded: equal as decimals
SWAP_GAMMAS = "gamma1 and gamma2 swapped within the row"
SWAP_CUTOFFS = "c1 and c2 swapped (gammas in place)"
SWAP_PAIRS = "c1, gamma1 and c2, gamma2 swapped as pairs"
FILE_SWAPS = {SWAP_GAMMAS: "the gamma1 and gamma2 columns appear swapped for the whole file",
              SWAP_CUTOFFS: "the c1 and c2 columns appear swapped for the whole file",
              SWAP_PAIRS: "the (c1, gamma1) and (c2, gamma2) columns appear swapped for the "
                          "whole file"}


def _first_tries(p, ours):
    kind = p.kind
    yield "conservative non-randomised design (randomisation dropped: gammas 0)", \
        lambda: X.conservative(ours)
    c1, g1, c2, g2 = ours
    if c1 is not None and c2 is not None:
        yield SWAP_GAMMAS, lambda: (c1, g2, c2, g1)
        yield SWAP_CUTOFFS, lambda: (c2, g1, c1, g2)
        yield SWAP_PAIRS, lambda: (c2, g2, c1, g1)
    if kind.two_tailed:
        yield ("equal-tailed: alpha/2 in each tail, each tail at its own band end"
               if kind.two_point else "equal-tailed: alpha/2 in each tail at the value"), \
            lambda: X.equal_tailed(p)
    if kind.two_point:
        yield ("end-anchored tails: two one-sided tests of size alpha, one at each band end"
               if kind.rejects_inside else "end-anchored tails: left tail of size alpha at "
               "low, right tail of size alpha at high"), lambda: X.end_anchored(p)


def _solved(problems):
    if not problems:
        return []
    sols = fast_solve([q for _, q in problems])
    out = []
    for (label, q), s in zip(problems, sols):
        d = from_fast(q, s)
        out.append((label, (d.c1, d.gamma1, d.c2, d.gamma2)))
    return out


def _rounded_to(ours_exact_text, printed, kind, theirs, decimals):
    """'gammas truncated to 4 decimals' when the printed decimals are ours cut to k digits."""
    tops = [d for d in decimals if d is not None]
    top = max(tops) if tops else 0
    for k in range(top, 0, -1):  # 0 decimals is the conservative design, tried first
        q = Decimal(1).scaleb(-k)
        found = []
        for how, mode in (("rounded", ROUND_HALF_UP), ("truncated", ROUND_FLOOR)):
            cand = list(ours_exact_text)
            for i in (1, 3):
                if cand[i] is not None:
                    cand[i] = float(Decimal(cand[i]).quantize(q, rounding=mode))
            if agrees(kind, theirs, tuple(cand), EXACT, 0.0):
                found.append(how)
        if found:
            how = "rounded or truncated" if len(found) == 2 else found[0]
            return f"gammas {how} to {k} decimal{'s' if k != 1 else ''}"
    return None


def diagnose(p, theirs, tol, decimals, ours, ours_text, printed=None) -> tuple[str, list]:
    """(diagnosis, other constructions that also match) for a row with a finding."""
    kind = p.kind.name
    hits = []

    def test(label, rule):
        if rule is not None and agrees(kind, theirs, rule, tol, CANDIDATE_SLACK) \
                and label not in hits:
            hits.append(label)

    if printed is not None:
        exact = tuple(None if printed[i // 2] is None else Decimal(str(printed[i // 2]))
                      for i in (0, 2))
        theirs_exact = (theirs[0], None if exact[0] is None else float(exact[0]),
                        theirs[2], None if exact[1] is None else float(exact[1]))
    else:
        theirs_exact = theirs
    rounding = _rounded_to(ours_text, printed, kind, theirs_exact, decimals)
    for i, (label, make) in enumerate(_first_tries(p, ours)):
        if i == 4 and rounding:  # exact decimals of ours: before the looser constructions
            hits.append(rounding)
        try:
            rule = make()
        except (ValueError, OverflowError, ZeroDivisionError):
            rule = None
        test(label, rule)
    if rounding and rounding not in hits:
        hits.append(rounding)
    others = X.other_problems(p)
    solved = dict(_solved(others))
    for label, _ in others:
        if label.startswith("point design"):
            test(label, solved.get(label))
    for label, rule in X.shifted(kind, ours):
        test(label, rule)
    for label, _ in others:
        if not label.startswith("point design"):
            test(label, solved.get(label))
    if not hits:
        return NONE, []
    return hits[0], hits[1:]


class FileLevel:
    """File-wide diagnoses (columns swapped) from counts of the row diagnoses, said once at
    the top; rows are added as they are judged, so no verdict is kept."""

    def __init__(self):
        self.two = 0  # judged rows with two cutoffs
        self.findings = 0  # findings among them
        self.hits = {swap: 0 for swap in FILE_SWAPS}

    def add(self, v) -> None:
        r = v.row
        if v.verdict == "invalid" or r.theirs is None or r.theirs[0] is None \
                or r.theirs[2] is None:
            return
        self.two += 1
        if v.verdict == "finding":
            self.findings += 1
            for swap in FILE_SWAPS:
                if v.diagnosis == swap or swap in v.also:
                    self.hits[swap] += 1

    def result(self) -> list:
        out = []
        for swap, text in FILE_SWAPS.items():
            hit = self.hits[swap]
            if hit >= 2 and 2 * hit >= self.findings:
                out.append(f"{text}: {hit} of {self.two} rows with two cutoffs match the optimal "
                           "rule with them exchanged")
        return out

