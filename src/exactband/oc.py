"""Operating characteristics: power and OC of the three rules of one design over theta.

The three rules share the cutoffs of one Design:

* ``randomised``: the exact UMP / UMPU test, gammas as solved;
* ``conservative``: the randomisation dropped (gammas 0), size at most alpha;
* ``digits``: the rule field staff apply with d random digits, gamma replaced by
  t / 10**d with t = floor(gamma * 10**d) (``Design.digit_rule``).

Every number is an exact sum over the law of Y (``Design.power``: scipy's
regularised incomplete gamma and beta functions and the saddle-point masses),
never a simulation.  Nothing here formats or plots.
"""

from __future__ import annotations

import numpy as np

from . import kinds as K
from .design import DEFAULT_RANDOM_DIGITS, Design
from .errors import ExactbandError, invalid, recast
from .families.base import as_real
from .rule import check_random_digits as rule_digits

RULES = ("randomised", "conservative", "digits")
DEFAULT_POINTS = 201
EDGE_TOL = 1e-3  # the default theta range ends where power is this close to its limit


class PlanningError(ExactbandError, ValueError):
    """Unusable input to power, OC or sample-size planning (one line)."""


def one_hypothesis(designs, why: str) -> list:
    """The designs as a list, refused unless they share family, kind and hypothesis."""
    designs = list(designs)
    if not designs:
        raise invalid("designs", "[]", "at least one design is required", PlanningError)
    keys = {(x.family, x.kind, x.low, x.high, x.value, x.dispersion) for x in designs}
    if len(keys) != 1:
        raise PlanningError(f"invalid designs: {why}; these differ in family, kind or "
                            "hypothesis values", field="designs")
    return designs


def check_random_digits(d) -> int:
    """Number of random digits of the field rule: a whole number from 1 to 9 (also as
    text), checked by ``rule.check_random_digits`` and raised as a PlanningError."""
    try:
        return rule_digits(d, "random-digits", "a whole number of random digits from 1 to 9",
                           text=True)
    except ExactbandError as e:
        raise recast(e, PlanningError) from None


def _whole(field, value, allowed) -> int:
    from .strict import whole

    try:
        return whole(field, value, allowed)
    except ExactbandError as e:
        raise recast(e, PlanningError) from None


def check_rule(rule) -> str:
    key = rule.strip().lower() if isinstance(rule, str) else rule
    key = {"randomized": "randomised"}.get(key, key)  # accepted spelling
    if key not in RULES:
        raise invalid("rule", rule, "allowed: " + ", ".join(RULES), PlanningError)
    return key


def check_points(points) -> int:
    allowed = "a whole number of points from 2 to 100000"
    x = _whole("points", points, allowed)
    if not 2 <= x <= 100000:
        raise invalid("points", points, allowed, PlanningError)
    return x


def check_thetas(design: Design, thetas, field: str = "theta") -> np.ndarray:
    """Numbers in the family's parameter space, as a float array (one-line errors)."""
    fam = design.problem.family
    if isinstance(thetas, (str, bytes)) or np.ndim(thetas) == 0:
        thetas = [thetas]
    vals = list(thetas)
    if not vals:
        raise invalid(field, "[]", "at least one value is required", PlanningError)
    out = []
    for x in vals:
        try:
            out.append(fam.check_theta(field, x))
        except ExactbandError as e:
            raise recast(e, PlanningError) from None
    return np.array(out, dtype=float)


def rule_designs(design: Design, random_digits: int = DEFAULT_RANDOM_DIGITS) -> dict:
    """The three rules of a design as Designs: randomised, conservative, digits."""
    d = check_random_digits(random_digits)
    return {"randomised": design, "conservative": design.nonrandomized(),
            "digits": design.digit_rule(d)}


def rule_label(rule: str, random_digits: int) -> str:
    """Plain words for a rule (legends, headers)."""
    return {"randomised": "randomised rule (exact gammas)",
            "conservative": "conservative rule (no randomisation)",
            "digits": f"field rule ({random_digits} random digits)"}[rule]


