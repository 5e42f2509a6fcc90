"""Challenge sets: a deterministic grid of hard designs for a vendor to fill in.

Every kind and every discrete family meets each hard regime: small counts, a
narrow band (relative widths 1e-2 to 1e-6), alpha down to 1e-6, large n, and
for a bounded parameter (the binomial p) each end of its space.  A seed
jitters the parameters inside each cell of the grid (Python's random.Random,
stable across versions), and every value is rounded to four significant digits
so it prints exactly.  The same seed and exactband version give the same file,
byte for byte.  The answer columns c1, gamma1, c2, gamma2 are left empty;
``exactband audit`` of the filled file grades it.
"""

from __future__ import annotations

import csv
import io
import random

from ..families import FAMILIES
from ..fileio import safe_cell_text
from ..kinds import KINDS  # every kind, in their order: upper, lower, point, band, equivalence
from .columns import STANDARD

HEADER = ("id", "regime") + STANDARD
WIDTHS = {"id": 7, "regime": 18, "family": 17, "kind": 11, "n": 9, "alpha": 8, "low": 11,
          "high": 11, "value": 11, "dispersion": 10, "c1": 8, "gamma1": 14, "c2": 8, "gamma2": 14}
INSTRUCTIONS = [
    "Fill c1, gamma1, c2, gamma2 for every row with your program's answer; leave the other "
    "columns as they are.",
    "Test function: band, point: reject if Y < c1 or Y > c2, with probability gamma1 at Y = c1 and "
    "gamma2 at Y = c2; equivalence: reject if c1 < Y < c2, gamma1 at c1, gamma2 at c2; upper uses "
    "only c2, gamma2 (reject if Y > c2); lower only c1, gamma1 (reject if Y < c1). Gammas in "
    "[0, 1). Leave unused cutoffs empty.",
    "Families: poisson (rate per unit, exposure n), binomial (p, n trials), negative-binomial "
    "(mean per unit, known dispersion k, n units). Print gammas with as many decimals as you "
    "claim: each gamma is graded within the decimals its cell prints (rounded or truncated, "
    "inferred per column), and the size your printed numbers attain must not exceed alpha.",
    "Grade the filled file with: exactband audit FILLED_FILE --report DIR",
]


def _sig(x: float, digits: int = 4) -> float:
    return float(f"{x:.{digits}g}")


class _Grid:
    def __init__(self, seed: int):
        self.rng = random.Random(seed)
        self.rows = []

    def jitter(self, x, spread=0.15):
        return _sig(x * (1 + self.rng.uniform(-spread, spread)))

    def add(self, regime, family, kind, n, alpha, theta, width=None, k=None):
        """One design around theta; two-point kinds get [theta, theta * (1 + width)]
        (a bounded parameter: theta + width * its distance to the nearer end)."""
        row = {"regime": regime, "family": family.name, "kind": kind, "n": n, "alpha": alpha,
               "dispersion": k if family.uses_dispersion else None}
        if KINDS[kind].two_point:
            if family.bounded:
                hi = theta + width * min(theta - family.theta_min, family.theta_max - theta)
            else:
                hi = theta * (1 + width)
            lo, hi = _sig(theta, 8), _sig(hi, 8)
            if not lo < hi:
                return
            row.update(low=lo, high=hi)
        else:
            row.update(value=theta)
        self.rows.append(row)


def _n(family, g: _Grid, exposure: float, counted: int) -> float | int:
    """An exposure (real n, jittered) or a number of trials / units (whole n)."""
    return counted if family.integer_n else g.jitter(exposure)


