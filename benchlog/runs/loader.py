"""The one run-file parser for whole files: `load` (a pandas DataFrame) and `load_points` (numpy arrays).

Every path goes through the same stages and ends in the same types:

1. line 1 by `reader.decode_header` into a typed `RunHeader`;
2. the body cut into text fields by one of two splitters -- the pandas C parser
   (one call for a file of any size; the P lines are plain tab-separated text,
   the few JSON lines come back as rows whose first field is the JSON text) or,
   for a small file read as arrays, `str.split`, which skips the fixed cost of
   the pandas parser and frame (~5 ms a file: most of a lot of 10,000 runs);
3. the JSON records by `reader.decode_record`, the end record last;
4. every point column checked at once by the rules of `point_rules.py`;
5. one `RunMeta`.

A splitter never reports an error: at any doubt it refuses and the line reader
(`reader.read_records`) reads the file, applying the same rules line by line
and naming the first line at fault. So `load` and `load_points` give the same
numbers, bit for bit, and the same BadInput, line for line.

The pandas parser reads a few spellings more leniently than the line reader
(surrounding blanks, `true`/`false` as 1/0); the writer never produces them.
"""

from __future__ import annotations

import csv
import io
import math
import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from benchlog.badinput import BadInput
from benchlog.filecheck import RUN_LINE_MAX_BYTES

from .events import Event, Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from .format import POINT_COLUMNS, POINT_FLOAT_COLUMNS, POINT_INTEGER_COLUMNS, POINT_TAG
from .point_rules import (
    NUMBER_COLUMN,
    OPTIONAL_NUMBERS,
    OVERLOAD_NUMBERS,
    flag_rows,
    numbers_ok,
    text_value_ok,
)
from .reader import Position, decode_header, decode_record, open_run, parse_json_object, read_records
from .record import ElementRecord, RunHeader

if TYPE_CHECKING:
    import numpy as np
    import pandas as pd

#: DataFrame columns, in order; `power_w` = current_a * drop_v is computed on load.
FRAME_COLUMNS: tuple[str, ...] = POINT_COLUMNS + ("power_w",)
TEXT_COLUMNS = ("supply_mode", "direction", "flags")
#: `load_points` splits files up to this size itself; a larger one goes to the pandas parser,
#: which is faster per byte.
SMALL_FILE_B = 1 << 20

_NUMBER_COLUMNS = POINT_INTEGER_COLUMNS + POINT_FLOAT_COLUMNS
_EMPTY_ALLOWED = OPTIONAL_NUMBERS + OVERLOAD_NUMBERS


@dataclass(frozen=True)
class RunMeta:
    """Everything in a run file except the points.

    `complete` is True when the file has its end record; `outcome` is the end
    record's outcome, or "incomplete" without one. `torn` says the last line
    was cut short (and ignored).
    """

    path: Path
    header: RunHeader
    offset_v: float | None
    notes: tuple[Note, ...]
    reverse: ReverseResult | None
    finished: RunFinished | None
    outcome: str
    complete: bool
    torn: bool = False
    points: int = 0

    @property
    def element(self) -> ElementRecord:
        return self.header.element

    @property
    def run_id(self) -> str:
        return self.header.run_id


@dataclass(frozen=True, eq=False)
class PointArrays:
    """The point columns of a run (`format.POINT_COLUMNS`) as numpy arrays of one length.

    index, settle_reads: int64; t_s ... temperature_c: float64 with NaN for "not
    read"; supply_mode: object array of str or None; direction: object array of
    str; flags: object array of "|"-joined str, "" when a point has none.
    The numbers are those `load` gives, bit for bit.
    """

    index: np.ndarray
    t_s: np.ndarray
    setpoint_a: np.ndarray
    current_a: np.ndarray
    drop_v: np.ndarray
    supply_v: np.ndarray
    supply_mode: np.ndarray
    temperature_c: np.ndarray
    settle_reads: np.ndarray
    direction: np.ndarray
    flags: np.ndarray

    def __len__(self) -> int:
        return len(self.index)

    @property
    def power_w(self) -> np.ndarray:
        """current_a · drop_v, as `load`'s `power_w` column."""
        return self.current_a * self.drop_v

    def has_flag(self, flag: str) -> np.ndarray:
        """Boolean mask of the points whose flags hold `flag`."""
        return _flag_mask(self.flags, flag)

    @classmethod
    def from_frame(cls, frame: pd.DataFrame) -> PointArrays:
        """From a frame of `load`: numeric columns as they are, text columns as str (None for no mode)."""
        import numpy as np

        out: dict[str, np.ndarray] = {}
        for name in POINT_COLUMNS:
            column = frame[name]
            if name in POINT_INTEGER_COLUMNS:
                out[name] = column.to_numpy(dtype=np.int64)
            elif name in POINT_FLOAT_COLUMNS:
                out[name] = column.to_numpy(dtype=np.float64)
            else:
                values = column.astype(object).to_numpy()
                out[name] = _objects([None if not isinstance(v, str) else v for v in values])
        return cls(**out)


