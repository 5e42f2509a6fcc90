"""Derive the library-based reference files of validation/ (run: python validation/derive.py).

Two sources, each independent of exactband's solvers:

* python_fractions_binomial.toml: exact rational arithmetic with the Python
  standard library (fractions.Fraction, math.comb).  For small n every cutoff
  pair is tried and the two side conditions are solved exactly; the pair whose
  gammas lie in [0, 1) is the optimal test (Lehmann & Romano, Testing
  Statistical Hypotheses, 3rd ed., sections 3.4, 3.7, 4.2 define the conditions).
* scipy_stats_one_sided.toml: one-sided UMP tests from scipy.stats in double
  precision: upper c2 = min{c : sf(c) <= alpha}, gamma2 = (alpha - sf(c2)) / pmf(c2);
  lower c1 = min{c : cdf(c) > alpha}, gamma1 = (alpha - cdf(c1 - 1)) / pmf(c1); for the
  binomial the outright rejections are also checked against
  scipy.stats.binomtest(y, n, p, alternative=...).pvalue <= alpha.

The tests re-run these functions and compare with the stored numbers.
"""

from __future__ import annotations

import math
from fractions import Fraction
from pathlib import Path

HERE = Path(__file__).resolve().parent


# -- exact binomial designs ---------------------------------------------------------
def _pmf(n, p: Fraction):
    q = 1 - p
    return [math.comb(n, y) * p**y * q ** (n - y) for y in range(n + 1)]


def _tails(f):
    cdf, s = [], Fraction(0)
    for v in f:
        s += v
        cdf.append(s)
    return cdf


def _E(kind, f, cdf, c1, g1, c2, g2, weight=None):
    """E phi (or E[Y phi] with weight=y) for one law, exactly."""
    w = weight or (lambda y: 1)
    n = len(f) - 1
    total = Fraction(0)
    for y in range(n + 1):
        if kind in ("band", "point"):
            ph = 1 if (y < c1 or y > c2) else 0
            ph += (g1 if y == c1 else 0) + (g2 if y == c2 else 0)
        else:  # equivalence
            ph = 1 if c1 < y < c2 else 0
            ph += (g1 if y == c1 else 0) + (g2 if y == c2 else 0)
        if ph:
            total += ph * w(y) * f[y]
    return total


def exact_two_sided(kind, n, alpha: Fraction, a: Fraction, b: Fraction):
    """(c1, g1, c2, g2) of the band / equivalence (a, b = low, high) or point (a = b) design."""
    fa, fb = _pmf(n, a), _pmf(n, b)
    ca, cb = _tails(fa), _tails(fb)
    for c1 in range(n + 1):
        for c2 in range(c1 + 1, n + 1):
            if kind == "point":
                rows = [(fa[c1], fa[c2], alpha - _E("band", fa, ca, c1, 0, c2, 0)),
                        (c1 * fa[c1], c2 * fa[c2],
                         alpha * n * a - _E("band", fa, ca, c1, 0, c2, 0, weight=lambda y: y))]
            else:
                k = "band" if kind == "band" else "equivalence"
                rows = [(fa[c1], fa[c2], alpha - _E(k, fa, ca, c1, 0, c2, 0)),
                        (fb[c1], fb[c2], alpha - _E(k, fb, cb, c1, 0, c2, 0))]
            (p1, p2, r1), (q1, q2, r2) = rows
            det = p1 * q2 - p2 * q1
            if det == 0:
                continue
            g1 = (r1 * q2 - p2 * r2) / det
            g2 = (p1 * r2 - q1 * r1) / det
            if 0 <= g1 < 1 and 0 <= g2 < 1:
                return c1, g1, c2, g2
    raise ValueError("no exact solution found")


def exact_one_sided(kind, n, alpha: Fraction, v: Fraction):
    f = _pmf(n, v)
    cdf = _tails(f)
    if kind == "upper":
        for c in range(n + 1):
            sf = 1 - cdf[c]
            if sf <= alpha:
                return None, None, c, (alpha - sf) / f[c]
    else:
        for c in range(n + 1):
            if cdf[c] > alpha:
                below = cdf[c - 1] if c > 0 else Fraction(0)
                return c, (alpha - below) / f[c], None, None
    raise ValueError("no exact solution found")


FRACTION_CASES = [  # (kind, n, alpha, low-or-value, high): small n, exact decimals
    ("upper", 20, "0.05", "0.5", None), ("upper", 30, "0.01", "0.1", None),
    ("lower", 25, "0.05", "0.3", None), ("lower", 40, "0.1", "0.05", None),
    ("point", 20, "0.05", "0.5", None), ("point", 30, "0.05", "0.2", None),
    ("point", 15, "0.1", "0.35", None),
    ("band", 30, "0.05", "0.2", "0.3"), ("band", 25, "0.1", "0.4", "0.45"),
    ("band", 40, "0.01", "0.1", "0.25"),
    ("equivalence", 40, "0.05", "0.3", "0.7"), ("equivalence", 30, "0.1", "0.2", "0.5"),
]


