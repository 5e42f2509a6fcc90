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
from decimal import ROUND_FLOOR, Decimal

import numpy as np

from . import kinds as K
from .api import design as make_design
from .design import _num
from .errors import ExactbandError, VerificationError
from .families.base import as_real
from .oc import (DEFAULT_RANDOM_DIGITS, PlanningError, _error, check_random_digits, check_rule,
                 operating_characteristics, parse_number_list, power_sheet, rule_designs)
from .params import make_problem
from .solvers import fast

DEFAULT_N_MAX = 1e7
SCAN_LIMIT = 200_000  # grid points the conservative scan may cover
CHUNK = 20_000
CERT_MARGIN = 1e-12  # the certificate must clear the target by more than float noise

# power and OC over theta live in oc.py; offered here too, beside plan
__all__ = ["PlanResult", "PlanningError", "operating_characteristics", "plan",
           "power_against_n", "power_sheet"]


@dataclass(frozen=True)
class PlanResult:
    """Answer of ``plan``: n, n_from, the chosen designs and their power at each alternative.

    ``power`` is aligned with ``alternatives`` (the chosen rule at ``n``);
    ``power_from`` likewise at ``n_from``; ``power_randomized`` is the randomised
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
    power_randomized: tuple
    power_below: tuple | None
    n_randomized: float
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
            "n": self.n, "n_from": self.n_from, "n_randomized": self.n_randomized,
            "n_certified": self.n_certified,
            "power": ptab(self.power), "power_from": ptab(self.power_from),
            "power_randomized": ptab(self.power_randomized),
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
        try:
            x = as_real("step", step)
        except ExactbandError:
            raise _error("step", step, allowed) from None
        if x < 1 or x != int(x):
            raise _error("step", step, allowed)
        return int(x)
    try:
        x = as_real("step", step)
    except ExactbandError:
        raise _error("step", step, "a finite number > 0 (exposure grows in steps of it)") from None
    if x <= 0:
        raise _error("step", step, "a finite number > 0 (exposure grows in steps of it)")
    return x


def _check_target(target, alpha):
    allowed = f"a power strictly between alpha = {alpha!r} and 1"
    try:
        x = as_real("target", target)
    except ExactbandError:
        raise _error("target", target, allowed) from None
    if not alpha < x < 1.0:
        raise _error("target", target, allowed)
    return x


def _null_words(problem) -> str:
    t = problem.family.theta_word
    return problem.kind.summary.format(t=t, value=_num(problem.value), low=_num(problem.low),
                                       high=_num(problem.high))


def _check_alternatives(problem, alternatives) -> tuple:
    vals = parse_number_list("alternatives", alternatives)
    out = []
    for a in vals:
        try:
            x = problem.family.check_theta("alternative", a)
        except ExactbandError as e:
            raise PlanningError(str(e)) from None
        if bool(K.in_null(problem.kind.name, x, problem.low, problem.high, problem.value)):
            raise _error("alternative", a, f"it lies in the null region ({_null_words(problem)}); "
                                           "alternatives must lie outside it")
        out.append(x)
    return tuple(dict.fromkeys(out))


# -- vectorised evaluation over n ---------------------------------------------------
class _Grid:
    """Everything fixed while n varies; evaluates rules at grid points n = k * step."""

    def __init__(self, problem, alternatives, step, rule, random_digits):
        self.p = problem
        self.fam = problem.family
        self.kind = problem.kind.name
        self.alts = alternatives
        self.step = step
        self.step_dec = Decimal(repr(step)) if isinstance(step, float) else Decimal(step)
        self.rule = rule
        self.d = random_digits
        self.j = 1 if self.kind in ("upper", "lower") else 2
        self.delta = {"randomized": 0.0, "conservative": 1.0,
                      "digits": 10.0 ** -(random_digits or 0)}[rule]
        self.evaluations = 0

    def n_of(self, k):
        if self.fam.integer_n:
            return int(k) * int(self.step)
        return float(self.step_dec * int(k))

    def ns(self, ks):
        return np.array([self.n_of(k) for k in ks], dtype=float)

    def solve(self, ks):
        ns = self.ns(ks)
        m = ns.size
        self.evaluations += m

        def full(x):
            return None if x is None else np.full(m, float(x))
        p = self.p
        c1, g1, c2, g2 = fast.solve(self.fam, self.kind, ns, full(p.alpha), low=full(p.low),
                                    high=full(p.high), value=full(p.value),
                                    dispersion=full(p.dispersion))
        # canonical form: a gamma that rounds to 1 is the neighbouring cutoff with gamma 0
        inward = -1.0 if self.kind == "equivalence" else 1.0
        hit1, hit2 = g1 >= 1.0, g2 >= 1.0
        c1, g1 = np.where(hit1, c1 + inward, c1), np.where(hit1, 0.0, g1)
        c2, g2 = np.where(hit2, c2 - inward, c2), np.where(hit2, 0.0, g2)
        return ns, (c1, g1, c2, g2)

    def _law(self, ns, theta):
        L = self.fam.float_law
        k = None if self.p.dispersion is None else np.full(ns.shape, float(self.p.dispersion))
        return L, L.make(np.full(ns.shape, float(theta)), ns, k)

    def power(self, ns, cut, theta, gammas=None):
        c1, g1, c2, g2 = cut
        if gammas is not None:
            g1, g2 = gammas
        L, P = self._law(ns, theta)
        out = K.expectation(self.kind, c1, np.nan_to_num(g1), c2, np.nan_to_num(g2),
                            lambda c: L.cdf(c, P), lambda c: L.sf(c, P), lambda c: L.pmf(c, P))
        return np.clip(np.asarray(out, dtype=float), 0.0, 1.0)

    def modal(self, ns, theta):
        """Largest probability mass of Y at each n (the mode formula, checked at +-1)."""
        L, P = self._law(ns, theta)
        name = self.fam.name
        if name == "poisson":
            mode = np.floor(P[0])
        elif name == "binomial":
            mode = np.minimum(np.floor((P[0] + 1.0) * P[1]), P[0])
        else:
            r, mean = P
            mode = np.where(r > 1.0, np.floor((r - 1.0) * mean / r), 0.0)
        cands = [L.pmf(np.maximum(mode + s, 0.0), P) for s in (-1.0, 0.0, 1.0)]
        return np.maximum.reduce(cands)

    def rule_gammas(self, cut, rule):
        c1, g1, c2, g2 = cut
        if rule == "randomized":
            return g1, g2
        if rule == "conservative":
            return np.zeros_like(g1), np.zeros_like(g2)
        return _floor_digits(g1, self.d), _floor_digits(g2, self.d)

    def powers(self, ks, rule):
        """(ns, matrix alternatives x n of the rule's power, randomised power, cut)."""
        ns, cut = self.solve(ks)
        gam = self.rule_gammas(cut, rule)
        pr = np.array([self.power(ns, cut, a) for a in self.alts])
        pw = pr if rule == "randomized" else np.array([self.power(ns, cut, a, gam)
                                                        for a in self.alts])
        return ns, pw, pr, cut

    def meets_randomized(self, ks, target):
        _, _, pr, _ = self.powers(ks, "randomized")
        return np.all(pr >= target, axis=0)

    def certified(self, ks, target):
        ns, _, pr, _ = self.powers(ks, "randomized")
        bound = np.array([pr[i] - self.j * self.delta * self.modal(ns, a)
                          for i, a in enumerate(self.alts)])
        return np.all(bound >= target + CERT_MARGIN, axis=0)


def _floor_digits(g, d):
    """floor(g * 10**d) / 10**d elementwise, from the decimal repr of g (as Design.thresholds)."""
    scale = Decimal(10) ** d
    out = []
    for x in np.atleast_1d(g):
        if not np.isfinite(x):
            out.append(0.0)
            continue
        t = int((Decimal(repr(float(x))) * scale).to_integral_value(rounding=ROUND_FLOOR))
        out.append(t / 10 ** d)
    return np.array(out, dtype=float)


def _first_k(pred, k_lo, k_max, what):
    """Smallest k in [k_lo, k_max] with pred True, for pred False...False True...True.

    Gallops k_lo, 2 k_lo, 4 k_lo, ... (one batch), then bisects.
    """
    ks = []
    k = k_lo
    while k < k_max:
        ks.append(k)
        k *= 2
    ks.append(k_max)
    ok = pred(np.array(ks))
    hits = np.nonzero(ok)[0]
    if hits.size == 0:
        raise PlanningError(what)
    i = int(hits[0])
    if i == 0:
        return ks[0]
    bad, good = ks[i - 1], ks[i]
    while good - bad > 1:
        mid = (bad + good) // 2
        if pred(np.array([mid]))[0]:
            good = mid
        else:
            bad = mid
    return good


# -- the planner ------------------------------------------------------------------
def plan(family, kind, *, alpha, alternatives, target, low=None, high=None, value=None,
         dispersion=None, rule="randomized", random_digits=DEFAULT_RANDOM_DIGITS, step=None,
         n_max=DEFAULT_N_MAX, verify=True, digits=50) -> PlanResult:
    """Smallest n whose rule has power >= target at every alternative.

    Parameters
    ----------
    family, kind, alpha, low, high, value, dispersion : as for ``exactband.design``
    alternatives : number or list of numbers outside the null region
    target : power wanted at each alternative, alpha < target < 1
    rule : "randomized" (default), "conservative" (gammas dropped) or "digits"
        (the field rule with ``random_digits`` digits)
    step : grid of n: n = step, 2 step, ... (default 1; Poisson exposure may be
        fractional, the other families need a whole step)
    n_max : the search gives up (PlanningError) beyond this n
    verify, digits : verify the reported designs with the ``digits``-digit solver

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
        raise _error("n-max", n_max, "a number >= step") from None
    if not st <= nmax <= 1e12:
        raise _error("n-max", n_max, f"a number from step = {st} to 1e12")
    grid = _Grid(probe, alts, st, rule, d)
    k_max = int(math.floor(nmax / st + 1e-9))

    where = (f"raise n-max (now {nmax:g}) or choose alternatives farther from the null region")
    k_r = _first_k(lambda ks: grid.meets_randomized(ks, tgt), 1, k_max,
                   f"the randomised rule does not reach power {tgt} at every alternative "
                   f"by n = {grid.n_of(k_max):g}: {where}")
    kw = dict(family=fam.name, kind=probe.kind.name, alpha=probe.alpha, low=probe.low,
              high=probe.high, value=probe.value, dispersion=probe.dispersion, digits=digits,
              verify=verify)
    notes = []
    cache = {}

    def des_at(k):
        if k not in cache:
            cache[k] = make_design(n=grid.n_of(k), **kw)
        return cache[k]

    if rule == "randomized":
        k_r = _settle_randomized(grid, k_r, tgt, des_at)
        k_first = k_from = k_r
        k_cert = None
    else:
        k_cert = _first_k(lambda ks: grid.certified(ks, tgt), k_r, max(k_max, k_r),
                          f"the {rule} rule's power could not be certified to stay above "
                          f"{tgt} by n = {grid.n_of(k_max):g}: {where}")
        if k_cert - k_r + 1 > SCAN_LIMIT:
            raise PlanningError(
                f"invalid step = {st}: the {rule} rule would need {k_cert - k_r + 1} designs "
                f"scanned (limit {SCAN_LIMIT}); choose a larger step")
        k_first, k_from = _scan(grid, k_r, k_cert, tgt, rule)
        notes.append(f"every n >= {grid.n_of(k_cert):g} certified by the bound "
                     f"P_randomized - {grid.j} * {grid.delta:g} * (largest probability mass)")

    def rule_power(k):
        des = des_at(k)
        rd = rule_designs(des, d or DEFAULT_RANDOM_DIGITS)[rule]
        return des, tuple(float(x) for x in np.atleast_1d(rd.power(list(alts))))

    des, pw = rule_power(k_first)
    des_from, pw_from = (des, pw) if k_from == k_first else rule_power(k_from)
    below = None if k_first == 1 else rule_power(k_first - 1)[1]
    if rule != "randomized":
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
        power_from=pw_from, power_randomized=pr, power_below=below,
        n_randomized=grid.n_of(k_r), n_certified=None if k_cert is None else grid.n_of(k_cert),
        evaluations=grid.evaluations, verified=bool(verify), notes=tuple(notes))


def _settle_randomized(grid, k, tgt, des_at):
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
    DataFrame with columns n, alternative, power_randomized, power_conservative,
    power_digits.
    """
    import pandas as pd

    probe = make_problem(result.family, result.kind, n=result.step, alpha=result.alpha,
                         low=result.low, high=result.high, value=result.value,
                         dispersion=result.dispersion)
    d = result.random_digits or DEFAULT_RANDOM_DIGITS
    grid = _Grid(probe, result.alternatives, result.step, "digits", d)
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
            raise _error("n", min(ns), f"grid values of n >= step = {result.step}")
    ns_arr, cut = grid.solve(ks)
    rows = []
    for a in result.alternatives:
        cols = {r: grid.power(ns_arr, cut, a, grid.rule_gammas(cut, r))
                for r in ("randomized", "conservative", "digits")}
        rows.append(pd.DataFrame({"n": ns_arr, "alternative": a,
                                  **{f"power_{r}": v for r, v in cols.items()}}))
    return pd.concat(rows, ignore_index=True)
