"""Render a :class:`bayes.report.document.Report`: one self-contained HTML file, Markdown with PNG
figures beside it, CSV tables; all written as one set once everything is rendered."""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

from bayes.errors import InputError
from bayes.report.document import Report, Table, cell_lines, numeric_cell
from elicit.outputs import write_set

PAPER_NAMES = {"a4": "A4", "letter": "Letter"}


def write_report(
    report: Report,
    *,
    html: str | Path | None = None,
    markdown: str | Path | None = None,
    csv_dir: str | Path | None = None,
    pdf: str | Path | None = None,
    docx: str | Path | None = None,
    paper: str = "a4",
) -> list[Path]:
    """Render ``report`` and write the requested outputs; return the paths written.

    Everything is rendered in memory first; then the files are replaced as one set
    (:func:`elicit.outputs.write_set`): each is written to a temporary file in its folder,
    and only when all are on disk are they renamed over the old ones, so an existing report
    is replaced only by a complete new one, never new HTML beside old Markdown. A run killed
    while renaming is finished by the next one, which also removes its temporary files.

    Parameters
    ----------
    html : path, optional
        One self-contained HTML file (figures embedded as data URIs).
    markdown : path, optional
        Markdown file; its figures are written beside it as ``<stem>-<figure>.png``.
    csv_dir : path, optional
        Folder for one CSV file per table (created if missing).
    pdf : path, optional
        PDF on ``paper`` ("a4" or "letter"), drawn with reportlab (:mod:`bayes.report.pdf`).
    docx : path, optional
        Word document, built with python-docx (:mod:`bayes.report.word`).
    """
    files: dict[Path, bytes] = {}
    if html is not None:
        files[_output(html, ".html")] = render_html(report).encode("utf-8")
    if markdown is not None:
        md_path = _output(markdown, ".md")
        names = {f.key: f"{md_path.stem}-{f.key}.png" for f in report.figures}
        files[md_path] = render_markdown(report, names).encode("utf-8")
        for fig in report.figures:
            files[md_path.with_name(names[fig.key])] = fig.png
    if csv_dir is not None:
        folder = Path(csv_dir)
        if folder.exists() and not folder.is_dir():
            raise InputError(f"csv_dir must be a folder, got {folder} (a file)")
        for table in report.tables:
            files[folder / f"{table.key}.csv"] = table_csv(table).encode("utf-8")
    if pdf is not None:
        from bayes.report.pdf import PAPERS, render_pdf

        if paper not in PAPERS:
            raise InputError(f"paper must be one of {', '.join(PAPERS)}, got {paper!r}")
        files[_output(pdf, ".pdf")] = render_pdf(report, paper=paper)
    if docx is not None:
        from bayes.report.word import render_docx

        files[_output(docx, ".docx")] = render_docx(report)
    for path in files:
        path.parent.mkdir(parents=True, exist_ok=True)
    return write_set(files)


def outputs_text(
    report: Report,
    *,
    html: str | Path | None = None,
    markdown: str | Path | None = None,
    csv_dir: str | Path | None = None,
    pdf: str | Path | None = None,
    docx: str | Path | None = None,
    paper: str = "a4",
) -> str:
    """Where :func:`write_report` put the report, in a few lines for the terminal."""
    lines = []
    n_fig = len(report.figures)
    if html is not None:
        lines.append(f"Report: {html} (one self-contained file, {n_fig} figures embedded)")
    if markdown is not None:
        lines.append(f"Markdown: {markdown} (+ {n_fig} PNG figures beside it)")
    if csv_dir is not None:
        lines.append(f"Tables: {len(report.tables)} CSV files in {Path(csv_dir)}/")
    if pdf is not None:
        lines.append(f"PDF: {pdf} ({PAPER_NAMES.get(paper, paper)} paper)")
    if docx is not None:
        lines.append(f"Word: {docx}")
    return "\n".join(lines)


def _output(path: str | Path, suffix: str) -> Path:
    path = Path(path)
    if path.is_dir():
        raise InputError(f"{path}: is a folder; give a file name such as report{suffix}")
    return path


# --------------------------------------------------------------------------- rendering


def _environment(autoescape: bool):
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("bayes.report", "templates"),
        autoescape=autoescape,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        undefined=jinja2.StrictUndefined,
    )
    env.filters["md"] = _md_escape
    env.filters["cell_md"] = lambda c: "<br>".join(_md_escape(x) for x in cell_lines(c))
    env.filters["lines"] = cell_lines
    env.filters["numeric"] = numeric_cell
    return env


def render_html(report: Report) -> str:
    """One self-contained HTML document (autoescaped; figures as base64 data URIs)."""
    import base64

    images = {f.key: base64.b64encode(f.png).decode("ascii") for f in report.figures}
    return _environment(True).get_template("report.html.j2").render(report=report, images=images)


def render_markdown(report: Report, figure_files: dict[str, str]) -> str:
    """Markdown (pipe tables) referring to the PNG files named in ``figure_files``."""
    template = _environment(False).get_template("report.md.j2")
    return template.render(report=report, files=figure_files)


def table_csv(table: Table) -> str:
    """The table as CSV text, numbers as numbers.

    A column whose cells all show one number (or ``-``) is a numeric column: a cell showing a
    plain number keeps it; one showing a display string (``>0.999``, ``<0.001``, ``inf``,
    ``3.1 ± 0.2``, ``-``) holds the number behind it (:attr:`Table.values`; empty when missing)
    and a column ``<heading> shown`` beside it says what the cell showed. Several lines in one
    text cell are joined by '; '.
    """
    numeric = [_numeric_column(table, j) for j in range(len(table.headers))]
    flagged = [
        numeric[j] and any(not _PLAIN.fullmatch(_text(row[j])) for row in table.rows)
        for j in range(len(table.headers))
    ]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    header: list[str] = []
    for j, h in enumerate(table.headers):
        header += [h, f"{h} shown"] if flagged[j] else [h]
    writer.writerow(header)
    for i, row in enumerate(table.rows):
        out: list[str] = []
        for j, cell in enumerate(row):
            text = _text(cell)
            if not flagged[j]:
                out.append(text)
            elif _PLAIN.fullmatch(text):
                out += [text, ""]
            else:
                value = table.values[i][j] if table.values else None
                out += ["" if value is None else repr(float(value)), text]
        writer.writerow(out)
    return buffer.getvalue()


def _text(cell) -> str:
    return "; ".join(cell_lines(cell)).strip()


def _numeric_column(table: Table, j: int) -> bool:
    cells = [row[j] for row in table.rows]
    return (
        bool(cells) and all(numeric_cell(c) for c in cells) and any(_text(c) != "-" for c in cells)
    )


_PLAIN = re.compile(r"[-+]?\d[\d.]*(e[-+]?\d+)?")  # a finite number as a CSV reader reads it
_MD_SPECIAL = re.compile(r"([\\`*\[\]|<>&])")


def _md_escape(text: str) -> str:
    """Text safe inside Markdown, with no HTML entities: a backslash before each of
    < > & * [ ] | ` \\ (CommonMark lets any ASCII punctuation be escaped so)."""
    return _MD_SPECIAL.sub(r"\\\1", str(text)).replace("\n", " ")
