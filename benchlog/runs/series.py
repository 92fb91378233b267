"""Series within one run: the points of an input-voltage sweep, one series per input voltage.

A point of series k carries the flag ``input_<k>`` (k = 0, 1, ...; flags are the
point record's own field, so files without series load as before); series k was
run at ``plan.input.voltages_v[k]`` of the run header, and an info note marks its
start (``SERIES_STARTED``). A point without such a flag belongs to no series.
"""

from __future__ import annotations

import re
from typing import Any

SERIES_FLAG_PREFIX = "input_"
SERIES_STARTED = "input series"  # the note's message starts with this
_SERIES = re.compile(r"input_(\d{1,4})\Z")


def series_flag(k: int) -> str:
    """The flag of the points of series `k`."""
    return f"{SERIES_FLAG_PREFIX}{int(k)}"


def series_of(flags) -> int | None:
    """The series a point's flags (a tuple, or "|"-joined text) put it in; None: no series."""
    words = flags.split("|") if isinstance(flags, str) else (flags or ())
    for word in words:
        m = _SERIES.match(word)
        if m:
            return int(m.group(1))
    return None


def series_inputs_v(plan: dict | None) -> tuple[float, ...]:
    """The input voltages of the series, from the header's plan table (empty: not an input sweep)."""
    table = (plan or {}).get("input") or {}
    values = table.get("voltages_v") or ()
    return tuple(float(v) for v in values if isinstance(v, (int, float)) and not isinstance(v, bool))


def series_inputs(meta) -> tuple[float, ...]:
    """The input voltages of the run's series (empty: not an input sweep)."""
    plan = meta.header.plan
    return plan.input_voltages_v if plan is not None else ()


def series_column(frame) -> Any:
    """The series index of each point (−1: no series)."""
    if hasattr(frame, "columns"):  # a DataFrame (`runs.load`)
        flags = frame["flags"] if "flags" in frame.columns else [None] * len(frame)
    else:  # arrays (`runs.load_points`)
        flags = getattr(frame, "flags", None)
        flags = [None] * len(frame) if flags is None else flags
    out = [series_of(x) if isinstance(x, str) else None for x in flags]
    import numpy as np

    return np.array([-1 if k is None else k for k in out], dtype=int)


def has_series(frame, meta) -> bool:
    return bool(series_inputs(meta)) and bool((series_column(frame) >= 0).any())


def focus_frame(frame, meta):
    """The points a single-series fit or verdict takes: the highest input of an input sweep, else all of them.

    Returns (frame, note); the note says which series was taken (None: the run has no series).
    """
    if not has_series(frame, meta):
        return frame, None
    inputs = series_inputs(meta)
    top = max(range(len(inputs)), key=lambda k: inputs[k])
    rows = series_column(frame) == top
    return _rows(frame, rows), (
        f"input sweep: the single fit takes the series at the highest input, {inputs[top]:g} V "
        f"({int(rows.sum())} points); each input is fitted in 'series'")


def _rows(frame, mask):
    """The rows of `frame` where `mask` holds: a DataFrame re-indexed from 0, or arrays cut alike."""
    if hasattr(frame, "columns"):
        return frame[mask].reset_index(drop=True)
    import dataclasses

    return dataclasses.replace(frame, **{f.name: getattr(frame, f.name)[mask] for f in dataclasses.fields(frame)})


__all__ = ["SERIES_FLAG_PREFIX", "SERIES_STARTED", "series_flag", "series_of", "series_inputs_v", "series_inputs",
           "series_column", "has_series", "focus_frame"]
