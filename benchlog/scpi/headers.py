"""SCPI command headers: long and short forms and optional nodes (SCPI-99 vol. 1 ch. 6).

A pattern is written the way SCPI documents write it:
``[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]``. The upper-case part of
each mnemonic is its short form; a header node must be exactly the short or the
long form (case-insensitive), so `VOLT` and `VOLTAGE` match while `VOL` and
`VOLTA` do not. Bracketed nodes may be left out. A node may carry the numeric
suffix 1 (`OUTPut1`), which means the same as no suffix. A trailing `?` on the
pattern makes it query-only; without one, a `?` on the header is ignored and
the caller decides what a query means.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

from .errors import ScpiError

_MNEMONIC = re.compile(r"^\*?[A-Za-z][A-Za-z0-9_]*$")


@dataclass(frozen=True)
class Node:
    """One header node: its long form, its short form and whether it may be left out."""

    long: str
    short: str
    optional: bool

    def regex(self) -> str:
        forms = sorted({self.long.upper(), self.short.upper()}, key=len, reverse=True)
        alternatives = "|".join(re.escape(f) for f in forms)
        suffix = "" if self.long.startswith("*") else "1?"
        return f"(?:{alternatives}){suffix}"


def _node(mnemonic: str, optional: bool, pattern: str) -> Node:
    if not _MNEMONIC.match(mnemonic):
        raise ScpiError(f"header pattern {pattern!r}: {mnemonic!r} is not a mnemonic")
    if mnemonic.startswith("*"):
        return Node(mnemonic.upper(), mnemonic.upper(), optional)
    short = "".join(ch for ch in mnemonic if ch.isupper() or ch.isdigit())
    if not short or not mnemonic.upper().startswith(short):
        # e.g. "voltAGE": the short form must be the leading upper-case letters
        raise ScpiError(f"header pattern {pattern!r}: {mnemonic!r} has no leading upper-case short form")
    return Node(mnemonic, short, optional)


@dataclass(frozen=True)
class HeaderPattern:
    """A parsed header pattern; `matches(header)` tells whether a received header names it."""

    text: str
    nodes: tuple[Node, ...]
    query_only: bool

    @classmethod
    def parse(cls, pattern: str) -> "HeaderPattern":
        text = pattern.strip()
        query_only = text.endswith("?")
        body = text[:-1] if query_only else text
        nodes: list[Node] = []
        i = 0
        while i < len(body):
            ch = body[i]
            if ch == "[":
                end = body.find("]", i)
                if end < 0:
                    raise ScpiError(f"header pattern {pattern!r}: unclosed '['")
                inner = body[i + 1 : end].strip(":")
                if not inner or ":" in inner:
                    raise ScpiError(f"header pattern {pattern!r}: '[{body[i + 1:end]}]' must hold one node")
                nodes.append(_node(inner, True, pattern))
                i = end + 1
            elif ch == ":":
                i += 1
            else:
                end = i
                while end < len(body) and body[end] not in ":[":
                    end += 1
                nodes.append(_node(body[i:end], False, pattern))
                i = end
        if not nodes:
            raise ScpiError(f"header pattern {pattern!r} is empty")
        if all(n.optional for n in nodes):
            raise ScpiError(f"header pattern {pattern!r} needs at least one required node")
        return cls(text, tuple(nodes), query_only)

    @property
    def _compiled(self) -> re.Pattern[str]:
        return _compile(self.nodes)

    def matches(self, header: str) -> bool:
        """True if `header` (leading `:` and trailing `?` allowed) names this pattern."""
        body = header.strip()
        is_query = body.endswith("?")
        if is_query:
            body = body[:-1]
        elif self.query_only:
            return False
        if body.startswith(":"):
            body = body[1:]
        return self._compiled.fullmatch(body) is not None


@lru_cache(maxsize=512)
def _compile(nodes: tuple[Node, ...]) -> re.Pattern[str]:
    parts: list[str] = []
    for index, node in enumerate(nodes):
        sep = ":" if index > 0 else ""
        if node.optional:
            # a leading optional node carries its separator after it, others before it
            parts.append(f"(?:{node.regex()}:)?" if index == 0 else f"(?::{node.regex()})?")
        else:
            if index > 0 and all(n.optional for n in nodes[:index]):
                sep = ""  # every earlier node was optional and ends with its own ':'
            parts.append(f"{sep}{node.regex()}")
    return re.compile("".join(parts), re.IGNORECASE)


@lru_cache(maxsize=1024)
def _parsed(pattern: str) -> HeaderPattern:
    return HeaderPattern.parse(pattern)


def matches(pattern: str, header: str) -> bool:
    """Convenience: does `header` name `pattern`? (patterns are parsed once and cached)"""
    return _parsed(pattern).matches(header)


def keyword_matches(pattern: str, word: str) -> bool:
    """Character data such as `INVerted` / `INV` / `inverted` against its documented form."""
    node = _node(pattern, False, pattern)
    return word.strip().upper() in (node.long.upper(), node.short.upper())
