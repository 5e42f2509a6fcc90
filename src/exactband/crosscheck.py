"""Compare two designs as test functions; the verification policy.

Two designs are the same test when their rejection probabilities phi(y) agree
at every point of the support.  Tuples (c1, gamma1, c2, gamma2) are never
compared directly: (c, gamma = 1) and (c +/- 1, gamma = 0) are the same test,
and a gamma within rounding of 0 or 1 may legitimately sit on either side.

Policy: each design gets its own tolerances from an error bound of the fast
path (docs/tolerances.md has the derivation):

* the float laws carry a relative error of at most ``law_eps`` (scipy's
  incomplete gamma/beta functions and the saddle-point masses, measured
  against mpmath, growing with the spread of the law);
* the fast solver's gammas solve a 2x2 linear system (one-sided: one
  equation) whose right-hand sides it forms with absolute errors e1, e2 that
  follow from law_eps and the probabilities involved; the gamma errors are
  then at most |A^-1| (e1, e2), with A the system at the precise cutoffs;
* phi_tol = SAFETY * max gamma error + the fast solver's gamma clip (1e-12),
  size_tol = phi_tol * (largest mass at a cutoff) + 1e-15 * alpha.

Both are capped at PHI_TOL and SIZE_TOL (relative to alpha): a design whose
bound is above the cap is compared at the cap, so that a real mistake (a wrong
cutoff moves phi by a whole gamma, or by 1) can never hide under a tolerance.
One exception: an ill-conditioned gamma (a tail of size ~alpha far larger than
the mass at the cutoff, e.g. a spread-out negative binomial at a tiny alpha)
that no double-precision computation can give to PHI_TOL.  Its phi tolerance is
the double-precision floor of the gamma (``floor_dg``), at most PHI_CEIL; the
size check (relative to alpha) then stays as sharp as before, and a wrong cutoff
still moves phi by a whole gamma or by 1.
"""

from __future__ import annotations

from dataclasses import dataclass

import mpmath as mp

from . import kinds as K
from .rule import phi_distance

__all__ = ["CrossCheck", "compare", "phi_distance", "sizes_with_tables", "tolerances"]

PHI_TOL = 1e-6  # cap of the per-design phi tolerance
SIZE_TOL = 1e-9  # cap of the per-design size tolerance, relative to alpha
SAFETY = 64.0  # unmodelled error: quadrature, iteration stop, rounding of the system
GAMMA_CLIP = 1e-12  # the fast solver accepts gammas in [-1e-12, 1 + 1e-12] and clips
LAW_EPS = 2e-14  # relative error of the float laws for a spread (sd) up to 100
PHI_CEIL = 1e-3  # ceiling of the phi tolerance of an ill-conditioned gamma (floor_dg)
UNIT_ROUNDOFF = 2.0 ** -53


def law_eps(sd: float) -> float:
    """Bound on the relative error of the float cdf/sf/pmf for a law of this spread.

    Measured against mpmath (bench/validate_corners.py, tests/test_range.py):
    <= 1e-14 up to sd = 100, growing about like sd beyond (4e-12 at mean 1e10).
    """
    return LAW_EPS * max(1.0, sd / 100.0)


