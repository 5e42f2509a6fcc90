"""Conversion of user numbers to mpmath values.

A committee that writes alpha = 0.05 or p = 0.3 means the decimal number, not
the nearest binary double.  The precise solver therefore reads every float
through its shortest round-trip decimal representation (``repr``), so 0.05 is
exactly 5/100 at working precision.  Integers are exact.
"""

from __future__ import annotations

import mpmath as mp


def dec(x):
    """mpf of the decimal a float prints as; ints stay exact."""
    if isinstance(x, int):
        return mp.mpf(x)
    return mp.mpf(repr(float(x)))
