"""The report as a PDF, built from its document objects with reportlab (no browser, no HTML).

Headings carry PDF bookmarks; each section after the findings starts a page; a table's header row
repeats on every page it spans and no row, figure or caption is split; figures are embedded at
the resolution they were drawn (150 dpi) and formulas at 300 dpi.
"""

from __future__ import annotations

import io
from xml.sax.saxutils import escape

from bayes.report.document import (
    Bullets,
    Figure,
    Formula,
    Paragraph,
    Report,
    Table,
    cell_lines,
    numeric_cell,
)
from bayes.report.printed import font_path, formula_png, png_size, section_titles

PAPERS = ("a4", "letter")
_MARGIN_MM = (15.0, 16.0, 15.0, 18.0)  # left, top, right, bottom
_FONTS = {"Body": "serif", "Body-Bold": "serif-bold", "Sans": "regular", "Sans-Bold": "bold",
          "Sans-Italic": "italic"}  # fmt: skip


def _register_fonts() -> None:
    from reportlab.lib.fonts import addMapping
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    for name, kind in _FONTS.items():
        if name not in pdfmetrics.getRegisteredFontNames():
            pdfmetrics.registerFont(TTFont(name, str(font_path(kind))))
    # <b> and <i> in a paragraph pick the family's bold and italic faces
    for family, bold, italic in (("Body", "Body-Bold", "Body"), ("Sans", "Sans-Bold",
                                                                "Sans-Italic")):  # fmt: skip
        addMapping(family, 0, 0, family)
        addMapping(family, 1, 0, bold)
        addMapping(family, 0, 1, italic)
        addMapping(family, 1, 1, bold)


def _styles():
    from reportlab.lib.styles import ParagraphStyle

    body = ParagraphStyle("body", fontName="Body", fontSize=10, leading=14, spaceAfter=6)
    return {
        "title": ParagraphStyle("title", parent=body, fontName="Body-Bold", fontSize=19,
                                leading=23, spaceAfter=4),
        "subtitle": ParagraphStyle("subtitle", parent=body, fontSize=12, leading=16,
                                   spaceAfter=14),
        "h1": ParagraphStyle("h1", parent=body, fontName="Body-Bold", fontSize=14, leading=18,
                             spaceBefore=8, spaceAfter=8, keepWithNext=1),
        "body": body,
        "bullet": ParagraphStyle("bullet", parent=body, leftIndent=14, bulletIndent=3,
                                 spaceAfter=3),
        "caption": ParagraphStyle("caption", parent=body, fontName="Sans", fontSize=8.5,
                                  leading=11, spaceBefore=3, spaceAfter=4, keepWithNext=1),
        "figcaption": ParagraphStyle("figcaption", parent=body, fontName="Sans", fontSize=8.5,
                                     leading=11, spaceBefore=3, spaceAfter=10),
        "cell": ParagraphStyle("cell", fontName="Sans", fontSize=7, leading=8.6),
        "number": ParagraphStyle("number", fontName="Sans", fontSize=7, leading=8.6,
                                 alignment=2),
        "head": ParagraphStyle("head", fontName="Sans-Bold", fontSize=7, leading=8.6),
    }  # fmt: skip


def _text(text: str) -> str:
    """Plain text as reportlab paragraph markup (escaped: the report's text is never markup)."""
    return escape(str(text))


