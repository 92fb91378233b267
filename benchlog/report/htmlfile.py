"""The document as one self-contained HTML file: inline CSS, inline SVG figures, no scripts, no network.

Every piece of text is passed through `html.escape` (quotes included) because
much of it comes from users and instruments: a serial number, an operator note
or a *IDN? reply must show as text and never become markup. Figures are inlined
as SVG (matplotlib escapes the text it writes into SVG); the XML prolog, DOCTYPE
and namespace declarations are removed because HTML5 puts inline `<svg>` in the
SVG namespace by itself, and ids are prefixed per figure so that several
figures on one page never share an id.
"""

from __future__ import annotations

import html
import re
from pathlib import Path

from .document import Block, Document, FigureBlock, Paragraph, Section, Table, VerdictBlock
from .figures import render

_CSS = """
body { font-family: sans-serif; max-width: 62em; margin: 1.5em auto; padding: 0 1em; color: #111;
       line-height: 1.4; }
h1 { font-size: 1.6em; border-bottom: 2px solid #111; padding-bottom: .2em; }
h2 { font-size: 1.3em; margin-top: 1.8em; border-bottom: 1px solid #999; }
h3 { font-size: 1.1em; margin-top: 1.4em; }
.subtitle { color: #444; }
.status { font-size: .8em; border: 1px solid #111; padding: 0 .4em; margin-left: .6em;
          text-transform: uppercase; letter-spacing: .05em; }
table { border-collapse: collapse; margin: .6em 0 1em; font-size: .9em; }
caption { text-align: left; font-weight: bold; padding-bottom: .2em; }
th, td { border: 1px solid #999; padding: .2em .5em; text-align: left; vertical-align: top; }
th { background: #eee; }
td { font-variant-numeric: tabular-nums; overflow-wrap: break-word; word-break: normal; }
.note { border-left: 4px solid #777; padding: .3em .8em; background: #f4f4f4; }
.warning { border-left: 4px solid #000; padding: .3em .8em; background: #fff4e0; font-weight: bold; }
.safety { border: 2px solid #000; padding: .6em 1em; background: #fffbe6; }
.verdict { border: 2px solid #000; padding: .5em 1em; margin: .8em 0; }
.verdict .word { font-size: 1.3em; font-weight: bold; text-transform: uppercase; letter-spacing: .08em; }
.verdict-pass { background: #e8f4e8; }
.verdict-fail { background: #fbe4e4; border-style: double; border-width: 4px; }
.verdict-conditional { background: #fff4d6; border-style: dashed; }
figure { margin: 1em 0; }
figure svg { max-width: 100%; height: auto; }
figcaption { font-size: .9em; color: #333; }
"""


def esc(text: object) -> str:
    """Escape any value for HTML text or a quoted attribute."""
    return html.escape(str(text), quote=True)


_PROLOG = re.compile(r"^.*?(?=<svg\b)", re.S)
_COMMENT = re.compile(r"<!--.*?-->", re.S)
_XMLNS = re.compile(r'\s+xmlns(:\w+)?="[^"]*"')
_ID = re.compile(r'\bid="([^"]+)"')
_HREF = re.compile(r'(xlink:href|href)="#([^"]+)"')
_URL = re.compile(r"url\(#([^)]+)\)")


def inline_svg(svg: bytes | str, prefix: str) -> str:
    """matplotlib SVG made fit to sit inside HTML: no prolog, no namespace URLs, ids made unique."""
    text = svg.decode("utf-8") if isinstance(svg, bytes) else svg
    text = _PROLOG.sub("", text, count=1)
    text = _COMMENT.sub("", text)
    text = _XMLNS.sub("", text)
    text = _ID.sub(lambda m: f'id="{prefix}-{m.group(1)}"', text)
    text = _HREF.sub(lambda m: f'{m.group(1)}="#{prefix}-{m.group(2)}"', text)
    text = _URL.sub(lambda m: f"url(#{prefix}-{m.group(1)})", text)
    return text.strip()


class _Writer:
    def __init__(self) -> None:
        self.parts: list[str] = []
        self.figure_count = 0

    def add(self, s: str) -> None:
        self.parts.append(s)

    def section(self, section: Section, level: int) -> None:
        h = min(level, 6)
        status = f'<span class="status">{esc(section.status)}</span>' if section.status else ""
        self.add(f"<section><h{h}>{esc(section.title)}{status}</h{h}>")
        for block in section.blocks:
            self.block(block)
        for sub in section.subsections:
            self.section(sub, level + 1)
        self.add("</section>")

    def block(self, block: Block) -> None:
        if isinstance(block, Paragraph):
            cls = "" if block.kind == "text" else f' class="{esc(block.kind)}"'
            lines = "<br>".join(esc(line) for line in block.text.split("\n"))
            self.add(f"<p{cls}>{lines}</p>")
        elif isinstance(block, Table):
            self.add("<table>")
            if block.caption:
                self.add(f"<caption>{esc(block.caption)}</caption>")
            self.add("<thead><tr>" + "".join(f"<th>{esc(c)}</th>" for c in block.columns) + "</tr></thead>")
            self.add("<tbody>")
            for row in block.rows:
                self.add("<tr>" + "".join(f"<td>{esc(c)}</td>" for c in row) + "</tr>")
            self.add("</tbody></table>")
        elif isinstance(block, VerdictBlock):
            outcome = block.outcome if block.outcome in ("pass", "fail", "conditional") else "other"
            self.add(f'<div class="verdict verdict-{outcome}">')
            self.add(f'<div><span class="word">{esc(block.outcome)}</span> — {esc(block.headline)}</div>')
            self.add(f"<div>Decision rule: {esc(block.rule)}</div>")
            if block.details:
                self.add("<ul>" + "".join(f"<li>{esc(d)}</li>" for d in block.details) + "</ul>")
            self.add("</div>")
        elif isinstance(block, FigureBlock):
            self.figure_count += 1
            svg = inline_svg(render(block.figure, "svg"), f"fig{self.figure_count}")
            self.add(f'<figure id="figure-{self.figure_count}" data-name="{esc(block.name)}">')
            self.add(svg)
            if block.caption:
                self.add(f"<figcaption>Figure {self.figure_count}. {esc(block.caption)}</figcaption>")
            self.add("</figure>")
        else:  # pragma: no cover - the Block union is closed
            raise TypeError(f"not a report block: {block!r}")


def render_html(doc: Document) -> str:
    """The whole document as an HTML5 string with no external references."""
    w = _Writer()
    w.add("<!DOCTYPE html>")
    w.add('<html lang="en"><head><meta charset="utf-8">')
    w.add('<meta name="viewport" content="width=device-width, initial-scale=1">')
    w.add(f"<title>{esc(doc.title)}</title>")
    w.add(f"<style>{_CSS}</style></head><body>")
    w.add(f"<h1>{esc(doc.title)}</h1>")
    if doc.subtitle:
        w.add(f'<p class="subtitle">{esc(doc.subtitle)}</p>')
    for section in doc.sections:
        w.section(section, 2)
    w.add("</body></html>")
    return "\n".join(w.parts) + "\n"


def write_html(doc: Document, path: str | Path) -> Path:
    path = Path(path)
    path.write_text(render_html(doc), encoding="utf-8")
    return path
