"""Which known construction a wrong row matches, within the printed tolerance.

Candidates are tried in a fixed order (the first match is the diagnosis, the
others are listed as also consistent):

1. the conservative non-randomised design (our cutoffs, gammas 0);
2. equal-tailed: alpha/2 in each tail, each at its own end of the null;
3. end-anchored tails: the left tail of size alpha at low, the right tail of
   size alpha at high (equivalence: two one-sided tests of size alpha);
4. the point design at one band end;
5. our gammas rounded (half up) or truncated to k decimals, k below what they print;
6. a cutoff convention shifted by one;
7. the design for a neighbouring n (n - 1, n + 1) or alpha (alpha/2, 2 alpha,
   the usual levels 0.1 ... 0.001).

Otherwise: "no known construction".
"""

from __future__ import annotations

from ..api import fast_solve, from_fast
from . import constructions as X
from .match import agrees

NONE = "no known construction"
CANDIDATE_SLACK = 1e-9  # float arithmetic of the candidate constructions


def _first_tries(p, ours):
    kind = p.kind.name
    yield "conservative non-randomised design (randomisation dropped: gammas 0)", \
        lambda: X.conservative(ours)
    if kind == "band":
        yield "equal-tailed: alpha/2 in each tail, each tail at its own band end", \
            lambda: X.equal_tailed(p)
        yield ("end-anchored tails: left tail of size alpha at low, right tail of size alpha "
               "at high"), lambda: X.end_anchored(p)
    elif kind == "point":
        yield "equal-tailed: alpha/2 in each tail at the value", lambda: X.equal_tailed(p)
    elif kind == "equivalence":
        yield ("end-anchored tails: two one-sided tests of size alpha, one at each band end"), \
            lambda: X.end_anchored(p)


def _solved(problems):
    if not problems:
        return []
    sols = fast_solve([q for _, q in problems])
    out = []
    for (label, q), s in zip(problems, sols):
        d = from_fast(q, s)
        out.append((label, (d.c1, d.gamma1, d.c2, d.gamma2)))
    return out


def diagnose(p, theirs, tol, decimals, ours, ours_text) -> tuple[str, list]:
    """(diagnosis, other constructions that also match) for a row with a finding."""
    kind = p.kind.name
    hits = []

    def test(label, rule):
        if rule is not None and agrees(kind, theirs, rule, tol, CANDIDATE_SLACK) \
                and label not in hits:
            hits.append(label)

    for label, make in _first_tries(p, ours):
        try:
            rule = make()
        except (ValueError, OverflowError, ZeroDivisionError):
            rule = None
        test(label, rule)
    others = X.other_problems(p)
    solved = dict(_solved(others))
    for label, _ in others:
        if label.startswith("point design"):
            test(label, solved.get(label))
    top = max(decimals) if decimals else 0
    for k in range(0, top):
        r = agrees(kind, theirs, X.rounded(ours_text, k, "round"), tol, CANDIDATE_SLACK)
        t = agrees(kind, theirs, X.rounded(ours_text, k, "trunc"), tol, CANDIDATE_SLACK)
        if r or t:
            how = "rounded or truncated" if r and t else ("rounded" if r else "truncated")
            hits.append(f"gammas {how} to {k} decimal{'s' if k != 1 else ''}")
            break
    for label, rule in X.shifted(kind, ours):
        test(label, rule)
    for label, _ in others:
        if not label.startswith("point design"):
            test(label, solved.get(label))
    if not hits:
        return NONE, []
    return hits[0], hits[1:]