# -- the default theta range ----------------------------------------------------
def _limit(kind, side: int) -> float:
    """Power far out on one side (-1 left, +1 right): 1 where the rule rejects, else 0."""
    rejects = K.as_kind(kind).far_rejects
    return 1.0 if rejects[0 if side < 0 else 1] else 0.0


def _edge(design: Design, start: float, side: int) -> float:
    """Theta beyond ``start`` on ``side`` where the power is within EDGE_TOL of its limit."""
    fam = design.problem.family
    to_u, from_u = fam.theta_scale()  # theta onto an unbounded scale and back
    target = _limit(design.kind, side)
    u0 = to_u(start)

    def near(theta):
        return abs(design.power(theta) - target) <= EDGE_TOL

    step, far_bad, found = 0.05, u0, None
    for _ in range(40):
        u = u0 + side * step
        th = from_u(u)
        if not fam.theta_ok(th) or th == start:
            break
        if near(th):
            found = u
            break
        far_bad, step = u, step * 2
    if found is None:  # the limit is not approached inside the space: stop at the last point
        return from_u(far_bad)
    for _ in range(30):  # bisection on the unbounded scale
        mid = 0.5 * (far_bad + found)
        if near(from_u(mid)):
            found = mid
        else:
            far_bad = mid
    return from_u(found)


def default_thetas(design: Design, points: int = DEFAULT_POINTS, extra=()) -> np.ndarray:
    """Evenly spaced thetas covering the null region and the climb of the power.

    Each end lies where the randomised rule's power is within 1e-3 of its limit
    (1 where the rule rejects far out, 0 where it does not), plus 3 % of the
    span; the constraint points and ``extra`` thetas are included exactly.
    """
    pts = check_points(points)
    fam = design.problem.family
    lo, hi = min(design.points), max(design.points)
    left, right = _edge(design, lo, -1), _edge(design, hi, +1)
    extra = [float(x) for x in extra]
    left, right = min([left, *extra]), max([right, *extra])
    pad = 0.03 * (right - left)
    if fam.theta_ok(left - pad):
        left -= pad
    if fam.theta_ok(right + pad):
        right += pad
    grid = snap(np.linspace(left, right, pts))
    grid = grid[fam.theta_ok_array(grid)]
    return np.unique(np.concatenate([grid, np.array(design.points, float), extra]))


def snap(grid) -> np.ndarray:
    """Grid values rounded to 12 significant digits: 0.05, not 0.04999999999999997.

    The points of an evenly spaced grid are arbitrary; rounded, they print as
    the decimals they are meant to be (the power is computed at the rounded value).
    """
    return np.array([float(f"{x:.12g}") for x in np.asarray(grid, dtype=float)])


def _bottom(fam):
    """The lower end of the parameter space when it is 0 (rates, proportions, means), else None."""
    return None if fam.theta_ok(-1.0) else 0.0


def shared_thetas(designs, points: int = DEFAULT_POINTS) -> np.ndarray:
    """One theta grid for designs of one hypothesis that differ in n and alpha.

    The range covers the null region and the climb of the power of every
    design (the union of their ``default_thetas`` ranges, each end where the
    randomised rule's power is within 1e-3 of its limit); for an upper test
    (H0: theta <= value) it starts at the bottom of the parameter space, so all
    of H0 shows.  Charts drawn on it share one x-range, so the null region looks
    the same in every row of a page.  The constraint points are included exactly.
    """
    designs = one_hypothesis(designs, "one x-range is shared by designs of one hypothesis")
    pts = check_points(points)
    first = designs[0]
    fam = first.problem.family
    lo, hi = min(first.points), max(first.points)
    left = min(_edge(x, lo, -1) for x in designs)
    right = max(_edge(x, hi, +1) for x in designs)
    pad = 0.03 * (right - left)
    left = left - pad if fam.theta_ok(left - pad) else left
    right = right + pad if fam.theta_ok(right + pad) else right
    if first.problem.kind.sides == ("above",) and _bottom(fam) is not None:
        left = _bottom(fam)  # all of H0: theta from the bottom of the space up to value
    grid = snap(np.linspace(left, right, pts))
    grid = grid[fam.theta_ok_array(grid)]
    return np.unique(np.concatenate([grid, np.array(first.points, float)]))


