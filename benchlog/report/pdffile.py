"""The document as a PDF: text pages in a fixed-width layout, one page per figure (matplotlib PdfPages).

The PDF holds the same content as the HTML, rendered from the same
`Document`. Text pages are laid out as monospaced lines so tables stay in
columns without another dependency; a figure always starts a new page with its
caption under it. `plan_pages` returns the layout, so the page count is known
before anything is drawn.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass
from pathlib import Path

from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure

from .document import Block, Document, FigureBlock, Paragraph, Section, Table, VerdictBlock

#: A4 portrait, in inches.
PAGE_SIZE = (8.27, 11.69)
LINES_PER_PAGE = 70
WIDTH_CHARS = 100
FONT_SIZE_PT = 7.6


@dataclass(frozen=True)
class TextPage:
    lines: tuple[str, ...]


@dataclass(frozen=True, eq=False)
class FigurePage:
    block: FigureBlock
    number: int


def _wrap(text: str, indent: str = "", width: int = WIDTH_CHARS) -> list[str]:
    out: list[str] = []
    for para in str(text).split("\n"):
        out.extend(textwrap.wrap(para, width=width, initial_indent=indent,
                                 subsequent_indent=indent, break_long_words=True,
                                 replace_whitespace=True) or [indent.rstrip()])
    return out


def table_lines(table: Table, width: int = WIDTH_CHARS) -> list[str]:
    """A table as fixed-width lines: columns shrink (cells wrap) until the table fits `width`."""
    n = len(table.columns)
    cells = [list(table.columns)] + [[str(c) for c in row] + [""] * (n - len(row)) for row in table.rows]
    widths = [max(len(line) for row in cells for line in (row[j].split("\n") or [""])) for j in range(n)]
    widths = [max(w, 1) for w in widths]
    sep = " | "
    while sum(widths) + len(sep) * (n - 1) > width and max(widths) > 6:
        widths[widths.index(max(widths))] -= 1
    out: list[str] = []
    if table.caption:
        out.extend(_wrap(table.caption))
    for r, row in enumerate(cells):
        wrapped = [_wrap(cell, width=widths[j]) or [""] for j, cell in enumerate(row)]
        for k in range(max(len(w) for w in wrapped)):
            out.append(sep.join((w[k] if k < len(w) else "").ljust(widths[j]) for j, w in enumerate(wrapped)).rstrip())
        if r == 0:
            out.append("-+-".join("-" * w for w in widths))
    return out


def _block_lines(block: Block) -> list[str]:
    if isinstance(block, Paragraph):
        prefix = {"text": "", "note": "Note: ", "warning": "WARNING: ", "safety": ""}[block.kind]
        return _wrap(prefix + block.text) + [""]
    if isinstance(block, Table):
        return table_lines(block) + [""]
    if isinstance(block, VerdictBlock):
        lines = _wrap(f"VERDICT: {block.outcome.upper()} — {block.headline}")
        lines += _wrap(f"Decision rule: {block.rule}", indent="  ")
        for d in block.details:
            lines += _wrap(f"- {d}", indent="  ")
        return lines + [""]
    raise TypeError(f"not a text block: {block!r}")


def plan_pages(doc: Document) -> list[TextPage | FigurePage]:
    """The page layout: text flows over pages of LINES_PER_PAGE lines; each figure takes one page."""
    pages: list[TextPage | FigurePage] = []
    buffer: list[str] = _wrap(doc.title) + (_wrap(doc.subtitle) if doc.subtitle else []) + [""]
    figure_number = 0

    def flush() -> None:
        nonlocal buffer
        while buffer and not buffer[-1].strip():
            buffer.pop()
        for start in range(0, len(buffer), LINES_PER_PAGE):
            pages.append(TextPage(tuple(buffer[start:start + LINES_PER_PAGE])))
        buffer = []

    def walk(section: Section, level: int) -> None:
        nonlocal figure_number
        title = section.title + (f" [{section.status.upper()}]" if section.status else "")
        rule = "=" if level <= 2 else "-"
        buffer.extend(_wrap(title) + [rule * min(len(title), WIDTH_CHARS), ""])
        for block in section.blocks:
            if isinstance(block, FigureBlock):
                flush()
                figure_number += 1
                pages.append(FigurePage(block, figure_number))
            else:
                buffer.extend(_block_lines(block))
        for sub in section.subsections:
            walk(sub, level + 1)

    for section in doc.sections:
        walk(section, 2)
    flush()
    return pages


def _draw_text_page(page: TextPage) -> Figure:
    fig = Figure(figsize=PAGE_SIZE)
    top, bottom = 0.96, 0.04
    step = (top - bottom) / LINES_PER_PAGE
    for i, line in enumerate(page.lines):
        fig.text(0.06, top - i * step, line, family="monospace", fontsize=FONT_SIZE_PT,
                 va="top", ha="left", parse_math=False)
    return fig


def _save_figure_page(pdf: PdfPages, page: FigurePage) -> None:
    """Save a figure with its caption under it, leaving the figure as it was."""
    fig = page.block.figure
    engine = fig.get_layout_engine()
    old_rect = engine.get().get("rect") if engine is not None else None
    if engine is not None and old_rect is not None:
        engine.set(rect=(0, 0.08, 1, 0.92))
    caption = f"Figure {page.number}. {page.block.caption}" if page.block.caption else f"Figure {page.number}."
    text = fig.text(0.02, 0.01, "\n".join(_wrap(caption, width=110)[:3]), fontsize=8,
                    va="bottom", ha="left", parse_math=False)
    try:
        pdf.savefig(fig)
    finally:
        text.remove()
        if engine is not None and old_rect is not None:
            engine.set(rect=old_rect)


def write_pdf(doc: Document, path: str | Path) -> int:
    """Write the PDF; returns the number of pages written (equal to `len(plan_pages(doc))`)."""
    pages = plan_pages(doc)
    metadata = {"Title": doc.title, "Creator": "benchlog", "Producer": None, "CreationDate": None}
    with PdfPages(Path(path), metadata=metadata) as pdf:
        for page in pages:
            if isinstance(page, TextPage):
                pdf.savefig(_draw_text_page(page))
            else:
                _save_figure_page(pdf, page)
    return len(pages)
