"""Splitting a program message into program units (IEEE 488.2 ch. 7, SCPI-99 vol. 1 6.2.4).

`VOLT 12;CURR 1.5` is two units. After a `;` a header without a leading `:`
continues the path of the previous header (everything but its last node), so
`SOUR:VOLT 12;CURR 1.5` sets `SOUR:CURR`; a leading `:` goes back to the root;
common commands (`*RST`) neither use nor change the path. Quoted strings may
hold `;` and `,`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .errors import ScpiSyntaxError

_UNIT = re.compile(r"^(\S+)\s*(.*)$", re.DOTALL)
_HEADER = re.compile(r"^:?(\*[A-Za-z]+|[A-Za-z][A-Za-z0-9_]*(:[A-Za-z][A-Za-z0-9_]*)*)\??$")


@dataclass(frozen=True)
class ProgramUnit:
    """One command or query: the full header (path applied, no leading `:`, no `?`), query flag, parameters."""

    header: str
    is_query: bool
    params: tuple[str, ...]

    @property
    def text(self) -> str:
        head = self.header + ("?" if self.is_query else "")
        return f"{head} {','.join(self.params)}" if self.params else head


def _split_outside_quotes(text: str, separator: str) -> list[str]:
    pieces: list[str] = []
    current: list[str] = []
    quote: str | None = None
    for ch in text:
        if quote:
            current.append(ch)
            if ch == quote:
                quote = None  # a doubled quote re-opens at once on the next char: still correct
        elif ch in "\"'":
            quote = ch
            current.append(ch)
        elif ch == separator:
            pieces.append("".join(current))
            current = []
        else:
            current.append(ch)
    if quote:
        raise ScpiSyntaxError(f"unterminated string in {text!r}", -102)
    pieces.append("".join(current))
    return pieces


def split_message(text: str) -> list[ProgramUnit]:
    """All program units of one message (terminator already removed); malformed -> ScpiSyntaxError.

    Codes carried by the error: -102 syntax error (bad header, unterminated
    string, empty parameter), -100 command error (an empty unit such as `;;`).
    """
    body = text.strip()
    if not body:
        return []
    units: list[ProgramUnit] = []
    path: list[str] = []
    for raw in _split_outside_quotes(body, ";"):
        raw = raw.strip()
        if not raw:
            raise ScpiSyntaxError(f"empty command between ';' in {text!r}", -100)
        head, rest = _UNIT.match(raw).groups()
        if not _HEADER.match(head):
            raise ScpiSyntaxError(f"{head!r} is not a command header", -102)
        is_query = head.endswith("?")
        name = head[:-1] if is_query else head
        if name.startswith("*"):
            full = name.upper()
        elif name.startswith(":"):
            nodes = name[1:].split(":")
            full = ":".join(nodes)
            path = nodes[:-1]
        else:
            nodes = path + name.split(":")
            full = ":".join(nodes)
            path = nodes[:-1]
        params: tuple[str, ...] = ()
        rest = rest.strip()
        if rest:
            params = tuple(p.strip() for p in _split_outside_quotes(rest, ","))
            if any(not p for p in params):
                raise ScpiSyntaxError(f"empty parameter in {raw!r}", -102)
        units.append(ProgramUnit(full, is_query, params))
    return units


def join_units(commands: list[str] | tuple[str, ...]) -> str:
    """One program message of several commands, each kept at its own absolute path.

    After a `;` a header without a leading `:` would continue the previous path
    (SCPI-99 vol. 1 6.2.4), so every unit after the first that is not a common
    command gets a leading `:`; a template that is itself compound already writes
    its inner units that way.
    """
    parts: list[str] = []
    for i, command in enumerate(commands):
        text = command.strip()
        if not text:
            raise ScpiSyntaxError("an empty command cannot be joined into a message", -100)
        if i and not text.startswith((":", "*")):
            text = ":" + text
        parts.append(text)
    return ";".join(parts)


def split_response(text: str, count: int) -> list[str]:
    """The `count` response units of one response message, `;`-separated (IEEE 488.2 8.4.1).

    A reply with another number of units raises ScpiSyntaxError (the caller turns it
    into a nonsense reply naming what was expected).
    """
    units = _split_outside_quotes(text.strip(), ";")
    if len(units) != count:
        raise ScpiSyntaxError(f"{len(units)} response unit(s) in {text[:60]!r}, expected {count}", -102)
    return [u.strip() for u in units]
