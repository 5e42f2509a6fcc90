"""The PDF's table pages: one section (kind, alpha) as pages of one table each.

A section is portrait when it fits the page width at 10 or 9 pt, else landscape
(smaller type only if even that is too narrow); each page repeats the heading,
the null hypothesis, the rule and the two header rows; every other band (or
value) is shaded and a rule separates bands.  Formats only.
"""

from __future__ import annotations

from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.styles import ParagraphStyle
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import (
    Flowable,
    NextPageTemplate,
    PageBreak,
    Paragraph,
    Table,
    TableStyle,
)

from .pdf_kit import GREY, PAD, Geometry, Mark, para


class _UndrawnTable(Table):
    def draw(self):
        pass


class Undrawn(Flowable):
    """A page's table in the first pass, which only learns where things land: its size
    (a Table with every row height and column width given is exactly their sums),
    nothing laid out or drawn; should it not fit, it splits as the table would."""

    def __init__(self, data, colWidths, rowHeights, **kw):
        super().__init__()
        self._args = (data, colWidths, rowHeights, kw)
        self._style = None
        self.hAlign = kw.get("hAlign") or "CENTER"
        self.width, self.height = sum(colWidths), sum(rowHeights)

    def setStyle(self, style):
        self._style = style

    def wrap(self, availWidth, availHeight):
        return self.width, self.height

    def split(self, availWidth, availHeight):
        data, cw, rh, kw = self._args
        t = _UndrawnTable(data, colWidths=cw, rowHeights=rh, **kw)
        t.setStyle(self._style)
        t.wrap(availWidth, availHeight)
        return t.split(availWidth, availHeight)

    def draw(self):
        pass


def _groups(section) -> list:
    """(label, first column, end column) of each run of columns with one group label."""
    out, start, cols = [], 0, section.columns
    for i in range(1, len(cols) + 1):
        if i == len(cols) or cols[i].group != cols[start].group:
            out.append((cols[start].group, start, i))
            start = i
    return out


def _group_style(size: float) -> ParagraphStyle:
    return ParagraphStyle(f"group{size}", fontName="Helvetica-Bold", fontSize=size,
                          leading=size * 1.15, alignment=1)


def _col_texts(section) -> list:
    """The distinct texts of each column (a width is the same for the same text)."""
    return [{r[i].text for r in section.rows} for i in range(len(section.columns))]


def _col_widths(section, size: float, texts=None) -> list:
    """Column widths that fit every cell on one line and each group label on two."""
    out = []
    texts = _col_texts(section) if texts is None else texts
    for i, col in enumerate(section.columns):
        wmax = max(stringWidth(t, "Helvetica", size) for t in texts[i]) if texts[i] else 0.0
        wmax = max(wmax, stringWidth(col.label, "Helvetica-Bold", size))
        out.append(wmax + 2 * PAD + 2)
    for label, a, b in _groups(section):
        if not label:
            continue
        words = max(stringWidth(w, "Helvetica-Bold", size) for w in label.split())
        need = max(words, stringWidth(label, "Helvetica-Bold", size) / 2 + size) + 2 * PAD + 2
        have = sum(out[a:b])
        if have < need:
            out[a:b] = [w + (need - have) / (b - a) for w in out[a:b]]
    return out


SIZES = ((False, 10.0), (False, 9.0), (True, 10.0), (True, 9.0), (True, 8.0), (True, 7.0),
         (True, 6.0))


def _fit(section, geo: Geometry) -> tuple:
    """(landscape?, type size, column widths): portrait at 10 or 9 pt if the section
    fits, else landscape, smaller type only if even that is too narrow."""
    texts = _col_texts(section)
    for land, size in SIZES:
        fw, _ = geo.frame(land)
        widths = _col_widths(section, size, texts)
        if sum(widths) <= fw:
            break
    return land, size, _spread(widths, fw)


def _spread(widths, room) -> list:
    """Widen the columns up to 25% so the table reads evenly, never past the frame."""
    total = sum(widths)
    factor = min(1.25, room / total) if total < room else 1.0
    return [w * factor for w in widths]


def _header_rows(section, size, widths) -> tuple:
    """The two header rows (group labels as wrapping paragraphs, column labels), height."""
    style = _group_style(size)
    groups = [""] * len(section.columns)
    height = 0.0
    for label, a, b in _groups(section):
        if label:
            para = Paragraph(escape(label), style)
            height = max(height, para.wrap(sum(widths[a:b]) - 2 * PAD, 1000)[1])
            groups[a] = para
    return [groups, [c.label for c in section.columns]], height + 4.0


def _group_spans(section) -> list:
    return [("SPAN", (a, 0), (b - 1, 0)) for _, a, b in _groups(section) if b - a > 1]


