"""What the live view knows about the run in progress, built only from the event stream.

A live sweep and a replayed file produce the same events, so this one fold serves
both: the header names the plan (steps and limits), the points fill the curves,
notes and the end record say how it stopped.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Iterable

import numpy as np

from benchlog.runs.events import Event, Note, Offset, Point, ReverseResult, RunFinished, RunStarted

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


def planned_points(header: dict[str, Any]) -> int | None:
    """The number of points the plan asks for; None for adaptive steps (they stop on a target)."""
    for key in ("planned_points", "points_planned"):
        value = header.get(key)
        if isinstance(value, int) and value > 0:
            return value
    steps = (header.get("plan") or {}).get("steps") or {}
    mode = steps.get("mode")
    if mode == "list":
        currents = steps.get("currents_a") or []
        return len(currents) or None
    count = steps.get("count")
    if not isinstance(count, int) or count <= 0:
        return None
    if mode in ("linear", "log"):
        return count
    if mode == "updown":
        return 2 * count - 1
    return None


@dataclass
class LiveRun:
    """The fold of one run's events; `apply` takes them in batches from the feed."""

    header: dict[str, Any] = field(default_factory=dict)
    offset_v: float | None = None
    points: list[Point] = field(default_factory=list)
    notes: list[Note] = field(default_factory=list)
    reverse: ReverseResult | None = None
    finished: RunFinished | None = None
    source: str = "live"  # "live" or "replay"
    _arrays: tuple[int, dict[str, np.ndarray]] | None = None

    @property
    def started(self) -> bool:
        return bool(self.header)

    @property
    def running(self) -> bool:
        return self.started and self.finished is None

    @property
    def element(self) -> dict[str, Any]:
        return self.header.get("element") or {}

    @property
    def last_t_s(self) -> float:
        times = [self.points[-1].t_s] if self.points else []
        if self.notes:
            times.append(self.notes[-1].t_s)
        if self.finished:
            times.append(self.finished.t_s)
        return max(times) if times else 0.0

    def apply(self, events: Iterable[Event]) -> None:
        for event in events:
            if isinstance(event, RunStarted):
                self.header = dict(event.header)
            elif isinstance(event, Point):
                self.points.append(event)
            elif isinstance(event, Offset):
                self.offset_v = event.drop_v
            elif isinstance(event, Note):
                self.notes.append(event)
            elif isinstance(event, ReverseResult):
                self.reverse = event
            elif isinstance(event, RunFinished):
                self.finished = event

    def arrays(self) -> dict[str, np.ndarray]:
        """current_a, drop_v, power_w, supply_v as arrays (cached until a point arrives)."""
        if self._arrays is not None and self._arrays[0] == len(self.points):
            return self._arrays[1]
        pts = self.points
        current = np.fromiter((p.current_a for p in pts), float, len(pts))
        drop = np.fromiter((p.drop_v for p in pts), float, len(pts))
        supply = np.fromiter((p.supply_v if p.supply_v is not None else math.nan for p in pts), float, len(pts))
        data = {"current_a": current, "drop_v": drop, "power_w": current * drop, "supply_v": supply}
        self._arrays = (len(pts), data)
        return data

    def supply_mode(self) -> str:
        if self.finished is not None:
            return "OFF"
        if self.points and self.points[-1].supply_mode:
            return self.points[-1].supply_mode
        return "—"

    def progress(self, elapsed_s: float | None = None) -> Progress:
        elapsed = self.last_t_s if elapsed_s is None else max(elapsed_s, self.last_t_s)
        planned = planned_points(self.header)
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
        table = (self.header.get("plan") or {}).get("limits") or {}
        data = self.arrays()
        worst = {
            "max_current_a": _max_abs(data["current_a"]),
            "compliance_v": _max_abs(data["supply_v"]),
            "max_drop_v": _max_abs(data["drop_v"]),
            "max_power_w": _max_abs(data["power_w"]),
            "max_time_s": self.progress(elapsed_s).elapsed_s,
        }
        uses = []
        for key, what, unit in LIMITS:
            limit = table.get(key)
            if isinstance(limit, (int, float)) and not isinstance(limit, bool) and limit > 0:
                uses.append(LimitUse(key, what, unit, float(limit), worst[key]))
        return uses


def _max_abs(values: np.ndarray) -> float:
    finite = values[np.isfinite(values)]
    return float(np.max(np.abs(finite))) if len(finite) else 0.0
