"""The plain objects of a written document: sections of paragraphs, lists, tables, figures.

The section builders (``bayes.report.sections_*``, assembled by :mod:`bayes.report.build`) fill
them; :mod:`bayes.report.render` turns them into HTML, Markdown and CSV.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

Cell = str | tuple[str, ...]  # a tuple is several lines in one cell (e.g. two experts)


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
    """

    key: str
    caption: str
    headers: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    kind: ClassVar[str] = "table"


@dataclass(frozen=True)
class Figure:
    """A PNG figure with its caption (the caption is also the image's alternative text)."""

    key: str
    caption: str
    png: bytes
    kind: ClassVar[str] = "figure"


@dataclass(frozen=True)
class Formula:
    """A displayed formula: plain text for Markdown, MathML for HTML.

    ``mathml`` comes only from the constants of this module (never from user input): it is the
    one piece of markup the HTML template inserts unescaped.
    """

    text: str
    mathml: str
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
