"""The validating run-file reader: every record checked, every fault reported as `file: line N: what (expected ...)`.

Whatever bytes it is given, this reader either yields events or raises
`BadInput`; nothing else escapes (the tests fuzz it). A last line without its
newline is a torn write from a killed process and is skipped (`is_torn`).
"""

from __future__ import annotations

import json
import math
import os
import re
from collections.abc import Iterator
from datetime import datetime
from typing import Any

from benchlog.badinput import BadInput
from benchlog.filecheck import RUN_LINE_MAX_BYTES, open_input

from .events import Event, Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from .format import (
    SAFE_STATES,
    ABSOLUTE_ZERO_C,
    DIRECTIONS,
    ELEMENT_STRINGS,
    END_OUTCOMES,
    FLAG_PATTERN,
    FORMAT_NAME,
    HEADER_REQUIRED,
    HEADER_STRINGS,
    HEADER_TABLES,
    MAX_INDEX,
    MAX_MAGNITUDE,
    NOTE_KINDS,
    POINT_COLUMNS,
    POINT_FLOAT_COLUMNS,
    POINT_INTEGER_COLUMNS,
    POINT_READING_COLUMNS,
    POINT_TAG,
    SUPPLY_MODES,
    SUPPORTED_SCHEMAS,
)
from .record import RunHeader, is_run_id

#: A decimal number as the writer writes it (Python `repr` of a float, or an integer).
NUMBER_SYNTAX = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
# Surrounding blanks are tolerated because the pandas fast path tolerates them too.
_NUMBER = re.compile(rf"\s*{NUMBER_SYNTAX}\s*\Z")

_RECORD_KEYS: dict[str, tuple[str, ...]] = {
    "offset": ("record", "t_s", "drop_v"),
    "note": ("record", "t_s", "kind", "message"),
    "reverse": ("record", "t_s", "voltage_v", "duration_s", "current_a", "limit_a", "passed"),
    "end": ("record", "t_s", "outcome", "points", "message", "safe_state"),
}


class Position:
    """Where a parser is in a file (source and line number), for error messages."""

    __slots__ = ("source", "number")

    def __init__(self, source: str, number: int) -> None:
        self.source = source
        self.number = number

    def bad(self, problem: str, expected: str = "") -> BadInput:
        return BadInput(self.source, f"line {self.number}", problem, expected)


def _short(text: str, limit: int = 40) -> str:
    text = repr(text)
    return text if len(text) <= limit else text[: limit - 4] + "...'"


def _shown(value: Any, limit: int = 40) -> str:
    """A JSON value as the file spells it, cut short."""
    try:
        text = json.dumps(value, ensure_ascii=False)
    except (TypeError, ValueError):
        text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


# --- JSON records -----------------------------------------------------------------------------


class _NotFinite(ValueError):
    pass