@dataclass(frozen=True)
class CrossCheck:
    """Outcome of comparing a fast design with a precise one."""

    agree: bool
    max_phi_diff: float  # max over the support of |phi_fast - phi_precise|
    fast_size_error: float  # max |E phi_fast - alpha| at the constraint points (precise)
    precise_size_error: float  # max |E phi_precise - alpha|, at least alpha*10^-precision
    precision: int
    reason: str = ""
    phi_tol: float = PHI_TOL
    size_tol: float = 0.0  # 0: not recorded (older records); see SIZE_TOL
    floor: float = 0.0  # the gamma's double-precision floor (floor_dg); 0: not recorded
    same_cutoffs: bool = True  # the two designs have the same cutoffs (only gammas differ)
    size_floor: float = 0.0  # the size error (relative to alpha) the gamma's floor leaves

    @property
    def beyond_double(self) -> bool:
        """A disagreement in the gammas alone where the floor of any double evaluation is
        above PHI_CEIL, or in the size alone (phi within its tolerance) where the size
        error that floor leaves the fast rule is above SIZE_TOL (a different cutoff is a
        disagreement, never this)."""
        if self.agree or not self.same_cutoffs:
            return False
        return self.floor > PHI_CEIL or (self.max_phi_diff <= self.phi_tol
                                         and self.size_floor > SIZE_TOL)

    def summary(self) -> str:
        state = "agree" if self.agree else "DISAGREE"
        st = f"{self.size_tol:.1e}" if self.size_tol else f"{SIZE_TOL:g} x alpha"
        return (f"solvers {state}: max |phi difference| = {self.max_phi_diff:.2e} "
                f"(tolerance {self.phi_tol:.1e}); fast-solver size error "
                f"{self.fast_size_error:.2e} (tolerance {st}); precise size error "
                f"{self.precise_size_error:.1e}")


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


def input_sensitivity(law, c) -> float:
    """Bound on |d log P / d log x| at cutoff c for the law's inputs x (theta, n, dispersion).

    For these families d log pmf(y) / d log(mean) = (y - mean) mean / variance
    (Poisson, negative binomial; the binomial in p with min(p, 1 - p) instead of p,
    since its fast solver works in the mirror image above 1/2); a size r of the
    negative binomial moves log pmf by the same order. Twice the largest of these
    at the cutoff bounds the tails' sensitivity, plus 1.
    """
    mean, var = float(law.mean), float(law.variance)
    if var <= 0:
        return 1.0
    top = getattr(law, "supmax", None)
    m_eff = min(mean, float(top) - mean) if top is not None else mean
    return 1.0 + 2.0 * abs(float(c) - mean) * m_eff / var


def floor_dg(kappa: float, sigma: float, log_mass: float = 1.0) -> float:
    """Double-precision floor of a gamma's error: kappa u (16 + 16 max(1, |log f|) + 4 sigma).

    kappa is the condition number of the gamma for relative errors of the
    probabilities (dg = eps kappa); the floor is what the fast path's double
    evaluation leaves (docs/tolerances.md sections 7 and 8): the inputs rounded
    to doubles (3 roundings each, moving the tails by sigma times that), a tail
    and a tail/mass ratio to a few units of roundoff (16), and up to two masses
    exp(log f) each with a relative error of at most 8 u max(1, |log f|) (the
    rounding of log f itself is u |log f|: no double computation of exp(log f)
    avoids it). log_mass is the largest |log pmf| at the cutoffs.
    """
    return kappa * UNIT_ROUNDOFF * (16.0 + 16.0 * max(1.0, abs(log_mass)) + 4.0 * sigma)


def _line_path(s, c1, c2, T):
    """The fast solver's gammas came from the window's log-ratio line (``solvers.lineform``):
    s > 1/2, a large mean at the low end (of the mirror image for a binomial above one
    half, as the fast solver works), a log ratio changing by at most LINE_SPAN over the
    window, and a short window or a long one over which log f changes slowly (the same
    tests, on the precise masses).  Returns (s_, y* - c1) of the line, or None."""
    from .solvers.lineform import LINE_MEAN, LINE_SLOPE, LINE_SPAN, MAX_PANELS
    from .solvers.twotailed import WINDOW_SUM

    if not (s > 0.5 and c2 > c1):
        return None
    lo, hi = float(T[0].law.mean), float(T[1].law.mean)
    top = getattr(T[0].law, "supmax", None)
    if top is not None and lo + hi > float(top):
        lo = float(top) - hi
    if lo < LINE_MEAN:
        return None
    t0, t1 = T
    ends = [t.pmf(c) for t in T for c in (c1, c2)]
    if not all(x > 0 for x in ends):  # a window beyond a table's reach: not this path
        return None
    l1 = mp.log(t1.pmf(c1) / t0.pmf(c1))
    sl = (mp.log(t1.pmf(c2) / t0.pmf(c2)) - l1) / (c2 - c1)
    if not sl * (c2 - c1 + 1) <= LINE_SPAN:
        return None
    line = (sl, -l1 / sl)
    if c2 - c1 <= WINDOW_SUM:
        return line
    outer = (t0.pmf(c1 - 1), t0.pmf(c2 + 1))
    if not all(x > 0 for x in outer):
        return None
    tilt = float(max(abs(mp.log(t0.pmf(c1) / outer[0])), abs(mp.log(outer[1] / t0.pmf(c2)))))
    return line if tilt <= LINE_SLOPE and tilt * (c2 - c1 + 1) <= MAX_PANELS else None


