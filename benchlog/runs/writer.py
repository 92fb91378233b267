"""The durable run-file writer: every record reaches the disk soon, and the measurement loop never waits for it.

`RunWriter.write(event)` encodes the record in the caller's thread (so a bad
event fails at once, where it was made) and queues the bytes; one writer
thread appends whatever is queued in a single write, flushes it and calls
`os.fsync`, so hundreds of points per second cost one fsync per batch, not per
point. `durable_count` and the `on_durable` callback say how many records are
on disk. A failure of the disk (full, removed, read-only) is kept and raised
by the next `write()` or `close()`: it is never lost silently.

The file is created exclusively (an existing run is never overwritten) and the
directory entry is fsynced too, so a new file survives a power cut.
"""

from __future__ import annotations

import json
import math
import os
import re
import threading
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Callable

from .events import Event, Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from .format import (
    ABSOLUTE_ZERO_C,
    DIRECTIONS,
    FILE_SUFFIX,
    FLAG_PATTERN,
    MAX_INDEX,
    END_OUTCOMES,
    MAX_MAGNITUDE,
    NOTE_KINDS,
    POINT_COLUMNS,
    POINT_TAG,
    SUPPLY_MODES,
    SAFE_STATES,
)
from .record import RunHeader


class RunWriteError(OSError):
    """The run file could not be written (disk full, file system gone); raised on the next write or close."""


# --- encoding ---------------------------------------------------------------------------------


def _number(name: str, value: Any, *, optional: bool = False, missing_ok: bool = False) -> str:
    if value is None and optional:
        return ""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ValueError(f"{name} must be a number, got {value!r}")
    x = float(value)
    if math.isnan(x) and missing_ok:
        return ""
    if not math.isfinite(x) or abs(x) > MAX_MAGNITUDE:
        raise ValueError(f"{name} must be finite and within ±{MAX_MAGNITUDE:g}, got {value!r}")
    return repr(x)


def _integer(name: str, value: Any, lo: int, hi: int) -> str:
    if isinstance(value, bool) or not isinstance(value, int) or not lo <= value <= hi:
        raise ValueError(f"{name} must be an integer in [{lo}, {hi}], got {value!r}")
    return str(value)


def encode_point(point: Point) -> str:
    """One P line (with its newline) in `POINT_COLUMNS` order."""
    flags = tuple(point.flags)
    for flag in flags:
        if not isinstance(flag, str) or not FLAG_PATTERN.match(flag):
            raise ValueError(f"flag {flag!r} must be a lower-case word ([a-z][a-z0-9_]*)")
    overload = "overload" in flags
    if point.supply_mode is not None and point.supply_mode not in SUPPLY_MODES:
        raise ValueError(f"supply_mode must be one of {SUPPLY_MODES} or None, got {point.supply_mode!r}")
    if point.direction not in DIRECTIONS:
        raise ValueError(f"direction must be one of {DIRECTIONS}, got {point.direction!r}")
    temperature = _number("temperature_c", point.temperature_c, optional=True)
    if temperature and float(temperature) < ABSOLUTE_ZERO_C:
        raise ValueError(f"temperature_c below absolute zero: {point.temperature_c!r}")
    fields = {
        "index": _integer("index", point.index, 0, MAX_INDEX),
        "t_s": _number("t_s", point.t_s),
        "setpoint_a": _number("setpoint_a", point.setpoint_a),
        "current_a": _number("current_a", point.current_a, missing_ok=overload),
        "drop_v": _number("drop_v", point.drop_v, missing_ok=overload),
        "supply_v": _number("supply_v", point.supply_v, optional=True),
        "supply_mode": point.supply_mode or "",
        "temperature_c": temperature,
        "settle_reads": _integer("settle_reads", point.settle_reads, 0, MAX_INDEX),
        "direction": point.direction,
        "flags": "|".join(flags),
    }
    return POINT_TAG + "\t" + "\t".join(fields[c] for c in POINT_COLUMNS) + "\n"


def _json_line(obj: dict[str, Any]) -> str:
    # allow_nan=False: JSON has no NaN; a NaN in a record is a bug to catch here, not in a year.
    return json.dumps(obj, allow_nan=False, ensure_ascii=False, separators=(",", ":")) + "\n"


