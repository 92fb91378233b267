"""What the archive view lists: which archive (if any) is in force, the filter typed into it, and the rows.

The archive is the one the CLI would use, with the bench's own: `--db URL`, else
the bench file's `[archive].url`, else `BENCHLOG_DB`, else the embedded default
`benchlog-archive.sqlite` when that file exists in the current folder (unless a
run folder was named with `--runs`). With none of these the view lists the run
folder, as before. The filter is typed as words:
`lot:L07 kind:pmos verdict:fail since:2025-03-01` (`key:value`, all must hold);
a bare word is searched in the serial, lot and part label. The same filter
selects rows from the database (`store.queries.filtered`, bound parameters) or
from the scanned folder (`matches`).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, fields, replace
from pathlib import Path

from benchlog.store.filters import FILTER_KEYS, VERDICTS, RunFilter, parse_filter, until_bound  # noqa: F401 (the UI's names)

#: At most this many runs are listed from a database (the newest that match); the filter narrows the rest.
LIST_LIMIT = 500


@dataclass(frozen=True)
class ArchiveChoice:
    """The archive the UI reads: its URL and how it was chosen (shown in the view's head line)."""

    url: str
    how: str


def choose_archive(db: str | None, bench_url: str | None, *, environ=None, here: Path | None = None,
                   default_file: bool = True) -> ArchiveChoice | None:
    """The archive in force for `benchlog ui` (module docstring); None: list the run folder.

    `default_file=False` (the user named a run folder with --runs) leaves the embedded default out."""
    from benchlog.store.connect import DEFAULT_FILE, DEFAULT_URL, ENV_VAR

    environ = os.environ if environ is None else environ
    if db:
        return ArchiveChoice(db, "--db")
    if bench_url:
        return ArchiveChoice(bench_url, "the bench file's [archive]")
    if environ.get(ENV_VAR):
        return ArchiveChoice(environ[ENV_VAR], ENV_VAR)
    if default_file and ((here or Path.cwd()) / DEFAULT_FILE).is_file():
        return ArchiveChoice(DEFAULT_URL, "the default file here")
    return None


def filter_text(flt: RunFilter) -> str:
    """A filter written back the way it is typed (for the head line)."""
    parts = []
    for f in fields(RunFilter):
        value = getattr(flt, f.name)
        if f.name in ("limit", "newest_first", "text") or value is None:
            continue
        parts.append(f"{f.name}:{value}")
    if flt.text:
        parts.append(flt.text)
    if flt.since is not None and flt.since == flt.until and len(flt.since) == 10:
        parts = [p for p in parts if not p.startswith(("since:", "until:"))] + [f"date:{flt.since}"]
    return " ".join(parts)


def worst_verdict(outcomes) -> str | None:
    """The verdict a run carries when several were stored (forward and reverse): the worse one."""
    order = {"fail": 0, "conditional": 1, "pass": 2}
    found = [o for o in outcomes if o in order]
    return min(found, key=order.__getitem__) if found else None


def matches(entry, flt: RunFilter, verdict: str | None) -> bool:
    """Whether a folder-scanned run (`views.archive.RunEntry`) passes the filter; `verdict` is its judged one."""
    for value, wanted in ((entry.serial, flt.serial), (entry.lot, flt.lot), (entry.kind, flt.kind),
                          (entry.label, flt.part), (entry.bench, flt.bench), (verdict, flt.verdict)):
        if wanted is not None and value != wanted:
            return False
    started = entry.started_utc or ""
    if flt.since is not None and started < flt.since:
        return False
    if flt.until is not None and started >= until_bound(flt.until):
        return False
    if flt.text:
        fragment = flt.text.lower()
        if not any(fragment in (v or "").lower() for v in (entry.serial, entry.lot, entry.label)):
            return False
    return True


def listing_filter(flt: RunFilter) -> RunFilter:
    """The filter as the database list asks it: the newest LIST_LIMIT runs that match."""
    return replace(flt, limit=LIST_LIMIT, newest_first=True)
