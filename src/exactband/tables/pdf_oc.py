"""The PDF's pages of OC curves (spec [oc]): headings by reportlab, charts by matplotlib.

Each page of curves is laid out by reportlab like every other page (title,
'Page x of y', spec hash, a heading naming the kind, the band or value and the
tables it belongs to) with an empty slot for the charts.  Once the document is
built, the charts are drawn (``plots.draw_oc_page`` from the curves the build
computed) as vector PDF and placed into their slots with pypdf, so they print
sharp and their words stay searchable.  Deterministic: matplotlib's PDF without
dates, reportlab's invariant document id kept by pypdf.  Formats only.
"""

from __future__ import annotations

import io
from dataclasses import dataclass

from reportlab.platypus import Flowable, NextPageTemplate, PageBreak

from .pdf_kit import Mark, para
from .spec_oc import ROWS_PER_PAGE
from .tablewords import KIND_TITLE
from .texts import hypothesis_at

LABEL_ROOM = 30.0  # pt below the last row of charts for the axis label


@dataclass(frozen=True)
class Slot:
    """Where one figure goes: page (1-based), lower-left corner and size in pt."""

    page: int
    x: float
    y: float
    width: float
    height: float
    charts: tuple  # oc_build.Chart rows of the page


class _ChartSlot(Flowable):
    """Reserves the room for one page of charts and records where it landed."""

    def __init__(self, charts, slots: list):
        super().__init__()
        self.charts, self.slots = tuple(charts), slots

    def wrap(self, aw, ah):
        row = (ah - LABEL_ROOM) / ROWS_PER_PAGE
        self.width, self.height = aw, row * len(self.charts) + LABEL_ROOM
        return self.width, self.height

    def drawOn(self, canvas, x, y, _sW=0):
        self.slots.append(Slot(canvas.getPageNumber(), x, y, self.width, self.height,
                               self.charts))

    def draw(self):  # the charts are placed after the build (merge_charts)
        pass


def _tables(numbers) -> str:
    nums = [str(n) for n in numbers]
    return ("Table " + nums[0] if len(nums) == 1
            else "Tables " + ", ".join(nums[:-1]) + " and " + nums[-1])


def group_title(spec, group) -> str:
    """'OC curves, Tables 1 and 2: Band test, H0: 2 <= rate <= 2.5' (headings, contents)."""
    return (f"OC curves, {_tables(group.sections)}: {KIND_TITLE[group.kind]}, "
            f"{hypothesis_at(group.kind, spec.family, group.points)}")


def explanation(spec) -> str:
    from ..oc import rule_label

    oc, d = spec.oc, spec.random_digits
    sides = (["left", "right"] if len(oc.rules) == 2 else ["left", "middle", "right"]
             if len(oc.rules) == 3 else [""])
    cols = "; ".join(f"{side}: {rule_label(r, d)}".lstrip(": ") for side, r in
                     zip(sides, oc.rules))
    from ..families import get_family

    if not get_family(spec.family).discrete:
        cols, field = "the rule with the verified real cutoffs (no randomisation)", ""
        return (f"Probability of not rejecting H0 (OC) against {_symbol(spec)}; each row of "
                f"charts holds one alpha and a few n; {cols}. Shaded: H0. Dotted line: "
                f"1 - alpha. Exact probabilities.")
    field = ("" if "digits" in oc.rules else
             f" The field rule with {d} random digits is within {2 / 10 ** d:g} of the "
             f"randomised rule everywhere.")
    return (f"Probability of not rejecting H0 (OC) against {_symbol(spec)}; each row of charts "
            f"holds one alpha and a few n; {cols}. Shaded: H0. Dotted line: 1 - alpha. "
            f"Exact sums of probabilities.{field}")


def _symbol(spec) -> str:
    from .tablewords import WORDS

    symbol, what, _ = WORDS[spec.family]
    return f"{symbol} ({what})"


