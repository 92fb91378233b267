"""The archive lists run files cheaply and never waits on a FIFO or a device that merely has a .run name."""

from __future__ import annotations

import os
import threading
import time

from benchlog.tui.views.archive import list_runs

from .synthetic import write_run


def test_a_fifo_named_like_a_run_is_skipped_at_once(runs_dir):
    real = write_run(runs_dir, serial="A1", r_ohm=0.027, seed=1, started_utc="2025-03-04T10:20:30.000Z")
    fifo = runs_dir / "zz-pipe.run"
    os.mkfifo(fifo)

    def unblock():  # should the listing ever block on the FIFO again, end the wait so the test fails, not hangs
        time.sleep(10)
        try:
            os.close(os.open(fifo, os.O_WRONLY | os.O_NONBLOCK))
        except OSError:
            pass

    threading.Thread(target=unblock, daemon=True).start()
    started = time.monotonic()
    entries = list_runs(runs_dir)
    assert time.monotonic() - started < 8
    assert [e.path for e in entries] == [real]