def grid(seed: int = 0) -> list:
    """The challenge designs as dicts of the standard input columns (plus id, regime)."""
    g = _Grid(seed)
    for family in [f for f in FAMILIES.values() if f.discrete]:  # in registry order
        k = 2.0 if family.uses_dispersion else None
        for kind in KINDS:
            wide = 0.5 if KINDS[kind].two_point else None
            # small counts: a handful of expected events
            n = _n(family, g, 5, 20)
            g.add("small counts", family, kind, n, 0.05, g.jitter(2.5 / n), wide, k)
            # alpha down to 1e-6
            for alpha in (1e-3, 1e-6):
                n = _n(family, g, 40, 300)
                g.add(f"alpha {alpha:g}", family, kind, n, alpha, g.jitter(60 / n), wide, k)
            # large n: thousands of expected events (a proportion: n > 5000 for 5000 events)
            n = _n(family, g, 20_000, 100_000 if family.bounded else 2000)
            g.add("large n", family, kind, n, 0.01, g.jitter(5000 / n),
                  0.05 if wide else None, 0.5 if k else None)
            # narrow bands: the two side conditions nearly coincide
            if KINDS[kind].two_point:
                for width in (1e-2, 1e-4, 1e-6):
                    n = _n(family, g, 50, 400)
                    g.add(f"narrow band {width:g}", family, kind, n, 0.05, g.jitter(100 / n),
                          width, k)
        if family.bounded:  # near each end of the parameter space (a proportion: 0 and 1)
            lo, hi = family.theta_min, family.theta_max
            for kind in KINDS:
                wide = 0.5 if KINDS[kind].two_point else None
                g.add(f"{family.symbol} near {lo:g}", family, kind, 5000, 0.05,
                      lo + g.jitter(2e-4), wide)
                g.add(f"{family.symbol} near {hi:g}", family, kind, 500, 0.05,
                      _sig(hi - g.jitter(1e-3), 6), wide)
    for i, row in enumerate(g.rows, start=1):
        row["id"] = f"CH{i:03d}"
    return g.rows


def _text(x) -> str:
    if x is None:
        return ""
    if isinstance(x, float):
        return repr(int(x)) if x.is_integer() and abs(x) < 1e15 else repr(x)
    return str(x)


def csv_bytes(rows) -> bytes:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(HEADER)
    for r in rows:
        w.writerow([safe_cell_text(_text(r.get(c))) for c in HEADER])
    return buf.getvalue().encode("utf-8")


def xlsx_bytes(rows, seed: int) -> bytes:
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font, PatternFill
    from openpyxl.utils import get_column_letter

    from .. import __version__
    from ..xlsxzip import workbook_bytes
    from .xlsx_report import CAUTION, print_setup

    wb = Workbook()
    ws = wb.active
    ws.title = "challenge"
    for j, name in enumerate(HEADER, start=1):
        c = ws.cell(1, j, name)
        c.font = Font(bold=True)
    answer = PatternFill("solid", fgColor="FFF8DC")
    for i, r in enumerate(rows, start=2):
        for j, name in enumerate(HEADER, start=1):
            v = r.get(name)
            c = ws.cell(i, j, safe_cell_text(v) if isinstance(v, str) else v)
            if name in ("c1", "gamma1", "c2", "gamma2"):
                c.fill = answer
    for j, name in enumerate(HEADER, start=1):
        ws.column_dimensions[get_column_letter(j)].width = WIDTHS.get(name, 10)
    ws.freeze_panes = "C2"
    ws.print_title_rows = "1:1"
    ws.print_title_cols = "A:A"
    print_setup(ws, pages_wide=1)
    info = wb.create_sheet("instructions")
    lines = [f"exactband {__version__} challenge set, seed {seed}, {len(rows)} designs."]
    lines += INSTRUCTIONS + [CAUTION]
    wrap = Alignment(wrap_text=True, vertical="top")
    for i, line in enumerate(lines, start=1):
        c = info.cell(i, 1, safe_cell_text(line))
        c.alignment = wrap
        info.row_dimensions[i].height = 15 * (len(line) // 95 + 1)
    info.column_dimensions["A"].width = 100
    print_setup(info, pages_wide=1)
    info.page_setup.orientation = "portrait"
    return workbook_bytes(wb)
