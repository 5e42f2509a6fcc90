"""The spreadsheet's 'Power' sheet (spec [oc] thetas): power of every design at stated thetas.

One block of three rows per design of the tables (randomised rule, field rule
with the spec's random digits, conservative rule), one column per stated
theta; cells where theta lies in H0 are shaded and in italics (there the power
is the probability of a wrong rejection, at most alpha).  The same columns for
every kind, so one header serves the whole sheet and repeats on every printed
page.  Values at full double precision, shown to 4 decimals.  Formats only:
the numbers come from oc_build.
"""

from __future__ import annotations

from copy import copy

from openpyxl.styles import Alignment, Border, Font, PatternFill
from openpyxl.utils import get_column_letter

from ..fileio import safe_cell_text
from .tablewords import WORDS, plain
from .texts import hypothesis_at
from .xlsx_style import BOLD, CENTER, FONT, MEDIUM, THIN, heading_rows, page_setup

SHEET = "Power"
RULE_ORDER = ("randomised", "digits", "conservative")  # exact, as applied, without digits
IN_NULL = PatternFill("solid", fgColor="D9D9D9")
ITALIC = Font(name=FONT, italic=True)
POWER_FORMAT = "0.0000"
ID_COLUMNS = (("Table", 7), ("alpha", 8), ("H0", 0), ("n", 7), ("Rule", 0))  # 0: fit the text
# numbers centred, words left with an indent: no number runs into the next column's words
ID_ALIGN = (Alignment(horizontal="center"), Alignment(horizontal="center"),
            Alignment(horizontal="left", indent=1), Alignment(horizontal="center"),
            Alignment(horizontal="left", indent=1))


def rule_text(rule: str, d: int) -> str:
    return {"randomised": "randomised", "digits": f"field, {d} digits",
            "conservative": "conservative"}[rule]


def power_sheet(wb, tset) -> None:
    """Add the Power sheet to ``wb`` (when the spec states thetas)."""
    oc, spec = tset.oc, tset.spec
    if oc is None or not oc.thetas:
        return
    ws = wb.create_sheet(SHEET)
    d = spec.random_digits
    symbol = WORDS[spec.family][0]
    body, before = [], None
    for p in oc.powers:
        des = tset.rows[p.row].design
        group = (p.section, des.points)  # a new table or band: a heavier rule above
        edge = None if before is None else THIN if group == before else MEDIUM
        before = group
        ident = [p.section, des.alpha, hypothesis_at(des.kind, spec.family, des.points)[4:],
                 des.n if isinstance(des.n, int) else float(des.n)]
        power = dict(p.power)
        for k, rule in enumerate(RULE_ORDER):
            body.append((ident + [rule_text(rule, d)], power[rule], p.in_null,
                         edge if k == 0 else None))
    widths = [w or 6 + max(len(str(r[0][j])) for r in body)
              for j, (label, w) in enumerate(ID_COLUMNS)]
    widths += [max(9.0, len(plain(t)) + 3) for t in oc.thetas]
    ncol = len(widths)
    last = get_column_letter(ncol)
    head = [(safe_cell_text(spec.title), Font(name=FONT, bold=True, size=12), 17),
            (f"Power: the probability of rejecting H0 at the stated values of {symbol} "
             f"(exact sums of probabilities), for every row of the tables; shown rounded to "
             f"4 decimals, each cell holds the full value", BOLD, 15),
            (f"Rules: randomised = the exact rule with the gammas; field = the rule as applied "
             f"with {d} random digits and the thresholds t; conservative = no randomisation. "
             f"Shaded, in italics: {symbol} lies inside H0 there, so the value is the chance "
             f"of a wrong rejection (at most alpha).", None, 15)]
    heading_rows(ws, head, last, widths)
    first_theta = len(ID_COLUMNS) + 1
    cell = ws.cell(row=4, column=first_theta, value=f"Power at {symbol} =")
    cell.font, cell.alignment = BOLD, CENTER
    if ncol > first_theta:
        ws.merge_cells(start_row=4, start_column=first_theta, end_row=4, end_column=ncol)
    labels = [label for label, _ in ID_COLUMNS] + [plain(t) for t in oc.thetas]
    for j, label in enumerate(labels, start=1):
        cell = ws.cell(row=5, column=j, value=label if j < first_theta else float(label))
        cell.font, cell.alignment, cell.border = BOLD, CENTER, Border(bottom=THIN)
        cell.number_format = "General"
        ws.column_dimensions[get_column_letter(j)].width = widths[j - 1]
    styled = _StyleCache()
    for i, (ident, values, in_null, edge) in enumerate(body):
        r = 6 + i
        for j, x in enumerate(ident, start=1):
            styled(ws.cell(row=r, column=j, value=x), (j, edge), _id_style)
        for j, (x, inside) in enumerate(zip(values, in_null), start=first_theta):
            styled(ws.cell(row=r, column=j, value=x), (0, edge, inside), _power_style)
    ws.freeze_panes = "A6"
    ws.print_title_rows = "1:5"
    ws.print_options.gridLines = True
    page_setup(ws, spec, sum(widths) > 100, "Power at stated values")


def _id_style(cell, key) -> None:
    j, edge = key
    cell.alignment = ID_ALIGN[j - 1]
    if edge is not None:
        cell.border = Border(top=edge)


def _power_style(cell, key) -> None:
    _, edge, inside = key
    cell.number_format = POWER_FORMAT
    if inside:
        cell.fill, cell.font = IN_NULL, ITALIC
    if edge is not None:
        cell.border = Border(top=edge)


class _StyleCache:
    """Styles body cells by a key: the first cell of each key is styled by ``setup``, the
    others copy its style record.  openpyxl hashes every style object assigned to a
    cell, which made a sheet of 300,000 cells take three times as long as its values."""

    def __init__(self):
        self.records = {}

    def __call__(self, cell, key, setup) -> None:
        record = self.records.get(key)
        if record is None:
            setup(cell, key)
            self.records[key] = copy(cell._style)
        else:
            cell._style = copy(record)
