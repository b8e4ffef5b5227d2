"""The report as a Word document, built from its document objects with python-docx.

Headings use Word's heading styles (so a firm's template restyles them and its table of contents
finds them); tables are real Word tables in the "Table Grid" style with a header row that repeats
across pages; captions use the "Caption" style; figures are embedded at the resolution they were
drawn, formulas as images at 300 dpi.
"""

from __future__ import annotations

import io

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
from bayes.report.printed import FORMULA_DPI, formula_png, png_size, section_titles

TEXT_WIDTH_INCHES = 6.3  # A4 or Letter with python-docx's default margins


def _repeat_header(row) -> None:
    """Mark a table row as the header row Word repeats at the top of every page."""
    from docx.oxml import OxmlElement
    from docx.oxml.ns import qn

    props = row._tr.get_or_add_trPr()
    mark = OxmlElement("w:tblHeader")
    mark.set(qn("w:val"), "true")
    props.append(mark)


def _keep_rows_whole(row) -> None:
    """A row is never split across two pages."""
    from docx.oxml import OxmlElement

    row._tr.get_or_add_trPr().append(OxmlElement("w:cantSplit"))


def _caption(doc, label: str, caption: str) -> None:
    p = doc.add_paragraph(style="Caption")
    p.add_run(f"{label}. ").bold = True
    p.add_run(caption)


def _table(doc, table: Table) -> None:
    from docx.enum.text import WD_ALIGN_PARAGRAPH
    from docx.shared import Pt

    _caption(doc, table.label, table.caption)
    out = doc.add_table(rows=1 + len(table.rows), cols=len(table.headers))
    out.style = "Table Grid"
    for j, header in enumerate(table.headers):
        cell = out.rows[0].cells[j]
        cell.text = ""
        cell.paragraphs[0].add_run(header).bold = True
    _repeat_header(out.rows[0])
    for i, row in enumerate(table.rows, start=1):
        _keep_rows_whole(out.rows[i])
        for j, value in enumerate(row):
            paragraph = out.rows[i].cells[j].paragraphs[0]
            paragraph.text = "\n".join(cell_lines(value))
            if numeric_cell(value):
                paragraph.alignment = WD_ALIGN_PARAGRAPH.RIGHT
    for row in out.rows:
        for cell in row.cells:
            for paragraph in cell.paragraphs:
                for run in paragraph.runs:
                    run.font.size = Pt(8)
    doc.add_paragraph()


def _picture(doc, png: bytes, dpi: float) -> None:
    from docx.shared import Inches

    w, _ = png_size(png)
    doc.add_picture(io.BytesIO(png), width=Inches(min(TEXT_WIDTH_INCHES, w / dpi)))


def render_docx(report: Report) -> bytes:
    """The report as the bytes of a .docx file."""
    import docx

    from bayes.report.figures import DPI

    doc = docx.Document()
    doc.core_properties.title = report.title
    doc.core_properties.subject = report.subtitle
    doc.core_properties.author = ""
    doc.add_heading(report.title, level=0)
    doc.add_paragraph(report.subtitle, style="Subtitle")
    for section, heading in section_titles(report):
        doc.add_heading(heading, level=1)
        for b in section.blocks:
            if isinstance(b, Paragraph):
                doc.add_paragraph(b.text)
            elif isinstance(b, Bullets):
                for item in b.items:
                    doc.add_paragraph(item, style="List Bullet")
            elif isinstance(b, Table):
                _table(doc, b)
            elif isinstance(b, Figure):
                _picture(doc, b.png, DPI)
                _caption(doc, b.label, b.caption)
            elif isinstance(b, Formula):
                if b.tex:
                    _picture(doc, formula_png(b.tex), FORMULA_DPI)
                else:
                    doc.add_paragraph(b.text)
    buffer = io.BytesIO()
    doc.save(buffer)
    return buffer.getvalue()
