"""Load a run's points as plain numpy arrays: the light loader for many small files (a lot of runs).

`load` pays a fixed ~5 ms per file for the pandas parser and frame, whatever
the file's size; a lot of 10,000 runs of 30 points would spend most of its time
there. `load_points` reads a small file with `str.split` and checks every
value with the same column rules as `load` (`point_rules.py`); the JSON
records and the header go through the reader's own decoders. Whenever
anything looks wrong it hands the file to the line reader, so its errors are
`load`'s errors, line for line. A large file goes through `load` itself (the
pandas C parser is the faster reader there) and is converted.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from benchlog.badinput import BadInput

from .events import Event, RunFinished
from .format import POINT_COLUMNS, POINT_FLOAT_COLUMNS, POINT_INTEGER_COLUMNS, POINT_TAG
from .load import FRAME_COLUMNS, RunMeta, _meta, load, read_by_lines
from .point_rules import (
    NUMBER_COLUMN,
    OPTIONAL_NUMBERS,
    OVERLOAD_NUMBERS,
    flag_rows,
    numbers_ok,
    text_value_ok,
)
from .reader import _Line, _open, decode_header, decode_record, parse_json_object

if TYPE_CHECKING:
    import numpy as np
    import pandas as pd

#: Files larger than this are read by `load` (pandas), which is faster per byte.
SMALL_FILE_B = 1 << 20

_NUMBER_COLUMNS = POINT_INTEGER_COLUMNS + POINT_FLOAT_COLUMNS
_EMPTY_ALLOWED = OPTIONAL_NUMBERS + OVERLOAD_NUMBERS


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

    # The column-reading part of the DataFrame interface (`name in points.columns`,
    # `points[name].to_numpy(dtype=float)`), so code written for `load`'s frame that only
    # reads columns takes these arrays as they are. Nothing else of pandas is offered.
    @property
    def columns(self) -> tuple[str, ...]:
        return FRAME_COLUMNS

    def __getitem__(self, name: str) -> Column:
        if name not in FRAME_COLUMNS:
            raise KeyError(name)
        return Column(getattr(self, name))

    @property
    def power_w(self) -> np.ndarray:
        """current_a · drop_v, as `load`'s `power_w` column."""
        return self.current_a * self.drop_v

    def has_flag(self, flag: str) -> np.ndarray:
        """Boolean mask of the points whose flags hold `flag`."""
        import numpy as np

        values: dict[str, int] = {}
        codes = np.fromiter((values.setdefault(f, len(values)) for f in self.flags), dtype=np.intp,
                            count=len(self.flags))
        return flag_rows(list(values), codes, flag)

    @classmethod
    def from_columns(cls, columns: dict[str, Sequence[Any]]) -> PointArrays:
        """From column lists as the line reader gives them (`load.read_by_lines`)."""
        import numpy as np

        out: dict[str, np.ndarray] = {}
        for name in POINT_COLUMNS:
            if name in POINT_INTEGER_COLUMNS:
                out[name] = np.asarray(columns[name], dtype=np.int64)
            elif name in POINT_FLOAT_COLUMNS:
                out[name] = np.asarray(columns[name], dtype=np.float64)
            else:
                out[name] = _objects(columns[name])
        return cls(**out)

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


class Column:
    """One column of `PointArrays` read the way a DataFrame's column is: `.to_numpy(dtype=None)`."""

    __slots__ = ("_values",)

    def __init__(self, values: np.ndarray) -> None:
        self._values = values

    def __len__(self) -> int:
        return len(self._values)

    def to_numpy(self, dtype: Any = None, copy: bool = False) -> np.ndarray:
        import numpy as np

        out = np.asarray(self._values, dtype=dtype)
        return out.copy() if copy and out is self._values else out


def _objects(values: Sequence[Any]) -> np.ndarray:
    import numpy as np

    out = np.empty(len(values), dtype=object)
    out[:] = list(values)
    return out


class _Refused(Exception):
    """The quick path is not sure: the line reader decides."""


def _quick(path: str | os.PathLike[str], data: bytes) -> tuple[PointArrays, RunMeta]:
    import numpy as np

    source = str(path)
    end = data.rfind(b"\n") + 1  # a last line without its newline is a torn write: ignored
    if end == 0:
        raise _Refused  # no complete header line
    try:
        lines = data[:end].decode("utf-8").split("\n")
    except UnicodeDecodeError:
        raise _Refused from None
    lines.pop()  # the "" after the last newline
    started = decode_header(lines[0], _Line(source, 1))  # line 1 is the first line the reader checks too
    point_lines: list[str] = []
    records: list[Event] = []
    finished = False
    tag = POINT_TAG + "\t"
    for number, text in enumerate(lines[1:], start=2):
        if finished:
            raise _Refused  # a record after the end record
        if text.startswith(tag):
            point_lines.append(text)
        elif text.startswith("{"):
            at = _Line(source, number)
            try:
                event = decode_record(parse_json_object(text, at), at)
            except BadInput:
                raise _Refused from None  # an earlier line may be at fault: the reader names the first
            finished = isinstance(event, RunFinished)
            records.append(event)
        else:
            raise _Refused  # blank line or unknown tag

    columns = list(started.header["point_columns"])
    width = len(columns) + 1
    rows = [text.split("\t") for text in point_lines]
    for row in rows:
        if len(row) != width:
            if len(row) > width:
                raise _Refused
            row += [""] * (width - len(row))  # empty trailing fields may be left off
    fields: dict[str, Sequence[str]] = dict(zip(["tag"] + columns, zip(*rows))) if rows else {}
    n = len(rows)

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

    text_columns: dict[str, np.ndarray] = {}
    for name in ("supply_mode", "direction", "flags"):
        tokens = fields.get(name, ())
        distinct = set(tokens)
        distinct.discard("")
        if not all(text_value_ok(name, value) for value in distinct):
            raise _Refused
        if name == "direction" and "" in tokens:
            raise _Refused
        text_columns[name] = _objects([t or None for t in tokens] if name == "supply_mode" else tokens)
    flags = text_columns["flags"]
    values_seen: dict[str, int] = {}
    codes = np.fromiter((values_seen.setdefault(f, len(values_seen)) for f in flags), dtype=np.intp, count=n)
    overload = flag_rows(list(values_seen), codes, "overload")
    if not numbers_ok(numbers, overload):
        raise _Refused

    arrays: dict[str, np.ndarray] = {}
    for name in POINT_COLUMNS:
        if name in POINT_INTEGER_COLUMNS:
            arrays[name] = numbers[name].astype(np.int64)
        elif name in POINT_FLOAT_COLUMNS:
            arrays[name] = numbers[name]
        else:
            arrays[name] = text_columns[name]
    torn = end != len(data)
    return PointArrays(**arrays), _meta(path, started, records, torn, n)


def load_points(path: str | os.PathLike[str]) -> tuple[PointArrays, RunMeta]:
    """The run's points as numpy arrays and everything else as `RunMeta`, with `load`'s numbers and errors.

    Corrupt input raises the same `BadInput` as `load` (the line reader names the line).
    """
    with _open(path) as f:
        data = f.read(SMALL_FILE_B + 1)
    if len(data) > SMALL_FILE_B:
        frame, meta = load(path)
        return PointArrays.from_frame(frame), meta
    try:
        return _quick(path, data)
    except _Refused:
        pass
    started, columns, records = read_by_lines(path)
    torn = bool(data) and not data.endswith(b"\n")
    return PointArrays.from_columns(columns), _meta(path, started, records, torn, len(columns["index"]))