def encode_event(event: Event) -> str:
    """The line that records `event` (header, P line or JSON record)."""
    if isinstance(event, Point):
        return encode_point(event)
    if isinstance(event, RunStarted):
        if event.header.run_id_derived and event.header.schema >= 2:
            raise ValueError("a run written now needs its own run_id (new_run_id()); "
                             "only a file read from before run ids has a derived one")
        return _json_line({"record": "header", **event.header.to_table()})
    if isinstance(event, Offset):
        return _json_line({"record": "offset", "t_s": float(_number("t_s", event.t_s)),
                           "drop_v": float(_number("drop_v", event.drop_v))})
    if isinstance(event, Note):
        if event.kind not in NOTE_KINDS or not isinstance(event.message, str):
            raise ValueError(f"a note needs a kind in {NOTE_KINDS} and a str message, got {event!r}")
        return _json_line({"record": "note", "t_s": float(_number("t_s", event.t_s)),
                           "kind": event.kind, "message": event.message})
    if isinstance(event, ReverseResult):
        if not isinstance(event.passed, bool):
            raise ValueError(f"passed must be a bool, got {event.passed!r}")
        return _json_line({
            "record": "reverse",
            "t_s": float(_number("t_s", event.t_s)),
            "voltage_v": float(_number("voltage_v", event.voltage_v)),
            "duration_s": float(_number("duration_s", event.duration_s)),
            "current_a": float(_number("current_a", event.current_a)),
            "limit_a": float(_number("limit_a", event.limit_a)),
            "passed": event.passed,
        })
    if isinstance(event, RunFinished):
        if event.outcome not in END_OUTCOMES:
            raise ValueError(f"outcome must be one of {END_OUTCOMES}, got {event.outcome!r}")
        end = {"record": "end", "t_s": float(_number("t_s", event.t_s)), "outcome": event.outcome,
               "points": int(_integer("points", event.points, 0, MAX_INDEX)), "message": str(event.message)}
        if event.safe_state is not None:  # written only when stated: a missing one means "not stated"
            if event.safe_state not in SAFE_STATES:
                raise ValueError(f"safe_state must be one of {SAFE_STATES} or None, got {event.safe_state!r}")
            end["safe_state"] = event.safe_state
        return _json_line(end)
    raise TypeError(f"not a run event: {event!r}")


# --- file names -------------------------------------------------------------------------------

_ODD = re.compile(r"[^A-Za-z0-9.-]+")


def _name_part(text: Any, limit: int = 40) -> str:
    if text is None:
        return ""
    cleaned = _ODD.sub("-", str(text)).strip("-.")
    return cleaned[:limit].strip("-.")


def new_run_path(out_dir: str | os.PathLike[str], header: RunHeader) -> Path:
    """A new, unused run file name in `out_dir` (created if missing): UTC time, element id, serial.

    Only letters, digits, `.` and `-` survive from the element's id and serial,
    so the name never carries a path separator or starts with a dot.
    """
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:  # a file in the way, no permission, read-only file system: the user's to fix
        from benchlog.badinput import BadInput

        raise BadInput(out, "", f"cannot be used as the folder for run files ({exc.strerror or exc})",
                       "a folder that exists or can be created") from None
    try:
        when = datetime.fromisoformat(header.started_utc.replace("Z", "+00:00")).astimezone(timezone.utc)
    except ValueError:
        when = datetime.now(timezone.utc)
    parts = [when.strftime("%Y%m%dT%H%M%SZ"), _name_part(header.element.id) or "element",
             _name_part(header.element.serial)]
    stem = "_".join(p for p in parts if p)
    serial = 1
    while True:
        candidate = out / f"{stem}{'' if serial == 1 else f'-{serial}'}{FILE_SUFFIX}"
        if not candidate.exists():
            return candidate
        serial += 1


# --- the writer -------------------------------------------------------------------------------


def _fsync_directory(directory: Path) -> None:
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        return  # not every platform opens directories; the file itself is still fsynced
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


