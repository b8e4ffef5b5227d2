"""The report as PDF and Word, built from the document objects (not from HTML): Word headings,
real Word tables with their header rows, embedded figures; PDF text that holds every section title
and every table and figure number, pages that render."""

from __future__ import annotations

import io
import re
import subprocess

import pandas as pd
import pytest
from conftest import DEMO
from system_tools import install

import bayes
from bayes.report.build import report_from_result
from bayes.report.pdf import render_pdf
from bayes.report.printed import png_size, section_titles
from bayes.report.sections_priors import HEADERS
from bayes.report.word import render_docx
from elicit.read import read_prior_file

NAMES = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]


@pytest.fixture(scope="module")
def report():
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    doc = read_prior_file(DEMO / "priors.toml")
    quick = bayes.SamplerSettings(chains=2, draws=300, warmup=300, seed=5)
    fit = bayes.fit(frame, "strength", NAMES, priors=doc, sampler=quick)
    return report_from_result(fit)


def test_word_headings_tables_and_figures(report):
    import docx

    doc = docx.Document(io.BytesIO(render_docx(report)))
    headings = [p.text for p in doc.paragraphs if p.style.name == "Heading 1"]
    assert headings == [title for _, title in section_titles(report)]
    assert doc.paragraphs[0].style.name == "Title" and doc.paragraphs[0].text == report.title
    assert len(doc.tables) == len(report.tables)
    for table, block in zip(doc.tables, report.tables, strict=True):
        assert [c.text for c in table.rows[0].cells] == list(block.headers)
        assert len(table.rows) == 1 + len(block.rows)
        # the header row repeats on every page (w:tblHeader)
        assert table.rows[0]._tr.trPr.xml.count("tblHeader") == 1
    priors = next(t for t, b in zip(doc.tables, report.tables, strict=True) if b.key == "priors")
    assert tuple(c.text for c in priors.rows[0].cells) == HEADERS
    formulas = sum(1 for s in report.sections for b in s.blocks if b.kind == "formula")
    assert len(doc.inline_shapes) == len(report.figures) + formulas
    captions = [p.text for p in doc.paragraphs if p.style.name == "Caption"]
    for fig in report.figures:
        assert f"{fig.label}. {fig.caption}" in captions


def test_pdf_text_layer_and_pages(report, tmp_path):
    tools = {name: f"/usr/bin/{name}" for name in ("pdftotext", "pdftoppm")}
    for program in tools.values():
        reason = install(program, "poppler-utils")
        if reason:
            pytest.skip(f"poppler unavailable: {reason}")
    for paper in ("a4", "letter"):
        pdf = tmp_path / f"report-{paper}.pdf"
        pdf.write_bytes(render_pdf(report, paper=paper))
        text = subprocess.run([tools["pdftotext"], str(pdf), "-"], capture_output=True,
                              text=True, check=True).stdout  # fmt: skip
        flat = re.sub(r"\s+", " ", text)
        for _, title in section_titles(report):
            assert title in flat, title
        for block in (*report.tables, *report.figures):
            assert f"{block.label}." in flat, block.label
        subprocess.run([tools["pdftoppm"], "-r", "40", "-png", "-f", "1", "-l", "2", str(pdf),
                        str(tmp_path / paper)], check=True)  # fmt: skip
        pages = sorted(tmp_path.glob(f"{paper}-*.png"))
        assert len(pages) == 2
        w, h = png_size(pages[0].read_bytes())
        # A4 is 210 x 297 mm, Letter 8.5 x 11 in (common practice)
        assert abs(h / w - (297 / 210 if paper == "a4" else 11 / 8.5)) < 0.01


def test_an_unknown_paper_size_is_refused(report):
    with pytest.raises(ValueError, match="paper must be one of a4, letter"):
        render_pdf(report, paper="a3")
