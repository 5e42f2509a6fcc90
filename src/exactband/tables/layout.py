"""The printed layout: sections, columns and cells as text, shared by every writer.

One section is one (kind, alpha) pair: a spreadsheet sheet, a run of PDF
pages, a block of NAME.print.csv.  Each row of a section is one design; the
row carries its band (or value) and n, so a row read alone is unambiguous.
Formatting only: every number here was computed by the build.

Number text:
* inputs (alpha, n, low, high, value): the shortest decimal of the number;
* gammas: truncated (never rounded up) to ``gamma_decimals``, from the
  30-digit decimal of the verifying solver, so the printed digits agree with
  the thresholds t = floor(gamma * 10**d) and never show 1;
* sizes: truncated to 3 - e decimals, e the exponent of alpha's leading digit
  (alpha = 0.05 -> 5 decimals, about three significant digits), after scaling
  by 1 + NOISE (NOISE = 1e-12, far above the ~1e-15 relative rounding of the
  float sizes) so that a size equal to a printed value (0.04999999999999999
  for 0.05) does not lose its last digit; a printed size therefore never
  exceeds the attained size by more than a relative 1e-12.
"""

from __future__ import annotations

from dataclasses import dataclass
from decimal import ROUND_FLOOR, Decimal

from ..kinds import KINDS
from .grid import sections
from .spec import TWO_POINT
from .tablewords import KIND_TITLE, gamma_places, plain
from .texts import hypothesis_text, rule_text


@dataclass(frozen=True)
class Column:
    key: str  # the print.csv column name
    group: str  # group header above the label ("" for none)
    label: str  # header as printed
    decimals: int | None = None  # fixed decimals (None: whole number or plain text)


@dataclass(frozen=True)
class Cell:
    text: str  # exactly as printed
    value: object  # the same number for a spreadsheet cell (int, float) or None/str


@dataclass(frozen=True)
class Section:
    number: int
    kind: str
    alpha: float
    sheet: str
    heading: str
    hypothesis: str
    rule: str
    columns: tuple
    rows: tuple  # tuples of Cell, one per column
    group_starts: tuple  # row indices where a new band / value begins


NOISE = Decimal("1e-12")
PRINT_KEYS = ("low", "high", "value", "n", "c1", "gamma1", "t1", "c2", "gamma2", "t2",
              "digit_rule_size_low", "digit_rule_size_high", "conservative_size_low",
              "conservative_size_high")


def floor_text(decimal_text: str, places: int) -> str:
    q = Decimal(1).scaleb(-places)
    return format(Decimal(decimal_text).quantize(q, rounding=ROUND_FLOOR), "f")


def size_text(x: float, places: int) -> str:
    """A size truncated to ``places`` decimals, after scaling by 1 + NOISE (float rounding)."""
    q = Decimal(1).scaleb(-places)
    return format((Decimal(repr(float(x))) * (1 + NOISE)).quantize(q, rounding=ROUND_FLOOR), "f")


def size_decimals(alpha: float) -> int:
    """Decimals for printed sizes: about three significant digits at alpha's scale."""
    return max(3, 3 - Decimal(repr(float(alpha))).adjusted())


PRINT_KEYS_REAL = ("low", "high", "value", "n", "c1", "c2", "printed_rule_size_low",
                   "printed_rule_size_high")  # a family with real cutoffs


def columns(kind: str, family: str, alpha: float, gamma_decimals: int, conservative: bool,
            cutoff_decimals: int | None = None):
    """The section's columns; ``cutoff_decimals`` given: real cutoffs (a continuous family)."""
    sd = size_decimals(alpha)
    two = kind in TWO_POINT
    at = ("low", "high") if two else ("value",)
    cols = [Column(k, "H0 band" if two else "H0", k) for k in at]
    cols.append(Column("n", "", "n"))
    kd = KINDS[kind]
    if cutoff_decimals is not None:
        cols += [Column(c, "Cutoffs", c, cutoff_decimals) for c in kd.cutoffs]
        for suffix, point in zip(("low", "high"), at):
            cols.append(Column(f"printed_rule_size_{suffix}", "Size of the printed rule",
                               f"at {point}", sd))
        return tuple(cols)
    if kd.uses_c1:
        cols += [Column("c1", "Lower cutoff", "c1"),
                 Column("gamma1", "Lower cutoff", "gamma1", gamma_decimals),
                 Column("t1", "Lower cutoff", "t1")]
    if kd.uses_c2:
        cols += [Column("c2", "Upper cutoff", "c2"),
                 Column("gamma2", "Upper cutoff", "gamma2", gamma_decimals),
                 Column("t2", "Upper cutoff", "t2")]
    for suffix, point in zip(("low", "high"), at):
        cols.append(Column(f"digit_rule_size_{suffix}", "Size with random digits", f"at {point}",
                           sd))
    if conservative:
        for suffix, point in zip(("low", "high"), at):
            cols.append(Column(f"conservative_size_{suffix}", "Size, no randomisation",
                               f"at {point}", sd))
    return tuple(cols)


