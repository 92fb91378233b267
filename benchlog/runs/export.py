"""Export a run's points as plain CSV for spreadsheets and other tools.

One header row of column names, each carrying its SI unit suffix
(`t_s`, `current_a`, `drop_v`, `power_w` ...), then one row per point;
numbers keep every digit (they read back to the same floats), a quantity
that was not read is an empty cell, flags stay "|"-joined.
"""

from __future__ import annotations

import os
from pathlib import Path

from benchlog.filecheck import write_failure

from .loader import RunMeta, load


def export_csv(run_path: str | os.PathLike[str], csv_path: str | os.PathLike[str]) -> RunMeta:
    """Write the points of `run_path` to `csv_path`; returns the run's metadata."""
    frame, meta = load(run_path)
    target = Path(csv_path)
    try:
        frame.to_csv(target, index=False, lineterminator="\n")
    except OSError as exc:
        raise write_failure(target, exc, f"the run file {run_path} is untouched") from None
    return meta
