"""CSV writers: NAME.csv (machine-readable, full precision) and NAME.print.csv.

Both are UTF-8, RFC 4180 (comma separated, CRLF line ends, quotes only where
needed).  They format numbers the build computed; they compute nothing.
"""

from __future__ import annotations

import csv
import io

from ..fileio import safe_cell_text
from .layout import print_rows
from .tablewords import plain

# The contract of NAME.csv: these columns first, in this order (more may follow).
CONTRACT = ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion", "c1", "gamma1",
            "c2", "gamma2", "size_low", "size_high", "conservative_size_low",
            "conservative_size_high", "threshold1", "threshold2")
EXTRA = ("random_digits", "digit_rule_size_low", "digit_rule_size_high", "gamma1_decimal",
         "gamma2_decimal", "verified_precision", "max_phi_difference")
COLUMNS = CONTRACT + EXTRA
# A family with real cutoffs (no randomisation: random_digits and the digit-rule sizes stay
# empty) adds the cutoffs as printed and the sizes the printed cutoffs attain.
REAL_EXTRA = ("cutoff_decimals", "printed_c1", "printed_c2", "printed_rule_size_low",
              "printed_rule_size_high")


def columns_for(tset) -> tuple:
    """The header of NAME.csv (and of the spreadsheet's Data sheet) for this set."""
    return COLUMNS + REAL_EXTRA if tset.spec.cutoff_decimals is not None else COLUMNS


def _full(x) -> str:
    """Full double precision (repr) for computed floats; '' for None."""
    return "" if x is None else repr(float(x))


def _int(x) -> str:
    return "" if x is None else str(int(x))


def _cut(x) -> str:
    """A cutoff: a whole number as digits, a real one (continuous family) in full (repr)."""
    return "" if x is None else str(x) if isinstance(x, int) else repr(float(x))


def _pair(sizes) -> tuple:
    if sizes is None:
        return "", ""
    return _full(sizes[0]), _full(sizes[1]) if len(sizes) > 1 else ""


def csv_row(row, random_digits: int) -> list:
    if row.printed is not None:  # real cutoffs: nothing randomised, the printed rule added
        places = max(-c.as_tuple().exponent for c in row.printed if c is not None)
        return _row(row, "", None) + [str(max(places, 0)), *(
            "" if c is None else format(c, "f") for c in row.printed), *_pair(row.digit_sizes)]
    return _row(row, str(random_digits), row.digit_sizes)


def _row(row, random_digits: str, digit_sizes) -> list:
    d = row.design
    return [safe_cell_text(d.family), safe_cell_text(d.kind), plain(d.n), plain(d.alpha),
            plain(d.low), plain(d.high), plain(d.value), plain(d.dispersion),
            _cut(d.c1), _full(d.gamma1), _cut(d.c2), _full(d.gamma2),
            *_pair(d.sizes), *_pair(row.conservative_sizes),
            _int(row.thresholds[0]), _int(row.thresholds[1]),
            random_digits, *_pair(digit_sizes),
            d.gamma1_decimal or "", d.gamma2_decimal or "", _int(d.precision),
            repr(float(d.check.max_phi_diff))]


def _encode(header, rows) -> bytes:
    buf = io.StringIO(newline="")
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue().encode("utf-8")


def csv_bytes(tset) -> bytes:
    """NAME.csv: one row per design, the contract columns then the extras."""
    d = tset.spec.random_digits
    return _encode(columns_for(tset), (csv_row(r, d) for r in tset.rows))


def print_csv_bytes(sections) -> bytes:
    """NAME.print.csv: every printed cell as fixed-decimal text, one table for all sections."""
    header, rows = print_rows(sections)
    return _encode(header, ([safe_cell_text(c) for c in r] for r in rows))