def _column_widths(table: Table, width: float, styles) -> list[float]:
    """Widths that fit the frame: each column at least its longest word, the rest shared in
    proportion to how much more its longest line needs."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    pad = 6.0
    rows = [tuple(table.headers), *table.rows]
    least, natural = [], []
    for j in range(len(table.headers)):
        lines = [line for row in rows for line in cell_lines(row[j])]
        words = [w for line in lines for w in line.split()] or [""]
        size = styles["cell"].fontSize
        least.append(max(stringWidth(w, "Sans-Bold", size) for w in words) + pad)
        natural.append(max(stringWidth(line, "Sans-Bold", size) for line in lines) + pad)
    if sum(natural) <= width:
        return natural
    if sum(least) >= width:  # even the words do not fit: shrink every column alike
        return [w * width / sum(least) for w in least]
    spare = width - sum(least)
    extra = [n - m for n, m in zip(natural, least, strict=True)]
    return [m + spare * e / sum(extra) for m, e in zip(least, extra, strict=True)]


def _table(table: Table, width: float, styles) -> list:
    from reportlab.lib import colors
    from reportlab.platypus import Paragraph as P
    from reportlab.platypus import Spacer, TableStyle
    from reportlab.platypus import Table as T

    def cell(value, style):
        return P("<br/>".join(_text(x) for x in cell_lines(value)), style)

    data = [[cell(h, styles["head"]) for h in table.headers]]
    data += [[cell(c, styles["number" if numeric_cell(c) else "cell"]) for c in row]
             for row in table.rows]  # fmt: skip
    out = T(data, colWidths=_column_widths(table, width, styles), repeatRows=1, hAlign="LEFT")
    out.setStyle(TableStyle([
        ("GRID", (0, 0), (-1, -1), 0.4, colors.HexColor("#999999")),
        ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor("#eeeeee")),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), 3), ("RIGHTPADDING", (0, 0), (-1, -1), 3),
        ("TOPPADDING", (0, 0), (-1, -1), 1.5), ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
    ]))  # fmt: skip
    caption = P(f"<b>{_text(table.label)}.</b> {_text(table.caption)}", styles["caption"])
    return [caption, out, Spacer(1, 8)]


def _image(png: bytes, width: float, dpi: float):
    from reportlab.platypus import Image

    w, h = png_size(png)
    w_pt, h_pt = 72.0 * w / dpi, 72.0 * h / dpi
    scale = min(1.0, width / w_pt)
    return Image(io.BytesIO(png), width=w_pt * scale, height=h_pt * scale, hAlign="LEFT")


def _blocks(section, width: float, styles) -> list:
    from reportlab.platypus import KeepTogether
    from reportlab.platypus import Paragraph as P

    from bayes.report.figures import DPI

    out: list = []
    for b in section.blocks:
        if isinstance(b, Paragraph):
            out.append(P(_text(b.text), styles["body"]))
        elif isinstance(b, Bullets):
            out += [P(_text(item), styles["bullet"], bulletText="•") for item in b.items]
        elif isinstance(b, Table):
            out += _table(b, width, styles)
        elif isinstance(b, Figure):
            caption = P(f"<b>{_text(b.label)}.</b> {_text(b.caption)}", styles["figcaption"])
            out.append(KeepTogether([_image(b.png, width, DPI), caption]))
        elif isinstance(b, Formula):
            out.append(_image(formula_png(b.tex), width, 300.0) if b.tex else
                       P(_text(b.text), styles["body"]))  # fmt: skip
    return out


def render_pdf(report: Report, *, paper: str = "a4") -> bytes:
    """The report as PDF bytes on A4 or Letter paper."""
    from reportlab.lib.pagesizes import A4, letter
    from reportlab.lib.units import mm
    from reportlab.platypus import PageBreak
    from reportlab.platypus import Paragraph as P

    if paper not in PAPERS:
        raise ValueError(f"paper must be one of {', '.join(PAPERS)}, got {paper!r}")
    _register_fonts()
    styles = _styles()
    size = A4 if paper == "a4" else letter
    left, top, right, bottom = (m * mm for m in _MARGIN_MM)
    buffer = io.BytesIO()
    doc = _Document(buffer, pagesize=size, leftMargin=left, rightMargin=right, topMargin=top,
                    bottomMargin=bottom, title=report.title, author="", subject=report.subtitle,
                    invariant=1)  # fmt: skip
    width = size[0] - left - right
    story: list = [P(_text(report.title), styles["title"]),
                   P(_text(report.subtitle), styles["subtitle"])]  # fmt: skip
    for i, (section, heading) in enumerate(section_titles(report)):
        if i > 0 and section.key != "study":  # the findings and the study share the first page
            story.append(PageBreak())
        h = P(_text(heading), styles["h1"])
        h.outline_key = section.key  # read by _Document.afterFlowable for the bookmarks
        story.append(h)
        story += _blocks(section, width, styles)
    doc.build(story, onFirstPage=_footer(report), onLaterPages=_footer(report))
    return buffer.getvalue()


def _footer(report: Report):
    def draw(canvas, doc) -> None:
        canvas.saveState()
        canvas.setFont("Sans", 7.5)
        canvas.drawString(doc.leftMargin, 10 * 72 / 25.4, report.title[:110])
        canvas.drawRightString(doc.pagesize[0] - doc.rightMargin, 10 * 72 / 25.4,
                               f"page {doc.page}")  # fmt: skip
        canvas.restoreState()

    return draw


def _document_class():
    from reportlab.platypus import SimpleDocTemplate

    class Document(SimpleDocTemplate):
        def afterFlowable(self, flowable) -> None:  # noqa: N802  (reportlab's hook)
            key = getattr(flowable, "outline_key", None)
            if key is not None:
                self.canv.bookmarkPage(key)
                self.canv.addOutlineEntry(flowable.getPlainText(), key, level=0)

    return Document


def _Document(*args, **kwargs):  # noqa: N802  (a class made lazily, so reportlab loads late)
    return _document_class()(*args, **kwargs)