def _table_style(section, size, chunk_starts, nrows, shaded=()) -> TableStyle:
    cmds = [
        ("FONT", (0, 0), (-1, 1), "Helvetica-Bold", size),
        ("FONT", (0, 2), (-1, -1), "Helvetica", size),
        ("ALIGN", (0, 0), (-1, 1), "CENTER"),
        ("ALIGN", (0, 2), (-1, -1), "RIGHT"),
        ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
        ("LEFTPADDING", (0, 0), (-1, -1), PAD),
        ("RIGHTPADDING", (0, 0), (-1, -1), PAD),
        ("TOPPADDING", (0, 0), (-1, -1), 1.2),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.8),
        ("LINEBELOW", (0, 1), (-1, 1), 1.0, colors.black),
        ("LINEABOVE", (0, 0), (-1, 0), 1.0, colors.black),
        ("LINEBELOW", (0, -1), (-1, -1), 1.0, colors.black),
    ] + _group_spans(section)
    # vertical rules between column groups
    cols = section.columns
    for i in range(1, len(cols)):
        if cols[i].group != cols[i - 1].group:
            cmds.append(("LINEBEFORE", (i, 0), (i, -1), 0.5, colors.black))
    # shade every other band (or value), to help the eye across: a shade never
    # crosses the line between two bands
    for a, b in shaded:
        cmds.append(("BACKGROUND", (0, 2 + a), (-1, 2 + b - 1), GREY))
    for r in chunk_starts:
        cmds.append(("LINEABOVE", (0, 2 + r), (-1, 2 + r), 0.8, colors.black))
    return TableStyle(cmds)


PER_CELL = ("FONT", "ALIGN", "VALIGN", "LEFTPADDING", "RIGHTPADDING", "TOPPADDING",
            "BOTTOMPADDING")


def shared_cell_styles(cmds, nrows: int, ncols: int) -> tuple:
    """(cellStyles for Table, the other commands): reportlab applies a per-cell command
    (font, alignment, padding) to every cell of its range, one cell at a time; when
    each covers whole rows, the rows covered by the same commands share one CellStyle
    made by applying them once (a Table draws the same from equal styles).  Otherwise
    (None, cmds): reportlab applies them as usual."""
    per = [c for c in cmds if c[0] in PER_CELL]
    if any(c[1][0] != 0 or c[2][0] not in (-1, ncols - 1) for c in per):
        return None, list(cmds)

    spans = [tuple(r + nrows if r < 0 else r for r in (c[1][1], c[2][1])) for c in per]
    made, rows = {}, []
    for i in range(nrows):
        key = tuple(k for k, (lo, hi) in enumerate(spans) if lo <= i <= hi)
        if key not in made:
            one = Table([[""]], style=[(per[k][0], (0, 0), (0, 0), *per[k][3:]) for k in key])
            made[key] = one._cellStyles[0][0]
        rows.append([made[key]] * ncols)
    return rows, [c for c in cmds if c[0] not in PER_CELL]


def band_index(section) -> list:
    """For each row of a section, the number of its band (or value), 0-based."""
    starts = set(section.group_starts)
    out, k = [], -1
    for i in range(len(section.rows)):
        k += i in starts or i == 0
        out.append(k)
    return out


def shaded_runs(section, first: int, count: int) -> list:
    """(start, end) row runs of one page, relative to the page, of the odd bands."""
    idx = band_index(section)[first:first + count]
    runs, start = [], None
    for i, k in enumerate(idx + [None]):
        odd = k is not None and k % 2 == 1
        if odd and start is None:
            start = i
        if not odd and start is not None:
            runs.append((start, i))
            start = None
    return runs


def section_flowables(section, geo, pages, spec, table=Table) -> list:
    """The pages of one section: a heading and a table per page, header repeated."""
    land, size, widths = _fit(section, geo)
    fw, fh = geo.frame(land)
    row_h = size * 1.2 + 3.0
    header, head0 = _header_rows(section, size, widths)
    out = [NextPageTemplate("landscape" if land else "portrait"), PageBreak()]

    def heading(text):
        return [para(text, "sec"), para(section.hypothesis, "rule"), para(section.rule, "rule")]

    head_h = sum(p.wrap(fw, fh)[1] + p.getSpaceAfter() for p in heading(section.heading)) + 4
    per_page = max(5, int((fh - head_h - head0 - row_h - 8) // row_h))
    starts = set(section.group_starts)
    rows = section.rows
    for first in range(0, max(1, len(rows)), per_page):
        chunk = rows[first:first + per_page]
        if first:
            out += [PageBreak()] + heading(f"{section.heading} (continued)")
        else:
            out += [Mark(section.number, pages)] + heading(section.heading)
        body = [[c.text for c in r] for r in chunk]
        seps = [i - first for i in range(first + 1, first + len(chunk)) if i in starts]
        style = _table_style(section, size, seps, len(body),
                             shaded_runs(section, first, len(chunk)))
        cells, rest = shared_cell_styles(style.getCommands(), len(header) + len(body),
                                         len(widths))
        tab = table(header + body, colWidths=widths, rowHeights=[head0, row_h]
                    + [row_h] * len(body), hAlign="LEFT", cellStyles=cells)
        tab.setStyle(TableStyle(rest))
        out.append(tab)
    return out
