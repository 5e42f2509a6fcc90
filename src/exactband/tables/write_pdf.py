"""NAME.pdf (reportlab): cover with caution box, the tables, OC curves, random digits,
provenance.

Every table page carries the section heading, the null hypothesis and the
rule in words above a header that repeats on every page; each page has the
title, 'Page x of y' and the spec's hash.  A section is portrait when it fits
the page width at 9 pt, else landscape (smaller type only if even that is too
narrow).  Deterministic: reportlab's invariant mode (fixed dates and document
id) and the 14 standard fonts (nothing embedded); the pages of OC curves, when
the spec asks for them, are placed by pdf_oc.  Formats only.
"""

from __future__ import annotations

import contextlib
import io
import os
from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.pagesizes import A4, landscape, letter
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import (
    BaseDocTemplate,
    CondPageBreak,
    Flowable,
    Frame,
    NextPageTemplate,
    PageBreak,
    PageTemplate,
    Paragraph,
    Spacer,
    Table,
    TableStyle,
)

from .pdf_oc import contents_rows as oc_contents_rows
from .pdf_oc import merge_charts, oc_flowables

PAGES = {"A4": A4, "Letter": letter}
MARGIN = 15 * mm
PAD = 3.0  # pt, cell padding each side
GREY = colors.Color(0.93, 0.93, 0.93)

_S = {
    "title": ParagraphStyle("title", fontName="Helvetica-Bold", fontSize=18, leading=22,
                            spaceAfter=8),
    "heading": ParagraphStyle("heading", fontName="Helvetica-Bold", fontSize=12, leading=15,
                              spaceBefore=8, spaceAfter=3),
    "para": ParagraphStyle("para", fontName="Helvetica", fontSize=10, leading=13, spaceAfter=4),
    "step": ParagraphStyle("step", fontName="Helvetica", fontSize=10, leading=13, spaceAfter=2,
                           leftIndent=12, firstLineIndent=-12),
    "example": ParagraphStyle("example", fontName="Helvetica-Oblique", fontSize=10, leading=13,
                              leftIndent=12, spaceAfter=2),
    "note": ParagraphStyle("note", fontName="Helvetica", fontSize=9, leading=11.5, spaceAfter=2),
    "caution": ParagraphStyle("caution", fontName="Helvetica-Bold", fontSize=10.5, leading=14),
    "sec": ParagraphStyle("sec", fontName="Helvetica-Bold", fontSize=11, leading=14),
    "rule": ParagraphStyle("rule", fontName="Helvetica", fontSize=9, leading=11.5, spaceAfter=4),
    "mono": ParagraphStyle("mono", fontName="Courier", fontSize=10, leading=12),
}


def _p(text: str, style: str) -> Paragraph:
    return Paragraph(escape(text), _S[style])


class _Mark(Flowable):
    """Zero-size flowable that records the page it lands on (for the contents)."""

    def __init__(self, key, pages: dict):
        super().__init__()
        self.key, self.pages = key, pages

    def wrap(self, aw, ah):
        return 0, 0

    def draw(self):
        self.pages[self.key] = self.canv.getPageNumber()


class _Undrawn(Table):
    """A table laid out but not drawn (the first pass only learns where things land)."""

    def draw(self):
        pass


def _canvas_class(footer_left: str):
    class NumberedCanvas(rl_canvas.Canvas):
        """Defers pages so each footer can say 'Page x of y'."""

        def __init__(self, *args, **kwargs):
            super().__init__(*args, **kwargs)
            self._pages = []

        def showPage(self):
            self._pages.append(dict(self.__dict__))
            self._startPage()

        def save(self):
            total = len(self._pages)
            for state in self._pages:
                self.__dict__.update(state)
                w, _ = self._pagesize
                self.setFont("Helvetica", 8)
                self.drawString(MARGIN, MARGIN - 9 * mm, footer_left)
                self.drawRightString(w - MARGIN, MARGIN - 9 * mm,
                                     f"Page {self._pageNumber} of {total}")
                super().showPage()
            super().save()

    return NumberedCanvas


def _on_page(title: str):
    def draw(canv, doc):
        w, h = canv._pagesize
        canv.saveState()
        canv.setFont("Helvetica", 8)
        room = w - 2 * MARGIN - 60 * mm
        text = title
        while stringWidth(text, "Helvetica", 8) > room and len(text) > 4:
            text = text[:-4] + "..."
        canv.drawString(MARGIN, h - MARGIN + 5 * mm, text)
        canv.setLineWidth(0.5)
        canv.line(MARGIN, h - MARGIN + 3.5 * mm, w - MARGIN, h - MARGIN + 3.5 * mm)
        canv.line(MARGIN, MARGIN - 6 * mm, w - MARGIN, MARGIN - 6 * mm)
        canv.restoreState()
    return draw


