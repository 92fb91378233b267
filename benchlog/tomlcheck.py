"""Reading our TOML files (profiles, bench, plan, spec, design) with errors that name file, key and expectation.

TOML files here are data only: they are parsed with `tomllib`, never executed.
A `Table` hands out typed values and raises `BadInput` naming `[table].key`, so
each reader states its schema in a few plain lines.
"""

from __future__ import annotations

import difflib
import math
import re
import tomllib
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable, Iterator

from benchlog.badinput import BadInput
from benchlog.filecheck import TOML_MAX_BYTES, read_input

_MISSING = object()


@dataclass
class KeyUse:
    """What one reader asked of one key: its type, unit, default, bounds and choices (for the reference pages)."""

    table: str  # "" for the top level, "limits", "accuracy[]" for an array of tables
    key: str
    kind: str = ""  # "string", "number", "whole number", "true or false", "list of ...", "table", "array of tables"
    unit: str = ""
    required: tuple[bool, ...] = ()  # as asked by the reader each time: (True,), (False,) or both ("depends")
    default: Any = None
    bounds: str = ""
    choices: tuple[str, ...] = ()


class KeyLog:
    """Every key a reader asked for while `recording()` was on: the readers are the tables the docs come from."""

    def __init__(self) -> None:
        self.uses: dict[tuple[str, str], KeyUse] = {}

    def note(self, table: str, key: str, **facts: Any) -> None:
        use = self.uses.setdefault((_generic_name(table), key), KeyUse(_generic_name(table), key))
        for name, value in facts.items():
            if name == "required":
                # required once and optional elsewhere means it depends on other keys
                for seen in (value if isinstance(value, tuple) else (value,)):
                    if seen is not None and seen not in use.required:
                        use.required = tuple(sorted(use.required + (seen,)))
            elif name == "choices":
                use.choices = tuple(dict.fromkeys(use.choices + tuple(value)))
            elif value not in (None, "", ()) and not getattr(use, name):
                setattr(use, name, value)


_LOG: KeyLog | None = None


@contextmanager
def recording() -> Iterator[KeyLog]:
    """Record the keys every `Table` is asked for (used by `benchlog.docs_gen`; not thread-safe)."""
    global _LOG
    previous, _LOG = _LOG, KeyLog()
    try:
        yield _LOG
    finally:
        _LOG = previous


def _generic_name(name: str) -> str:
    return re.sub(r"\[\d+\]", "[]", name)


def _bounds(lo, hi, positive: bool) -> str:
    parts = []
    if positive:
        parts.append("> 0")
    if lo is not None:
        parts.append(f">= {lo:g}")
    if hi is not None:
        parts.append(f"<= {hi:g}")
    return ", ".join(parts)


def read_utf8(path: str | Path) -> tuple[str, bytes]:
    """The text of one of our files and its raw bytes (for content hashes); faults raise `BadInput`.

    Only a regular file of at most `TOML_MAX_BYTES` is read (`filecheck.read_input`):
    a FIFO, a device such as /dev/zero or a folder is refused before any byte is read.
    """
    path = Path(path)
    raw = read_input(path, "TOML file", max_bytes=TOML_MAX_BYTES)
    try:
        return raw.decode("utf-8"), raw
    except UnicodeDecodeError as exc:
        raise BadInput(path, f"byte {exc.start}", "is not UTF-8 text", "a UTF-8 TOML file") from None


def load_toml(path: str | Path) -> "Table":
    """Parse a TOML file into its root `Table`; unreadable or malformed files raise `BadInput`."""
    text, _raw = read_utf8(path)
    return parse_toml(text, str(path))


