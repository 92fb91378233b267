"""Run files: the durable writer, the validating reader, the pandas loader, replay and CSV export.

`from benchlog.runs import load` gives the loader: `frame, meta = load(path)`;
`points, meta = load_points(path)` gives the same numbers as numpy arrays,
without pandas, for many small files (a lot of runs). Both come from one parser
(`loader.py`); `meta.header` is the typed `RunHeader` (`record.py`).
"""

from __future__ import annotations

from .events import Event, Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from .export import export_csv
from .loader import FRAME_COLUMNS, RunMeta, load
from .loader import PointArrays, load_points
from .reader import is_torn, read_events, read_summary
from .record import ElementRecord, RunHeader
from .replay import replay
from .writer import RunWriteError, RunWriter, new_run_path

__all__ = [
    "Event", "Note", "Offset", "Point", "ReverseResult", "RunFinished", "RunStarted",
    "ElementRecord", "FRAME_COLUMNS", "PointArrays", "RunHeader", "RunMeta", "RunWriteError", "RunWriter",
    "export_csv", "is_torn", "load", "load_points", "new_run_path", "read_events", "read_summary", "replay",
]
