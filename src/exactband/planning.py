"""Sample-size planning: the smallest n whose rule has the target power at every alternative.

Why the search is sound
-----------------------
* Randomised rule: its power at any alternative is non-decreasing in n, for every
  family and kind here.  With more data (a longer exposure, more trials, more
  units) the test of the smaller sample is still available and still of level
  alpha (and unbiased, for the two-sided kinds), so the UMP test (upper, lower,
  equivalence) or the UMPU test (point, band) of the larger sample is at least
  as powerful (E. L. Lehmann and J. P. Romano, Testing Statistical Hypotheses,
  3rd ed., Springer 2005, sections 3.4, 3.7, 4.2: optimality among level-alpha,
  respectively unbiased level-alpha, tests).  tests/test_planning_monotone.py
  checks the property with hypothesis.  So the n that meet the target form a
  half-line: galloping (n = s, 2s, 4s, ...) then bisection finds its start.
* Conservative and digit rules: their power is saw-toothed in n (a cutoff moves
  by one and the power drops).  They differ from the randomised rule only at the
  cutoffs, so with m(n) = max_y P(Y = y) (the modal probability) and j the
  number of randomised cutoffs (1 one-sided, 2 two-sided)

      P_rand(n) - j * delta * m(n)  <=  P_rule(n)  <=  P_rand(n),

  delta = 1 for the conservative rule and 10**-d for the d-digit rule.  m(n) is
  non-increasing in n (Y at a larger n is Y at the smaller n plus an independent
  count, and a convolution never raises the largest mass), so the left side is
  non-decreasing: the first n where it reaches the target (n_certified, found by
  galloping and bisection) certifies every larger n.  Below it every grid point
  from the randomised answer up to n_certified is computed (nothing below the
  randomised answer can meet the target): that scan gives the smallest n meeting
  the target and ``n_from``, the smallest n from which every larger n meets it.

Poisson exposure may be any multiple of ``step`` (e.g. 0.5 bolt); the other
families take whole multiples.  The search uses the fast solver; the reported
designs at the boundary are then solved again and verified by the
high-precision solver, and the answer is checked against them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import kinds as K
from .api import design as make_design
from .errors import ExactbandError, VerificationError, invalid, recast
from .families.base import as_real
from .ngrid import NGrid, first_k
from .numtext import number_text
from .oc import (
    DEFAULT_RANDOM_DIGITS,
    PlanningError,
    check_random_digits,
    check_rule,
    operating_characteristics,
    parse_number_list,
    power_sheet,
    rule_designs,
)
from .params import make_problem

DEFAULT_N_MAX = 1e7
SCAN_LIMIT = 200_000  # grid points the conservative scan may cover
CHUNK = 20_000

# power and OC over theta live in oc.py; offered here too, beside plan
__all__ = ["PlanResult", "PlanningError", "operating_characteristics", "plan",
           "power_against_n", "power_sheet"]


@dataclass(frozen=True)
class PlanResult:
    """Answer of ``plan``: n, n_from, the chosen designs and their power at each alternative.

    ``power`` is aligned with ``alternatives`` (the chosen rule at ``n``);
    ``power_from`` likewise at ``n_from``; ``power_randomised`` is the randomised
    rule's power at ``n``; ``power_below`` the chosen rule's power one step below
    ``n`` (None when n is the first grid point).  For the randomised rule
    ``n_from == n`` (its power is monotone in n).
    """

    family: str
    kind: str
    alpha: float
    low: float | None
    high: float | None
    value: float | None
    dispersion: float | None
    alternatives: tuple
    target: float
    rule: str
    random_digits: int | None
    step: float
    n: float
    n_from: float
    design: object
    design_from: object
    power: tuple
    power_from: tuple
    power_randomised: tuple
    power_below: tuple | None
    n_randomised: float
    n_certified: float | None
    evaluations: int
    verified: bool
    notes: tuple = field(default=())

    @property
    def power_by_alternative(self) -> dict:
        return dict(zip(self.alternatives, self.power))

    def to_dict(self) -> dict:
        def ptab(vals):
            return None if vals is None else [
                {"alternative": a, "power": p} for a, p in zip(self.alternatives, vals)]
        return {
            "inputs": {"family": self.family, "kind": self.kind, "alpha": self.alpha,
                       "low": self.low, "high": self.high, "value": self.value,
                       "dispersion": self.dispersion},
            "alternatives": list(self.alternatives), "target": self.target, "rule": self.rule,
            "random_digits": self.random_digits, "step": self.step,
            "n": self.n, "n_from": self.n_from, "n_randomised": self.n_randomised,
            "n_certified": self.n_certified,
            "power": ptab(self.power), "power_from": ptab(self.power_from),
            "power_randomised": ptab(self.power_randomised),
            "power_below": ptab(self.power_below),
            "evaluations": self.evaluations, "verified": self.verified,
            "notes": list(self.notes),
        }


# -- inputs ---------------------------------------------------------------------
def _check_step(fam, step):
    if step is None:
        return 1 if fam.integer_n else 1.0
    if fam.integer_n:
        allowed = f"a whole number >= 1 for the {fam.name} family ({fam.n_word} is whole)"
        from .strict import whole

        try:
            x = whole("step", step, allowed)
        except ExactbandError as e:
            raise recast(e, PlanningError) from None
        if x < 1:
            raise invalid("step", step, allowed, PlanningError)
        return x
    try:
        x = as_real("step", step)
    except ExactbandError:
        raise invalid("step", step, "a finite number > 0 (exposure grows in steps of it)",
                      PlanningError) from None
    if x <= 0:
        raise invalid("step", step, "a finite number > 0 (exposure grows in steps of it)",
                      PlanningError)
    return x


def _check_target(target, alpha):
    allowed = f"a power strictly between alpha = {alpha!r} and 1"
    try:
        x = as_real("target", target)
    except ExactbandError:
        raise invalid("target", target, allowed, PlanningError) from None
    if not alpha < x < 1.0:
        raise invalid("target", target, allowed, PlanningError)
    return x


def _null_words(problem) -> str:
    t = problem.family.theta_word
    return problem.kind.summary.format(t=t, value=number_text(problem.value),
                                       low=number_text(problem.low),
                                       high=number_text(problem.high))


def _check_alternatives(problem, alternatives) -> tuple:
    vals = parse_number_list("alternatives", alternatives)
    out = []
    for a in vals:
        try:
            x = problem.family.check_theta("alternative", a)
        except ExactbandError as e:
            raise recast(e, PlanningError) from None
        if bool(K.in_null(problem.kind.name, x, problem.low, problem.high, problem.value)):
            raise invalid("alternative", a, f"it lies in the null region ({_null_words(problem)}); "
                                            "alternatives must lie outside it", PlanningError)
        out.append(x)
    return tuple(dict.fromkeys(out))


# -- the planner ------------------------------------------------------------------
def plan(family, kind, *, alpha, alternatives, target, low=None, high=None, value=None,
         dispersion=None, rule="randomised", random_digits=DEFAULT_RANDOM_DIGITS, step=None,
         n_max=DEFAULT_N_MAX, verify=True, precision=50) -> PlanResult:
    """Smallest n whose rule has power >= target at every alternative.

    Parameters
    ----------
    family, kind, alpha, low, high, value, dispersion : as for ``exactband.design``
    alternatives : number or list of numbers outside the null region
    target : power wanted at each alternative, alpha < target < 1
    rule : "randomised" (default; "randomized" accepted), "conservative" (gammas dropped) or "digits"
        (the field rule with ``random_digits`` digits)
    step : grid of n: n = step, 2 step, ... (default 1; Poisson exposure may be
        fractional, the other families need a whole step)
    n_max : the search gives up (PlanningError) beyond this n
    verify, precision : verify the reported designs with the ``precision``-digit solver

    Returns
    -------
    PlanResult with ``n``, ``n_from`` (the smallest n from which every larger
    grid n meets the target; equal to ``n`` for the randomised rule), the
    designs and the power at each alternative.

    Examples
    --------
    >>> r = plan("poisson", "band", low=2, high=2.5, alpha=0.05,
    ...          alternatives=[1.6, 3.0], target=0.9)
    >>> r.n >= 1 and min(r.power) >= 0.9
    True
    """
    rule = check_rule(rule)
    d = check_random_digits(random_digits) if rule == "digits" else None
    probe = make_problem(family, kind, n=1, alpha=alpha, low=low, high=high, value=value,
                         dispersion=dispersion)
    fam = probe.family
    alts = _check_alternatives(probe, alternatives)
    tgt = _check_target(target, probe.alpha)
    st = _check_step(fam, step)
    try:
        nmax = as_real("n-max", n_max)
    except ExactbandError:
        raise invalid("n-max", n_max, "a number >= step", PlanningError) from None
    if not st <= nmax <= 1e12:
        raise invalid("n-max", n_max, f"a number from step = {st} to 1e12", PlanningError)
    grid = NGrid(probe, alts, st, rule, d)
    k_max = int(math.floor(nmax / st + 1e-9))

    where = (f"raise n-max (now {nmax:g}) or choose alternatives farther from the null region")
    k_r = first_k(lambda ks: grid.meets_randomised(ks, tgt), 1, k_max,
                   f"the randomised rule does not reach power {tgt} at every alternative "
                   f"by n = {grid.n_of(k_max):g}: {where}")
    kw = dict(family=fam.name, kind=probe.kind.name, alpha=probe.alpha, low=probe.low,
              high=probe.high, value=probe.value, dispersion=probe.dispersion, precision=precision,
              verify=verify)
    notes = []
    cache = {}

    def des_at(k):
        if k not in cache:
            cache[k] = make_design(n=grid.n_of(k), **kw)
        return cache[k]

    if rule == "randomised":
        k_r = _settle_randomised(grid, k_r, tgt, des_at)
        k_first = k_from = k_r
        k_cert = None
    else:
        k_cert = first_k(lambda ks: grid.certified(ks, tgt), k_r, max(k_max, k_r),
                          f"the {rule} rule's power could not be certified to stay above "
                          f"{tgt} by n = {grid.n_of(k_max):g}: {where}")
        if k_cert - k_r + 1 > SCAN_LIMIT:
            raise PlanningError(
                f"invalid step = {st}: the {rule} rule would need {k_cert - k_r + 1} designs "
                f"scanned (limit {SCAN_LIMIT}); choose a larger step")
        k_first, k_from = _scan(grid, k_r, k_cert, tgt, rule)
        notes.append(f"every n >= {grid.n_of(k_cert):g} certified by the bound "
                     f"P_randomised - {grid.j} * {grid.delta:g} * (largest probability mass)")

    def rule_power(k):
        des = des_at(k)
        rd = rule_designs(des, d or DEFAULT_RANDOM_DIGITS)[rule]
        return des, tuple(float(x) for x in np.atleast_1d(rd.power(list(alts))))

    des, pw = rule_power(k_first)
    des_from, pw_from = (des, pw) if k_from == k_first else rule_power(k_from)
    below = None if k_first == 1 else rule_power(k_first - 1)[1]
    if rule != "randomised":
        checks = [(k_first, pw, True), (k_from, pw_from, True)]
        if k_first > 1:
            checks.append((k_first - 1, below, False))
        if k_from > k_first:
            checks.append((k_from - 1, rule_power(k_from - 1)[1], False))
        for k, p, want in checks:
            if (min(p) >= tgt) != want:
                raise VerificationError(
                    f"the fast and the precise designs differ at the power target at "
                    f"n = {grid.n_of(k):g} ({rule} rule); the answer is not trusted")
    pr = tuple(float(x) for x in np.atleast_1d(des.power(list(alts))))
    return PlanResult(
        family=fam.name, kind=probe.kind.name, alpha=probe.alpha, low=probe.low,
        high=probe.high, value=probe.value, dispersion=probe.dispersion, alternatives=alts,
        target=tgt, rule=rule, random_digits=d, step=st, n=grid.n_of(k_first),
        n_from=grid.n_of(k_from), design=des, design_from=des_from, power=pw,
        power_from=pw_from, power_randomised=pr, power_below=below,
        n_randomised=grid.n_of(k_r), n_certified=None if k_cert is None else grid.n_of(k_cert),
        evaluations=grid.evaluations, verified=bool(verify), notes=tuple(notes))


def _settle_randomised(grid, k, tgt, des_at):
    """Check the fast answer with the designs that will be reported (monotone: step by one)."""
    alts = list(grid.alts)

    def ok(kk):
        return bool(np.min(des_at(kk).power(alts)) >= tgt)

    for _ in range(8):
        if not ok(k):
            k += 1
        elif k > 1 and ok(k - 1):
            k -= 1
        else:
            return k
    raise VerificationError("the fast and the precise designs disagree about the power target "
                            f"near n = {grid.n_of(k):g}; the answer is not trusted")


def _scan(grid, k_lo, k_hi, tgt, rule):
    """Every grid point from k_lo to k_hi: (first k meeting, k from which all meet)."""
    first, last_fail = None, k_lo - 1
    for start in range(k_lo, k_hi + 1, CHUNK):
        ks = np.arange(start, min(start + CHUNK, k_hi + 1))
        _, pw, _, _ = grid.powers(ks, rule)
        meets = np.all(pw >= tgt, axis=0)
        hit = np.nonzero(meets)[0]
        if first is None and hit.size:
            first = int(ks[hit[0]])
        miss = np.nonzero(~meets)[0]
        if miss.size:
            last_fail = int(ks[miss[-1]])
    if first is None or last_fail >= k_hi:  # cannot happen when the certificate holds
        raise PlanningError(f"internal: the {rule} rule fails at its certified n")
    return first, last_fail + 1


def power_against_n(result: PlanResult, ns=None):
    """Power of the three rules at each alternative for grid values of n (for plots).

    ``ns`` defaults to the grid from half the answer to 1.5 times ``n_from``
    (at most 600 points, evenly thinned if the grid is finer).  Returns a
    DataFrame with columns n, alternative, power_randomised, power_conservative,
    power_digits.
    """
    import pandas as pd

    probe = make_problem(result.family, result.kind, n=result.step, alpha=result.alpha,
                         low=result.low, high=result.high, value=result.value,
                         dispersion=result.dispersion)
    d = result.random_digits or DEFAULT_RANDOM_DIGITS
    grid = NGrid(probe, result.alternatives, result.step, "digits", d)
    if ns is None:
        k_n = round(result.n / result.step)
        k_f = round(result.n_from / result.step)
        k_lo, k_hi = max(1, k_n // 2), max(k_f + 1, int(math.ceil(1.5 * k_f)))
        ks = np.arange(k_lo, k_hi + 1)
        if ks.size > 600:
            ks = np.unique(np.round(np.linspace(k_lo, k_hi, 600)).astype(int))
            ks = np.unique(np.concatenate([ks, [k_n, k_f, max(1, k_n - 1), max(1, k_f - 1)]]))
    else:
        ks = np.array([round(float(x) / result.step) for x in ns])
        if np.any(ks < 1):
            raise invalid("n", min(ns), f"grid values of n >= step = {result.step}", PlanningError)
    ns_arr, cut = grid.solve(ks)
    rows = []
    for a in result.alternatives:
        cols = {r: grid.power(ns_arr, cut, a, grid.rule_gammas(cut, r))
                for r in ("randomised", "conservative", "digits")}
        rows.append(pd.DataFrame({"n": ns_arr, "alternative": a,
                                  **{f"power_{r}": v for r, v in cols.items()}}))
    return pd.concat(rows, ignore_index=True)
