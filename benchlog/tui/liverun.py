"""What the live view knows about the run in progress, built only from the event stream.

A live sweep and a replayed file produce the same events, so this one fold serves
both: the header names the plan (steps and limits), the points fill the curves,
notes and the end record say how it stopped.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Iterable

import numpy as np

from benchlog.runs.events import Event, Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from benchlog.runs.record import ElementRecord, RunHeader

#: Limit keys of a plan's `[limits]` table, what each is compared with, and the unit.
LIMITS = (
    ("max_current_a", "current", "A"),
    ("compliance_v", "supply V", "V"),
    ("max_drop_v", "drop", "V"),
    ("max_power_w", "power", "W"),
    ("max_time_s", "time", "s"),
)


@dataclass(frozen=True)
class LimitUse:
    """How close the run has come to one limit: the worst value so far over the limit."""

    key: str
    what: str
    unit: str
    limit: float
    worst: float

    @property
    def fraction(self) -> float:
        return self.worst / self.limit if self.limit > 0 else math.inf


@dataclass(frozen=True)
class Progress:
    done: int
    planned: int | None
    elapsed_s: float
    eta_s: float | None

    @property
    def fraction(self) -> float | None:
        if not self.planned:
            return None
        return min(1.0, self.done / self.planned)


@dataclass
class LiveRun:
    """The fold of one run's events; `apply` takes them in batches from the feed."""

    header: RunHeader | None = None
    offset_v: float | None = None
    points: list[Point] = field(default_factory=list)
    notes: list[Note] = field(default_factory=list)
    reverse: ReverseResult | None = None
    finished: RunFinished | None = None
    source: str = "live"  # "live" or "replay"
    _columns: "Columns" = field(default_factory=lambda: Columns(COLUMNS), repr=False, compare=False)
    _arrays: tuple[int, dict[str, np.ndarray]] | None = field(default=None, repr=False, compare=False)

    @property
    def started(self) -> bool:
        return self.header is not None

    @property
    def running(self) -> bool:
        return self.started and self.finished is None

    @property
    def element(self) -> ElementRecord | None:
        return self.header.element if self.header is not None else None

    @property
    def last_t_s(self) -> float:
        times = [self.points[-1].t_s] if self.points else []
        if self.notes:
            times.append(self.notes[-1].t_s)
        if self.finished:
            times.append(self.finished.t_s)
        return max(times) if times else 0.0

    def apply(self, events: Iterable[Event]) -> None:
        new: list[Point] = []
        for event in events:
            if isinstance(event, Point):
                new.append(event)
                continue
            self._add(new)
            new = []
            if isinstance(event, RunStarted):
                self.header = event.header
            elif isinstance(event, Offset):
                self.offset_v = event.drop_v
            elif isinstance(event, Note):
                self.notes.append(event)
            elif isinstance(event, ReverseResult):
                self.reverse = event
            elif isinstance(event, RunFinished):
                self.finished = event
        self._add(new)

    def _add(self, new: list[Point]) -> None:
        """Append a batch of points to the list and, in one step per column, to the column buffers."""
        if not new:
            return
        self.points.extend(new)
        current = np.array([p.current_a for p in new], dtype=float)
        drop = np.array([p.drop_v for p in new], dtype=float)
        supply = np.array([p.supply_v if p.supply_v is not None else math.nan for p in new], dtype=float)
        self._columns.extend(current_a=current, drop_v=drop, power_w=current * drop, supply_v=supply)

    def arrays(self) -> dict[str, np.ndarray]:
        """current_a, drop_v, power_w, supply_v as arrays of every point so far (read-only views).

        The same dict and views come back until a point arrives, so a drawing can
        tell "nothing new" by identity.
        """
        count = len(self._columns)
        if self._arrays is None or self._arrays[0] != count:
            self._arrays = (count, self._columns.views())
        return self._arrays[1]

    def worst_abs(self, column: str) -> float:
        """The largest finite |value| of a column so far (0 when there is none); kept as points arrive."""
        return self._columns.worst_abs(column)

    def supply_mode(self) -> str:
        if self.finished is not None:
            return "OFF"
        if self.points and self.points[-1].supply_mode:
            return self.points[-1].supply_mode
        return "—"

    def progress(self, elapsed_s: float | None = None) -> Progress:
        elapsed = self.last_t_s if elapsed_s is None else max(elapsed_s, self.last_t_s)
        planned = self.header.planned_points() if self.header is not None else None
        done = len(self.points)
        eta = None
        if planned and done and self.finished is None:
            first = self.points[0].t_s
            per_point = (self.points[-1].t_s - first) / max(1, done - 1) if done > 1 else None
            if per_point is not None:
                eta = max(0.0, (planned - done) * per_point)
        if self.finished is not None:
            eta = 0.0
        return Progress(done, planned, elapsed, eta)

    def limits(self, elapsed_s: float | None = None) -> list[LimitUse]:
        table = self.header.plan.limits if self.header is not None and self.header.plan is not None else {}
        worst = {
            "max_current_a": self.worst_abs("current_a"),
            "compliance_v": self.worst_abs("supply_v"),
            "max_drop_v": self.worst_abs("drop_v"),
            "max_power_w": self.worst_abs("power_w"),
            "max_time_s": self.progress(elapsed_s).elapsed_s,
        }
        uses = []
        for key, what, unit in LIMITS:
            limit = table.get(key)
            if isinstance(limit, (int, float)) and not isinstance(limit, bool) and limit > 0:
                uses.append(LimitUse(key, what, unit, float(limit), worst[key]))
        return uses


#: The point columns the live view draws from.
COLUMNS = ("current_a", "drop_v", "power_w", "supply_v")


class Columns:
    """Growable float columns: capacity doubles when full, so n appended points cost O(n) copies in all.

    Rebuilding arrays from every point on each redraw made a redraw O(points);
    here a batch costs O(batch) and a redraw takes views of what is filled.
    The running largest |value| of each column is kept too, for the limit bars.
    """

    def __init__(self, names: Iterable[str], capacity: int = 1024) -> None:
        self._data = {name: np.empty(capacity, dtype=float) for name in names}
        self._worst = {name: 0.0 for name in self._data}
        self._count = 0

    def __len__(self) -> int:
        return self._count

    def extend(self, **chunks: np.ndarray) -> None:
        size = len(next(iter(chunks.values())))
        if set(chunks) != set(self._data) or any(len(c) != size for c in chunks.values()):
            raise ValueError("every column takes a chunk of the same length")
        end = self._count + size
        capacity = len(next(iter(self._data.values())))
        if end > capacity:
            while capacity < end:
                capacity *= 2
            for name, old in self._data.items():
                grown = np.empty(capacity, dtype=float)
                grown[:self._count] = old[:self._count]
                self._data[name] = grown
        for name, chunk in chunks.items():
            self._data[name][self._count:end] = chunk
            self._worst[name] = max(self._worst[name], _max_abs(chunk))
        self._count = end

    def views(self) -> dict[str, np.ndarray]:
        """The filled part of each column; later appends never change what a view shows."""
        out = {}
        for name, data in self._data.items():
            view = data[:self._count]
            view.flags.writeable = False
            out[name] = view
        return out

    def worst_abs(self, name: str) -> float:
        return self._worst[name]


def _max_abs(values: np.ndarray) -> float:
    finite = values[np.isfinite(values)]
    return float(np.max(np.abs(finite))) if len(finite) else 0.0