class _Refused(Exception):
    """A splitter is not sure: the line reader decides."""


# --- stages shared by both splitters ----------------------------------------------------------


def _objects(values: Sequence[Any]) -> np.ndarray:
    import numpy as np

    out = np.empty(len(values), dtype=object)
    out[:] = list(values)
    return out


def _flag_mask(flags: Sequence[str], flag: str) -> np.ndarray:
    import numpy as np

    seen: dict[str, int] = {}
    codes = np.fromiter((seen.setdefault(f, len(seen)) for f in flags), dtype=np.intp, count=len(flags))
    return flag_rows(list(seen), codes, flag)


def _records(source: str, numbered_texts: Sequence[tuple[int, Any]], last_line: int) -> list[Event]:
    """Stage 3: the non-point lines (line number, text) as events, the end record the last line."""
    records: list[Event] = []
    for number, text in numbered_texts:
        if not isinstance(text, str) or not text.startswith("{"):
            raise _Refused  # blank line or unknown tag: the line reader names it
        at = Position(source, number)
        try:
            event = decode_record(parse_json_object(text, at), at)
        except BadInput:
            raise _Refused from None  # an earlier line may be at fault: the reader names the first
        if isinstance(event, RunFinished) and number != last_line:
            raise _Refused  # a record after the end record
        records.append(event)
    return records


def _check_columns(numbers: dict[str, np.ndarray], texts: dict[str, Any], overload: np.ndarray) -> None:
    """Stage 4: the point rules on whole columns; `texts` holds each text column's distinct values."""
    for name, values in texts.items():
        if not all(text_value_ok(name, value) for value in values if value):
            raise _Refused
    if not numbers_ok(numbers, overload):
        raise _Refused


def _meta(path: str | os.PathLike[str], started: RunStarted, records: list[Event], torn: bool,
          points: int) -> RunMeta:
    """Stage 5."""
    offsets = [r.drop_v for r in records if isinstance(r, Offset)]
    reverses = [r for r in records if isinstance(r, ReverseResult)]
    finished = next((r for r in records if isinstance(r, RunFinished)), None)
    return RunMeta(
        path=Path(path),
        header=started.header,
        offset_v=offsets[0] if offsets else None,
        notes=tuple(r for r in records if isinstance(r, Note)),
        reverse=reverses[-1] if reverses else None,
        finished=finished,
        outcome=finished.outcome if finished else "incomplete",
        complete=finished is not None,
        torn=torn,
        points=points,
    )


def _first_line(path: str | os.PathLike[str], data: bytes | None = None) -> tuple[bytes, RunStarted | None]:
    """Stage 1 on the raw first line; None when it is not a complete UTF-8 line (the reader says why)."""
    if data is None:
        with open_run(path) as f:
            first = f.readline(RUN_LINE_MAX_BYTES + 1)  # an absurd first line goes to the line reader, which refuses it
    else:
        cut = data.find(b"\n")
        first = data[: cut + 1] if cut >= 0 else data
    if not first.endswith(b"\n"):
        return first, None
    try:
        text = first[:-1].decode("utf-8")
    except UnicodeDecodeError:
        return first, None
    return first, decode_header(text, Position(str(path), 1))


# --- splitter 1: the pandas C parser ----------------------------------------------------------


