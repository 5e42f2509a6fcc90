"""Evaluation of one rule over a grid of n at fixed alternatives (vectorised), for plan.

``NGrid`` solves the designs n = k * step for many k at once with the fast
solver and sums the power of the randomised, conservative or digit rule at each
alternative; ``modal`` gives the largest probability mass of Y, the ingredient
of the bound that certifies the conservative scan (see planning).  ``first_k``
is the galloping-and-bisection search over a monotone predicate.
"""

from __future__ import annotations

from decimal import Decimal

import numpy as np

from .oc import PlanningError
from .rule import threshold
from .solvers import fast

CERT_MARGIN = 1e-12  # the certificate must clear the target by more than float noise


class NGrid:
    """Everything fixed while n varies; evaluates rules at grid points n = k * step."""

    def __init__(self, problem, alternatives, step, rule, random_digits):
        self.p = problem
        self.fam = problem.family
        self.kind = problem.kind.name
        self.knd = problem.kind
        self.alts = alternatives
        self.step = step
        self.step_dec = Decimal(repr(step)) if isinstance(step, float) else Decimal(step)
        self.rule = rule
        self.d = random_digits
        self.j = len(self.knd.cutoffs)  # cutoffs where the digit rule can lose power
        self.delta = {"randomised": 0.0, "conservative": 1.0,
                      "digits": 10.0 ** -(random_digits or 0)}[rule]
        self.evaluations = 0

    def n_of(self, k):
        if self.fam.integer_n:
            return int(k) * int(self.step)
        return float(self.step_dec * int(k))

    def n_of_float(self, x):
        """n as the design takes it (a whole number for integer_n families)."""
        return int(round(x)) if self.fam.integer_n else float(x)

    def ns(self, ks):
        return np.array([self.n_of(k) for k in ks], dtype=float)

    def solve(self, ks):
        ns = self.ns(ks)
        m = ns.size
        self.evaluations += m

        def full(x):
            return None if x is None else np.full(m, float(x))
        p = self.p
        if not self.fam.discrete:  # real cutoffs, design by design; no gammas (zeros)
            from dataclasses import replace

            from .solving import continuous_fast

            sols = [continuous_fast(replace(p, n=self.n_of(k))) for k in ks]
            c1, c2 = (np.array([np.nan if s[i] is None else s[i] for s in sols], dtype=float)
                      for i in (0, 2))
            return ns, (c1, np.zeros(m), c2, np.zeros(m))
        c1, g1, c2, g2 = fast.solve(self.fam, self.kind, ns, full(p.alpha), low=full(p.low),
                                    high=full(p.high), value=full(p.value),
                                    dispersion=full(p.dispersion))
        # canonical form: a gamma that rounds to 1 is the neighbouring cutoff with gamma 0
        return ns, self.knd.canonical(c1, g1, c2, g2)

    def _law(self, ns, theta):
        L = self.fam.float_law
        k = None if self.p.dispersion is None else np.full(ns.shape, float(self.p.dispersion))
        return L, L.make(np.full(ns.shape, float(theta)), ns, k)

    def power(self, ns, cut, theta, gammas=None):
        c1, g1, c2, g2 = cut
        if gammas is not None:
            g1, g2 = gammas
        if not self.fam.discrete:  # the family's law, one n at a time; gammas do not apply
            out = []
            for a, b, n in zip(c1, c2, ns):
                out.append(self.fam.power(self.knd, None if np.isnan(a) else float(a),
                                          None if np.isnan(b) else float(b),
                                          np.array([float(theta)]), self.n_of_float(n),
                                          self.p.dispersion)[0])
            return np.array(out, dtype=float)
        L, P = self._law(ns, theta)
        out = self.knd.expectation(c1, np.nan_to_num(g1), c2, np.nan_to_num(g2),
                            lambda c: L.cdf(c, P), lambda c: L.sf(c, P), lambda c: L.pmf(c, P))
        return np.clip(np.asarray(out, dtype=float), 0.0, 1.0)

    def modal(self, ns, theta):
        """Largest probability mass of Y at each n (the float law's mode, checked at +-1);
        0 for a continuous Y (no mass at a point: every rule is the randomised one)."""
        if not self.fam.discrete:
            return np.zeros(np.shape(ns))
        L, P = self._law(ns, theta)
        mode = L.mode(P)
        cands = [L.pmf(np.maximum(mode + s, 0.0), P) for s in (-1.0, 0.0, 1.0)]
        return np.maximum.reduce(cands)

    def rule_gammas(self, cut, rule):
        c1, g1, c2, g2 = cut
        if rule == "randomised":
            return g1, g2
        if rule == "conservative":
            return np.zeros_like(g1), np.zeros_like(g2)
        return floor_digits(g1, self.d), floor_digits(g2, self.d)

    def powers(self, ks, rule):
        """(ns, matrix alternatives x n of the rule's power, randomised power, cut)."""
        ns, cut = self.solve(ks)
        gam = self.rule_gammas(cut, rule)
        pr = np.array([self.power(ns, cut, a) for a in self.alts])
        pw = pr if rule == "randomised" else np.array([self.power(ns, cut, a, gam)
                                                        for a in self.alts])
        return ns, pw, pr, cut

    def meets_randomised(self, ks, target):
        _, _, pr, _ = self.powers(ks, "randomised")
        return np.all(pr >= target, axis=0)

    def certified(self, ks, target):
        ns, _, pr, _ = self.powers(ks, "randomised")
        bound = np.array([pr[i] - self.j * self.delta * self.modal(ns, a)
                          for i, a in enumerate(self.alts)])
        return np.all(bound >= target + CERT_MARGIN, axis=0)


def floor_digits(g, d):
    """floor(g * 10**d) / 10**d elementwise, from the decimal repr of g (as Design.thresholds)."""
    out = []
    for x in np.atleast_1d(g):
        if not np.isfinite(x):
            out.append(0.0)
            continue
        out.append(threshold(float(x), d) / 10 ** d)
    return np.array(out, dtype=float)


def first_k(pred, k_lo, k_max, what):
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
