"""The PDF holds the document's text pages and one page per figure, in order."""

from __future__ import annotations

import re

from benchlog.report import pdffile
from benchlog.report.document import Document, FigureBlock, Paragraph, Section, Table

from . import samples


def pdf_page_count(data: bytes) -> int:
    """Count page objects (`/Type /Page`, not the `/Pages` tree) — PDF 1.7 (ISO 32000-1) §7.7.3.3."""
    return len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", data))


def test_text_figure_figure_text_gives_four_pages(tmp_path):
    figs = samples.all_figures()
    doc = Document(
        "Title",
        sections=(Section("One", (
            Paragraph("before the figures"),
            FigureBlock("vi", figs["vi"], "first"),
            FigureBlock("loss", figs["loss"], "second"),
            Paragraph("after the figures"),
        )),),
    )
    plan = pdffile.plan_pages(doc)
    kinds = [type(p).__name__ for p in plan]
    assert kinds == ["TextPage", "FigurePage", "FigurePage", "TextPage"]
    path = tmp_path / "r.pdf"
    pages = pdffile.write_pdf(doc, path)
    data = path.read_bytes()
    assert data.startswith(b"%PDF")
    assert pages == 4 == pdf_page_count(data)


def test_long_table_flows_over_pages():
    rows = tuple((f"part {i}", f"{i * 0.1:.1f}") for i in range(150))
    doc = Document("T", sections=(Section("Lot", (Table(("part", "value"), rows),)),))
    plan = pdffile.plan_pages(doc)
    # 1 title line + blank, section title + rule + blank, header + rule + 150 rows = 157 lines
    assert sum(len(p.lines) for p in plan) == 157
    assert len(plan) == -(-157 // pdffile.LINES_PER_PAGE) == 3


def test_wide_table_fits_the_page_width():
    doc = Table(("a", "b"), (("x" * 80, "y" * 80),))
    lines = pdffile.table_lines(doc)
    assert max(len(line) for line in lines) <= pdffile.WIDTH_CHARS
    assert "".join(lines).count("x") == 80  # wrapped, not cut


def test_saving_a_figure_page_leaves_the_figure_as_it_was(tmp_path):
    fig = samples.all_figures()["vi"]
    texts_before = len(fig.texts)
    rect_before = fig.get_layout_engine().get()["rect"]
    doc = Document("T", sections=(Section("S", (FigureBlock("vi", fig, "c"),)),))
    pdffile.write_pdf(doc, tmp_path / "x.pdf")
    assert len(fig.texts) == texts_before
    assert fig.get_layout_engine().get()["rect"] == rect_before


def test_hostile_text_does_not_break_the_pdf(tmp_path):
    path = tmp_path / "h.pdf"
    n = pdffile.write_pdf(samples.hostile_document(), path)
    assert n == pdf_page_count(path.read_bytes()) == 2
