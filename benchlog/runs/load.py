"""Load a run file as a pandas DataFrame of points plus its metadata, fast enough for a million points.

The fast path hands the whole file to the pandas C parser in one call (the P
lines are plain tab-separated text; the few JSON lines come back as rows whose
first field is the JSON text) and then checks every rule of `format.py` on
whole columns at once. If anything at all looks wrong it falls back to the
line-by-line reader in `reader.py`, which names the line at fault, so the
fast path never has to report an error itself.

The pandas parser reads a few spellings more leniently than the line reader
(surrounding blanks, `true`/`false` as 1/0); the writer never produces them.
"""

from __future__ import annotations

import csv
import io
import math
import os
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from benchlog.badinput import BadInput
from benchlog.filecheck import RUN_LINE_MAX_BYTES

from .events import Event, Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from .format import POINT_COLUMNS, POINT_FLOAT_COLUMNS, POINT_INTEGER_COLUMNS, POINT_TAG
from .point_rules import flag_rows, numbers_ok, text_value_ok
from .reader import _Line, _open, decode_header, decode_record, is_torn, parse_json_object, read_records

if TYPE_CHECKING:
    import numpy as np
    import pandas as pd

#: DataFrame columns, in order; `power_w` = current_a * drop_v is computed on load.
FRAME_COLUMNS: tuple[str, ...] = POINT_COLUMNS + ("power_w",)
_CATEGORY_COLUMNS = ("supply_mode", "direction", "flags")


@dataclass(frozen=True)
class RunMeta:
    """Everything in a run file except the points.

    `complete` is True when the file has its end record; `outcome` is the end
    record's outcome, or "incomplete" without one. `torn` says the last line
    was cut short (and ignored).
    """

    path: Path
    header: dict[str, Any]
    element: dict[str, Any]
    offset_v: float | None
    notes: tuple[Note, ...]
    reverse: ReverseResult | None
    finished: RunFinished | None
    outcome: str
    complete: bool
    torn: bool = False
    points: int = 0


class _Refused(Exception):
    """The fast path is not sure: let the line reader decide."""


def _meta(path: str | os.PathLike[str], started: RunStarted, records: list[Event], torn: bool,
          points: int) -> RunMeta:
    offsets = [r.drop_v for r in records if isinstance(r, Offset)]
    reverses = [r for r in records if isinstance(r, ReverseResult)]
    finished = next((r for r in records if isinstance(r, RunFinished)), None)
    return RunMeta(
        path=Path(path),
        header=started.header,
        element=dict(started.header.get("element", {})),
        offset_v=offsets[0] if offsets else None,
        notes=tuple(r for r in records if isinstance(r, Note)),
        reverse=reverses[-1] if reverses else None,
        finished=finished,
        outcome=finished.outcome if finished else "incomplete",
        complete=finished is not None,
        torn=torn,
        points=points,
    )


def _frame(columns: dict[str, Any]) -> pd.DataFrame:
    """The one place that fixes column dtypes, so both paths give the same frame."""
    import numpy as np  # imported on first use: writing a run never pays for pandas
    import pandas as pd

    out: dict[str, Any] = {}
    for name in POINT_COLUMNS:
        values = columns[name]
        if name in POINT_INTEGER_COLUMNS:
            out[name] = np.asarray(values, dtype=np.int64)
        elif name in POINT_FLOAT_COLUMNS:
            out[name] = np.asarray(values, dtype=np.float64)
        else:
            cat = values if isinstance(values, pd.Categorical) else pd.Categorical(values)
            if name == "flags":
                if "" not in cat.categories:
                    cat = cat.add_categories([""])
                cat = cat.fillna("")
            out[name] = cat
    out["power_w"] = out["current_a"] * out["drop_v"]
    return pd.DataFrame(out, columns=list(FRAME_COLUMNS))


