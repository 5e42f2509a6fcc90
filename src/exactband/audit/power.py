"""Unbiasedness of a printed rule: the lowest power outside the null hypothesis.

An unbiased test rejects at least as often outside the null as inside it, so
its power must not dip below alpha anywhere in the alternative.  For the
printed rule we evaluate the exact power (float law, every term summed) on a
grid of theta values in the alternative, dense near each boundary of the null
(where a dip appears first) and reaching ten standard errors out, and refine
the lowest point with a bounded scalar minimisation.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import minimize_scalar

from ..design import Design
from ..params import Problem

_U = np.logspace(-9, 0, 90, endpoint=False)  # relative steps towards a far limit


def _spread(p: Problem, theta: float) -> float:
    """Standard error of the per-unit estimate of theta at theta."""
    n, k = float(p.n), p.dispersion
    if p.family.name == "binomial":
        return math.sqrt(theta * (1 - theta) / n)
    if p.family.name == "negative-binomial":
        return math.sqrt((theta + theta * theta / k) / n)
    return math.sqrt(theta / n)


def _valid(p: Problem, t):
    t = t[np.isfinite(t) & (t > 0)]
    if p.family.name == "binomial":
        t = t[t < 1]
    return t


def _side(p: Problem, b: float, direction: int, stop: float | None):
    """Theta values on one side of boundary b (direction -1: below, +1: above).

    ``stop`` is the width available on that side (None: the whole parameter space).
    """
    far = 10 * _spread(p, b)
    if stop is None:
        room = b if direction < 0 else (1.0 - b if p.family.name == "binomial" else 10 * far)
    else:
        room = stop
    near = min(far, room)
    return np.concatenate([b + direction * near * _U, b + direction * room * _U])


def alternative_grid(p: Problem):
    """(thetas, pieces): grid over the alternative of the problem's kind."""
    kind = p.kind.name
    if kind in ("band",):
        ts = [_side(p, p.low, -1, None), _side(p, p.high, +1, None)]
    elif kind == "point":
        ts = [_side(p, p.value, -1, None), _side(p, p.value, +1, None)]
    elif kind == "upper":
        ts = [_side(p, p.value, +1, None)]
    elif kind == "lower":
        ts = [_side(p, p.value, -1, None)]
    else:  # equivalence: the alternative is low < theta < high
        w = p.high - p.low
        ts = [_side(p, p.low, +1, w), _side(p, p.high, -1, w), np.linspace(p.low, p.high, 41)[1:-1]]
    t = _valid(p, np.concatenate(ts))
    if kind == "equivalence":
        t = t[(t > p.low) & (t < p.high)]
    elif kind == "band":
        t = t[(t < p.low) | (t > p.high)]
    elif kind == "point":
        t = t[t != p.value]
    elif kind == "upper":
        t = t[t > p.value]
    else:
        t = t[t < p.value]
    return np.unique(t)


def lowest_power(p: Problem, rule: tuple) -> tuple[float | None, float | None]:
    """(theta, power) where the rule's power is lowest in the alternative."""
    d = Design(p, *rule, ())
    t = alternative_grid(p)
    if t.size == 0:
        return None, None
    pw = np.asarray(d.power(t), dtype=float)
    i = int(np.argmin(pw))
    best_t, best_p = float(t[i]), float(pw[i])
    lo = t[i - 1] if i > 0 else t[i]
    hi = t[i + 1] if i + 1 < t.size else t[i]
    if hi > lo and not _crosses_null(p, lo, hi):
        res = minimize_scalar(lambda x: float(d.power(x)), bounds=(lo, hi), method="bounded",
                              options={"xatol": (hi - lo) * 1e-6})
        if res.success and res.fun < best_p and lo <= res.x <= hi:
            best_t, best_p = float(res.x), float(res.fun)
    return best_t, best_p


def _crosses_null(p: Problem, lo: float, hi: float) -> bool:
    """Whether [lo, hi] holds a point of the null (refinement must stay outside it)."""
    k = p.kind.name
    if k == "band":
        return lo <= p.high and hi >= p.low
    if k == "point":
        return lo <= p.value <= hi
    if k == "upper":
        return lo <= p.value
    if k == "lower":
        return hi >= p.value
    return lo <= p.low or hi >= p.high  # equivalence: the null lies outside (low, high)
