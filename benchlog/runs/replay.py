"""Replay a recorded run as the event stream a live sweep produces, at a chosen speed or as fast as possible.

The events are exactly those on disk, in file order, so a screen or an
analysis fed by `replay` cannot tell it from a live run. Between events it
sleeps the recorded gap (`t_s` difference) divided by `speed`.

A killed run (no end record) replays up to its last recorded point and then
stops *without* a `RunFinished`: the stream ends the way the live one did.
`benchlog.runs.load(path)[1].outcome` is then "incomplete".
"""

from __future__ import annotations

import math
import os
import time
from collections.abc import Callable, Iterator

from benchlog.badinput import BadInput

from .events import Event, RunStarted
from .reader import read_events


def replay(
    path: str | os.PathLike[str],
    *,
    speed: float | None = None,
    sleep: Callable[[float], None] = time.sleep,
) -> Iterator[Event]:
    """Yield the run's events; `speed` 1.0 = real time, 10.0 = ten times faster, None = no waiting.

    The file is validated as it is read: corrupt input raises `BadInput`
    naming the line, at the point of the stream where it is met.
    """
    if speed is not None and (isinstance(speed, bool) or not isinstance(speed, (int, float))
                              or not math.isfinite(speed) or speed <= 0):
        raise BadInput("argument", "speed", f"replay speed {speed!r}",
                       "a factor > 0 (1 = real time) or none for as fast as possible")
    last_t: float | None = None
    for event in read_events(path):
        # the header marks t = 0: the times of all other records count from it
        t = 0.0 if isinstance(event, RunStarted) else getattr(event, "t_s", None)
        if speed is not None and t is not None:
            if last_t is not None and t > last_t:
                sleep((t - last_t) / speed)
            last_t = t if last_t is None else max(last_t, t)
        yield event
