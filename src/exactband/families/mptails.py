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
    an, ad = a.numerator, a.denominator
    bn, bd = b.numerator, b.denominator
    xn, xd = x.numerator, x.denominator
    abd = ad * bd
    abn = an * bd + bn * ad  # a + b = abn / abd
    top = prec + 96
    tol = prec + 8
    A0, A1 = 0, 1  # A_0, A_1 (a_1 = 1, b_n = 1)
    B0, B1 = 1, 1
    calm = 0
    for n in range(1, MAX_TERMS):
        m = n >> 1
        if n & 1:  # d_{2m+1} = -(a+m)(a+b+m) x / ((a+2m)(a+2m+1))
            N = -(an + m * ad) * (abn + m * abd) * xn * ad
            D = abd * xd * (an + 2 * m * ad) * (an + (2 * m + 1) * ad)
        else:  # d_{2m} = m (b-m) x / ((a+2m-1)(a+2m))
            N = m * (bn - m * bd) * xn * ad * ad
            D = bd * xd * (an + (2 * m - 1) * ad) * (an + 2 * m * ad)
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


def _prec_digits(bits: int) -> int:
    return int(bits * 0.30103) + 1


class NegBinomialTails:
    """P(Y <= c), P(Y > c) and pmf of NB(size r, mean m) at single points (no table).

    r and m are the exact rationals of the decimals the user wrote (n k, n theta).
    """

    def __init__(self, r: Fraction, m: Fraction):
        self.r, self.m = Fraction(r), Fraction(m)
        self.q = self.r / (self.r + self.m)  # exact rational
        self.qc = self.m / (self.r + self.m)
        rf, mf = float(self.r), float(self.m)
        self.mean_f = mf
        self.sd_f = math.sqrt(mf + mf * mf / rf)
        # the fractions take ~sqrt-of-the-parameters terms: cheap while the spread comes
        # from the dispersion (r <= m, variance >= 2 m); a huge r is Poisson-like and its
        # table is short (sd ~ sqrt(m)), so it is tabulated instead
        self.suited = self.r <= self.m
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

    def pmf(self, y: int):
        if y < 0:
            return mp.mpf(0)
        return mp.exp(self.log_pmf(y))

    def tails(self, y: int):
        """(P(Y <= y), P(Y > y)) at the working precision + GUARD_BITS, both relative-accurate."""
        if y < 0:
            return mp.mpf(0), mp.mpf(1)
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

    def _direct(self, y: int, prec: int):
        """(is_cdf, value) of the tail whose fraction converges fast, at prec bits."""
        r, q, qc = self.r, self.q, self.qc
        c1 = y + 1
        self.calls += 1
        with mp.workprec(prec + 10):
            p = self.pmf(c1)
            if q < (r + 1) / (r + c1 + 2):  # cdf = I_q(r, y+1), prefactor pmf(y+1) (y+1)/r
                f, n = beta_cf(r, Fraction(c1), q, prec + 10)
                self.terms += n
                return True, p * c1 * (mp.mpf(r.denominator) / r.numerator) * f
            f, n = beta_cf(Fraction(c1), r, qc, prec + 10)  # sf = I_{1-q}(y+1, r), prefactor pmf(y+1)
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
