"""Current steps: the fixed schedules (linear, log, list, up-then-down) and the interface adaptive stepping shares.

The runner asks a `StepSource` for the next setpoint, giving it the points
measured so far; a fixed schedule ignores them, adaptive stepping uses them.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol, Sequence

import numpy as np

from benchlog.runs.events import Point

from .plan import Steps


@dataclass(frozen=True)
class Step:
    setpoint_a: float
    direction: str = "up"  # "up" or "down": which leg of an up-then-down sweep


class StepSource(Protocol):
    #: how many points to expect (an upper bound for adaptive stepping), for progress and ETA
    planned: int

    def next_step(self, points: Sequence[Point]) -> Step | None:
        """The next setpoint, or None when the sweep is done."""


def _grid(start: float, stop: float, count: int, log: bool) -> np.ndarray:
    if log:
        return np.geomspace(start, stop, count)
    return np.linspace(start, stop, count)


def schedule(steps: Steps) -> tuple[Step, ...]:
    """The setpoints of a fixed schedule, in the order they are applied."""
    if steps.mode == "list":
        return tuple(Step(float(a)) for a in steps.currents_a)
    if steps.mode in ("linear", "log"):
        grid = _grid(steps.start_a, steps.stop_a, steps.count, steps.mode == "log")
        return tuple(Step(float(a)) for a in grid)
    if steps.mode == "updown":
        # Up to stop_a, then back down without repeating the top point: the two legs
        # overlay where the element neither heated nor drifted (common practice).
        grid = _grid(steps.start_a, steps.stop_a, steps.count, steps.spacing == "log")
        up = [Step(float(a), "up") for a in grid]
        down = [Step(float(a), "down") for a in grid[-2::-1]]
        return tuple(up + down)
    raise ValueError(f"not a fixed schedule: {steps.mode!r}")


class FixedSteps:
    """A precomputed schedule."""

    def __init__(self, steps: Sequence[Step]) -> None:
        self._steps = tuple(steps)
        self._next = 0
        self.planned = len(self._steps)

    def next_step(self, points: Sequence[Point]) -> Step | None:
        if self._next >= len(self._steps):
            return None
        step = self._steps[self._next]
        self._next += 1
        return step