def _fast(path: str | os.PathLike[str], first_line: bytes, started: RunStarted,
          torn: bool) -> tuple[pd.DataFrame, list[Event]]:
    import numpy as np
    import pandas as pd

    columns = list(started.header["point_columns"])
    names = ["tag"] + columns
    # The tag column reads "P" as missing (cheap), so the rare JSON lines are its only values.
    dtype: dict[str, str] = {"tag": "object"}
    missing: dict[str, list[str]] = {"tag": [POINT_TAG]}
    for name in columns:
        dtype[name] = "category" if name in _CATEGORY_COLUMNS else "float64"
        missing[name] = [""]
    options: dict[str, Any] = dict(
        sep="\t", header=None, names=names, dtype=dtype, keep_default_na=False, na_values=missing,
        quoting=csv.QUOTE_NONE, engine="c", skip_blank_lines=False, encoding="utf-8",
    )
    size = os.path.getsize(path)
    if torn:
        with open(path, "rb") as f:
            data = f.read()
        body = data[len(first_line): data.rfind(b"\n") + 1]
        if not body:
            return _frame({c: [] for c in POINT_COLUMNS}), []
        table = pd.read_csv(io.BytesIO(body), **options)
    else:
        if size == len(first_line):
            return _frame({c: [] for c in POINT_COLUMNS}), []
        table = pd.read_csv(path, skiprows=1, **options)

    tags = table["tag"].to_numpy()
    is_point = pd.isna(tags)
    records: list[Event] = []
    if not is_point.all():
        others = np.flatnonzero(~is_point)
        rest = table.iloc[others, 1:]
        if not rest.isna().all(axis=None):
            raise _Refused  # a record line with tabs in it
        for row in others:
            text = tags[row]
            at = _Line(str(path), int(row) + 2)
            if not isinstance(text, str) or not text.startswith("{"):
                raise _Refused  # blank line or unknown tag: the line reader names it
            try:
                records.append(decode_record(parse_json_object(text, at), at))
            except BadInput:
                raise _Refused from None
        ends = [i for i, r in zip(others, records) if isinstance(r, RunFinished)]
        if ends and (len(ends) > 1 or ends[0] != len(table) - 1):
            raise _Refused
        keep = np.flatnonzero(is_point)
        if len(keep) and keep[-1] - keep[0] + 1 == len(keep):
            table = table.iloc[keep[0]: keep[-1] + 1]  # records only before and after the points: a view
        else:
            table = table.iloc[keep]
    table = table.drop(columns="tag")

    arrays = {name: table[name].to_numpy() for name in columns if name not in _CATEGORY_COLUMNS}
    cats = {name: table[name].array for name in _CATEGORY_COLUMNS}
    for name, cat in cats.items():
        if not all(text_value_ok(name, value) for value in cat.categories):
            raise _Refused
    if (np.asarray(cats["direction"].codes) < 0).any():
        raise _Refused  # an empty direction
    flags = cats["flags"]
    overload = flag_rows(list(flags.categories), np.asarray(flags.codes), "overload")
    if not numbers_ok(arrays, overload):
        raise _Refused
    return _finish(table), records


def _finish(table: pd.DataFrame) -> pd.DataFrame:
    """The parsed table in the shape `_frame` gives, without copying the float columns again."""
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


def read_by_lines(path: str | os.PathLike[str]) -> tuple[RunStarted, dict[str, list[Any]], list[Event]]:
    """The whole file through the line reader: header, point columns as lists, other records.

    The one source of every BadInput about a run file (the fast paths only refuse).
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


def _slow(path: str | os.PathLike[str]) -> tuple[RunStarted, pd.DataFrame, list[Event]]:
    started, columns, records = read_by_lines(path)
    return started, _frame(columns), records


def load(path: str | os.PathLike[str]) -> tuple[pd.DataFrame, RunMeta]:
    """The run's points as a DataFrame (`FRAME_COLUMNS`) and everything else as `RunMeta`.

    Corrupt input raises `BadInput` naming the line. `supply_mode`,
    `direction` and `flags` are categorical columns of str (`flags` is ""
    when a point has none; `supply_mode` is NaN when it was not read).
    """
    source = str(path)
    torn = is_torn(path)
    with _open(path) as f:
        first = f.readline(RUN_LINE_MAX_BYTES + 1)  # an absurd first line goes to the line reader, which refuses it
    if first.endswith(b"\n"):
        try:
            text = first[:-1].decode("utf-8")
        except UnicodeDecodeError:
            text = None
        if text is not None:
            started = decode_header(text, _Line(source, 1))
            try:
                frame, records = _fast(path, first, started, torn)
            except BadInput:
                raise
            except Exception:  # noqa: BLE001 - any doubt: the line reader decides and names the line
                pass
            else:
                return frame, _meta(path, started, records, torn, len(frame))
    started, frame, records = _slow(path)
    return frame, _meta(path, started, records, torn, len(frame))