def _line_bound(eps, b, c1, c2, T, line) -> tuple:
    """(dg, kappa, dg_star) of the line form (docs/tolerances.md section 9); dg_star is
    the part of dg that the rounding of y* alone gives (b dx), a double-precision floor
    of its own: y* ~ 1.7e12 has an ulp of 2.4e-4, so no double computation places it
    better.

    Rows f1 g1 + f2 g2 = mass - b and u1 f1 g1 + u2 f2 g2 = sum f u (u(y) =
    expm1(s_ (y - y*)) / s_), det = f1 f2 (u2 - u1); the right sides err by e1 = eps M
    and e2 = eps M D + b dx (M = b + f1 + f2 bounds the window's mass, M D bounds
    sum f |u| over it: D = min(max(|u1|, |u2|), (M + Mh) / (M s_)), Mh = b + the
    masses at high at c1 and c2, since |u| <= (f_high / f_low + 1) / s_; dx = 8 u (|mean_hi - mean_lo| + |y* - c1| + (c2 - c1) + 1)
    the error of y* - c1, which moves the second row by b dx).  The line (s_, y* - c1)
    is read from the precise tables' mass ratios at c1 and c2.
    """
    t0, t1 = T
    sl, x1 = line
    f1, f2 = float(t0.pmf(c1)), float(t0.pmf(c2))
    u1 = float(mp.expm1(-sl * x1) / sl)
    u2 = float(mp.expm1(sl * (c2 - c1 - x1)) / sl)
    M = b + f1 + f2
    Mh = b + float(t1.pmf(c1) + t1.pmf(c2))  # bounds the window's mass at high
    # sum over the window of f |u| <= M max|u|, and (|u| <= (f_high/f_low + 1) / s_)
    # <= (M + Mh) / s_: the second is the smaller once the log ratio changes by
    # more than ~2 over the window (a wide band)
    D = min(max(abs(u1), abs(u2)), (M + Mh) / (M * float(sl)))
    dx = 8.0 * UNIT_ROUNDOFF * (abs(float(t1.law.mean - t0.law.mean)) + abs(float(x1))
                                + (c2 - c1) + 1.0)
    den = u2 - u1
    if not (f1 > 0 and f2 > 0 and den > 0):
        return 1.0, 1.0 / UNIT_ROUNDOFF, 0.0

    def bound(e1, e2):
        return max((abs(u2) * e1 + e2) / (f1 * den), (abs(u1) * e1 + e2) / (f2 * den))

    return bound(eps * M, eps * M * D + b * dx), bound(M, M * D), bound(0.0, b * dx)