def _cells(row, cols) -> tuple:
    d = row.design
    num = {"low": d.low, "high": d.high, "value": d.value, "n": d.n, "c1": d.c1, "c2": d.c2,
           "t1": row.thresholds[0], "t2": row.thresholds[1]}
    out = []
    for col in cols:
        k = col.key
        if row.printed is not None and k in ("c1", "c2"):  # real cutoffs, as rounded
            x = row.printed[0 if k == "c1" else 1]
            out.append(Cell(format(x, "f"), float(x)))
        elif k.startswith("printed_rule_size"):
            s = size_text(row.digit_sizes[0 if k.endswith("_low") else 1], col.decimals)
            out.append(Cell(s, float(s)))
        elif k in num:
            x = num[k]
            out.append(Cell(plain(x), x if isinstance(x, int) else float(x)))
        elif k in ("gamma1", "gamma2"):
            g, text = ((d.gamma1, d.gamma1_decimal) if k == "gamma1"
                       else (d.gamma2, d.gamma2_decimal))
            s = floor_text(text if text is not None else repr(g), col.decimals)
            out.append(Cell(s, float(s)))
        else:
            sizes = row.digit_sizes if k.startswith("digit") else row.conservative_sizes
            s = size_text(sizes[0 if k.endswith("_low") else 1], col.decimals)
            out.append(Cell(s, float(s)))
    return tuple(out)


def build_sections(tset) -> list:
    """The printed sections of a TableSet, in order."""
    spec = tset.spec
    out = []
    for number, (kind, alpha) in enumerate(sections(spec), start=1):
        cols = columns(kind, spec.family, alpha, gamma_places(spec), spec.conservative,
                       spec.cutoff_decimals)
        rows = tset.section_rows(kind, alpha)
        cells = tuple(_cells(r, cols) for r in rows)
        starts = tuple(i for i, r in enumerate(rows)
                       if i == 0 or r.design.points != rows[i - 1].design.points)
        out.append(Section(
            number=number, kind=kind, alpha=alpha,
            sheet=f"{number} {kind} a={plain(alpha)}"[:31],
            heading=f"Table {number}. {KIND_TITLE[kind]} ({KINDS[kind].optimality}), "
                    f"alpha = {plain(alpha)}",
            hypothesis=hypothesis_text(kind, spec.family),
            rule=rule_text(kind, spec.random_digits, spec.family),
            columns=cols, rows=cells, group_starts=starts))
    return out


def print_rows(sections_) -> tuple:
    """Header and rows of NAME.print.csv: one rectangular table, every cell as printed."""
    real = any(c.key.startswith("printed_rule") for s in sections_ for c in s.columns)
    keys = PRINT_KEYS_REAL if real else PRINT_KEYS
    header = ("table", "kind", "alpha") + keys
    rows = []
    for s in sections_:
        pos = {c.key: i for i, c in enumerate(s.columns)}
        for cells in s.rows:
            rows.append((f"Table {s.number}", s.kind, plain(s.alpha))
                        + tuple(cells[pos[k]].text if k in pos else "" for k in keys))
    return header, rows


LINE_DIGITS = 50  # at most this many random digits on a printed line


def digit_pages(digits: str, random_digits: int, per_page: int) -> list:
    """Random digits laid out as read: pages of lines of groups of ``random_digits``.

    Groups hold d digits, the number read at a cutoff (5 when d is 1 or above 6,
    too short or too long to scan); a line holds as many whole groups as fit in
    LINE_DIGITS digits, so a group never runs over a line; every page holds the
    same ``per_page`` digits as the digit string's pages (its last line may be
    short).  Returns, per page, a list of (line number, [groups]); line numbers
    run on from page to page.
    """
    g = random_digits if 2 <= random_digits <= 6 else 5
    width = (LINE_DIGITS // g) * g
    pages, number = [], 0
    for start in range(0, len(digits), per_page):
        page, text = [], digits[start:start + per_page]
        for at in range(0, len(text), width):
            number += 1
            chunk = text[at:at + width]
            page.append((number, [chunk[i:i + g] for i in range(0, len(chunk), g)]))
        pages.append(page)
    return pages