def _pandas_split(path: str | os.PathLike[str], first: bytes, started: RunStarted, data: bytes | None,
                  torn: bool) -> tuple[pd.DataFrame, list[Event]]:
    import numpy as np
    import pandas as pd

    columns = list(started.header.point_columns)
    names = ["tag"] + columns
    # The tag column reads "P" as missing (cheap), so the rare JSON lines are its only values.
    dtype: dict[str, str] = {"tag": "object"}
    missing: dict[str, list[str]] = {"tag": [POINT_TAG]}
    for name in columns:
        dtype[name] = "category" if name in TEXT_COLUMNS else "float64"
        missing[name] = [""]
    options: dict[str, Any] = dict(
        sep="\t", header=None, names=names, dtype=dtype, keep_default_na=False, na_values=missing,
        quoting=csv.QUOTE_NONE, engine="c", skip_blank_lines=False, encoding="utf-8",
    )
    if torn or data is not None:
        if data is None:
            with open(path, "rb") as f:
                data = f.read()
        body = data[len(first): data.rfind(b"\n") + 1]
        if not body:
            return _frame_from_lists({c: [] for c in POINT_COLUMNS}), []
        table = pd.read_csv(io.BytesIO(body), **options)
    else:
        if os.path.getsize(path) == len(first):
            return _frame_from_lists({c: [] for c in POINT_COLUMNS}), []
        table = pd.read_csv(path, skiprows=1, **options)

    tags = table["tag"].to_numpy()
    is_point = pd.isna(tags)
    records: list[Event] = []
    if not is_point.all():
        others = np.flatnonzero(~is_point)
        if not table.iloc[others, 1:].isna().all(axis=None):
            raise _Refused  # a record line with tabs in it
        records = _records(str(path), [(int(row) + 2, tags[row]) for row in others], len(table) + 1)
        keep = np.flatnonzero(is_point)
        if len(keep) and keep[-1] - keep[0] + 1 == len(keep):
            table = table.iloc[keep[0]: keep[-1] + 1]  # records only before and after the points: a view
        else:
            table = table.iloc[keep]
    table = table.drop(columns="tag")

    cats = {name: table[name].array for name in TEXT_COLUMNS}
    if (np.asarray(cats["direction"].codes) < 0).any():
        raise _Refused  # an empty direction
    flags = cats["flags"]
    overload = flag_rows(list(flags.categories), np.asarray(flags.codes), "overload")
    numbers = {name: table[name].to_numpy() for name in _NUMBER_COLUMNS}
    _check_columns(numbers, {name: list(cat.categories) for name, cat in cats.items()}, overload)
    return _finish(table), records


def _finish(table: pd.DataFrame) -> pd.DataFrame:
    """The parsed table in `load`'s shape, without copying the float columns again."""
    import numpy as np

    out = table.reset_index(drop=True)
    for name in POINT_INTEGER_COLUMNS:
        out[name] = out[name].to_numpy().astype(np.int64)
    flags = out["flags"].array
    if "" not in flags.categories:
        flags = flags.add_categories([""])
    out["flags"] = flags.fillna("")
    out["power_w"] = out["current_a"].to_numpy() * out["drop_v"].to_numpy()
    return out if list(out.columns) == list(FRAME_COLUMNS) else out[list(FRAME_COLUMNS)]


# --- splitter 2: str.split, for small files read as arrays -------------------------------------


def _text_split(path: str | os.PathLike[str], data: bytes,
                started: RunStarted) -> tuple[PointArrays, list[Event]]:
    """The points of a small file as arrays, and its other records."""
    import numpy as np

    end = data.rfind(b"\n") + 1  # a last line without its newline is a torn write: ignored
    try:
        lines = data[:end].decode("utf-8").split("\n")
    except UnicodeDecodeError:
        raise _Refused from None
    lines.pop()  # the "" after the last newline
    tag = POINT_TAG + "\t"
    point_lines = [text for text in lines[1:] if text.startswith(tag)]
    others = [(number, text) for number, text in enumerate(lines[1:], start=2) if not text.startswith(tag)]
    records = _records(str(path), others, len(lines))

    columns = list(started.header.point_columns)
    width = len(columns) + 1
    rows = [text.split("\t") for text in point_lines]
    for row in rows:
        if len(row) != width:
            if len(row) > width:
                raise _Refused
            row += [""] * (width - len(row))  # empty trailing fields may be left off
    fields: dict[str, Sequence[str]] = dict(zip(["tag"] + columns, zip(*rows))) if rows else {}

    numbers: dict[str, np.ndarray] = {}
    for name in _NUMBER_COLUMNS:
        tokens = fields.get(name, ())
        present = [t for t in tokens if t] if "" in tokens else tokens
        if len(present) != len(tokens) and name not in _EMPTY_ALLOWED:
            raise _Refused  # an empty field where the column must hold a number
        if present and not NUMBER_COLUMN.match("\t".join(present)):
            raise _Refused  # not a number as the writer writes it (the reader says which)
        values = [float(t) for t in tokens] if present is tokens else [float(t) if t else math.nan for t in tokens]
        numbers[name] = np.array(values, dtype=np.float64)
    texts = {name: fields.get(name, ()) for name in TEXT_COLUMNS}
    if "" in texts["direction"]:
        raise _Refused
    _check_columns(numbers, {name: set(values) for name, values in texts.items()},
                   _flag_mask(texts["flags"], "overload"))

    arrays: dict[str, np.ndarray] = {}
    for name in POINT_COLUMNS:
        if name in POINT_INTEGER_COLUMNS:
            arrays[name] = numbers[name].astype(np.int64)
        elif name in POINT_FLOAT_COLUMNS:
            arrays[name] = numbers[name]
        else:
            tokens = texts[name]
            arrays[name] = _objects([t or None for t in tokens] if name == "supply_mode" else tokens)
    return PointArrays(**arrays), records