def _tolerances(kind: str, alpha, precise) -> tuple:
    """(phi_tol, size_tol, floor): tolerances and the gamma's double-precision floor."""
    T = precise.tables
    sd = max(float(mp.sqrt(t.law.variance)) for t in T)
    eps = law_eps(sd) + max(getattr(t.law, "float_extra_eps", 0.0) for t in T)
    a = float(alpha)
    c1, c2 = precise.c1, precise.c2
    k = K.as_kind(kind)
    star = 0.0  # the line form's y* rounding, part of the floor (``_line_bound``)
    with mp.workdps(precise.dps):
        if k.one_sided:
            c = c2 if k.uses_c2 else c1
            f = float(T[0].pmf(c))
            dg = eps * (2.0 * min(a, 1.0 - a) + f) / f if f > 0 else 1.0
            kappa = dg / eps
            fmax = f
        else:
            s = 1.0 - a if k.rejects_inside else a
            t0 = T[0]
            f1, f2 = float(t0.pmf(c1)), float(t0.pmf(c2))
            if k.moment_condition:
                mu = float(t0.law.mean)
                d1, d2 = (c1 - mu) * f1, (c2 - mu) * f2
                e2 = eps * (abs(c1 - mu) + abs(c2 - mu) + 1.0) * (s + f1 + f2)
            else:
                th = T[1]
                d1 = float(th.pmf(c1) - t0.pmf(c1))
                d2 = float(th.pmf(c2) - t0.pmf(c2))
                dF = float(abs(th.cdf(c1 - 1) - t0.cdf(c1 - 1)))
                dS = float(abs(th.sf(c2) - t0.sf(c2)))
                if k.rejects_inside:
                    dF = float(abs(th.cdf(c2 - 1) - th.cdf(c1) - t0.cdf(c2 - 1) + t0.cdf(c1)))
                    dS = 0.0
                e2 = 2.0 * eps * (dF + dS + abs(d1) + abs(d2))
            e1 = eps * (s + f1 + f2)
            det = abs(f1 * d2 - f2 * d1)

            def bound(e1, e2):
                if det > 0:
                    return max((abs(d2) * e1 + f2 * e2) / det, (abs(d1) * e1 + f1 * e2) / det)
                return 1.0

            dg = bound(e1, e2)
            # the floor's condition number: the right sides relative to the size itself
            # (an equivalence design is refined from its window's masses, not 1 - alpha)
            kappa = bound(min(a, 1.0 - a) + f1 + f2, e2 / eps) if eps > 0 else 0.0
            line = None if k.moment_condition else _line_path(s, c1, c2, T)
            if line is not None:
                dg, kappa, star = _line_bound(eps, min(a, 1.0 - a), c1, c2, T, line)
            fmax = max(float(t.pmf(c1) + t.pmf(c2)) for t in T)
        cuts = [c for c in (c1, c2) if c is not None]
        sigma = max(input_sensitivity(t.law, c) for t in T for c in cuts)
        masses = [t.pmf(c) for t in T for c in cuts]
        log_mass = max((abs(float(mp.log(x))) for x in masses if x > 0), default=1.0)
    phi_tol = min(PHI_TOL, SAFETY * dg + GAMMA_CLIP)
    floor = floor_dg(kappa, sigma, log_mass) + star
    if floor > PHI_TOL:  # no double computation reaches PHI_TOL (module doc)
        phi_tol = min(PHI_CEIL, floor)
    size_tol = min(SIZE_TOL * a, phi_tol * fmax + 1e-15 * a)
    # the size error the gamma's floor leaves the fast rule, relative to alpha: above
    # SIZE_TOL no double computation can meet the size check (CrossCheck.beyond_double)
    size_floor = floor * fmax / a if a > 0 else 0.0
    return phi_tol, size_tol, floor, size_floor


def tolerances(kind: str, alpha, precise) -> tuple:
    """(phi_tol, size_tol) for one design from the fast path's error bound (module doc)."""
    return _tolerances(kind, alpha, precise)[:2]


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
        # Its last digits depend on which cached probability tables the precise
        # solver reused (their windows differ far below the working precision), so
        # it is reported as the bound it is held to: at most alpha * 10^-precision.
        # That keeps table sets byte-identical whatever the worker count or resume.
        floor = float(A * mp.mpf(10) ** (-int(precision)))
        if perr <= floor:
            perr = floor
    phi_tol, size_tol, floor, size_floor = _tolerances(kind, alpha, precise)
    ok = dist <= phi_tol and ferr <= size_tol
    reason = ""
    if not ok:
        reason = (f"max |phi difference| {dist:.3e} (tolerance {phi_tol:.1e}), "
                  f"fast-solver size error {ferr:.3e} (tolerance {size_tol:.1e})")
    same = all((a is None and b is None) or (a is not None and b is not None
                                               and float(a) == float(b))
               for a, b in ((fast[0], pd[0]), (fast[2], pd[2])))
    return CrossCheck(ok, dist, ferr, perr, precision, reason, phi_tol, size_tol, floor, same,
                      size_floor)
