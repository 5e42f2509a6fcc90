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

from ..design import power_at
from ..params import Problem

_U = np.logspace(-9, 0, 90, endpoint=False)  # relative steps towards a far limit


def _spread(p: Problem, theta: float) -> float:
    """Standard error of the per-unit estimate of theta at theta."""
    return p.family.theta_spread(theta, float(p.n), p.dispersion)


def _valid(p: Problem, t):
    """The finite thetas inside the family's parameter space."""
    t = t[np.isfinite(t)]
    return t[p.family.theta_ok_array(t)]


def _side(p: Problem, b: float, direction: int, stop: float | None):
    """Theta values on one side of boundary b (direction -1: below, +1: above).

    ``stop`` is the width available on that side (None: the whole parameter space).
    """
    far = 10 * _spread(p, b)
    if stop is None:  # up to the end of the parameter space on that side, if it has one
        end = p.family.theta_min if direction < 0 else p.family.theta_max
        room = (b - end if direction < 0 else end - b) if math.isfinite(end) else 10 * far
    else:
        room = stop
    near = min(far, room)
    return np.concatenate([b + direction * near * _U, b + direction * room * _U])


def alternative_grid(p: Problem):
    """(thetas, pieces): grid over the alternative of the problem's kind."""
    kind, lo, hi = p.kind, p.points[0], p.points[-1]
    ts = []
    for side in kind.sides:
        if side == "below":
            ts.append(_side(p, lo, -1, None))
        elif side == "above":
            ts.append(_side(p, hi, +1, None))
        else:  # inside: the alternative is low < theta < high
            w = hi - lo
            ts += [_side(p, lo, +1, w), _side(p, hi, -1, w), np.linspace(lo, hi, 41)[1:-1]]
    t = _valid(p, np.concatenate(ts))
    t = t[~kind.in_null(t, p.low, p.high, p.value)]
    return np.unique(t)


def lowest_power(p: Problem, rule: tuple) -> tuple[float | None, float | None]:
    """(theta, power) where the rule's power is lowest in the alternative."""
    cut = tuple(float("nan") if x is None else x for x in rule[0::2])
    c1, c2 = cut
    g1, g2 = (0.0 if x is None else x for x in rule[1::2])

    def power(theta):  # the rule as printed (a gamma of 1 included)
        return power_at(p, (c1, g1, c2, g2), np.atleast_1d(np.asarray(theta, dtype=float)))

    t = alternative_grid(p)
    if t.size == 0:
        return None, None
    pw = power(t)
    i = int(np.argmin(pw))
    best_t, best_p = float(t[i]), float(pw[i])
    lo = t[i - 1] if i > 0 else t[i]
    hi = t[i + 1] if i + 1 < t.size else t[i]
    if hi > lo and not _crosses_null(p, lo, hi):
        res = minimize_scalar(lambda x: float(power(x)[0]), bounds=(lo, hi), method="bounded",
                              options={"xatol": (hi - lo) * 1e-6})
        if res.success and res.fun < best_p and lo <= res.x <= hi:
            best_t, best_p = float(res.x), float(res.fun)
    return best_t, best_p


def _crosses_null(p: Problem, lo: float, hi: float) -> bool:
    """Whether [lo, hi] holds a point of the null (refinement must stay outside it)."""
    return p.kind.crosses_null(lo, hi, p.low, p.high, p.value)