def oc_flowables(tset, pages: dict, slots: list) -> list:
    """The story of the OC pages: per kind and band (or value) its pages of charts."""
    if tset.oc is None or not tset.oc.groups:
        return []
    spec = tset.spec
    out = []
    for gi, group in enumerate(tset.oc.groups):
        rows = list(group.charts)
        per_page = _balanced(len(rows))
        start = 0
        for pi, count in enumerate(per_page):
            out += [NextPageTemplate("portrait"), PageBreak()]
            title = group_title(spec, group)
            if pi == 0:
                out.append(Mark(("oc", gi), pages))
            if len(per_page) > 1:
                title += f" (page {pi + 1} of {len(per_page)})"
            out += [para(title, "sec"), para(explanation(spec), "rule"),
                    _ChartSlot(rows[start:start + count], slots)]
            start += count
    return out


def _balanced(rows: int) -> list:
    """Rows of charts per page, at most ROWS_PER_PAGE, as even as possible."""
    from .spec_oc import chart_rows

    return chart_rows(rows, ROWS_PER_PAGE)


def contents_rows(tset, pages: dict) -> list:
    """Rows of the contents table for the OC pages: title, page count, first page."""
    if tset.oc is None:
        return []
    out = []
    for gi, group in enumerate(tset.oc.groups):
        n = len(_balanced(len(group.charts)))
        out.append([group_title(tset.spec, group), f"{n} page{'s' if n > 1 else ''}",
                    str(pages.get(("oc", gi), "000"))])
    return out


def chart_pdf(spec, slot: Slot) -> bytes:
    """One slot's charts as a one-page vector PDF of the slot's size."""
    import matplotlib

    from ..plots import draw_oc_page, figure_bytes

    charts = [(c.designs, c.frames) for c in slot.charts]
    fig = draw_oc_page(charts, rules=spec.oc.rules, curve="oc", random_digits=spec.random_digits,
                       size=(slot.width / 72.0, slot.height / 72.0), heading=None, note=False)
    with matplotlib.rc_context({"pdf.fonttype": 42}):  # TrueType: searchable, prints cleanly
        return figure_bytes(fig, "pdf")


def merge_charts(spec, document: bytes, slots) -> bytes:
    """Place each slot's charts on its page of ``document`` (the reportlab PDF).

    Each figure becomes a form XObject drawn at its slot: pypdf copies its
    content stream as it is (no parsing), so this takes milliseconds per page.
    """
    if not slots:
        return document
    from pypdf import PdfReader, PdfWriter
    from pypdf.generic import (
        ArrayObject,
        DecodedStreamObject,
        DictionaryObject,
        FloatObject,
        NameObject,
    )

    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(document)))
    for k, slot in enumerate(slots, start=1):
        figure = PdfReader(io.BytesIO(chart_pdf(spec, slot))).pages[0]
        form = DecodedStreamObject()
        form.set_data(figure.get_contents().get_data())
        form[NameObject("/Type")] = NameObject("/XObject")
        form[NameObject("/Subtype")] = NameObject("/Form")
        form[NameObject("/BBox")] = ArrayObject(FloatObject(x) for x in figure.mediabox)
        form[NameObject("/Resources")] = figure["/Resources"].clone(writer)
        ref = writer._add_object(form.flate_encode())
        page = writer.pages[slot.page - 1]
        resources = page["/Resources"].get_object()
        if "/XObject" not in resources:
            resources[NameObject("/XObject")] = DictionaryObject()
        name = NameObject(f"/ExactbandOC{k}")
        resources["/XObject"].get_object()[name] = ref
        content = DecodedStreamObject()
        content.set_data(page.get_contents().get_data()
                         + f"\nq 1 0 0 1 {slot.x:.3f} {slot.y:.3f} cm {name} Do Q\n".encode())
        page.replace_contents(content.flate_encode())
    buf = io.BytesIO()
    writer.write(buf)
    return buf.getvalue()
