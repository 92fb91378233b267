"""The report's one-row-per-run table: the rows `benchlog summary` writes, from the runs the report analysed."""

from __future__ import annotations

from pathlib import Path
from typing import Sequence

from .document import Paragraph, Section, Table
from .summary_rows import cell, columns_of, row_of, shown_columns
from .text import number

#: Column headings a reader sees (the files keep the keys, which scripts rely on).
_HEADINGS = {"run": "run file", "started_utc": "started (UTC)", "operating_a": "at", "loss": "loss (expanded U)",
             "tj_c": "Tj", "model": "model"}


def summary_rows(runs: Sequence) -> list[dict]:
    """The summary's rows of runs the report analysed (`report.build.RunAnalysis`), without fitting again."""
    return [row_of(ra.path, ra.meta, ra.fit, ra.fit_problem, ra.check, ra.check_problem, ra.operating_current_a)
            for ra in runs]


def _text(column: str, value) -> str:
    value = cell(value)
    if value == "":
        return "—"
    if column == "run":
        return Path(str(value)).name
    if column == "operating_a":
        return number(value, "A")
    if column == "tj_c":
        return number(value, "°C", 4)
    return str(value)


def _heading(column: str) -> str:
    if column.endswith(" (text)"):
        return column[: -len(" (text)")] + " (expanded U)"
    return _HEADINGS.get(column, column)


def summary_section(runs: Sequence) -> Section:
    """One row per run, the same columns as `benchlog summary` (each value written once, with its U)."""
    rows = summary_rows(runs)
    columns = shown_columns(columns_of(rows))
    table = Table(tuple(_heading(c) for c in columns), tuple(tuple(_text(c, r.get(c)) for c in columns) for r in rows),
                  caption="One row per run (the rows of `benchlog summary RUN... -o FILE.csv`)")
    return Section("Summary of the runs", (table, Paragraph(
        "The same rows as a spreadsheet: `benchlog summary` with these run files writes them to .csv or .xlsx, "
        "with the values and uncertainties as numbers.", "note")))