class RunWriter:
    """Append events to a new run file from a background thread, each batch flushed and fsynced.

    `on_durable(n)` is called from the writer thread with the number of
    records now on disk (`durable_count`); keep it short. Close the writer
    (or use it as a context manager) so the last records are written.
    """

    def __init__(
        self,
        path: str | os.PathLike[str],
        *,
        on_durable: Callable[[int], None] | None = None,
        fsync: bool = True,
    ) -> None:
        self.path = Path(path)
        self._file = open(self.path, "xb")  # noqa: SIM115 - closed by close(); "x": never clobber a run
        _fsync_directory(self.path.parent)
        self._on_durable = on_durable
        self._fsync = fsync
        self._cond = threading.Condition()
        self._queue: list[tuple[bytes, int]] = []  # (line, 1 if a point else 0)
        self._queued = 0
        self._durable = 0
        self._durable_points = 0
        self._error: BaseException | None = None
        self._closing = False
        self._closed = False
        # order checks, done in the caller's thread
        self._started = False
        self._finished = False
        self._last_index: int | None = None
        self._thread = threading.Thread(target=self._drain, name=f"run-writer {self.path.name}",
                                        daemon=True)
        self._thread.start()

    # -- public ----------------------------------------------------------------------------

    @property
    def durable_count(self) -> int:
        """Records (header included) flushed and fsynced to disk."""
        with self._cond:
            return self._durable

    @property
    def durable_points(self) -> int:
        """Point records flushed and fsynced to disk."""
        with self._cond:
            return self._durable_points

    @property
    def queued_count(self) -> int:
        """Records accepted by `write()` so far."""
        with self._cond:
            return self._queued

    def write(self, event: Event) -> None:
        """Queue one event; returns at once. Raises the writer thread's failure, if any."""
        self._raise_if_failed()
        if self._closing:
            raise ValueError(f"{self.path}: the run writer is closed")
        self._check_order(event)
        line = encode_event(event).encode("utf-8")
        is_point = 1 if isinstance(event, Point) else 0
        with self._cond:
            self._queue.append((line, is_point))
            self._queued += 1
            self._cond.notify_all()
        self._note_order(event)

    def wait_durable(self, timeout: float | None = None) -> bool:
        """Block until everything written so far is on disk; False on timeout. Raises a writer failure."""
        with self._cond:
            done = self._cond.wait_for(lambda: self._error is not None or self._durable == self._queued,
                                       timeout)
        self._raise_if_failed()
        return done

    def close(self) -> None:
        """Write what is queued, stop the thread and close the file; raises a writer failure."""
        if self._closed:
            return
        with self._cond:
            self._closing = True
            self._cond.notify_all()
        self._thread.join()
        self._closed = True
        try:
            self._file.close()
        except OSError as exc:
            if self._error is None:
                self._error = exc
        self._raise_if_failed()

    def __enter__(self) -> RunWriter:
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if exc_type is None:
            self.close()
        else:
            try:
                self.close()
            except RunWriteError:
                pass  # the exception already in flight is the one to report

    # -- internals --------------------------------------------------------------------------

    def _raise_if_failed(self) -> None:
        error = self._error
        if error is not None:
            raise RunWriteError(f"{self.path}: run file write failed: {error}") from error

    def _check_order(self, event: Event) -> None:
        if self._finished:
            raise ValueError("no record may follow the end record (RunFinished)")
        if not self._started and not isinstance(event, RunStarted):
            raise ValueError("the first record of a run must be RunStarted (the header)")
        if self._started and isinstance(event, RunStarted):
            raise ValueError("a run has exactly one RunStarted")
        if isinstance(event, Point) and self._last_index is not None and event.index <= self._last_index:
            raise ValueError(f"point index {event.index} does not increase (last {self._last_index})")

    def _note_order(self, event: Event) -> None:
        if isinstance(event, RunStarted):
            self._started = True
        elif isinstance(event, RunFinished):
            self._finished = True
        elif isinstance(event, Point):
            self._last_index = event.index

    def _drain(self) -> None:
        fd = self._file.fileno()
        while True:
            with self._cond:
                self._cond.wait_for(lambda: self._queue or self._closing)
                if not self._queue:
                    return  # closing and nothing left
                batch, self._queue = self._queue, []
            try:
                self._file.write(b"".join(line for line, _ in batch))
                self._file.flush()
                if self._fsync:
                    os.fsync(fd)
            except BaseException as exc:  # noqa: BLE001 - kept and raised in the caller's thread
                with self._cond:
                    self._error = exc
                    self._queue = []
                    self._cond.notify_all()
                return
            with self._cond:
                self._durable += len(batch)
                self._durable_points += sum(p for _, p in batch)
                durable = self._durable
                self._cond.notify_all()
            if self._on_durable is not None:
                try:
                    self._on_durable(durable)
                except BaseException as exc:  # noqa: BLE001
                    with self._cond:
                        self._error = exc
                        self._queue = []
                        self._cond.notify_all()
                    return
