"""The two facts the sample-size search rests on, checked as properties (hypothesis).

1. The randomised rule's power at an alternative is non-decreasing in n, for
   every family and kind (theory: a UMP / UMPU test of the larger sample is at
   least as powerful as the test of the smaller one, which stays a level-alpha,
   unbiased test there; Lehmann & Romano, Testing Statistical Hypotheses, 3rd
   ed., sections 3.4, 3.7, 4.2).  planning.plan gallops and bisects on it.
2. The largest probability mass of Y is non-increasing in n (convolution with
   the extra units' count never raises the maximum); the conservative scan's
   certificate needs it.

Tolerance: 1e-12 absolute, the float error of a power sum (terms computed to
~1e-15 relative, a few thousand of them at most).
"""

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import exactband
from exactband import kinds as K
from exactband.families import get_family
from exactband.ngrid import NGrid as _Grid
from exactband.params import make_problem

TOL = 1e-12
FAMILIES = ("poisson", "binomial", "negative-binomial")
KINDS = ("upper", "lower", "point", "band", "equivalence")


@st.composite
def cases(draw):
    """A design problem, an alternative outside its null region, n and a step."""
    fam = draw(st.sampled_from(FAMILIES))
    kind = draw(st.sampled_from(KINDS))
    alpha = draw(st.sampled_from([0.01, 0.05, 0.1, 0.2]))
    if fam == "binomial":
        a = draw(st.floats(0.05, 0.7))
        b = a + draw(st.floats(0.02, 0.25))
        n = draw(st.integers(1, 150))
        step = draw(st.integers(1, 4))
    else:
        a = draw(st.floats(0.3, 5.0))
        b = a * draw(st.floats(1.05, 1.8))
        if fam == "poisson":
            n = draw(st.floats(0.2, 80.0))
            step = draw(st.sampled_from([0.05, 0.25, 0.5, 1.0, 2.5]))
        else:
            n = draw(st.integers(1, 80))
            step = draw(st.integers(1, 4))
    disp = draw(st.sampled_from([0.5, 1.0, 4.0, 20.0])) if fam == "negative-binomial" else None
    if kind in ("band", "equivalence"):
        hyp = dict(low=a, high=b)
    else:
        hyp = dict(value=a)
    u = draw(st.floats(0.05, 0.95))
    if kind == "equivalence":
        alt = a + u * (b - a)
    else:
        left = kind in ("lower",) or (kind in ("point", "band") and draw(st.booleans()))
        if left:
            alt = a * (0.3 + 0.65 * u)
        else:
            top = b if kind == "band" else a
            alt = top + (1 - top) * 0.9 * u if fam == "binomial" else top * (1.05 + 1.5 * u)
    return fam, kind, alpha, hyp, disp, n, step, alt


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(cases())
def test_randomised_power_is_non_decreasing_in_n(case):
    fam, kind, alpha, hyp, disp, n, step, alt = case
    assert not K.in_null(kind, alt, hyp.get("low"), hyp.get("high"), hyp.get("value"))
    ns = [n, n + step, n + 2 * step]
    powers = [exactband.design(fam, kind, n=m, alpha=alpha, dispersion=disp, verify=False,
                               **hyp).power(alt) for m in ns]
    assert powers[1] >= powers[0] - TOL, (ns, powers)
    assert powers[2] >= powers[1] - TOL, (ns, powers)


@settings(max_examples=100, deadline=None)
@given(cases())
def test_largest_mass_is_non_increasing_in_n(case):
    fam, kind, alpha, hyp, disp, n, step, alt = case
    prob = make_problem(fam, kind, n=1, alpha=alpha, dispersion=disp, **hyp)
    grid = _Grid(prob, (alt,), step, "conservative", None)
    ns = np.array([n + i * step for i in range(6)], dtype=float)
    m = grid.modal(ns, alt)
    assert np.all(np.diff(m) <= TOL), (ns, m)
    # and it is the largest mass: compare with a direct maximum over the support
    L = get_family(fam).float_law
    P = L.make(np.full(ns.shape, alt), ns, None if disp is None else np.full(ns.shape, disp))
    top = 4000 if fam != "binomial" else int(max(ns))
    ys = np.arange(0, top + 1, dtype=float)
    direct = np.array([L.pmf(ys, tuple(x[i] for x in P)).max() for i in range(ns.size)])
    assert np.allclose(m, direct, rtol=1e-12, atol=0), (m, direct)
