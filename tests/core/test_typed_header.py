"""The run header is typed above `runs/`: no module outside it indexes a header dict or digs in a meta.

The run record is frozen dataclasses in `benchlog/runs/record.py`; a reader that writes
`header["plan"]` or `getattr(meta, "header", None)` has gone back to the loose dict the
typed record replaced, and this test names the file and line.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[2] / "benchlog"
#: The layers above runs/ that read run headers.
READERS = ("analysis", "report", "tui", "cli", "sweep", "store")

#: The plain text check: any `header[` at all.
INDEXED = re.compile(r"header\[")
#: Digging in a loaded run instead of reading its fields.
DIGGING = re.compile(r"getattr\(\s*(?:\w+\.)*meta\s*,")


def _header_dict_uses(tree: ast.AST) -> list[tuple[int, str]]:
    """`x.header[...]`, `header.get(...)`, `x.header.get(...)`: a header read as a dict."""
    found = []
    for node in ast.walk(tree):
        target = None
        if isinstance(node, ast.Subscript):
            target = node.value
        elif (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute)
              and node.func.attr in ("get", "items", "keys", "values")):
            target = node.func.value
        name = target.id if isinstance(target, ast.Name) else target.attr if isinstance(target, ast.Attribute) else ""
        if name == "header":
            found.append((node.lineno, ast.unparse(node)[:60]))
    return found


def offences(source: str) -> list[tuple[int, str]]:
    """(line, what) for each header-dict use or meta digging in one module's text."""
    out = [(n, line.strip()[:60]) for n, line in enumerate(source.splitlines(), start=1)
           if INDEXED.search(line) or DIGGING.search(line)]
    out += _header_dict_uses(ast.parse(source))
    return sorted(set(out))


def _modules():
    for layer in READERS:
        yield from sorted((PACKAGE / layer).rglob("*.py"))


@pytest.mark.parametrize("path", list(_modules()), ids=lambda p: str(p.relative_to(PACKAGE)))
def test_no_header_dict_outside_runs(path):
    found = offences(path.read_text(encoding="utf-8"))
    assert not found, f"{path.relative_to(PACKAGE)} reads the run header as a dict: " + "; ".join(
        f"line {n}: {text}" for n, text in found)


@pytest.mark.parametrize("snippet", [
    'x = meta.header["plan"]["element"]',
    "v = header.get('bench')",
    "e = meta.header.get('element') or {}",
    "h = getattr(meta, 'header', None) or {}",
    "o = getattr(ra.meta, 'offset_v', None)",
    "for k, v in header.items(): pass",
])
def test_the_check_catches_a_header_dict(snippet):
    # The check above could pass by finding nothing at all; here it must find each of these.
    assert offences(snippet)


def test_the_check_lets_typed_reads_pass():
    assert not offences("v = meta.header.input_v\nk = meta.header.element.kind\nt = header.plan.steps")


def test_the_check_covers_the_readers():
    names = {p.relative_to(PACKAGE).parts[0] for p in _modules()}
    assert {"analysis", "report", "tui"} <= names
