"""The PDF's other pages: the cover (caution box, contents), the random digits and
the provenance.  Formats only.
"""

from __future__ import annotations

from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import CondPageBreak, NextPageTemplate, PageBreak, Spacer, Table, TableStyle

from .pdf_kit import GREY, Mark, para
from .pdf_oc import contents_rows as oc_contents_rows


def cover_story(tset, blocks, sections, pages, geo) -> list:
    fw, _ = geo.frame(False)
    out = []
    for style, text in blocks:
        if style == "caution":
            box = Table([[para(text, "caution")]], colWidths=[fw])
            box.setStyle(TableStyle([("BOX", (0, 0), (-1, -1), 2.0, colors.black),
                                     ("BACKGROUND", (0, 0), (-1, -1), GREY),
                                     ("LEFTPADDING", (0, 0), (-1, -1), 8),
                                     ("RIGHTPADDING", (0, 0), (-1, -1), 8),
                                     ("TOPPADDING", (0, 0), (-1, -1), 6),
                                     ("BOTTOMPADDING", (0, 0), (-1, -1), 8)]))
            out += [Spacer(1, 4), box, Spacer(1, 6)]
        elif style == "heading":
            out += [CondPageBreak(40 * mm), para(text, "heading")]
        else:
            out.append(para(text, style))
    out += [CondPageBreak(60 * mm), para("Contents", "heading")]
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


def digits_story(tset, pages, geo) -> list:
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
            out.append(Mark("digits", pages))
        groups = max(len(g) for _, g in lines)
        size = len(lines[0][1][0])
        how = (f"grouped {size} at a time as they are read" if size == d else
               f"in groups of {size} for the eye; read them {d} at a time across the groups")
        out.append(para(f"Random digits, page {page + 1} of {len(layout)}", "sec"))
        out.append(para(f"From Python random.Random({spec.seed}), {len(digits)} digits in all, "
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


def provenance_story(rows, pages, geo) -> list:
    fw, _ = geo.frame(False)
    out = [NextPageTemplate("portrait"), PageBreak(), Mark("provenance", pages),
           para("Provenance", "sec"), Spacer(1, 4)]
    data = [[para(k, "note"), para(str(v), "note")] for k, v in rows]
    tab = Table(data, colWidths=[55 * mm, fw - 55 * mm], hAlign="LEFT")
    tab.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"),
                             ("LINEBELOW", (0, 0), (-1, -1), 0.25, colors.grey)]))
    out.append(tab)
    return out
