"""Run files: the durable writer, the validating reader, the pandas loader, replay and CSV export.

`from benchlog.runs import load` gives the loader: `frame, meta = load(path)`.
"""

from __future__ import annotations

from .events import Event, Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from .export import export_csv
from .load import FRAME_COLUMNS, RunMeta, load
from .reader import is_torn, read_events
from .replay import replay
from .writer import RunWriteError, RunWriter, new_run_path

__all__ = [
    "Event", "Note", "Offset", "Point", "ReverseResult", "RunFinished", "RunStarted",
    "FRAME_COLUMNS", "RunMeta", "RunWriteError", "RunWriter",
    "export_csv", "is_torn", "load", "new_run_path", "read_events", "replay",
]