# -- tables of power and OC -----------------------------------------------------
def operating_characteristics(design: Design, theta=None, *, random_digits=DEFAULT_RANDOM_DIGITS,
                              points=DEFAULT_POINTS):
    """Power and OC of the randomised, conservative and digit rules at each theta.

    Parameters
    ----------
    design : Design
    theta : sequence of float, optional
        Parameter values; by default ``default_thetas(design, points)``.
    random_digits : int
        d of the field rule t = floor(gamma * 10**d) (default 3).

    Returns
    -------
    pandas.DataFrame with columns theta, in_null, power_randomised,
    power_conservative, power_digits, oc_randomised, oc_conservative, oc_digits
    (OC = 1 - power).  ``frame.attrs`` holds random_digits and the sizes of each
    rule at the constraint points.

    Examples
    --------
    >>> import exactband
    >>> from exactband.oc import operating_characteristics
    >>> d = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    >>> f = operating_characteristics(d, [2.0, 3.0])
    >>> round(float(f.power_randomised[0]), 12)
    0.05
    """
    import pandas as pd

    d = check_random_digits(random_digits)
    th = default_thetas(design, points) if theta is None else check_thetas(design, theta)
    rules = rule_designs(design, d)
    out = pd.DataFrame({"theta": th})
    out["in_null"] = np.asarray(K.in_null(design.kind, th, design.low, design.high,
                                          design.value), dtype=bool)
    for name, rd in rules.items():
        out[f"power_{name}"] = np.atleast_1d(rd.power(th)).astype(float)
    for name in rules:
        out[f"oc_{name}"] = 1.0 - out[f"power_{name}"]
    out.attrs["random_digits"] = d
    out.attrs["sizes"] = {name: tuple(rd.sizes) for name, rd in rules.items()}
    return out


def power_sheet(designs, thetas, *, random_digits=DEFAULT_RANDOM_DIGITS):
    """Power of the three rules of each design at the stated thetas, one row per pair.

    For the spreadsheet sheet of power values: ``designs`` is a Design or a list
    of them (e.g. the rows of one table); ``thetas`` the values the spec states.
    Columns: family, kind, n, alpha, low, high, value, dispersion, theta, in_null,
    power_randomised, power_conservative, power_digits.  Thetas outside a
    family's space raise PlanningError.
    """
    import pandas as pd

    if isinstance(designs, Design):
        designs = [designs]
    frames = []
    for des in designs:
        f = operating_characteristics(des, thetas, random_digits=random_digits)
        ident = des.problem.inputs()
        f = f[["theta", "in_null", "power_randomised", "power_conservative", "power_digits"]]
        for pos, (key, val) in enumerate(ident.items()):
            f.insert(pos, key, [val] * len(f))
        frames.append(f)
    if not frames:
        raise invalid("designs", "[]", "at least one design is required", PlanningError)
    return pd.concat(frames, ignore_index=True)


def parse_number_list(field: str, text) -> list:
    """'1.6, 3' or a list of numbers -> list of floats (one-line error naming ``field``)."""
    if isinstance(text, str):
        items = text.replace(";", ",").split(",")
    elif np.ndim(text) == 0:
        items = [text]
    else:
        items = list(text)
    items = [x.strip() if isinstance(x, str) else x for x in items]
    items = [x for x in items if not (isinstance(x, str) and x == "")]
    if not items:
        raise invalid(field, text, "a comma-separated list of numbers is required", PlanningError)
    out = []
    for x in items:
        try:
            out.append(as_real(field, x))
        except ExactbandError:
            raise invalid(field, text, "a comma-separated list of finite numbers",
                          PlanningError) from None
    return out
