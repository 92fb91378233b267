"""The settle rule: after the dwell, read until N consecutive readings agree within a tolerance, or time out.

A reading is the mean of the meter's sample count (`SAMPle:COUNt`), so the
meter does the averaging in one exchange. The settled value is the mean of the
last N readings, which then also averages over repeated reads. When the
timeout (or the read bound) comes first, the mean of the last N readings is
still returned and the point is flagged `unsettled` for the analysis to judge.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass
from typing import Callable

from .plan import Settle


class Overload(Exception):
    """The meter answered its overload value: the drop is beyond the range, there is no reading."""


class Interrupted(Exception):
    """The settle loop was asked to stop (cancel)."""


@dataclass(frozen=True)
class Settled:
    value: float
    reads: int
    settled: bool


def mean_of(samples: tuple[float | None, ...]) -> float:
    if not samples or any(s is None for s in samples):
        raise Overload()
    return sum(samples) / len(samples)  # type: ignore[arg-type]


def settle(
    read: Callable[[], tuple[float | None, ...]],
    rule: Settle,
    clock: Callable[[], float],
    stop_requested: Callable[[], bool] = lambda: False,
) -> Settled:
    """Apply the settle rule to successive meter readings; the dwell has already passed."""
    window: deque[float] = deque(maxlen=rule.consecutive)
    deadline = clock() + rule.timeout_s
    reads = 0
    while True:
        window.append(mean_of(read()))
        reads += 1
        if len(window) == rule.consecutive and max(window) - min(window) <= rule.tolerance_v:
            return Settled(sum(window) / len(window), reads, True)
        if reads >= rule.max_reads or clock() >= deadline:
            return Settled(sum(window) / len(window), reads, False)
        if stop_requested():
            raise Interrupted()