class _Geometry:
    def __init__(self, paper: str):
        self.portrait = PAGES[paper]
        self.landscape = landscape(PAGES[paper])

    def frame(self, land: bool) -> tuple:
        w, h = self.landscape if land else self.portrait
        return w - 2 * MARGIN, h - 2 * MARGIN


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


def _col_widths(section, size: float) -> list:
    """Column widths that fit every cell on one line and each group label on two."""
    out = []
    for i, col in enumerate(section.columns):
        wmax = max(stringWidth(r[i].text, "Helvetica", size) for r in section.rows) \
            if section.rows else 0.0
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


def _fit(section, geo: _Geometry) -> tuple:
    """(landscape?, type size, column widths): portrait at 10 or 9 pt if the section
    fits, else landscape, smaller type only if even that is too narrow."""
    for land, size in SIZES:
        fw, _ = geo.frame(land)
        widths = _col_widths(section, size)
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


def band_index(section) -> list:
    """For each row of a section, the number of its band (or value), 0-based."""
    starts = set(section.group_starts)
    out, k = [], -1
    for i in range(len(section.rows)):
        k += i in starts or i == 0
        out.append(k)
    return out


def _shaded_runs(section, first: int, count: int) -> list:
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


def _section_flowables(section, geo, pages, spec, table=Table) -> list:
    land, size, widths = _fit(section, geo)
    fw, fh = geo.frame(land)
    row_h = size * 1.2 + 3.0
    header, head0 = _header_rows(section, size, widths)
    out = [NextPageTemplate("landscape" if land else "portrait"), PageBreak()]

    def heading(text):
        return [_p(text, "sec"), _p(section.hypothesis, "rule"), _p(section.rule, "rule")]

    head_h = sum(p.wrap(fw, fh)[1] + p.getSpaceAfter() for p in heading(section.heading)) + 4
    per_page = max(5, int((fh - head_h - head0 - row_h - 8) // row_h))
    starts = set(section.group_starts)
    rows = section.rows
    for first in range(0, max(1, len(rows)), per_page):
        chunk = rows[first:first + per_page]
        if first:
            out += [PageBreak()] + heading(f"{section.heading} (continued)")
        else:
            out += [_Mark(section.number, pages)] + heading(section.heading)
        body = [[c.text for c in r] for r in chunk]
        tab = table(header + body, colWidths=widths, rowHeights=[head0, row_h]
                    + [row_h] * len(body), hAlign="LEFT")
        seps = [i - first for i in range(first + 1, first + len(chunk)) if i in starts]
        tab.setStyle(_table_style(section, size, seps, len(body),
                                  _shaded_runs(section, first, len(chunk))))
        out.append(tab)
    return out


def _cover(tset, blocks, sections, pages, geo) -> list:
    fw, _ = geo.frame(False)
    out = []
    for style, text in blocks:
        if style == "caution":
            box = Table([[_p(text, "caution")]], colWidths=[fw])
            box.setStyle(TableStyle([("BOX", (0, 0), (-1, -1), 2.0, colors.black),
                                     ("BACKGROUND", (0, 0), (-1, -1), GREY),
                                     ("LEFTPADDING", (0, 0), (-1, -1), 8),
                                     ("RIGHTPADDING", (0, 0), (-1, -1), 8),
                                     ("TOPPADDING", (0, 0), (-1, -1), 6),
                                     ("BOTTOMPADDING", (0, 0), (-1, -1), 8)]))
            out += [Spacer(1, 4), box, Spacer(1, 6)]
        elif style == "heading":
            out += [CondPageBreak(40 * mm), _p(text, "heading")]
        else:
            out.append(_p(text, style))
    out += [CondPageBreak(60 * mm), _p("Contents", "heading")]
    rows = [[s.heading, f"{len(s.rows)} rows", str(pages.get(s.number, "000"))]
            for s in sections]
    rows += oc_contents_rows(tset, pages)
    if pages.get("_has_digits"):
        rows.append(["Random digits", "", str(pages.get("digits", "000"))])
    rows += [["Provenance", "", str(pages.get("provenance", "000"))]]
    tab = Table(rows, colWidths=[fw - 45 * mm, 25 * mm, 20 * mm], hAlign="LEFT")
    tab.setStyle(TableStyle([("FONT", (0, 0), (-1, -1), "Helvetica", 10),
                             ("ALIGN", (1, 0), (-1, -1), "RIGHT"),
                             ("LINEBELOW", (0, 0), (-1, -1), 0.25, colors.grey)]))
    out.append(tab)
    return out


def _digit_pages(tset, pages, geo) -> list:
    from .build import DIGITS_PER_PAGE
    from .layout import digit_pages

    spec, digits = tset.spec, tset.random_digits
    d = spec.random_digits
    layout = digit_pages(digits, d, DIGITS_PER_PAGE)
    out = []
    fw, _ = geo.frame(False)
    for page, lines in enumerate(layout):
        out += [NextPageTemplate("portrait"), PageBreak()]
        if page == 0:
            out.append(_Mark("digits", pages))
        groups = max(len(g) for _, g in lines)
        size = len(lines[0][1][0])
        how = (f"grouped {size} at a time as they are read" if size == d else
               f"in groups of {size} for the eye; read them {d} at a time across the groups")
        out.append(_p(f"Random digits, page {page + 1} of {len(layout)}", "sec"))
        out.append(_p(f"From Python random.Random({spec.seed}), {len(digits)} digits in all, "
                      f"{how}. Read them in order from where your supervisor says; cross them "
                      f"out as you use them and never use them twice.", "rule"))
        rows = [[str(number)] + g + [""] * (groups - len(g)) for number, g in lines]
        tab = Table(rows, colWidths=[12 * mm] + [(fw - 14 * mm) / groups] * groups,
                    hAlign="LEFT", rowHeights=[11.8] * len(rows))
        tab.setStyle(TableStyle([("FONT", (0, 0), (-1, -1), "Courier", 10),
                                 ("FONT", (0, 0), (0, -1), "Helvetica", 8),
                                 ("ALIGN", (0, 0), (0, -1), "RIGHT"),
                                 ("ALIGN", (1, 0), (-1, -1), "CENTER"),
                                 ("TOPPADDING", (0, 0), (-1, -1), 0),
                                 ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
                                 *[("LINEBELOW", (0, r), (-1, r), 0.4, colors.grey)
                                   for r in range(4, len(rows) - 1, 5)]]))
        out.append(tab)
    return out


def _provenance(rows, pages, geo) -> list:
    fw, _ = geo.frame(False)
    out = [NextPageTemplate("portrait"), PageBreak(), _Mark("provenance", pages),
           _p("Provenance", "sec"), Spacer(1, 4)]
    data = [[_p(k, "note"), _p(str(v), "note")] for k, v in rows]
    tab = Table(data, colWidths=[55 * mm, fw - 55 * mm], hAlign="LEFT")
    tab.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"),
                             ("LINEBELOW", (0, 0), (-1, -1), 0.25, colors.grey)]))
    out.append(tab)
    return out


