"""Compare a fast and a precise continuous rule as test functions; the tolerances.

A continuous rule has real cutoffs and no randomisation, so two rules are the
same test when their cutoffs coincide.  The comparison:

* cutoffs: |c_fast - c_precise| <= CUT_TOL (|c_precise| + floor), floor = the sd of Y
  for a location family (normal: a cutoff near 0 is judged on the scale of Y), 0 for a
  scale family (gamma: relative).  CUT_TOL = 64 double-precision epsilons (1.4e-14):
  the fast solver's quantiles are polished to a few ulps and its root search stops at
  4 epsilons relative; the worst difference measured over the reference and property
  tests is about 1e-15.
  A cutoff whose tail is insensitive to it (elasticity e_i = f(c_i) (|c_i| + floor) / T_i
  below about 30, T_i the smaller tail at c_i; the largest over the points,
  ``cfast.cut_conditioning``) is determined only to the float law's own error divided by
  e_i: the fast solver puts c_i where a tail equals a target, and a tail T computed in
  doubles carries a relative error up to law_error(T) = 8 eps (8 + |ln T|) (the tail is
  the exponential of a log of magnitude ~|ln T|, e.g. x^a = exp(a ln x) for a gamma of
  small shape, rounded to a few ulps).  So cut_tol_i = max(CUT_TOL, law_error(T_i) / e_i).
  Example: a gamma of shape 0.14 at alpha = 4.5e-40 (e = 0.14, cutoff 1.3e-283): measured
  1.5e-13, allowed 1.3e-12.
* two cutoffs are solved together, so each carries the other's rounding: a double c_j
  is off by up to half an ulp (u |c_j|), which moves its size by u w_j (w = f(c) (|c| +
  floor), the largest over the points), and the side conditions move c_i to balance it
  by u w_j / w_i relative.  cfast's root stop allows two ulps at each point, so the
  tolerance of c_i is at least COUPLING u w_j / w_i, COUPLING = 4, at most COUPLE_CAP
  (1e-9: a cutoff whose partner's rounding moves it by more is a disagreement).
  Example: a normal band of width 5,000 sd far from 0 at alpha = 0.999567 (c2 ~ 1.1e7,
  c1 ~ -4.6e4, w2 / w1 = 226): measured 1.45e-14 (65 u), allowed 1.0e-13.
* sizes: the fast cutoffs evaluated with the precise law at every constraint point
  lie within size_tol of alpha, derived from the cutoff tolerance: moving every
  cutoff by a relative cut_tol moves the size by at most kappa * cut_tol * alpha to
  first order, where kappa = sum_i f(c_i) (|c_i| + floor) / alpha (``cfast.conditioning``).
  size_tol = alpha * min(SIZE_TOL, 1e-15 + kappa * max_i cut_tol_i), capped at 1e-9
  relative so that a real mistake cannot hide.
* the precise rule's own sizes within alpha * 10^-precision.

A design whose kappa exceeds KAPPA_MAX cannot be printed as double-precision
cutoffs that hold its size to 1e-9 (half an ulp of each cutoff moves the size by
kappa * 1.1e-16 relative): ``representable`` says so and the API declines it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import mpmath as mp

from .mpnum import dec

CUT_TOL = 64 * 2.0 ** -52
COUPLING = 4.0  # ulps of the partner cutoff a cutoff may carry (module text)
COUPLE_CAP = 1e-9  # largest relative cutoff tolerance the coupling may give
SIZE_TOL = 1e-9
KAPPA_MAX = 1e7


@dataclass(frozen=True)
class ContinuousCheck:
    """Outcome of comparing a fast continuous rule with a precise one."""

    agree: bool
    cut_diff: float  # max |c_fast - c_precise| / (|c_precise| + floor)
    max_phi_diff: float  # max over the points of P(Y lies where the two rules differ)
    fast_size_error: float  # max |E phi_fast - alpha| / alpha at the points (precise law)
    precise_size_error: float  # max |E phi_precise - alpha| / alpha
    size_tol: float  # relative to alpha
    precision: int
    reason: str = ""
    cut_tol: float = CUT_TOL  # the relative tolerance of the cutoff that differs most


    def summary(self) -> str:
        state = "agree" if self.agree else "DISAGREE"
        return (f"solvers {state}: max relative cutoff difference = {self.cut_diff:.2e} "
                f"(tolerance {self.cut_tol:.1e}); probability between the two rules' cutoffs "
                f"{self.max_phi_diff:.2e}; fast-solver size error {self.fast_size_error:.2e} "
                f"x alpha (tolerance {self.size_tol:.1e}); precise size error "
                f"{self.precise_size_error:.1e} x alpha")


def size_tolerance(kappa: float, cut_tol: float = CUT_TOL) -> float:
    """Tolerance on the fast rule's sizes, relative to alpha (see the module text)."""
    return min(SIZE_TOL, 1e-15 + kappa * cut_tol)


