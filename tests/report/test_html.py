"""The HTML report is self-contained, shows its figures and verdict, and shows user text only as text."""

from __future__ import annotations

from collections import Counter

import pytest

from benchlog.report import htmlfile, render_html, write_report
from benchlog.report.document import Document, FigureBlock, Paragraph, Section

from . import samples
from .htmlcheck import external_references, inventory


@pytest.fixture(scope="module")
def hostile_page() -> str:
    return render_html(samples.hostile_document())


def test_hostile_user_text_is_text_not_markup(hostile_page):
    inv = inventory(hostile_page)
    assert "script" not in inv.tags
    assert not [a for a in inv.attributes if a[1].startswith("on")]
    text = "".join(inv.text)
    # in the title, the note, the table, the verdict, the caption and inside the SVG figure
    assert text.count(samples.HOSTILE) >= 7
    assert "<script>" not in hostile_page.replace("&lt;script&gt;", "")


def test_user_text_inside_the_svg_is_escaped(hostile_page):
    svg = hostile_page[hostile_page.index("<svg"):hostile_page.index("</svg>")]
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in svg
    assert "<script" not in svg


def test_no_network_and_no_outside_files(hostile_page):
    assert external_references(hostile_page) == []
    assert "http://" not in hostile_page and "https://" not in hostile_page
    inv = inventory(hostile_page)
    assert not {"link", "img", "iframe", "object", "embed"} & set(inv.tags)


def test_ids_are_unique_across_figures():
    figs = samples.all_figures()
    doc = Document("t", sections=(Section("s", tuple(FigureBlock(n, f) for n, f in figs.items())),))
    page = render_html(doc)
    inv = inventory(page)
    assert inv.tags.count("svg") == len(figs)
    dupes = [i for i, n in Counter(inv.ids).items() if n > 1]
    assert dupes == []
    # every internal reference points to an id that exists in the page
    refs = {v[1:] for _, a, v in inv.attributes if v.startswith("#")}
    assert refs and refs <= set(inv.ids)


def test_verdict_status_and_paragraph_kinds(hostile_page):
    inv = inventory(hostile_page)
    text = " ".join(inv.text)
    assert "pass" in text and "Decision rule: guard band: value + U <= limit" in text
    assert "incomplete" in text


def test_inline_svg_drops_prolog_namespaces_and_comments():
    svg = ('<?xml version="1.0"?>\n<!DOCTYPE svg PUBLIC "-//W3C//DTD SVG 1.1//EN" "http://x/y.dtd">'
           '<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink">'
           '<!-- a --> <defs><path id="m1"/></defs><use xlink:href="#m1"/>'
           '<g clip-path="url(#m1)"/></svg>')
    out = htmlfile.inline_svg(svg, "f9")
    assert out.startswith("<svg")
    assert "http" not in out and "<!--" not in out
    assert 'id="f9-m1"' in out and 'xlink:href="#f9-m1"' in out and "url(#f9-m1)" in out


def test_write_report_picks_the_format_by_suffix(tmp_path):
    doc = Document("t", sections=(Section("s", (Paragraph("hello"),)),))
    html_path = write_report(doc, tmp_path / "r.html")
    assert html_path.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    pdf_path = write_report(doc, tmp_path / "r.pdf")
    assert pdf_path.read_bytes().startswith(b"%PDF")
    with pytest.raises(ValueError):
        write_report(doc, tmp_path / "r.txt")
