"""PDF building blocks shared by the table set's pages (write_pdf, pdf_sections,
pdf_pages, pdf_oc): page sizes and margin, the paragraph styles, ``para`` (a
paragraph of plain text in a named style), ``Mark`` (records the page a story
element lands on, for the contents) and ``Geometry`` (the frame of a portrait or
landscape page).  Formats only.
"""

from __future__ import annotations

from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.pagesizes import A4, landscape, letter
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.platypus import Flowable, Paragraph

PAGES = {"A4": A4, "Letter": letter}
MARGIN = 15 * mm
PAD = 3.0  # pt, cell padding each side
GREY = colors.Color(0.93, 0.93, 0.93)

STYLES = {
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


def para(text: str, style: str) -> Paragraph:
    """A paragraph of plain text (escaped) in one of STYLES."""
    return Paragraph(escape(text), STYLES[style])


class Mark(Flowable):
    """Zero-size flowable that records the page it lands on (for the contents)."""

    def __init__(self, key, pages: dict):
        super().__init__()
        self.key, self.pages = key, pages

    def wrap(self, aw, ah):
        return 0, 0

    def draw(self):
        self.pages[self.key] = self.canv.getPageNumber()


class Geometry:
    """The portrait and landscape page of a paper size; ``frame`` gives the room inside."""

    def __init__(self, paper: str):
        self.portrait = PAGES[paper]
        self.landscape = landscape(PAGES[paper])

    def frame(self, land: bool) -> tuple:
        w, h = self.landscape if land else self.portrait
        return w - 2 * MARGIN, h - 2 * MARGIN
