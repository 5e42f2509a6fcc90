"""The written verdict policy: when a printed row is ok, per cell, never per file.

A row is ``ok`` only when all three hold:

1. its cutoffs are exactly the optimal cutoffs (compared as test functions, so
   "c with gamma 1" equals the neighbouring cutoff with gamma 0);
2. each gamma agrees with the optimal gamma within the precision the cell
   itself prints, under the column's rounding: rounded to d decimals means
   |printed - exact| <= 0.5 * 10^-d, truncated to d decimals means
   0 <= exact - printed < 10^-d (each widened by GAMMA_FLOOR);
3. the size its own printed numbers attain (the exact decimals they print,
   summed in high precision at every constraint point) is at most alpha,
   allowing SIZE_REL_TOL * alpha.

A row whose printed numbers exceed alpha is a finding whatever else holds.

Tolerances, and why:

* SIZE_REL_TOL = 1e-12 (relative to alpha).  The sizes are exact sums of the
  printed decimals, computed with at least 50 significant digits, so the only
  excess that is not the vendor's doing comes from a program that prints
  doubles: a gamma stored as the double nearest the exact value may sit above
  it by one unit in the 17th digit (about 1e-16 relative), which raises the size
  by far less than 1e-12 * alpha.  Any printed rounding that matters (a
  gamma rounded up by 10^-6 or more at a count with probability above
  1e-6 * alpha) moves the size by more than that.
* GAMMA_FLOOR = 1e-12 (absolute).  Printed digits beyond the 12th decimal say
  nothing about a rule applied with random digits, and programs computing in
  double precision cannot honour them (their gammas carry ~1e-16 errors plus the
  conditioning of the side conditions).

Decimals are counted per cell (``0.1300`` has 4, ``1.5e-3`` has 4).  One
exception: a cell printing a whole number (``0``, ``1``) in a column whose
other cells print decimals is read with the column's most common number of
decimals (writers drop trailing zeros: ``0`` is ``0.0000``); a column printing
no decimals at all (a non-randomised table) is read as exact.  The rounding of
each gamma column is inferred (the mode more cells agree with; "round" on a
tie) unless ``--gamma-rounding round|truncate`` fixes it.
"""

from __future__ import annotations

from collections import Counter
from decimal import Decimal

MODES = ("round", "truncate")
SIZE_REL_TOL = 1e-12
GAMMA_FLOOR = Decimal("1e-12")

POLICY = (
    "Verdict policy: a row is ok only when (1) its cutoffs are exactly the optimal ones, (2) each "
    "gamma agrees with the optimal gamma within the decimals printed in that cell (rounded: within "
    "half a unit of the last printed decimal; truncated: below the exact value by less than one "
    "unit), and (3) the size that the row's own printed numbers attain is at most alpha "
    f"(numerical tolerance {SIZE_REL_TOL:g} of alpha). A row whose printed numbers give a size "
    "above alpha is always a finding. Whether a gamma column is rounded or truncated is inferred "
    "from the file unless --gamma-rounding says it.")


def cell_decimals(decimals: int, is_whole: bool, column_decimals: int | None) -> int | None:
    """Decimals a gamma cell is read with; None means exact (no rounding allowed).

    ``column_decimals`` is the most common count of decimals among the column's cells
    that print decimals (None when no cell does).
    """
    if is_whole and decimals == 0:
        return column_decimals
    return decimals


def column_decimals(counts: Counter) -> int | None:
    """Most common decimals among cells that print some (the larger on a tie)."""
    shown = {d: n for d, n in counts.items() if d > 0}
    if not shown:
        return None
    return max(shown, key=lambda d: (shown[d], d))


def window(mode: str, decimals: int | None) -> tuple[Decimal, Decimal]:
    """Allowed range of (printed - exact) for a gamma printed with ``decimals`` decimals."""
    if decimals is None:
        return -GAMMA_FLOOR, GAMMA_FLOOR
    unit = Decimal(1).scaleb(-decimals)
    if mode == "truncate":
        return -unit - GAMMA_FLOOR, GAMMA_FLOOR
    return -unit / 2 - GAMMA_FLOOR, unit / 2 + GAMMA_FLOOR


def within(mode: str, decimals: int | None, error: Decimal) -> bool:
    lo, hi = window(mode, decimals)
    if mode == "truncate" and decimals is not None:
        return lo < error <= hi  # truncation leaves strictly less than one unit
    return lo <= error <= hi


def infer_mode(cells) -> tuple[str, Counter]:
    """Rounding of one gamma column from (decimals, printed - exact) pairs.

    Returns the mode and how many cells each mode explains.
    """
    fits: Counter = Counter()
    for d, err in cells:
        if d is None:
            continue
        for m in MODES:
            if within(m, d, err):
                fits[m] += 1
    return mode_of(fits), fits


def mode_of(fits: Counter) -> str:
    """The rounding that explains more cells (round on a tie)."""
    return "truncate" if fits["truncate"] > fits["round"] else "round"


def size_ok(excess, alpha) -> bool:
    """The attained size exceeds alpha by at most SIZE_REL_TOL * alpha."""
    return excess is None or excess <= SIZE_REL_TOL * alpha