def parse_toml(text: str, source: str) -> "Table":
    """Parse TOML text; `source` names it in errors."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        # tomllib puts "(at line N, column M)" in its message; keep it, it is the place.
        raise BadInput(source, "", f"is not valid TOML: {exc}", "TOML syntax") from None
    except RecursionError:
        # tomllib parses nested arrays and inline tables recursively; thousands of levels exhaust the stack.
        raise BadInput(source, "", "is nested too deeply to be read", "tables and arrays a few levels deep") from None
    return Table(source, "", data)


def _describe(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


class Table:
    """One TOML table with typed accessors; `prefix` is how its keys are named in errors."""

    def __init__(self, source: str, name: str, data: dict[str, Any]) -> None:
        self.source = source
        self.name = name
        self.data = data

    # -- places -------------------------------------------------------------
    def where(self, key: str | None = None) -> str:
        if key is None:
            return f"[{self.name}]" if self.name else "top level"
        return f"[{self.name}].{key}" if self.name else key

    def fail(self, key: str | None, problem: str, expected: str = "") -> BadInput:
        return BadInput(self.source, self.where(key), problem, expected)

    def _note(self, key: str, default: Any = _MISSING, **facts: Any) -> None:
        if _LOG is not None:
            required = default is _MISSING
            _LOG.note(self.name, key, required=required, default=None if required else default, **facts)

    # -- structure ----------------------------------------------------------
    def has(self, key: str) -> bool:
        return key in self.data

    def keys(self) -> list[str]:
        return list(self.data)

    def table(self, key: str, required: bool = True) -> "Table | None":
        name = f"{self.name}.{key}" if self.name else key
        if _LOG is not None:
            _LOG.note(self.name, key, kind="table", required=required)
        if key not in self.data:
            if required:
                raise BadInput(self.source, f"[{name}]", "table is missing", f"a [{name}] table")
            return None
        value = self.data[key]
        if not isinstance(value, dict):
            raise BadInput(self.source, self.where(key), f"is {_describe(value)}", f"a table [{name}]")
        return Table(self.source, name, value)

    def tables(self, key: str) -> list["Table"]:
        """An array of tables (`[[key]]`), possibly empty."""
        value = self.data.get(key, [])
        name = f"{self.name}.{key}" if self.name else key
        if _LOG is not None:
            _LOG.note(self.name, key, kind="array of tables", required=False)
        if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
            raise self.fail(key, f"is {_describe(value)}", f"an array of tables [[{name}]]")
        return [Table(self.source, f"{name}[{i}]", v) for i, v in enumerate(value)]

    def only(self, allowed: Iterable[str]) -> None:
        """Reject keys outside `allowed`, suggesting the nearest valid name (typos are common)."""
        allowed = list(allowed)
        if _LOG is not None:
            for key in allowed:
                _LOG.note(self.name, key)
        for key in self.data:
            if key not in allowed:
                near = difflib.get_close_matches(key, allowed, n=1)
                hint = f"did you mean '{near[0]}'?" if near else "one of " + ", ".join(allowed)
                raise self.fail(key, "unknown key", hint)

    # -- values -------------------------------------------------------------
    def _get(self, key: str, default: Any) -> Any:
        if key in self.data:
            return self.data[key]
        if default is _MISSING:
            raise self.fail(key, "is missing", "a value for this key")
        return default

    def string(self, key: str, default: Any = _MISSING, choices: Iterable[str] | None = None) -> Any:
        if choices is not None:
            choices = list(choices)
        self._note(key, default, kind="string", choices=tuple(choices or ()))
        value = self._get(key, default)
        if value is default and key not in self.data:
            return value
        if not isinstance(value, str):
            raise self.fail(key, f"is {_describe(value)}", "a string in quotes")
        if choices is not None:
            choices = list(choices)
            if value not in choices:
                raise self.fail(key, f"is {value!r}", "one of " + ", ".join(repr(c) for c in choices))
        return value

    def boolean(self, key: str, default: Any = _MISSING) -> Any:
        self._note(key, default, kind="true or false")
        value = self._get(key, default)
        if value is default and key not in self.data:
            return value
        if not isinstance(value, bool):
            raise self.fail(key, f"is {_describe(value)}", "true or false")
        return value

    def number(
        self,
        key: str,
        default: Any = _MISSING,
        *,
        min: float | None = None,
        max: float | None = None,
        positive: bool = False,
        unit: str = "",
    ) -> Any:
        """A finite real number within bounds; integers are accepted as numbers."""
        self._note(key, default, kind="number", unit=unit, bounds=_bounds(min, max, positive))
        value = self._get(key, default)
        if value is default and key not in self.data:
            return value
        return self._check_number(key, value, min, max, positive, unit)

    def _check_number(self, key: str, value: Any, lo, hi, positive: bool, unit: str) -> float:
        suffix = f" {unit}" if unit else ""
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.fail(key, f"is {_describe(value)}", f"a number{suffix}")
        value = float(value)
        if not math.isfinite(value):
            raise self.fail(key, f"is {value}", f"a finite number{suffix}")
        if positive and value <= 0:
            raise self.fail(key, f"is {value:g}", f"a number above 0{suffix}")
        if lo is not None and value < lo:
            raise self.fail(key, f"is {value:g}", f"at least {lo:g}{suffix}")
        if hi is not None and value > hi:
            raise self.fail(key, f"is {value:g}", f"at most {hi:g}{suffix}")
        return value

    def integer(self, key: str, default: Any = _MISSING, *, min: int | None = None, max: int | None = None) -> Any:
        self._note(key, default, kind="whole number", bounds=_bounds(min, max, False))
        value = self._get(key, default)
        if value is default and key not in self.data:
            return value
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.fail(key, f"is {_describe(value)}", "a whole number")
        if min is not None and value < min:
            raise self.fail(key, f"is {value}", f"at least {min}")
        if max is not None and value > max:
            raise self.fail(key, f"is {value}", f"at most {max}")
        return value

    def numbers(
        self,
        key: str,
        default: Any = _MISSING,
        *,
        min: float | None = None,
        max: float | None = None,
        positive: bool = False,
        unit: str = "",
        nonempty: bool = True,
    ) -> Any:
        """A list of finite numbers, returned as a tuple."""
        self._note(key, default, kind="list of numbers", unit=unit, bounds=_bounds(min, max, positive))
        value = self._get(key, default)
        if value is default and key not in self.data:
            return value
        if not isinstance(value, list):
            raise self.fail(key, f"is {_describe(value)}", "a list of numbers such as [0.1, 0.5, 1.0]")
        if nonempty and not value:
            raise self.fail(key, "is an empty list", "at least one number")
        return tuple(
            self._check_number(f"{key}[{i}]", v, min, max, positive, unit) for i, v in enumerate(value)
        )

    def strings(self, key: str, default: Any = _MISSING) -> Any:
        self._note(key, default, kind="list of strings")
        value = self._get(key, default)
        if value is default and key not in self.data:
            return value
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise self.fail(key, f"is {_describe(value)}", "a list of strings")
        return tuple(value)
