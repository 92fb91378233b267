"""Figures (matplotlib) and the self-contained report (HTML or PDF) for one or more runs.

    from benchlog.report import build_report, write_report
    doc = build_report(["a.run", "b.run"], spec_path="part.toml")
    write_report(doc, "report.html")      # or "report.pdf"

`figures` draws from the small view values in `views`; `build` fills a
`document.Document` from loaded runs and the analysis; `htmlfile` and `pdffile`
render that one document.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .document import Document

_DOCUMENT_NAMES = ("Document", "FigureBlock", "Paragraph", "Section", "Table", "VerdictBlock")

__all__ = [
    "Document", "FigureBlock", "Paragraph", "Section", "Table", "VerdictBlock",
    "build_report", "render_html", "write_html", "plan_pages", "write_pdf", "write_report",
]


def __getattr__(name: str):
    """`build_report` (the figures: matplotlib) and `plan_pages` / `write_pdf` (the PDF backend) load on
    first use, not with the package: `benchlog lot` reads runs through `report.lot_runs` and draws nothing,
    so even the document's dataclasses wait until asked for."""
    if name in _DOCUMENT_NAMES:
        from . import document

        return getattr(document, name)
    if name == "build_report":
        from .build import build_report

        return build_report
    if name in ("render_html", "write_html"):
        from . import htmlfile

        return getattr(htmlfile, name)
    if name in ("plan_pages", "write_pdf"):
        from . import pdffile

        return getattr(pdffile, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def write_report(doc: "Document", path: str | Path) -> Path:
    """Write `doc` as HTML (.html/.htm) or PDF (.pdf), picked by the file's suffix."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix in (".html", ".htm"):
        from .htmlfile import write_html

        return write_html(doc, path)
    if suffix == ".pdf":
        from .pdffile import write_pdf  # matplotlib's PDF backend only for a PDF

        write_pdf(doc, path)
        return path
    raise ValueError(f"report file must end in .html or .pdf, not {suffix or 'nothing'!r}")
