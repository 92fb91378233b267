"""Keep Python's cycle collector from pausing the UI for a tenth of a second while points stream.

Every frame textual draws leaves a few thousand objects in reference cycles (strips
and their caches), so with the default thresholds (700, 10, 10) the young
generations fill many times a second and survivors pile into the oldest one; a
full collection then walks every tracked object (the imported modules, the
points of the run, the widgets) and took 80–400 ms on the UI thread while a
zero-latency sweep streamed. Two standard measures (Python docs, `gc.freeze` and
`gc.set_threshold`):

- freeze what exists once the app is up (modules, classes, the app itself): those
  objects live as long as the process, so no collection needs to walk them;
- a larger first threshold, so short-lived cycles die in a young collection
  instead of being promoted, and full collections become rare.

Garbage is still collected; only how often and how much is walked changes. The
previous settings come back when the app ends (tests run many apps in one process).
"""

from __future__ import annotations

import gc

#: Allocations between young collections (default 700); then 10 young per middle, 10 middle per full.
YOUNG_THRESHOLD = 10_000


class CollectorPolicy:
    """`start()` when the app is mounted, `stop()` when it unmounts; both are safe to call twice."""

    def __init__(self, young: int = YOUNG_THRESHOLD) -> None:
        self.young = young
        self._saved: tuple[int, int, int] | None = None

    def start(self) -> None:
        if self._saved is not None:
            return
        self._saved = gc.get_threshold()
        gc.freeze()
        _, middle, old = self._saved
        gc.set_threshold(max(self.young, self._saved[0]), middle, old)

    def stop(self) -> None:
        if self._saved is None:
            return
        gc.set_threshold(*self._saved)
        self._saved = None
        gc.unfreeze()  # what was frozen is collectable again once it becomes garbage
