"""Dispatching program units to handlers, with the standard SCPI error for each kind of fault.

The simulated bench registers each command form once, e.g.
``tree.command("[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]", set_voltage, nargs=1)``
and ``tree.query("...?", read_voltage)``; `execute(message)` runs a whole
program message and returns the response text and the errors to queue.

Errors (SCPI-99 vol. 2 ch. 21): -113 no such header, -109 a parameter is
missing, -108 one too many, -224 a value that is not one of the allowed ones,
-222 a number outside its range, -102/-100 as found by `split_message`.
Handlers raise `CommandError(code, detail)` for their own faults.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Callable, Iterable

from .codes import error_text
from .errors import ScpiError, ScpiSyntaxError
from .headers import HeaderPattern, keyword_matches
from .messages import ProgramUnit, split_message

Handler = Callable[..., "str | None"]

_NUMERIC = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")


class CommandError(ScpiError):
    """A command that a device refuses; `code` goes into the error queue with `detail`."""

    def __init__(self, code: int, detail: str = "") -> None:
        self.code = code
        self.detail = detail
        super().__init__(f"{code},{error_text(code)}" + (f"; {detail}" if detail else ""))

    @property
    def queue_text(self) -> str:
        """The text for the error queue: standard text, then device detail after ';'."""
        return error_text(self.code) + (f"; {self.detail}" if self.detail else "")


@dataclass(frozen=True)
class _Entry:
    pattern: HeaderPattern
    handler: Handler
    is_query: bool
    min_args: int
    max_args: int


@dataclass
class Outcome:
    """What one program message produced: response units (joined by ';') and errors."""

    replies: list[str] = field(default_factory=list)
    errors: list[tuple[int, str]] = field(default_factory=list)

    @property
    def response(self) -> str | None:
        return ";".join(self.replies) if self.replies else None


def _arity(nargs: int | tuple[int, int]) -> tuple[int, int]:
    if isinstance(nargs, tuple):
        return nargs
    return nargs, nargs


class CommandTree:
    """A table of header patterns and their handlers; lookups are cached per received header."""

    def __init__(self) -> None:
        self._entries: list[_Entry] = []
        self._cache: dict[tuple[str, bool], tuple[_Entry | None, bool]] = {}

    def command(self, pattern: str, handler: Handler, nargs: int | tuple[int, int] = 0) -> None:
        """Register a setting command; `handler(*params)` gets the parameter texts."""
        self._add(pattern, handler, False, nargs)

    def query(self, pattern: str, handler: Handler, nargs: int | tuple[int, int] = 0) -> None:
        """Register a query (the pattern may end in `?`); `handler(*params)` returns the reply text."""
        self._add(pattern, handler, True, nargs)

    def _add(self, pattern: str, handler: Handler, is_query: bool, nargs: int | tuple[int, int]) -> None:
        text = pattern.strip()
        if is_query and not text.endswith("?"):
            text += "?"
        lo, hi = _arity(nargs)
        self._entries.append(_Entry(HeaderPattern.parse(text), handler, is_query, lo, hi))
        self._cache.clear()

    def lookup(self, unit: ProgramUnit) -> _Entry:
        key = (unit.header.upper(), unit.is_query)
        hit = self._cache.get(key)
        if hit is None:
            header = unit.header + ("?" if unit.is_query else "")
            if len(self._cache) > 4096:  # received headers are untrusted: bound the cache
                self._cache.clear()
            found = next((e for e in self._entries if e.is_query == unit.is_query and e.pattern.matches(header)), None)
            self._cache[key] = hit = (found, False)
        entry = hit[0]
        if entry is None:
            name = unit.header + ("?" if unit.is_query else "")
            raise CommandError(-113, name if len(name) <= 40 else name[:37] + "...")
        return entry

    def dispatch(self, unit: ProgramUnit) -> str | None:
        """Run one unit; raises CommandError with the SCPI code on any fault."""
        entry = self.lookup(unit)
        count = len(unit.params)
        if count < entry.min_args:
            raise CommandError(-109, f"{unit.header} needs {entry.min_args} parameter(s)")
        if count > entry.max_args:
            raise CommandError(-108, f"{unit.header} takes at most {entry.max_args} parameter(s)")
        reply = entry.handler(*unit.params)
        return reply if entry.is_query else None

    def execute(self, message: str) -> Outcome:
        """Run a whole program message in order.

        A command error (-1xx) ends the message there, as a parser would stop;
        after an execution error the remaining units still run (IEEE 488.2 6.1.6).
        A failed query contributes no response unit.
        """
        outcome = Outcome()
        try:
            units = split_message(message)
        except ScpiSyntaxError as exc:
            outcome.errors.append((exc.code, f"{error_text(exc.code)}; {exc}"))
            return outcome
        for unit in units:
            try:
                reply = self.dispatch(unit)
            except CommandError as exc:
                outcome.errors.append((exc.code, exc.queue_text))
                if -199 <= exc.code <= -100:
                    break
                continue
            if reply is not None:
                outcome.replies.append(reply)
        return outcome


# -- parameter readers for handlers ------------------------------------------------------


def number_param(
    text: str,
    *,
    lo: float,
    hi: float,
    default: float | None = None,
    name: str = "value",
    unit: str = "",
) -> float:
    """Decimal numeric program data or MINimum/MAXimum/DEFault, checked against [lo, hi]."""
    word = text.strip()
    if keyword_matches("MINimum", word):
        return lo
    if keyword_matches("MAXimum", word):
        return hi
    if keyword_matches("DEFault", word):
        return lo if default is None else default
    if not _NUMERIC.match(word):
        raise CommandError(-224, f"{name} {word[:20]!r} is not a number")
    value = float(word)
    if not math.isfinite(value):
        raise CommandError(-222, f"{name} {word} is not finite")
    if value < lo or value > hi:
        raise CommandError(-222, f"{name} {value:g}{unit} outside {lo:g}..{hi:g}{unit}")
    return value


def bool_param(text: str, name: str = "state") -> bool:
    """ON/OFF/1/0 (IEEE 488.2 boolean program data)."""
    word = text.strip().upper()
    if word in ("ON", "1"):
        return True
    if word in ("OFF", "0"):
        return False
    raise CommandError(-224, f"{name} {text.strip()!r} is not ON, OFF, 1 or 0")


def choice_param(text: str, choices: Iterable[str], name: str = "value") -> str:
    """Character program data against documented forms such as `NORMal`; returns the documented form."""
    options = tuple(choices)
    for option in options:
        if keyword_matches(option, text):
            return option
    raise CommandError(-224, f"{name} {text.strip()!r} is not one of {', '.join(options)}")