def _build(tset, sections, blocks, provenance, pages, draft=False) -> tuple:
    """(the document's bytes, the OC chart slots to fill); ``pages`` collects where things land."""
    spec = tset.spec
    geo = _Geometry(spec.paper)
    buf = io.BytesIO()
    from .. import __version__

    doc = BaseDocTemplate(buf, pagesize=geo.portrait, leftMargin=MARGIN, rightMargin=MARGIN,
                          topMargin=MARGIN, bottomMargin=MARGIN, title=spec.title,
                          author="exactband", subject=f"{spec.name}: exact decision rules",
                          creator=f"exactband {__version__}", invariant=1)
    templates = []
    for name, size in (("portrait", geo.portrait), ("landscape", geo.landscape)):
        w, h = size
        frame = Frame(MARGIN, MARGIN, w - 2 * MARGIN, h - 2 * MARGIN, id=name,
                      leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0)
        templates.append(PageTemplate(id=name, frames=[frame], onPage=_on_page(spec.title),
                                      pagesize=size))
    doc.addPageTemplates(templates)
    story = _cover(tset, blocks, sections, pages, geo)
    for s in sections:
        story += _section_flowables(s, geo, pages, spec, _Undrawn if draft else Table)
    slots = []
    story += oc_flowables(tset, pages, slots)
    story += _digit_pages(tset, pages, geo)
    story += _provenance(provenance, pages, geo)
    footer = f"{spec.name}  |  spec SHA-256 {spec.sha256[:16]}  |  exactband {__version__}"
    with _no_date_from_environment():
        doc.build(story, canvasmaker=_canvas_class(footer))
    return buf.getvalue(), slots


@contextlib.contextmanager
def _no_date_from_environment():
    """reportlab takes the document date (and the seed of its id) from SOURCE_DATE_EPOCH
    even in invariant mode; the set's bytes depend on its spec and versions only, so the
    variable is hidden while the document is made (its date is the invariant-mode date)."""
    saved = os.environ.pop("SOURCE_DATE_EPOCH", None)
    try:
        yield
    finally:
        if saved is not None:
            os.environ["SOURCE_DATE_EPOCH"] = saved


def pdf_bytes(tset, sections, blocks, provenance) -> bytes:
    """The PDF as bytes; built twice so the contents can give page numbers."""
    pages = {"_has_digits": bool(tset.random_digits)}
    _build(tset, sections, blocks, provenance, pages, draft=True)  # where sections land
    document, slots = _build(tset, sections, blocks, provenance, dict(pages))
    return merge_charts(tset.spec, document, slots)  # the OC charts, if any
