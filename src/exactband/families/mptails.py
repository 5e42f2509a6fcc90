"""Tail masses of a discrete law straight from mpmath special functions (no table).

A law too spread out to tabulate (a negative binomial with a small size r = n k
and a large mean) gets its tails at single points:

* ``beta_cf(a, b, x, prec)`` evaluates the continued fraction of the regularised
  incomplete beta function (DLMF 8.17.22),

      I_x(a, b) = x^a (1-x)^b / (a B(a, b)) * 1/(1+ d1/(1+ d2/(1+ ...))),
      d_{2m+1} = -(a+m)(a+b+m) x / ((a+2m)(a+2m+1)),
      d_{2m}   =  m (b-m) x / ((a+2m-1)(a+2m)),

  by the modified Lentz method in mpmath's own binary floats (libmp), always
  on the side where x < (a+1)/(a+b+2), where it converges fast;
* ``NegBinomialTails`` maps the negative binomial NB(size r, mean m) on it:
  P(Y <= c) = I_q(r, c+1), P(Y > c) = I_{1-q}(c+1, r), q = r/(r+m); the
  prefactor of either fraction is a mass of the law (pmf(c+1) (c+1)/r and
  pmf(c+1)), from mpmath's loggamma with the digits its cancellation costs.
  The other tail is the complement, recomputed with more digits when it is
  small, so both keep their relative accuracy.

Error: see docs/tolerances.md, section 6.  Nothing here uses a float routine;
the fast solver's scipy laws are independent of this code.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath as mp
from mpmath import libmp

_RND = libmp.round_nearest
GUARD_BITS = 70  # bits every tail value carries beyond the working precision
MAX_TERMS = 2_000_000  # continued-fraction terms before giving up (never reached in range)


class TailFailure(ArithmeticError):
    """The continued fraction did not converge within MAX_TERMS terms."""


def _beta_step(a: Fraction, b: Fraction, x: Fraction):
    """n -> (N_n, D_n), the partial numerator d_n = N_n / D_n of DLMF 8.17.22 in integers:
    d_{2m+1} = -(a+m)(a+b+m) x / ((a+2m)(a+2m+1)), d_{2m} = m (b-m) x / ((a+2m-1)(a+2m))."""
    an, ad = a.numerator, a.denominator
    bn, bd = b.numerator, b.denominator
    xn, xd = x.numerator, x.denominator
    abd = ad * bd
    abn = an * bd + bn * ad  # a + b = abn / abd

    def step(n):
        m = n >> 1
        if n & 1:
            return (-(an + m * ad) * (abn + m * abd) * xn * ad,
                    abd * xd * (an + 2 * m * ad) * (an + (2 * m + 1) * ad))
        return (m * (bn - m * bd) * xn * ad * ad,
                bd * xd * (an + (2 * m - 1) * ad) * (an + 2 * m * ad))

    return step


def beta_cf(a: Fraction, b: Fraction, x: Fraction, prec: int):
    """(value, terms) of 1/(1+ d1/(1+ d2/(1+ ...))) of DLMF 8.17.22 at prec bits.

    a, b, x are exact rationals, so every partial numerator d_n = N_n / D_n is
    a ratio of exact integers.  The convergents A_n / B_n follow the three-term
    recurrence A_n = A_{n-1} + d_n A_{n-2} (B alike), multiplied through by D_n
    (scaling the kept pair by D_n too leaves every ratio unchanged): integer
    arithmetic, with the four numbers shifted right together whenever they
    exceed prec + 96 bits (a common factor, relative error 2**-(prec + 90) per
    shift).  Stops when two successive convergents agree to 2**-(prec + 8)
    relative, twice in a row.
    """
    step = _beta_step(a, b, x)
    top = prec + 96
    tol = prec + 8
    A0, A1 = 0, 1  # A_0, A_1 (a_1 = 1, b_n = 1)
    B0, B1 = 1, 1
    calm = 0
    for n in range(1, MAX_TERMS):
        N, D = step(n)
        A0, A1 = D * A1, D * A1 + N * A0
        B0, B1 = D * B1, D * B1 + N * B0
        sh = max(abs(A1).bit_length(), abs(B1).bit_length()) - top
        if sh > 0:
            A0 >>= sh
            A1 >>= sh
            B0 >>= sh
            B1 >>= sh
        # |A1/B1 - A0/B0| <= 2**-tol |A1/B1|  <=>  |A1 B0 - A0 B1| 2**tol <= |A1 B0|
        if B0 and B1 and A1 and (abs(A1 * B0 - A0 * B1) << tol) <= abs(A1 * B0):
            calm += 1
            if calm >= 2:
                return mp.make_mpf(libmp.mpf_div(libmp.from_int(A1), libmp.from_int(B1),
                                                 prec, _RND)), n
        else:
            calm = 0
    raise TailFailure(f"incomplete beta continued fraction: no convergence in {MAX_TERMS:,} terms")


CF_BLOCK = 8  # terms between two convergence tests of ``_cf``


def _cf(step, prec: int):
    """(value, terms) of 1/(1+ d1/(1+ d2/(1+ ...))) with d_n = N_n / D_n = step(n), at prec bits.

    The integer recurrence of ``beta_cf`` (its doc), for any fraction whose
    partial numerators are exact rationals, with the rescaling and the stop test
    done every CF_BLOCK terms (half the cost per term): it stops when the last
    two convergents agree to 2**-(prec + 8) relative at two tests in a row.  A
    zero numerator ends the fraction (the value is then exact up to the roundings).
    """
    top = prec + 96
    tol = prec + 8
    A0, A1 = 0, 1
    B0, B1 = 1, 1
    calm = 0
    n = 0
    N = 1
    while n < MAX_TERMS:
        for _ in range(CF_BLOCK):
            n += 1
            N, D = step(n)
            A0, A1 = D * A1, D * A1 + N * A0
            B0, B1 = D * B1, D * B1 + N * B0
            if N == 0:
                break
        sh = max(A1.bit_length(), B1.bit_length()) - top
        if sh > 0:
            A0 >>= sh
            A1 >>= sh
            B0 >>= sh
            B1 >>= sh
        if N == 0 or (B0 and B1 and A1 and (abs(A1 * B0 - A0 * B1) << tol) <= abs(A1 * B0)):
            calm += 1
            if calm >= 2 or N == 0:
                return mp.make_mpf(libmp.mpf_div(libmp.from_int(A1), libmp.from_int(B1),
                                                 prec, _RND)), n
        else:
            calm = 0
    raise TailFailure(f"continued fraction: no convergence in {MAX_TERMS:,} terms")


def beta_cf_blocked(a: Fraction, b: Fraction, x: Fraction, prec: int):
    """``beta_cf``'s fraction (DLMF 8.17.22) through ``_cf`` (tests every CF_BLOCK terms).

    Used by the laws read from tails only beyond the table limits (binomial, the
    Poisson-like negative binomial); ``beta_cf`` itself stays as it is for the
    negative binomial with r <= m, whose designs it already computes.
    """
    return _cf(_beta_step(a, b, x), prec)


def gamma_upper_cf(a: int, x: Fraction, prec: int):
    """(value, terms) with Q(a, x) = x^a e^-x / Gamma(a) / (x + 1 - a) * value, for x >= a.

    Legendre's fraction (DLMF 8.9.3 in its even form)
    Gamma(a, x) = x^a e^-x / (x+1-a - 1(1-a)/(x+3-a - 2(2-a)/(x+5-a - ...))), with
    b_n = x + 2n + 1 - a and a_n = n (a - n), brought to the form 1/(1 + d1/(1 + ...))
    by d_n = a_n / (b_{n-1} b_n).  x = X / W exactly; every b_n > 0 when x >= a, and an
    integer a ends the fraction at n = a (d_a = 0).
    """
    X, W = x.numerator, x.denominator
    W2 = W * W

    def step(n):
        return n * (a - n) * W2, (X + (2 * n - 1 - a) * W) * (X + (2 * n + 1 - a) * W)

    return _cf(step, prec)


def gamma_lower_cf(a: int, x: Fraction, prec: int):
    """(value, terms) with P(a, x) = x^a e^-x / Gamma(a + 1) * value, for x < a.

    The limit b -> infinity (b x fixed) of the incomplete beta fraction of
    ``beta_cf`` (DLMF 8.17.22; the fraction of DLMF 8.9.2):
    d_{2m+1} = -(a+m) x / ((a+2m)(a+2m+1)),  d_{2m} = m x / ((a+2m-1)(a+2m)).
    """
    X, W = x.numerator, x.denominator

    def step(n):
        m = n >> 1
        if n & 1:
            return -(a + m) * X, W * (a + 2 * m) * (a + 2 * m + 1)
        return m * X, W * (a + 2 * m - 1) * (a + 2 * m)

    return _cf(step, prec)


def _prec_digits(bits: int) -> int:
    return int(bits * 0.30103) + 1


def _mpq(f: Fraction):
    """The rational f at the working precision (one rounding)."""
    return mp.mpf(f.numerator) / f.denominator


def cf_terms_estimate(sd: float, z: float, prec: int) -> float:
    """Continued-fraction terms one tail evaluation takes z sd from the mean (measured).

    The fractions of this module converge fast in the tails and slowly at the
    centre: measured at 290 bits (Poisson means 1e10-1e11, binomial n 1e8-1e10),
    about 16,600 / z^1.7 terms z sd out and at most about 1.1 sd near the mean,
    both growing in proportion to the precision (docs/tolerances.md, section 6).
    """
    z = abs(z)
    far = 16_600.0 / z ** 1.7 if z > 0 else math.inf
    return min(1.1 * sd, far) * prec / 290.0 + 50.0


class _PointTails:
    """P(Y <= c), P(Y > c) and pmf of a discrete law at single points (no table).

    A subclass gives ``log_pmf(y)``, ``_direct(y, prec)`` (the tail whose
    fraction converges fast, and which one it is), ``mean_f``, ``sd_f``,
    ``top`` (the largest support point, None if unbounded) and the two moment
    identities.
    """

    top = None
    suited = False  # read from tails as soon as a table would pass TAIL_TERMS terms
    cf_sd = None  # the spread setting a fraction's cost at the centre, if not sd_f

    def pmf(self, y: int):
        if y < 0 or (self.top is not None and y > self.top):
            return mp.mpf(0)
        return mp.exp(self.log_pmf(y))

    def tails(self, y: int):
        """(P(Y <= y), P(Y > y)) at the working precision + GUARD_BITS, both relative-accurate."""
        if y < 0:
            return mp.mpf(0), mp.mpf(1)
        if self.top is not None and y >= self.top:
            return mp.mpf(1), mp.mpf(0)
        prec = mp.mp.prec + GUARD_BITS
        extra = 0
        while True:
            with mp.workprec(prec + extra):
                direct_cdf, v = self._direct(y, prec + extra)
                other = 1 - v
                # 1 - v loses -log2(other) bits: redo with that many more
                lost = -int(mp.floor(mp.log(other, 2))) if other > 0 else prec
                if lost <= 8 or extra >= lost + 8:
                    break
                extra = lost + 8
        with mp.workprec(prec):
            v, other = +v, +other
        return (v, other) if direct_cdf else (other, v)


class NegBinomialTails(_PointTails):
    """P(Y <= c), P(Y > c) and pmf of NB(size r, mean m) at single points (no table).

    r and m are the exact rationals of the decimals the user wrote (n k, n theta).
    """

    def __init__(self, r: Fraction, m: Fraction):
        self.r, self.m = Fraction(r), Fraction(m)
        self.q = self.r / (self.r + self.m)  # exact rational
        self.qc = self.m / (self.r + self.m)
        rf, mf = float(self.r), float(self.m)
        self.mean_f, self.r_f = mf, rf
        self.sd_f = math.sqrt(mf + mf * mf / rf)
        # the fractions take ~sqrt-of-the-parameters terms: cheap while the spread comes
        # from the dispersion (r <= m, variance >= 2 m); a huge r is Poisson-like and its
        # table is short (sd ~ sqrt(m)), so it is tabulated up to the table limits first
        self.suited = self.r <= self.m
        # ... yet near the centre they take about 50 r^(1/3) terms at 297 bits (50 digits:
        # measured within 0.3 sd of the mean: 5,300 at r = 1e6, 21,700 at 1e8, 80,000 at
        # 1e10, 202,000 at 1.6e11), which the cost check reads as a spread cf_sd in
        # cf_terms_estimate's 1.1 cf_sd prec / 290 at the centre
        self.cf_sd = min(self.sd_f, 50.0 * rf ** (1.0 / 3.0)) if self.suited else None
        self.terms = 0  # continued-fraction terms spent (diagnostics)
        self.calls = 0

    def log_pmf(self, y: int):
        """log pmf(y) at the working precision, with the digits the loggammas cancel."""
        r, m = self.r, self.m
        big = abs(float(y) + float(r)) * (math.log(float(y) + float(r) + 2.0) + 1.0) \
            + float(r) * (abs(math.log(float(r))) + abs(math.log(float(self.q)))) + 10.0
        extra = int(math.log10(big)) + 6
        with mp.workdps(mp.mp.dps + extra):
            R = mp.mpf(r.numerator) / r.denominator
            Q = mp.mpf(m.numerator) * r.denominator / (mp.mpf(m.denominator) * r.numerator)  # m/r
            out = (mp.loggamma(y + R) - mp.loggamma(R) - mp.loggamma(y + 1)
                   - R * mp.log1p(Q) - y * mp.log1p(1 / Q))
        return +out

    def _direct(self, y: int, prec: int):
        """(is_cdf, value) of the tail whose fraction converges fast, at prec bits."""
        r, q, qc = self.r, self.q, self.qc
        c1 = y + 1
        self.calls += 1
        with mp.workprec(prec + 10):
            p = self.pmf(c1)
            cf = beta_cf if self.suited else beta_cf_blocked
            if q < (r + 1) / (r + c1 + 2):  # cdf = I_q(r, y+1), prefactor pmf(y+1) (y+1)/r
                f, n = cf(r, Fraction(c1), q, prec + 10)
                self.terms += n
                return True, p * c1 * (mp.mpf(r.denominator) / r.numerator) * f
            f, n = cf(Fraction(c1), r, qc, prec + 10)  # sf = I_{1-q}(y+1, r), prefactor pmf(y+1)
            self.terms += n
            return False, p * f

    def moment_above(self, y: int, sf_before, pmf_y):
        """E[Y; Y > y] = m P(Y > y-1) + (m/r) y pmf(y) (from y pmf(y) = m pmf_{r+1}(y-1))."""
        m = mp.mpf(self.m.numerator) / self.m.denominator
        mr = mp.mpf((self.m / self.r).numerator) / (self.m / self.r).denominator
        return m * sf_before + mr * y * pmf_y

    def moment_below(self, y: int, cdf_before, pmf_y):
        """E[Y; Y <= y] = m P(Y <= y-1) - (m/r) y pmf(y) (same identity)."""
        m = mp.mpf(self.m.numerator) / self.m.denominator
        mr = mp.mpf((self.m / self.r).numerator) / (self.m / self.r).denominator
        return m * cdf_before - mr * y * pmf_y


class PoissonTails(_PointTails):
    """P(Y <= c), P(Y > c) and pmf of Poisson(mu) at single points (no table).

    P(Y <= c) = Q(c+1, mu) (regularised upper incomplete gamma) and
    P(Y > c) = P(c+1, mu): the upper one by Legendre's fraction when mu >= c+1,
    the lower one by its own fraction otherwise (``gamma_upper_cf``,
    ``gamma_lower_cf``); the prefactor x^a e^-x / Gamma(a) with a = c+1, x = mu is
    (c+1) pmf(c+1), and x^a e^-x / Gamma(a+1) is pmf(c+1).  mu is the exact
    rational of the decimals the user wrote (n theta).
    """

    def __init__(self, mu: Fraction):
        self.mu = Fraction(mu)
        self.mean_f = float(self.mu)
        self.sd_f = math.sqrt(self.mean_f)
        self.terms = 0
        self.calls = 0

    def log_pmf(self, y: int):
        """y log mu - mu - log y!, with the digits the three terms cancel."""
        big = float(y) * (abs(math.log(self.mean_f)) + math.log(float(y) + 2.0) + 1.0) \
            + self.mean_f + 10.0
        extra = int(math.log10(big)) + 6
        with mp.workdps(mp.mp.dps + extra):
            mu = _mpq(self.mu)
            out = y * mp.log(mu) - mu - mp.loggamma(y + 1)
        return +out

    def _direct(self, y: int, prec: int):
        a = y + 1
        self.calls += 1
        with mp.workprec(prec + 10):
            p = self.pmf(a)
            if self.mu >= a:  # cdf = Q(a, mu) = a pmf(a) / (mu + 1 - a) * fraction
                f, n = gamma_upper_cf(a, self.mu, prec + 10)
                self.terms += n
                return True, p * a / _mpq(self.mu + 1 - a) * f
            f, n = gamma_lower_cf(a, self.mu, prec + 10)  # sf = P(a, mu) = pmf(a) * fraction
            self.terms += n
            return False, p * f

    def moment_above(self, y: int, sf_before, pmf_y):
        """E[Y; Y > y] = mu P(Y > y-1) (from y pmf(y) = mu pmf(y-1))."""
        return _mpq(self.mu) * sf_before

    def moment_below(self, y: int, cdf_before, pmf_y):
        """E[Y; Y <= y] = mu P(Y <= y-1) (same identity)."""
        return _mpq(self.mu) * cdf_before


class BinomialTails(_PointTails):
    """P(Y <= c), P(Y > c) and pmf of Binomial(n, p) at single points (no table).

    P(Y <= c) = I_{1-p}(n-c, c+1) and P(Y > c) = I_p(c+1, n-c) (DLMF 8.17.5), the
    fraction of ``beta_cf`` on its fast side; prefactors pmf(c+1) (c+1)(1-p)/(n-c)
    and pmf(c+1) (1-p).  p and 1 - p are exact rationals of the decimal the user
    wrote.
    """

    def __init__(self, n: int, p: Fraction):
        self.n = int(n)
        self.p = Fraction(p)
        self.q = 1 - self.p
        self.top = self.n
        self.mean_f = float(self.n * self.p)
        self.sd_f = math.sqrt(float(self.n * self.p * self.q))
        self.terms = 0
        self.calls = 0

    def log_pmf(self, y: int):
        """log C(n, y) + y log p + (n-y) log(1-p), with the digits the loggammas cancel."""
        n = self.n
        big = float(n) * (math.log(float(n) + 2.0) + abs(math.log(float(self.p)))
                          + abs(math.log(float(self.q))) + 1.0) + 10.0
        extra = int(math.log10(big)) + 6
        with mp.workdps(mp.mp.dps + extra):
            out = (mp.loggamma(n + 1) - mp.loggamma(y + 1) - mp.loggamma(n - y + 1)
                   + y * mp.log(_mpq(self.p)) + (n - y) * mp.log(_mpq(self.q)))
        return +out

    def _direct(self, y: int, prec: int):
        n, p, q = self.n, self.p, self.q
        c1 = y + 1
        a, b = Fraction(n - y), Fraction(c1)
        self.calls += 1
        with mp.workprec(prec + 10):
            pm = self.pmf(c1)
            if q < (a + 1) / (a + b + 2):  # cdf = I_q(n-y, y+1)
                f, k = beta_cf_blocked(a, b, q, prec + 10)
                self.terms += k
                return True, pm * c1 * _mpq(q / (n - y)) * f
            f, k = beta_cf_blocked(b, a, p, prec + 10)  # sf = I_p(y+1, n-y)
            self.terms += k
            return False, pm * _mpq(q) * f

    def moment_above(self, y: int, sf_before, pmf_y):
        """E[Y; Y > y] = n p P(Y > y-1) - p y pmf(y) (from y pmf(y) = n p pmf_{n-1}(y-1))."""
        return _mpq(self.n * self.p) * sf_before - _mpq(self.p) * y * pmf_y

    def moment_below(self, y: int, cdf_before, pmf_y):
        """E[Y; Y <= y] = n p P(Y <= y-1) + p y pmf(y) (same identity)."""
        return _mpq(self.n * self.p) * cdf_before + _mpq(self.p) * y * pmf_y
