"""The run file format (`*.run`): what each line holds, so a run can be read back years later.

A run file is UTF-8 text, one record per line, each line ended by ``\\n``.
It is written append-only: a record, once on disk, is never rewritten.

Line 1, the header, is one JSON object::

    {"record": "header", "format": "benchlog-run", "schema": 2,
     "point_columns": ["index", "t_s", ...], "tool_version": "0.1.0",
     "started_utc": "2025-01-31T09:15:02Z", "run_id": "3f0c...", "element": {"id": ...}, ...}

Its keys are `HEADER_KEYS` below; the program reads it into `record.RunHeader`
(typed, frozen) and writes it from one, so no other module spells these keys.

Point records are tab-separated text, not JSON, so that a million points
load through the pandas CSV parser at its native speed::

    P<TAB>index<TAB>t_s<TAB>setpoint_a<TAB>current_a<TAB>drop_v<TAB>supply_v<TAB>...

- the fields follow the order named by the header's ``point_columns``;
- numbers are written with the shortest text that reads back to the same
  binary float (Python ``repr``); integers as plain digits;
- an empty field is "not read" (None); only ``supply_v``, ``supply_mode``,
  ``temperature_c`` and ``flags`` may be empty, and ``current_a`` / ``drop_v``
  only on a point flagged ``overload`` (the meter gave no reading: NaN);
- ``supply_mode`` is one of CV, CC, OFF, UNKNOWN; ``direction`` is up or down;
- ``flags`` are lower-case words joined by ``|`` (``unsettled|overload``);
- ``index`` starts anywhere >= 0 and increases strictly from point to point.

Every other record is one JSON object with a ``"record"`` key:

    offset   {"record": "offset", "t_s", "drop_v"}                 zero-current reading
    note     {"record": "note", "t_s", "kind", "message"}          limit, fault, warning, cancel, info
    reverse  {"record": "reverse", "t_s", "voltage_v", "duration_s",
              "current_a", "limit_a", "passed"}                    reverse-polarity step
    end      {"record": "end", "t_s", "outcome", "points", "message"[, "safe_state"]}
                                                                   last record of a finished run

``safe_state`` (schema 2, optional) is one of ``verified`` (every output read
back in its safe state), ``unverified`` (switched off, not confirmed by a
read-back) or ``unknown``; it is written only when the writer states it, and a
missing one means "not stated", never "safe".

Numbers everywhere must be finite (JSON has no NaN; ``1e400`` overflows and
is refused) and, in SI units, no larger than `MAX_MAGNITUDE`.

A line without its final ``\\n`` is a write torn by a killed process: it is
ignored. A file without an ``end`` record is reported ``incomplete``.

A file whose ``schema`` is newer than this program knows is refused with the
version found and the versions supported. Schema 1 (before run ids) is read
into the same record: it has no ``run_id``, so its id is derived from its
header line (the version 5 UUID of the line, `record.derived_run_id`): the same
file always gets the same id. Schema 2 requires ``run_id``, a UUID4 written
when the run starts.
"""

from __future__ import annotations

import re
from typing import Literal, get_args

#: The schema this program writes. 2 added the header's run_id and the end record's safe_state.
SCHEMA_VERSION = 2

Outcome = Literal["complete", "cancelled", "limit", "fault", "incomplete"]
"""How a run ended; `incomplete` is what a reader reports for a file with no end record."""

NoteKind = Literal["limit", "fault", "warning", "cancel", "info"]

SafeState = Literal["verified", "unverified", "unknown"]
"""What the end record says of the outputs' safe state: read back off, not confirmed, or not known."""

FORMAT_NAME = "benchlog-run"
SUPPORTED_SCHEMAS: tuple[int, ...] = (1, 2)
FILE_SUFFIX = ".run"

POINT_TAG = "P"

#: Point fields in the order this program writes them (schema 1).
POINT_COLUMNS: tuple[str, ...] = (
    "index",
    "t_s",
    "setpoint_a",
    "current_a",
    "drop_v",
    "supply_v",
    "supply_mode",
    "temperature_c",
    "settle_reads",
    "direction",
    "flags",
)
POINT_INTEGER_COLUMNS = ("index", "settle_reads")
POINT_FLOAT_COLUMNS = ("t_s", "setpoint_a", "current_a", "drop_v", "supply_v", "temperature_c")
#: Columns that may be empty (None / NaN).
POINT_OPTIONAL_COLUMNS = ("supply_v", "supply_mode", "temperature_c", "flags")
#: Readings that may be missing on a point flagged `overload` (the meter had no reading).
POINT_READING_COLUMNS = ("current_a", "drop_v")

SUPPLY_MODES = ("CV", "CC", "OFF", "UNKNOWN")
DIRECTIONS = ("up", "down")
FLAG_PATTERN = re.compile(r"[a-z][a-z0-9_]*\Z")

#: No bench quantity in SI units comes near this; a larger one is a corrupt file.
MAX_MAGNITUDE = 1e9
MAX_INDEX = 10**12
ABSOLUTE_ZERO_C = -273.15

RECORD_KINDS = ("header", "offset", "note", "reverse", "end")
NOTE_KINDS: tuple[str, ...] = get_args(NoteKind)
#: Outcomes an end record may carry; "incomplete" is never written, it means "no end record".
END_OUTCOMES: tuple[str, ...] = tuple(o for o in get_args(Outcome) if o != "incomplete")
SAFE_STATES: tuple[str, ...] = get_args(SafeState)

#: Header keys the reader insists on.
HEADER_REQUIRED: tuple[str, ...] = (
    "record",
    "format",
    "schema",
    "point_columns",
    "tool_version",
    "started_utc",
    "element",
)

#: Every header key the runner writes, with what it holds. Keys other than
#: these are kept as they are (a newer runner may add more).
HEADER_KEYS: dict[str, str] = {
    "record": '"header"',
    "format": f'"{FORMAT_NAME}"',
    "schema": "integer schema version of this file",
    "point_columns": "list of the point fields in the order of each P line",
    "tool_version": "benchlog version that wrote the file",
    "started_utc": "ISO 8601 UTC start time ending in Z",
    "run_id": "UUID4 text written when the run starts (schema 2; required there)",
    "host": "name of the computer that ran the sweep",
    "instruments": "{role: {resource, idn, profile, profile_sha256}}",
    "bench": "the bench file's content as a table",
    "plan": "the plan file's content as a table",
    "element": "{id, kind, label, lot, serial, ambient_c, note}",
    "accuracy": '{"drop": {reading_pct, range_pct, range_v}, "current": {reading_pct, range_pct, range_a}, '
                '"reverse_current": {reading_pct, range_pct, range_a} (with a reverse step)}',
    "meter": "{nplc, samples, range_v}",
    "line_frequency_hz": "mains frequency the NPLC is counted in",
    "temperature": "{source, role, resource, profile, idn, attached_to, transducer, accuracy_c}: the probe on the "
                   "element that filled the points' temperature_c (absent: no probe, temperature_c empty)",
}

#: Header keys that must be JSON objects when present.
HEADER_TABLES = ("instruments", "bench", "plan", "element", "accuracy", "meter", "temperature")
#: Header keys that must be strings when present.
HEADER_STRINGS = ("format", "tool_version", "started_utc", "host", "run_id")
#: Element keys that must be strings (or null) when present.
ELEMENT_STRINGS = ("id", "kind", "label", "lot", "serial", "note")
