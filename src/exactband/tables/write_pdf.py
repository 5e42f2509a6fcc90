"""NAME.pdf (reportlab): cover with caution box, the tables, OC curves, random digits,
provenance.

Every table page carries the section heading, the null hypothesis and the
rule in words above a header that repeats on every page; each page has the
title, 'Page x of y' and the spec's hash.  A section is portrait when it fits
the page width at 9 pt, else landscape (smaller type only if even that is too
narrow).  Deterministic: reportlab's invariant mode (fixed dates and document
id) and the 14 standard fonts (nothing embedded); the pages of OC curves, when
the spec asks for them, are placed by pdf_oc.  Formats only.

This module assembles the document (page templates, footer 'Page x of y', the
two passes); the pieces: pdf_kit (styles, Mark, Geometry), pdf_sections (table
pages), pdf_pages (cover, random digits, provenance), pdf_oc (OC pages).
"""

from __future__ import annotations

import contextlib
import io
import os

from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import BaseDocTemplate, Frame, PageTemplate, Table

from .pdf_kit import MARGIN, Geometry
from .pdf_oc import merge_charts, oc_flowables
from .pdf_pages import cover_story, digits_story, provenance_story
from .pdf_sections import Undrawn, section_flowables


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


def _build(tset, sections, blocks, provenance, pages, draft=False) -> tuple:
    """(the document's bytes, the OC chart slots to fill); ``pages`` collects where things land."""
    spec = tset.spec
    geo = Geometry(spec.paper)
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
    story = cover_story(tset, blocks, sections, pages, geo)
    for s in sections:
        story += section_flowables(s, geo, pages, spec, Undrawn if draft else Table)
    slots = []
    story += oc_flowables(tset, pages, slots)
    story += digits_story(tset, pages, geo)
    story += provenance_story(provenance, pages, geo)
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
