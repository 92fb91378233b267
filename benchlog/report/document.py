"""The report as a plain document: sections of paragraphs, tables, verdicts and figures.

`report.build` fills it from runs and analysis; `report.html` and `report.pdf`
render the very same document, so the HTML and the PDF cannot drift apart.
Every string here is plain text (possibly from a user: serial numbers, notes,
*IDN? replies); renderers escape it, nothing in here is markup.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Literal, Union

if TYPE_CHECKING:  # the document's types only; drawing imports matplotlib where it draws
    from matplotlib.figure import Figure

ParagraphKind = Literal["text", "note", "warning", "safety"]


@dataclass(frozen=True)
class Paragraph:
    text: str
    kind: ParagraphKind = "text"


@dataclass(frozen=True)
class Table:
    """A table of text cells; the first column is usually the name of a row."""

    columns: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    caption: str = ""


@dataclass(frozen=True)
class VerdictBlock:
    """A verdict shown as its word (pass / fail / conditional), the decision rule and the numbers."""

    outcome: str
    headline: str
    rule: str
    details: tuple[str, ...] = ()


@dataclass(frozen=True, eq=False)
class FigureBlock:
    """A figure and its caption; `name` is a short file-friendly id ("vi", "loss", ...)."""

    name: str
    figure: Figure
    caption: str = ""


Block = Union[Paragraph, Table, VerdictBlock, FigureBlock]


@dataclass(frozen=True)
class Section:
    title: str
    blocks: tuple[Block, ...] = ()
    subsections: tuple["Section", ...] = ()
    status: str = ""  # e.g. "incomplete" — shown beside the title

    def walk(self):
        """This section and all below it, depth first."""
        yield self
        for sub in self.subsections:
            yield from sub.walk()


@dataclass(frozen=True)
class Document:
    title: str
    subtitle: str = ""
    sections: tuple[Section, ...] = field(default=())

    def figures(self) -> list[FigureBlock]:
        return [b for s in self.sections for sec in s.walk() for b in sec.blocks if isinstance(b, FigureBlock)]