def law_error(tail: float) -> float:
    """Bound on the float laws' relative error in a tail of that size (module text)."""
    return 8.0 * 2.0 ** -52 * (8.0 + abs(math.log(tail)))


def cut_tolerance(elastic) -> float:
    """Relative tolerance of one cutoff; ``elastic``: its (elasticity, tail) or None."""
    if elastic is None or not elastic[0] > 0:
        return CUT_TOL
    e, tail = elastic
    return max(CUT_TOL, law_error(tail) / e)


def coupled(tols: list, weights) -> list:
    """Each cutoff's tolerance raised to the rounding its partner passes it (module text)."""
    w = list(weights) if weights is not None else [None, None]
    if len(tols) != 2 or not all(x is not None and x > 0 for x in w):
        return tols
    u = 2.0 ** -53
    return [max(tols[0], min(COUPLE_CAP, COUPLING * u * w[1] / w[0])),
            max(tols[1], min(COUPLE_CAP, COUPLING * u * w[0] / w[1]))]


def representable(kappa: float) -> bool:
    """Whether double-precision cutoffs can hold the size to SIZE_TOL."""
    return kappa <= KAPPA_MAX


def compare(fast, precise, fast_sizes, alpha, floor: float, precision: int,
            between: float = 0.0) -> ContinuousCheck:
    """``fast``: cfast.ContinuousSolution; ``precise``: cprecise.PreciseContinuous;
    ``fast_sizes``: the fast cutoffs' sizes with the precise law (cprecise.sizes_of);
    ``between``: the probability that Y falls where the two rules differ
    (cprecise.mass_between), reported as the rules' phi difference."""
    with mp.workdps(precision + 15):
        return _compare(fast, precise, fast_sizes, dec(alpha), floor, precision, between)


def _compare(fast, precise, fast_sizes, a, floor, precision, between) -> ContinuousCheck:
    worst_cut, worst_tol = 0.0, CUT_TOL
    reason = ""
    kappas = getattr(fast, "cut_conditioning", (None, None))
    tols = coupled([cut_tolerance(k) for k in kappas], getattr(fast, "cut_weights", None))
    for name, cf, cp, ctol in (("c1", fast.c1, precise.c1, tols[0]),
                               ("c2", fast.c2, precise.c2, tols[1])):
        if (cf is None) != (cp is None):
            return ContinuousCheck(False, math.inf, math.inf, math.inf, math.inf, 0.0,
                                   precision, f"{name} present in one rule only")
        if cf is None:
            continue
        d = float(abs(mp.mpf(cf) - cp) / (abs(cp) + floor))
        if d >= worst_cut:
            worst_cut, worst_tol = d, ctol
        if d > ctol and not reason:
            reason = f"{name} differs: {cf!r} against {mp.nstr(cp, 20)} (relative {d:.3g})"
    fse = max(float(abs(s - a) / a) for s in fast_sizes)
    pse = max(float(abs(s - a) / a) for s in precise.sizes)
    used = [t for t, c in zip(tols, (fast.c1, fast.c2)) if c is not None]
    tol = size_tolerance(fast.conditioning, max(used, default=CUT_TOL))
    if not reason and fse > tol:
        reason = f"the fast rule's size is off by {fse:.3g} relative (tolerance {tol:.3g})"
    if not reason and pse > 10.0 ** -precision:
        reason = f"the precise rule's size is off by {pse:.3g} relative"
    return ContinuousCheck(not reason, worst_cut, float(between), fse, pse, tol, precision,
                           reason, worst_tol)
