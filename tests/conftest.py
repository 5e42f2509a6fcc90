"""Shared helpers for the test suite.

``exact_sizes`` evaluates E_theta phi for any design in high precision with the
mpmath tables of exactband.families (independent of the float code under test).
"""

from __future__ import annotations

import os

import mpmath as mp
import pytest
from hypothesis import HealthCheck, settings

from exactband import kinds as K
from exactband.families.mptable import MpTable

settings.register_profile(
    "exactband", deadline=None, database=None, print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
)
settings.load_profile("exactband")

SEED = int(os.environ.get("EXACTBAND_TEST_SEED", "20261202"))


def table(family, theta, n, k, dps=70, moments=False):
    with mp.workdps(dps):
        return MpTable(family.mp_law(theta, n, k), mp.mpf(10) ** (-(dps - 5)), moments=moments)


def exact_sizes(problem, c1, g1, c2, g2, dps=70):
    """E phi at each constraint point, in mpmath, for the given numbers (float or mpf)."""
    out = []
    with mp.workdps(dps):
        G1 = mp.mpf(0) if g1 is None else mp.mpf(g1)
        G2 = mp.mpf(0) if g2 is None else mp.mpf(g2)
        tabs = [table(problem.family, t, problem.n, problem.dispersion, dps) for t in problem.points]
        lo = min(T.lo for T in tabs)
        hi = max(T.hi for T in tabs)
        for T in tabs:
            T.extend(lo, hi)
            out.append(K.expectation(problem.kind.name, c1, G1, c2, G2, T.cdf, T.sf, T.pmf))
    return out


def exact_moment_residual(problem, c1, g1, c2, g2, dps=70):
    """E[Y phi] - alpha E[Y] at the point (point designs), in mpmath."""
    from exactband.mpnum import dec

    with mp.workdps(dps):
        T = table(problem.family, problem.value, problem.n, problem.dispersion, dps, moments=True)
        G1, G2 = mp.mpf(g1), mp.mpf(g2)
        m = (T.moment_below(c1 - 1) + G1 * c1 * T.pmf(c1) + G2 * c2 * T.pmf(c2)
             + T.moment_above(c2))
        return m - dec(problem.alpha) * T.law.mean, T.law.mean


@pytest.fixture
def rng():
    import numpy as np

    return np.random.default_rng(SEED)


# -- audit tests: third-party tables built from known designs ------------------
import csv  # noqa: E402

from exactband.cli import main  # noqa: E402

STD = ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion",
       "c1", "gamma1", "c2", "gamma2")


def design_row(d, decimals=6, rounding="truncate", **inputs) -> dict:
    """A table row as a third party would print it: inputs, cutoffs, gammas to `decimals`.

    Gammas are truncated (never raising the size above alpha) or, with rounding="round",
    rounded half up from the design's exact decimal.
    """
    from decimal import ROUND_FLOOR, ROUND_HALF_UP, Decimal

    row = {k: "" for k in STD}
    row.update({k: ("" if v is None else str(v)) for k, v in inputs.items()})
    how = ROUND_FLOOR if rounding == "truncate" else ROUND_HALF_UP
    for i, (c, g) in enumerate((("c1", "gamma1"), ("c2", "gamma2")), start=1):
        cv, gv = getattr(d, c), getattr(d, g)
        if cv is not None:
            row[c] = str(cv)
            exact = getattr(d, f"gamma{i}_decimal") or repr(gv)
            row[g] = str(Decimal(exact).quantize(Decimal(1).scaleb(-decimals), rounding=how))
    return row


def write_csv(path, rows, header=STD, delimiter=","):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, delimiter=delimiter)
        w.writerow(header)
        for r in rows:
            w.writerow([r.get(h, "") for h in header])
    return path


@pytest.fixture
def cli(capsys):
    """Run the exactband CLI; returns (exit code, stdout, stderr)."""

    def run(*args):
        code = main([str(a) for a in args])
        out = capsys.readouterr()
        return code, out.out, out.err

    return run