def _parse_float(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise _NotFinite(f"number {text[:30]} is too large for a float")
    return value


def _parse_constant(name: str) -> float:
    raise _NotFinite(f"{name} is not a number (JSON has no NaN or Infinity)")


def parse_json_object(text: str, at: Position) -> dict[str, Any]:
    try:
        value = json.loads(text, parse_float=_parse_float, parse_constant=_parse_constant)
    except _NotFinite as exc:
        raise at.bad(str(exc), "finite numbers") from None
    except RecursionError:
        raise at.bad("JSON nested too deeply", "one JSON object per line") from None
    except ValueError as exc:  # JSONDecodeError, or an integer with too many digits
        raise at.bad(f"not valid JSON ({exc})", "one JSON object per line") from None
    if not isinstance(value, dict):
        raise at.bad(f"JSON {type(value).__name__} where a record object belongs",
                     'a JSON object with a "record" key')
    return value


def _number(obj: dict[str, Any], key: str, kind: str, at: Position) -> float:
    if key not in obj:
        raise at.bad(f"{kind} record has no {key!r}", f"{key} as a number")
    value = obj[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise at.bad(f"{kind} {key} is {_shown(value)}", "a number")
    x = float(value) if not isinstance(value, int) or abs(value) <= MAX_MAGNITUDE else math.inf
    if not math.isfinite(x) or abs(x) > MAX_MAGNITUDE:
        raise at.bad(f"{kind} {key} = {value!r:.30} is out of range", f"|{key}| <= {MAX_MAGNITUDE:g}")
    return x


def _string(obj: dict[str, Any], key: str, kind: str, at: Position, choices: tuple[str, ...] = ()) -> str:
    value = obj.get(key)
    if not isinstance(value, str):
        raise at.bad(f"{kind} record has {key} = {_shown(value)}",
                     f"{key} as a string" if not choices else f"{key} one of {', '.join(choices)}")
    if choices and value not in choices:
        raise at.bad(f"{kind} {key} is {_short(value)}", f"one of {', '.join(choices)}")
    return value


def _check_keys(obj: dict[str, Any], kind: str, at: Position) -> None:
    allowed = _RECORD_KEYS[kind]
    for key in obj:
        if key not in allowed:
            raise at.bad(f"unexpected key {_short(key)} in {kind} record", f"only {', '.join(allowed)}")


def decode_record(obj: dict[str, Any], at: Position) -> Event:
    """A JSON record other than the header, as its event."""
    kind = obj.get("record")
    if kind == "header":
        raise at.bad("a second header record", "the header only on line 1")
    if not isinstance(kind, str) or kind not in _RECORD_KEYS:
        raise at.bad(f"unknown record kind {_shown(kind)}",
                     "record one of " + ", ".join(_RECORD_KEYS))
    _check_keys(obj, kind, at)
    t_s = _number(obj, "t_s", kind, at)
    if kind == "offset":
        return Offset(t_s=t_s, drop_v=_number(obj, "drop_v", kind, at))
    if kind == "note":
        return Note(t_s=t_s, kind=_string(obj, "kind", kind, at, NOTE_KINDS),  # type: ignore[arg-type]
                    message=_string(obj, "message", kind, at))
    if kind == "reverse":
        passed = obj.get("passed")
        if not isinstance(passed, bool):
            raise at.bad(f"reverse passed is {_shown(passed)}", "true or false")
        return ReverseResult(
            t_s=t_s,
            voltage_v=_number(obj, "voltage_v", kind, at),
            duration_s=_number(obj, "duration_s", kind, at),
            current_a=_number(obj, "current_a", kind, at),
            limit_a=_number(obj, "limit_a", kind, at),
            passed=passed,
        )
    points = obj.get("points")
    if isinstance(points, bool) or not isinstance(points, int) or not 0 <= points <= MAX_INDEX:
        raise at.bad(f"end points is {_shown(points)}", "a whole number >= 0")
    safe_state = _string(obj, "safe_state", kind, at, SAFE_STATES) if "safe_state" in obj else None
    return RunFinished(t_s=t_s, outcome=_string(obj, "outcome", kind, at, END_OUTCOMES),  # type: ignore[arg-type]
                       points=points, message=_string(obj, "message", kind, at),
                       safe_state=safe_state)  # type: ignore[arg-type]


# --- the header -------------------------------------------------------------------------------


def decode_header(text: str, at: Position) -> RunStarted:
    """Line 1: the JSON header, checked for the keys and types the program relies on."""
    if text.startswith(POINT_TAG + "\t") or not text.lstrip().startswith("{"):
        raise at.bad(f"line starts {_short(text[:20])} where the header belongs",
                     f'the JSON header {{"record": "header", "format": "{FORMAT_NAME}", ...}}')
    obj = parse_json_object(text, at)
    if obj.get("format") != FORMAT_NAME or obj.get("record") != "header":
        raise at.bad(f"not a {FORMAT_NAME} header (format {_shown(obj.get('format'))})",
                     f'"record": "header" and "format": "{FORMAT_NAME}"')
    schema = obj.get("schema")
    supported = ", ".join(str(s) for s in SUPPORTED_SCHEMAS)
    if isinstance(schema, bool) or not isinstance(schema, int):
        raise at.bad(f"schema is {_shown(schema)}", f"an integer schema version ({supported})")
    if schema not in SUPPORTED_SCHEMAS:
        newer = "newer than this program reads" if schema > max(SUPPORTED_SCHEMAS) else "unknown"
        raise at.bad(f"schema version {schema} is {newer}",
                     f"schema {supported} (a newer benchlog may read this file)")
    for key in HEADER_REQUIRED:
        if key not in obj:
            raise at.bad(f"header has no {key!r}", "every key of " + ", ".join(HEADER_REQUIRED))
    for key in HEADER_STRINGS:
        if key in obj and not isinstance(obj[key], str):
            raise at.bad(f"header {key} is {_shown(obj[key])}", "a string")
    for key in HEADER_TABLES:
        if key in obj and not isinstance(obj[key], dict):
            raise at.bad(f"header {key} is {_shown(obj[key])}", "a JSON object")
    started = obj["started_utc"]
    try:
        if not started.endswith("Z"):
            raise ValueError
        datetime.fromisoformat(started[:-1] + "+00:00")
    except ValueError:
        raise at.bad(f"header started_utc {_short(started)} is not a UTC time",
                     "ISO 8601 ending in Z, e.g. 2025-01-31T09:15:02Z") from None
    columns = obj["point_columns"]
    if (not isinstance(columns, list) or not all(isinstance(c, str) for c in columns)
            or sorted(columns) != sorted(POINT_COLUMNS)):
        raise at.bad(f"header point_columns is {_shown(columns)}",
                     "each of " + ", ".join(POINT_COLUMNS) + " once")
    element = obj["element"]
    for key in ELEMENT_STRINGS:
        if element.get(key) is not None and not isinstance(element.get(key), str):
            raise at.bad(f"header element.{key} is {_shown(element[key])}", "a string")
    if not isinstance(element.get("id"), str) or not element["id"]:
        raise at.bad("header element has no id", "element.id as a non-empty string")
    ambient = element.get("ambient_c")
    if ambient is not None and (isinstance(ambient, bool) or not isinstance(ambient, (int, float))
                                or not ABSOLUTE_ZERO_C <= ambient <= MAX_MAGNITUDE):
        raise at.bad(f"header element.ambient_c is {_shown(ambient)}",
                     "a temperature in °C or null")
    frequency = obj.get("line_frequency_hz")
    if frequency is not None and (isinstance(frequency, bool) or not isinstance(frequency, (int, float))
                                  or not 0 < frequency <= MAX_MAGNITUDE):
        raise at.bad(f"header line_frequency_hz is {_shown(frequency)}",
                     "a frequency > 0 in Hz")
    if schema >= 2 and "run_id" not in obj:
        raise at.bad(f"schema {schema} header has no run_id", "run_id, the UUID written when the run started")
    if "run_id" in obj and not is_run_id(obj["run_id"]):
        raise at.bad(f"header run_id is {_shown(obj['run_id'])}",
                     "a UUID in its usual text form: lower-case hex digits as 8-4-4-4-12")
    try:
        header = RunHeader.from_table(obj, text, at.source)
    except BadInput as exc:  # a typed part of the header (the accuracy table) is malformed
        raise at.bad(f"header {exc.where} {exc.problem}", exc.expected) from None
    return RunStarted(header)


# --- point lines ------------------------------------------------------------------------------


class PointDecoder:
    """Decode P lines in the column order of one file's header."""

    def __init__(self, columns: list[str] | tuple[str, ...]) -> None:
        self.columns = tuple(columns)
        self.width = len(self.columns)

    def decode(self, text: str, at: Position) -> Point:
        fields = text.split("\t")[1:]
        if len(fields) > self.width:
            raise at.bad(f"point has {len(fields)} fields", f"{self.width} tab-separated fields after P")
        fields += [""] * (self.width - len(fields))  # empty trailing fields may be left off
        raw = dict(zip(self.columns, fields))
        flags_text = raw["flags"].strip()
        flags = tuple(flags_text.split("|")) if flags_text else ()
        for flag in flags:
            if not FLAG_PATTERN.match(flag):
                raise at.bad(f"point flag {_short(flag)}", "lower-case words joined by |")
        values: dict[str, Any] = {"flags": flags}
        for name in POINT_FLOAT_COLUMNS + POINT_INTEGER_COLUMNS:
            token = raw[name]
            if token.strip() == "":
                if name in ("supply_v", "temperature_c"):
                    values[name] = None
                    continue
                if name in POINT_READING_COLUMNS and "overload" in flags:
                    values[name] = math.nan
                    continue
                raise at.bad(f"point {name} is empty", f"{name} as a number")
            if not _NUMBER.match(token):
                raise at.bad(f"point {name} is {_short(token)}", f"{name} as a decimal number")
            x = float(token)
            if not math.isfinite(x) or abs(x) > MAX_MAGNITUDE * (MAX_INDEX if name == "index" else 1):
                raise at.bad(f"point {name} = {token[:30]} is out of range", "a finite bench value")
            if name in POINT_INTEGER_COLUMNS:
                if x != int(x) or not 0 <= x <= MAX_INDEX:
                    raise at.bad(f"point {name} is {_short(token)}", "a whole number >= 0")
                values[name] = int(x)
            else:
                values[name] = x
        if values["temperature_c"] is not None and values["temperature_c"] < ABSOLUTE_ZERO_C:
            raise at.bad(f"point temperature_c {values['temperature_c']} is below absolute zero",
                         "a temperature in °C")
        mode = raw["supply_mode"].strip()
        if mode and mode not in SUPPLY_MODES:
            raise at.bad(f"point supply_mode is {_short(mode)}", "one of " + ", ".join(SUPPLY_MODES))
        direction = raw["direction"].strip()
        if direction not in DIRECTIONS:
            raise at.bad(f"point direction is {_short(direction)}", "up or down")
        return Point(
            index=values["index"],
            t_s=values["t_s"],
            setpoint_a=values["setpoint_a"],
            current_a=values["current_a"],
            drop_v=values["drop_v"],
            supply_v=values["supply_v"],
            supply_mode=mode or None,
            temperature_c=values["temperature_c"],
            settle_reads=values["settle_reads"],
            direction=direction,  # type: ignore[arg-type]
            flags=flags,
        )


# --- the file ---------------------------------------------------------------------------------


def is_torn(path: str | os.PathLike[str]) -> bool:
    """True when the file's last line has no newline (a write cut short by a kill)."""
    with open_run(path) as f:
        try:
            f.seek(0, os.SEEK_END)
            if f.tell() == 0:
                return False
            f.seek(-1, os.SEEK_END)
            return f.read(1) != b"\n"
        except OSError as exc:
            raise BadInput(str(path), "", f"cannot read the run file ({exc.strerror or exc})",
                           "a readable run file") from None


def open_run(path: str | os.PathLike[str]):
    """A run file opened for reading: a regular file only (a FIFO, /dev/zero or a folder is refused at once)."""
    return open_input(path, "run file")


def iter_lines(path: str | os.PathLike[str]) -> Iterator[tuple[int, str]]:
    """(line number, text without newline) for each complete line; a torn last line is skipped.

    The file is streamed; a line longer than `RUN_LINE_MAX_BYTES` is refused (no
    record we write comes near it, and reading it whole could exhaust memory).
    """
    source = str(path)
    with open_run(path) as f:
        number = 0
        while True:
            raw = f.readline(RUN_LINE_MAX_BYTES + 1)
            if not raw:
                return
            number += 1
            if len(raw) > RUN_LINE_MAX_BYTES:
                raise Position(source, number).bad(f"line is longer than {RUN_LINE_MAX_BYTES} bytes",
                                                "one record per line, each well under 1 MB")
            if not raw.endswith(b"\n"):
                return  # torn write: the process died inside this line
            try:
                text = raw[:-1].decode("utf-8")
            except UnicodeDecodeError as exc:
                raise Position(source, number).bad(f"byte {exc.start + 1} of the line is not UTF-8",
                                                "UTF-8 text") from None
            yield number, text


def read_records(path: str | os.PathLike[str]) -> Iterator[tuple[int, Event]]:
    """(line number, event) for every record, each validated, in file order."""
    source = str(path)
    decoder: PointDecoder | None = None
    last_index: int | None = None
    finished_at = 0
    for number, text in iter_lines(path):
        at = Position(source, number)
        if decoder is None:
            started = decode_header(text, at)
            decoder = PointDecoder(started.header.point_columns)
            yield number, started
            continue
        if finished_at:
            raise at.bad(f"a record after the end record of line {finished_at}",
                         "the end record last")
        if text.startswith(POINT_TAG + "\t"):
            point = decoder.decode(text, at)
            if last_index is not None and point.index <= last_index:
                raise at.bad(f"point index {point.index} does not increase (previous {last_index})",
                             "point indices increasing down the file")
            last_index = point.index
            yield number, point
        elif text.startswith("{"):
            event = decode_record(parse_json_object(text, at), at)
            if isinstance(event, RunFinished):
                finished_at = number
            yield number, event
        elif text.strip() == "":
            raise at.bad("empty line", "one record per line")
        else:
            raise at.bad(f"line starts {_short(text[:12])}", "a P point line or a JSON record")
    if decoder is None:
        raise Position(source, 1).bad(
            "no complete header (the file is empty or ends inside its first line)",
            f"a JSON header line ending in a newline, format {FORMAT_NAME}")


def read_events(path: str | os.PathLike[str]) -> Iterator[Event]:
    """Every event recorded in the run file, validated; BadInput names the line at fault."""
    for _, event in read_records(path):
        yield event


def read_summary(path: str | os.PathLike[str]) -> tuple[RunHeader | None, str]:
    """The header and the outcome of a run file from its first line and last 4 KiB: for listing many runs.

    The outcome is the end record's, "incomplete" without one, "unreadable" when
    the header is not a valid one (the line reader names why when the file is opened).
    """
    source = str(path)
    with open_run(path) as f:
        first = f.readline()
        f.seek(0, os.SEEK_END)
        f.seek(max(0, f.tell() - 4096))
        tail = f.read().split(b"\n")
    try:
        header = decode_header(first[:-1].decode("utf-8"), Position(source, 1)).header
    except (BadInput, UnicodeDecodeError):
        return None, "unreadable"
    for raw in reversed(tail[1:] if len(tail) > 1 else tail):
        if raw.startswith(b"{") and b'"end"' in raw:
            try:
                text = raw.decode("utf-8")
                event = decode_record(parse_json_object(text, Position(source, 0)), Position(source, 0))
            except (BadInput, UnicodeDecodeError):
                break
            if isinstance(event, RunFinished):
                return header, event.outcome
            break
    return header, "incomplete"
