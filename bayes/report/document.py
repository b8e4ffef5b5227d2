"""The plain objects of a written document: sections of paragraphs, lists, tables, figures.

The section builders (``bayes.report.sections_*``, assembled by :mod:`bayes.report.build`) fill
them; :func:`numbered` gives the tables and figures their numbers and resolves the text's
references to them (:func:`ref`); :mod:`bayes.report.render` turns them into HTML, Markdown, CSV,
PDF and Word.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass
from typing import ClassVar

Cell = str | tuple[str, ...]  # a tuple is several lines in one cell (e.g. two experts)


def cell_lines(cell: Cell) -> tuple[str, ...]:
    """The lines of a table cell (one for a plain string)."""
    return (cell,) if isinstance(cell, str) else tuple(cell)


# A cell that shows one number ("-0.9", ">0.999", "1.2e-05", "inf", "3.1 ± 0.2", "-"): set right.
_NUMBER = re.compile(r"-|[<>]?[-+]?(\d[\d.]*(e[-+]?\d+)?|inf)( ± [\d.e+-]+)?")


def numeric_cell(cell: Cell) -> bool:
    """Whether the cell holds one number (right-aligned in every output)."""
    lines = cell_lines(cell)
    return len(lines) == 1 and bool(_NUMBER.fullmatch(lines[0].strip()))


@dataclass(frozen=True)
class Paragraph:
    """Plain text (escaped when rendered)."""

    text: str
    kind: ClassVar[str] = "paragraph"


@dataclass(frozen=True)
class Bullets:
    """A bullet list of plain-text items."""

    items: tuple[str, ...]
    kind: ClassVar[str] = "bullets"


@dataclass(frozen=True)
class Table:
    """A table with its cells already formatted as text.

    Attributes
    ----------
    key : str
        File stem of its CSV file (``<key>.csv``).
    caption : str
    headers : tuple of str
        Column headings, with units where a column has one unit.
    rows : tuple of tuple of Cell
    values : tuple of tuple of (float or None), optional
        The numbers behind the cells, row by row and column by column (None for a text cell or
        a missing number), for the machine-readable outputs: where a cell shows a display
        string (``">0.999"``, ``"-"``, ``"inf"``) the CSV holds this number instead. Empty when
        the builder has no numbers beyond what the cells show.
    """

    key: str
    caption: str
    headers: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    number: int | None = None
    values: tuple[tuple[float | None, ...], ...] = ()
    kind: ClassVar[str] = "table"

    def __post_init__(self) -> None:
        if self.values and [len(v) for v in self.values] != [len(r) for r in self.rows]:
            raise ValueError(f"table {self.key}: values must have the shape of its rows")

    @property
    def label(self) -> str:
        """``"Table 3"`` once numbered (see :func:`numbered`), else ``"Table"``."""
        return "Table" if self.number is None else f"Table {self.number}"


@dataclass(frozen=True)
class Figure:
    """A PNG figure with its caption (the caption is also the image's alternative text)."""

    key: str
    caption: str
    png: bytes
    number: int | None = None
    kind: ClassVar[str] = "figure"

    @property
    def label(self) -> str:
        """``"Figure 2"`` once numbered (see :func:`numbered`), else ``"Figure"``."""
        return "Figure" if self.number is None else f"Figure {self.number}"


@dataclass(frozen=True)
class Formula:
    """A displayed formula: plain text for Markdown, MathML for HTML.

    ``mathml`` comes only from the constants of this module (never from user input): it is the
    one piece of markup the HTML template inserts unescaped.
    """

    text: str
    mathml: str
    tex: str = ""  # matplotlib mathtext, drawn as an image in PDF and Word
    kind: ClassVar[str] = "formula"


Block = Paragraph | Bullets | Table | Figure | Formula


@dataclass(frozen=True)
class Section:
    """A numbered section (``numbered=False`` for an appendix)."""

    key: str
    title: str
    blocks: tuple[Block, ...]
    numbered: bool = True


@dataclass(frozen=True)
class Report:
    """The whole report as plain objects."""

    title: str
    subtitle: str
    sections: tuple[Section, ...]

    @property
    def tables(self) -> tuple[Table, ...]:
        return tuple(b for s in self.sections for b in s.blocks if isinstance(b, Table))

    @property
    def figures(self) -> tuple[Figure, ...]:
        return tuple(b for s in self.sections for b in s.blocks if isinstance(b, Figure))


# --------------------------------------------------------------------------- numbers, references

_MARK = "\x1f"  # a control character: never in the report's text (the validator refuses them)
_REF = re.compile(f"{_MARK}(table|figure):([\\w-]+){_MARK}")


def ref(kind: str, key: str) -> str:
    """A reference to a table or figure by its key, resolved by :func:`numbered` to its label
    (``"Table 3"``); one to a block that is not in the report reads "below"."""
    return f"{_MARK}{kind}:{key}{_MARK}"


def numbered(report: Report) -> Report:
    """The report with its tables and figures numbered in order of appearance (appendices
    included) and every :func:`ref` in its text replaced by the label it points to."""
    counts = {"table": 0, "figure": 0}
    labels: dict[tuple[str, str], str] = {}
    sections = []
    for section in report.sections:
        blocks = []
        for b in section.blocks:
            if isinstance(b, Table | Figure):
                counts[b.kind] += 1
                b = dataclasses.replace(b, number=counts[b.kind])
                labels[(b.kind, b.key)] = b.label
            blocks.append(b)
        sections.append(dataclasses.replace(section, blocks=tuple(blocks)))

    def resolve(text: str) -> str:
        return _REF.sub(lambda m: labels.get((m[1], m[2]), "below"), text)

    def text_of(b: Block) -> Block:
        if isinstance(b, Paragraph):
            return Paragraph(resolve(b.text))
        if isinstance(b, Bullets):
            return Bullets(tuple(resolve(x) for x in b.items))
        if isinstance(b, Table | Figure):
            return dataclasses.replace(b, caption=resolve(b.caption))
        return b

    sections = [
        dataclasses.replace(s, blocks=tuple(text_of(b) for b in s.blocks)) for s in sections
    ]
    return dataclasses.replace(report, sections=tuple(sections))
