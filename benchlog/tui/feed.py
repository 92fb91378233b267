"""The hand-over from a worker thread to the UI: events queue here and the UI takes them in batches.

A zero-latency sweep yields hundreds of points a second; posting one message
per point would flood the UI's queue. The worker only appends (cheap, thread-safe);
the UI drains the whole backlog on a timer (~15 times a second) and redraws once
per batch, so a key press never waits behind a queue of points.
"""

from __future__ import annotations

import threading
from collections import deque

from benchlog.runs.events import Event


class EventFeed:
    def __init__(self) -> None:
        self._queue: deque[Event] = deque()
        self._lock = threading.Lock()
        self.generation = 0  # bumped by `reset`, so a stale worker's events are dropped

    def push(self, event: Event, generation: int | None = None) -> None:
        """Called from the worker thread."""
        with self._lock:
            if generation is None or generation == self.generation:
                self._queue.append(event)

    def drain(self) -> list[Event]:
        """Called from the UI thread: everything queued so far, oldest first."""
        with self._lock:
            events = list(self._queue)
            self._queue.clear()
        return events

    def reset(self) -> int:
        with self._lock:
            self._queue.clear()
            self.generation += 1
            return self.generation