# --- the line reader's columns (any doubt) -----------------------------------------------------


def _by_lines(path: str | os.PathLike[str]) -> tuple[RunStarted, dict[str, list[Any]], list[Event]]:
    """The whole file through the line reader: header, point columns as lists, other records.

    The one source of every BadInput about a run file (the splitters only refuse).
    Column lists hold floats (NaN for an unread supply_v / temperature_c), ints,
    str or None (supply_mode) and "|"-joined flags ("" for none).
    """
    started: RunStarted | None = None
    points: list[Point] = []
    records: list[Event] = []
    for _, event in read_records(path):
        if isinstance(event, Point):
            points.append(event)
        elif isinstance(event, RunStarted):
            started = event
        else:
            records.append(event)
    assert started is not None  # read_records raises BadInput without a header
    columns: dict[str, Any] = {name: [getattr(p, name) for p in points] for name in POINT_COLUMNS}
    for name in ("supply_v", "temperature_c"):
        columns[name] = [math.nan if v is None else v for v in columns[name]]
    columns["flags"] = ["|".join(f) for f in columns["flags"]]
    return started, columns, records


def _frame_from_lists(columns: dict[str, Any]) -> pd.DataFrame:
    """A frame from the line reader's column lists, with the dtypes `_finish` gives."""
    import numpy as np
    import pandas as pd

    out: dict[str, Any] = {}
    for name in POINT_COLUMNS:
        values = columns[name]
        if name in POINT_INTEGER_COLUMNS:
            out[name] = np.asarray(values, dtype=np.int64)
        elif name in POINT_FLOAT_COLUMNS:
            out[name] = np.asarray(values, dtype=np.float64)
        else:
            cat = pd.Categorical(values)
            if name == "flags":
                if "" not in cat.categories:
                    cat = cat.add_categories([""])
                cat = cat.fillna("")
            out[name] = cat
    out["power_w"] = out["current_a"] * out["drop_v"]
    return pd.DataFrame(out, columns=list(FRAME_COLUMNS))


def _arrays_from_lists(columns: dict[str, Any]) -> PointArrays:
    import numpy as np

    out: dict[str, np.ndarray] = {}
    for name in POINT_COLUMNS:
        if name in POINT_INTEGER_COLUMNS:
            out[name] = np.asarray(columns[name], dtype=np.int64)
        elif name in POINT_FLOAT_COLUMNS:
            out[name] = np.asarray(columns[name], dtype=np.float64)
        else:
            out[name] = _objects(columns[name])
    return PointArrays(**out)


# --- the two entry points ---------------------------------------------------------------------


def load(path: str | os.PathLike[str]) -> tuple[pd.DataFrame, RunMeta]:
    """The run's points as a DataFrame (`FRAME_COLUMNS`) and everything else as `RunMeta`.

    Corrupt input raises `BadInput` naming the line. `supply_mode`,
    `direction` and `flags` are categorical columns of str (`flags` is ""
    when a point has none; `supply_mode` is NaN when it was not read).
    """
    from .reader import is_torn

    torn = is_torn(path)
    first, started = _first_line(path)
    if started is not None:
        try:
            frame, records = _pandas_split(path, first, started, None, torn)
        except BadInput:
            raise
        except Exception:  # noqa: BLE001 - any doubt: the line reader decides and names the line
            pass
        else:
            return frame, _meta(path, started, records, torn, len(frame))
    started, columns, records = _by_lines(path)
    frame = _frame_from_lists(columns)
    return frame, _meta(path, started, records, torn, len(frame))


def load_points(path: str | os.PathLike[str]) -> tuple[PointArrays, RunMeta]:
    """The run's points as numpy arrays and everything else as `RunMeta`, with `load`'s numbers and errors.

    Corrupt input raises the same `BadInput` as `load` (the line reader names the line).
    """
    with open_run(path) as f:
        data = f.read(SMALL_FILE_B + 1)
    if len(data) > SMALL_FILE_B:
        frame, meta = load(path)
        return PointArrays.from_frame(frame), meta
    torn = bool(data) and not data.endswith(b"\n")
    first, started = _first_line(path, data)
    if started is not None:
        try:
            points, records = _text_split(path, data, started)
        except _Refused:
            pass
        else:
            return points, _meta(path, started, records, torn, len(points))
    started, columns, records = _by_lines(path)
    return _arrays_from_lists(columns), _meta(path, started, records, torn, len(columns["index"]))