def _dec(fr: Fraction, digits=30) -> str:
    from decimal import Decimal, localcontext

    with localcontext() as ctx:
        ctx.prec = digits
        return str(Decimal(fr.numerator) / Decimal(fr.denominator))


def fraction_case(kind, n, alpha, a, b):
    A, P = Fraction(alpha), Fraction(a)
    if kind in ("upper", "lower"):
        c1, g1, c2, g2 = exact_one_sided(kind, n, A, P)
    else:
        c1, g1, c2, g2 = exact_two_sided(kind, n, A, P, Fraction(b) if b else P)
    case = {"family": "binomial", "kind": kind, "n": n, "alpha": alpha}
    case.update({"value": a} if b is None else {"low": a, "high": b})
    for name, c, g in (("1", c1, g1), ("2", c2, g2)):
        if c is not None:
            case[f"c{name}"] = c
            case[f"gamma{name}"] = _dec(g)
            case[f"gamma{name}_exact"] = f"{g.numerator}/{g.denominator}"
    return case


# -- scipy.stats one-sided designs ------------------------------------------------------
SCIPY_CASES = [  # (family, kind, n, alpha, value, dispersion)
    ("poisson", "upper", 25, 0.05, 2.5, None), ("poisson", "upper", 10, 0.001, 0.7, None),
    ("poisson", "lower", 40, 0.05, 1.5, None), ("poisson", "lower", 3.5, 0.01, 4.0, None),
    ("binomial", "upper", 80, 0.05, 0.05, None), ("binomial", "upper", 500, 0.01, 0.3, None),
    ("binomial", "lower", 200, 0.05, 0.1, None), ("binomial", "lower", 60, 0.001, 0.5, None),
    ("negative-binomial", "upper", 25, 0.05, 2.0, 4.0),
    ("negative-binomial", "lower", 30, 0.01, 1.2, 0.8),
]


def scipy_law(family, n, theta, k):
    from scipy import stats

    if family == "poisson":
        return stats.poisson(n * theta)
    if family == "binomial":
        return stats.binom(n, theta)
    r = n * k
    return stats.nbinom(r, r / (r + n * theta))


def scipy_case(family, kind, n, alpha, value, k):
    d = scipy_law(family, n, value, k)
    case = {"family": family, "kind": kind, "n": n, "alpha": alpha, "value": value}
    if k is not None:
        case["dispersion"] = k
    if kind == "upper":
        c = 0
        while d.sf(c) > alpha:
            c += 1
        case["c2"], case["gamma2"] = c, float((alpha - d.sf(c)) / d.pmf(c))
    else:
        c = 0
        while d.cdf(c) <= alpha:
            c += 1
        below = d.cdf(c - 1) if c > 0 else 0.0
        case["c1"], case["gamma1"] = c, float((alpha - below) / d.pmf(c))
    return case


def binomtest_first_rejection(kind, n, p, alpha):
    """Smallest (upper) / largest (lower) count rejected outright by scipy.stats.binomtest."""
    from scipy.stats import binomtest

    alt = "greater" if kind == "upper" else "less"
    ys = range(n + 1) if kind == "upper" else range(n, -1, -1)
    for y in ys:
        if binomtest(y, n, p, alternative=alt).pvalue <= alpha:
            return y
    return None


# -- writing ------------------------------------------------------------------------
def _toml_value(v):
    if isinstance(v, str):
        return f'"{v}"'
    if isinstance(v, float):
        return repr(v)
    return str(v)


def _write(path: Path, header: str, cases: list):
    lines = [header.rstrip(), ""]
    for c in cases:
        lines.append("[[case]]")
        lines.extend(f"{k} = {_toml_value(v)}" for k, v in c.items())
        lines.append("")
    path.write_text("\n".join(lines), encoding="utf-8")


def main():
    import platform

    import scipy

    frac = [fraction_case(*c) for c in FRACTION_CASES]
    _write(HERE / "python_fractions_binomial.toml", f'''\
source = "library: Python {platform.python_version()} standard library, fractions.Fraction and math.comb (exact rational arithmetic)"
call = "validation/derive.py exact_one_sided / exact_two_sided: every cutoff pair tried, side conditions solved exactly"
conditions = "Lehmann and Romano, Testing Statistical Hypotheses, 3rd ed., Springer 2005, sections 3.4, 3.7, 4.2 (the side conditions, not values)"
gamma_tolerance = 1e-25  # gammas below are exact fractions, printed to 30 significant digits
''', frac)
    sc = [scipy_case(*c) for c in SCIPY_CASES]
    _write(HERE / "scipy_stats_one_sided.toml", f'''\
source = "library: scipy {scipy.__version__}, scipy.stats.poisson / binom / nbinom (double precision)"
call = "upper: c2 = min c with sf(c) <= alpha, gamma2 = (alpha - sf(c2)) / pmf(c2); lower: c1 = min c with cdf(c) > alpha, gamma1 = (alpha - cdf(c1 - 1)) / pmf(c1); binomial outright rejections also checked with scipy.stats.binomtest(y, n, p, alternative='greater' or 'less').pvalue <= alpha"
gamma_tolerance = 1e-9  # double precision tails and masses
''', sc)


if __name__ == "__main__":
    main()
