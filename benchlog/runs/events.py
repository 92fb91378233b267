"""The sweep's event stream: what a live sweep emits, what a run file records, what a replay yields.

These records are the contract between the runner (`sweep/`), the run file
(`runs/`), the UI and the analysis. A live run and a replayed one produce the
same sequence: `RunStarted`, then `Offset` / `Point` / `Note` / `ReverseResult`
in time order, then `RunFinished` (absent only when the recording was killed).
Times are seconds since the run started (`t_s`); all quantities are SI.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal, Union

from .format import SCHEMA_VERSION, NoteKind, Outcome, SafeState
from .record import RunHeader

__all__ = ["SCHEMA_VERSION", "Event", "Note", "NoteKind", "Offset", "Outcome", "Point", "ReverseResult",
           "RunFinished", "RunStarted", "SafeState"]

#: Flags a point may carry.
FLAG_UNSETTLED = "unsettled"  # settle rule not met before its timeout
FLAG_OVERLOAD = "overload"  # meter answered its overload value: no reading
FLAG_COMPLIANCE = "compliance"  # supply left CC (hit its voltage limit) at this point
FLAG_OUTLIER = "outlier"  # set by analysis, never by the runner
FLAG_SOAK = "soak"  # a heat-soak reading: the operating current held, the drop read at a fixed rate
FLAG_COOL = "cool"  # a cooling reading after the soak, at the small sense current
#: Flags of points that belong to a heat-soak, not to the current sweep (fits of the drop leave them out).
SOAK_FLAGS = (FLAG_SOAK, FLAG_COOL)
#: The info notes that mark when a soak phase's current step was applied (the note's t_s is that instant).
SOAK_STARTED = "soak started"
COOL_STARTED = "cooling started"


@dataclass(frozen=True)
class RunStarted:
    """The header: everything needed to understand and re-analyse the run later (`record.RunHeader`)."""

    header: RunHeader


@dataclass(frozen=True)
class Offset:
    """The zero-current reading of the element drop (thermal EMF and meter offset)."""

    t_s: float
    drop_v: float


@dataclass(frozen=True)
class Point:
    """One settled measurement at one current step."""

    index: int
    t_s: float
    setpoint_a: float
    current_a: float
    drop_v: float
    supply_v: float | None = None
    supply_mode: str | None = None  # "CV", "CC" or None when not read
    temperature_c: float | None = None
    settle_reads: int = 1
    direction: Literal["up", "down"] = "up"
    flags: tuple[str, ...] = field(default=())

    @property
    def power_w(self) -> float:
        return self.current_a * self.drop_v


@dataclass(frozen=True)
class ReverseResult:
    """The reverse-polarity step: the element reversed at `voltage_v` for `duration_s`."""

    t_s: float
    voltage_v: float
    duration_s: float
    current_a: float
    limit_a: float
    passed: bool


@dataclass(frozen=True)
class Note:
    """Something that happened: a limit hit, an instrument fault, a warning, a cancel."""

    t_s: float
    kind: NoteKind
    message: str


@dataclass(frozen=True)
class RunFinished:
    """The end record. `safe_state` is what was read back of the outputs at the end; None: not stated."""

    t_s: float
    outcome: Outcome
    points: int
    message: str = ""
    safe_state: SafeState | None = None


Event = Union[RunStarted, Offset, Point, ReverseResult, Note, RunFinished]
