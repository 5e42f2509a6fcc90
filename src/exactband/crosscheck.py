"""Compare two designs as test functions; the verification policy.

Two designs are the same test when their rejection probabilities phi(y) agree
at every point of the support.  Tuples (c1, gamma1, c2, gamma2) are never
compared directly: (c, gamma = 1) and (c +/- 1, gamma = 0) are the same test,
and a gamma within rounding of 0 or 1 may legitimately sit on either side.

Policy (tolerances and why):

* PHI_TOL = 1e-9: largest |phi_fast(y) - phi_precise(y)| accepted.  The float
  solver's gammas come from a 2x2 linear system whose inputs carry ~1e-15
  relative error; where a cutoff's probability is small compared with the
  tail beyond it, that error is magnified (measured worst case over the
  random designs of the test suite: see DEVELOPERS.md); 1e-9 keeps a wide
  margin above that while any real mistake (a wrong cutoff moves phi by a
  whole gamma or by 1) is far above it.
* SIZE_TOL = 1e-12: largest |E_theta phi_fast - alpha| at each constraint point,
  evaluated with the precise tables: the bar the field cares about (the size a
  user really gets), as set for the float solver.
"""

from __future__ import annotations

from dataclasses import dataclass

import mpmath as mp
import numpy as np

from . import kinds as K

PHI_TOL = 1e-9
SIZE_TOL = 1e-12


@dataclass(frozen=True)
class CrossCheck:
    """Outcome of comparing a fast design with a precise one."""

    agree: bool
    max_phi_diff: float  # max over the support of |phi_fast - phi_precise|
    fast_size_error: float  # max |E phi_fast - alpha| at the constraint points (precise)
    precise_size_error: float  # max |E phi_precise - alpha| (precise)
    precision: int
    reason: str = ""

    def summary(self) -> str:
        state = "agree" if self.agree else "DISAGREE"
        return (f"solvers {state}: max |phi difference| = {self.max_phi_diff:.2e} "
                f"(tolerance {PHI_TOL:g}); fast-solver size error {self.fast_size_error:.2e} "
                f"(tolerance {SIZE_TOL:g}); precise size error {self.precise_size_error:.1e}")


def phi_distance(kind: str, a: tuple, b: tuple) -> float:
    """max_y |phi_a(y) - phi_b(y)| for two designs (c1, g1, c2, g2) of one kind.

    phi is constant between cutoffs, so the cutoffs and their neighbours are a
    complete set of points to look at.
    """
    pts = set()
    for c in (a[0], a[2], b[0], b[2]):
        if c is not None and not (isinstance(c, float) and np.isnan(c)):
            pts.update((int(c) - 1, int(c), int(c) + 1))
    pts = np.array(sorted(p for p in pts if p >= 0), dtype=float)
    if pts.size == 0:
        return 0.0

    def ev(d):
        c1, g1, c2, g2 = (np.nan if v is None else float(v) for v in d)
        return K.phi(kind, c1, g1, c2, g2, pts)

    return float(np.max(np.abs(ev(a) - ev(b))))


def sizes_with_tables(kind: str, design: tuple, tables, dps: int) -> list:
    """E phi at each constraint point for a design, computed from precise tables."""
    c1, g1, c2, g2 = design
    out = []
    with mp.workdps(dps):
        G1 = mp.mpf(0) if g1 is None else mp.mpf(g1)
        G2 = mp.mpf(0) if g2 is None else mp.mpf(g2)
        C1 = None if c1 is None else int(c1)
        C2 = None if c2 is None else int(c2)
        for T in tables:
            out.append(K.expectation(kind, C1, G1, C2, G2, T.cdf, T.sf, T.pmf))
    return out


def compare(kind: str, alpha, fast: tuple, precise, precision: int) -> CrossCheck:
    """Check a fast design against a precise one (see the module policy)."""
    from .mpnum import dec

    pd = (precise.c1, precise.gamma1, precise.c2, precise.gamma2)
    dist = phi_distance(kind, fast, pd)
    with mp.workdps(precise.dps):
        A = dec(alpha)
        fs = sizes_with_tables(kind, fast, precise.tables, precise.dps)
        ferr = float(max(abs(s - A) for s in fs))
        perr = float(max(abs(s - A) for s in precise.sizes))
    ok = dist <= PHI_TOL and ferr <= SIZE_TOL
    reason = ""
    if not ok:
        reason = (f"max |phi difference| {dist:.3e} (tolerance {PHI_TOL:g}), "
                  f"fast-solver size error {ferr:.3e} (tolerance {SIZE_TOL:g})")
    return CrossCheck(ok, dist, ferr, perr, precision, reason)
