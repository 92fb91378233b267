"""The UI's `w`: the one-row-per-run summary of some runs, written beside the run files as .csv and .xlsx.

The rows are `report.summary_rows` (what `benchlog summary` writes); each run is
judged against the spec given for it (its own, as the view lists it). Runs in a
worker thread: the files are fitted and judged, which takes a moment for a lot.
"""

from __future__ import annotations

from datetime import datetime, timezone
from pathlib import Path
from typing import Sequence

from benchlog.badinput import BadInput

from .paths import shown


def export_summary(app, paths: Sequence[Path], spec_paths: Sequence[Path | None], which: str) -> list[Path]:
    """Write `summary-<UTC time>.csv` (and `.xlsx` when openpyxl is installed) into the app's run folder;
    say what was written (or why not) on the app's status line. Call from a worker thread."""
    from benchlog.report.summary_rows import write_summary
    from benchlog.specfiles import load_spec

    loaded: dict[Path, object] = {}
    try:
        for path in {p for p in spec_paths if p is not None}:
            loaded[path] = load_spec(path)
    except BadInput as exc:
        app.call_from_thread(app.say, f"Summary not written: {exc.line()}", severity="error")
        return []
    specs = [loaded.get(p) if p is not None else None for p in spec_paths]
    stamp = datetime.now(timezone.utc).strftime("%Y%m%dT%H%M%SZ")
    folder = app.runs_dir if app.runs_dir.is_dir() else Path(".")
    written: list[Path] = []
    notes: list[str] = []
    for suffix in (".csv", ".xlsx"):
        out = folder / f"summary-{stamp}{suffix}"
        try:
            write_summary(list(paths), out, specs)
            written.append(out)
        except BadInput as exc:
            notes.append(exc.line())
    text = (f"Summary of {len(paths)} {which} run(s) written: {', '.join(shown(p) for p in written)}" if written
            else "Summary not written") + (f" ({'; '.join(notes)})" if notes else "") + "."
    app.call_from_thread(app.say, text, severity="information" if written else "error")
    return written
