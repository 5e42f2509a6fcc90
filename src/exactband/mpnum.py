"""Conversion of user numbers to exact decimals and mpmath values.

A committee that writes alpha = 0.05 or p = 0.99999997 means the decimal number,
not the nearest binary double.  Every float a user gives is therefore read
through its shortest round-trip decimal representation (``repr``): 0.05 is
exactly 5/100.  Complements such as 1 - p or 1 - alpha are formed from that
decimal exactly (``decimal.Decimal`` arithmetic), so a p within 1e-8 of 1 keeps
its full relative accuracy in 1 - p.  Both solvers use these readings; the fast
solver receives the complements as the nearest doubles (``float_complement``).
"""

from __future__ import annotations

from decimal import Decimal

import mpmath as mp


def exact(x) -> Decimal:
    """The decimal a user number prints as (ints exact)."""
    if isinstance(x, int):
        return Decimal(x)
    if isinstance(x, Decimal):
        return x
    return Decimal(repr(float(x)))


_DEC: dict = {}  # (type, x, working precision) -> mpf: a grid reads the same few numbers


def dec(x):
    """mpf of the decimal a float prints as; ints stay exact."""
    key = (type(x), x, mp.mp.prec)
    try:
        return _DEC[key]
    except (KeyError, TypeError):  # TypeError: an unhashable number type
        pass
    v = mp.mpf(x) if isinstance(x, int) else mp.mpf(str(exact(x)))
    if len(_DEC) > 4096:
        _DEC.clear()
    try:
        _DEC[key] = v
    except TypeError:
        pass
    return v


def dec_complement(x):
    """mpf of 1 - x, with x read as its decimal; the subtraction is exact."""
    return mp.mpf(str(1 - exact(x)))


def float_complement(x) -> float:
    """The double nearest to 1 - x (x read as its decimal): relative error 2**-53."""
    return float(1 - exact(x))


def float_complements(xs):
    """float_complement over an array (NaN stays NaN)."""
    import numpy as np

    a = np.asarray(xs, dtype=float)
    out = np.array([float_complement(v) if np.isfinite(v) else np.nan for v in a.ravel()])
    return out.reshape(a.shape)


def frac(x):
    """The exact rational value of the decimal a user number prints as."""
    from fractions import Fraction

    return Fraction(exact(x))
