"""Hypothesis strategies for random designs over every family and kind.

Bands are drawn both ordinary (high/low - 1 from 1e-3 to 1) and narrow
(1e-9 to 1e-3); alpha both from the usual levels and log-uniform down to 1e-10.
"""

from __future__ import annotations

from hypothesis import strategies as st

from exactband.params import make_problem

FAMILIES = ("poisson", "binomial", "negative-binomial")
KINDS = ("upper", "lower", "point", "band", "equivalence")


def log_uniform(lo, hi):
    import math

    return st.floats(math.log10(lo), math.log10(hi)).map(lambda e: float(10 ** e))


alphas = st.one_of(st.sampled_from([0.01, 0.05, 0.1]), log_uniform(1e-10, 0.5))
widths = st.one_of(log_uniform(1e-9, 1e-3), log_uniform(1e-3, 1.0))


@st.composite
def problems(draw, families=FAMILIES, kinds=KINDS, max_mean=2000.0):
    family = draw(st.sampled_from(families))
    kind = draw(st.sampled_from(kinds))
    alpha = draw(alphas)
    k = None
    if family == "binomial":
        n = draw(st.integers(1, 2000))
        theta = draw(st.one_of(st.floats(0.001, 0.999), log_uniform(1e-4, 0.05)))
    else:
        n = draw(st.floats(0.5, 400.0)) if family == "poisson" else draw(st.integers(1, 300))
        theta = draw(log_uniform(0.01, max(0.011, min(20.0, max_mean / n))))
        if family == "negative-binomial":
            k = draw(log_uniform(0.3, 300.0))
    if kind in ("band", "equivalence"):
        w = draw(widths)
        low = theta
        high = low * (1 + w)
        if family == "binomial" and high >= 1:
            high = low + (1 - low) * w / (1 + w)
        if not low < high:
            high = low * (1 + 1e-6)
        if family == "binomial" and not high < 1:
            low, high = 0.5, 0.6
        return make_problem(family, kind, n=n, alpha=alpha, low=low, high=high, dispersion=k)
    return make_problem(family, kind, n=n, alpha=alpha, value=theta, dispersion=k)
