"""The archive view: the runs of the lab archive (or of a folder); filter, open, replay, re-judge, overlay, trend.

With an archive in force (`archive_query.choose_archive`) the rows come from the
database, newest first, narrowed by the filter typed after `/`; without one the
run folder is scanned, as before, and the same filter applies to what was found.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Input, Static

from benchlog.badinput import BadInput
from benchlog.runs.reader import read_summary
from benchlog.runs.record import RunHeader
from benchlog.store.filters import RunFilter

from ..archive_query import LIST_LIMIT, filter_text, listing_filter, matches, parse_filter, worst_verdict

from ..plotting import Axis, Series
from ..paths import shown
from ..widgets import CurvePlot, KeyBar, Plain, RowTable, cells
from .asked import sentence
from .base import View
from .results import VERDICT_WORDS

SPEEDS = (1.0, 10.0, 100.0, None)  # None: as fast as possible


def speed_text(speed: float | None) -> str:
    return "max" if speed is None else f"{speed:g}×"


@dataclass(frozen=True)
class RunEntry:
    """One run file as the archive lists it (read from its first and last records only)."""

    path: Path
    started_utc: str
    element: str
    kind: str
    serial: str
    outcome: str
    header: RunHeader | None = None  # the run's typed header (None: unreadable), for the spec it goes with
    lot: str = ""
    label: str = ""
    bench: str = ""
    stored_verdict: str | None = None  # the verdict the archive holds (database rows only)
    run_id: str = ""


def scan_run(path: Path) -> RunEntry:
    """Header and end record of a run file, cheaply: the archive must list hundreds of runs at once."""
    try:
        header, outcome = read_summary(path)
    except BadInput as exc:
        raise OSError(exc.line()) from None  # the file went away or cannot be read: not listed
    if header is None:
        return RunEntry(path, "", "", "", "", outcome, None)
    e = header.element
    return RunEntry(path, header.started_utc, e.id, e.kind or "", e.serial or "", outcome, header,
                    lot=e.lot or "", label=e.label or "", bench=header.host or "", run_id=header.run_id)


def archived_entry(row: dict) -> RunEntry:
    """A run as the archive's `find` returns it (the file path is where it was published from)."""
    return RunEntry(Path(row["path"]), row["started_utc"] or "", row["element_id"] or "", row["kind"] or "",
                    row["serial"] or "", row["outcome"] or "", None, lot=row["lot"] or "", label=row["label"] or "",
                    bench=row["bench_host"] or "", stored_verdict=worst_verdict(v["verdict"] for v in row["verdicts"]),
                    run_id=row["run_id"])


def list_runs(folder: Path) -> list[RunEntry]:
    entries = []
    for path in sorted(folder.rglob("*.run")):
        try:
            entries.append(scan_run(path))
        except (OSError, BadInput):
            continue
    return sorted(entries, key=lambda e: (e.started_utc, str(e.path)), reverse=True)


class ArchiveView(View):
    TITLE_TEXT = "Archive"
    AUTO_FOCUS = "#runs"  # the table, never the hidden filter field (`/` opens that)
    BINDINGS = [
        Binding("o", "open_run", "Open"),
        Binding("p", "replay", "Replay"),
        # the replay speed keys are named in the head line beside the speed (room on the 80-column key bar)
        Binding("right_square_bracket", "faster", "Fast", key_display="]", show=False),
        Binding("left_square_bracket", "slower", "Slow", key_display="[", show=False),
        Binding("a", "mark('a')", "Mark A"),
        Binding("b", "mark('b')", "Mark B"),
        Binding("v", "overlay", "Overlay"),
        Binding("c", "compare", "Compare"),
        Binding("m", "refit_model", "Model"),
        Binding("k", "refit_spec", "Spec"),
        Binding("slash", "filter", "Filter", key_display="/"),
        Binding("h", "history", "History"),
        Binding("t", "trend", "Trend"),
        Binding("w", "summary", "Summary"),
        Binding("g", "rescan", "Rescan", show=False),  # the list is re-read on every visit; g forces it
    ]

    def __init__(self) -> None:
        super().__init__()
        self.entries: list[RunEntry] = []
        self.found: list[RunEntry] = []  # before the filter (folder) or as the database returned them
        self.filter = RunFilter()
        self.problem = ""  # why the archive could not be read (shown in the head line)
        self.verdicts: dict[tuple[Path, Path | None], str] = {}
        self.marks: dict[str, Path] = {}
        self.spec_choice: dict[Path, Path] = {}  # a spec picked with k for one run, over the one it goes with

    def spec_for(self, entry: RunEntry) -> Path | None:
        """The spec this run is judged against: one picked with k, else its own (app.spec_of_run)."""
        return self.spec_choice.get(entry.path) or self.app.spec_of_run(entry.header)

    @property
    def from_database(self) -> bool:
        return self.app.archive_choice is not None

    def body(self) -> ComposeResult:
        yield Plain("", id="archive-head")
        field = Input(placeholder="serial: lot: kind: verdict: date: since: until: bench: part: or words",
                      id="archive-filter")
        field.display = False
        yield field
        table = RowTable(id="runs", cursor_type="row")
        last = "bench" if self.from_database else "file"
        table.add_columns("date (UTC)", "element", "serial", "lot", "outcome", "verdict", last)
        yield table

    def on_mount(self) -> None:
        self.rescan()
        super().on_mount()

    def rescan(self) -> None:
        if self.from_database:
            self._query_archive(self.filter)
            return
        folder = self.app.runs_dir
        self.found = list_runs(folder) if folder.is_dir() else []
        self._apply_filter()
        self._judge_all([(e, self.spec_for(e)) for e in self.entries])

    def _apply_filter(self) -> None:
        """The folder's runs that pass the filter (a verdict filter uses the verdicts judged so far)."""
        self.entries = [e for e in self.found if matches(e, self.filter, self._verdict_of(e))]
        self._fill()

    @work(thread=True, exclusive=True, group="archive-query")
    def _query_archive(self, flt: RunFilter) -> None:
        from benchlog.store.queries import find_runs

        try:
            rows = find_runs(self.app.archive_store(), listing_filter(flt), with_fits=False)
            entries, problem = [archived_entry(r) for r in rows], ""
        except Exception as exc:  # unreachable, refused, malformed: one sentence in the head line
            entries, problem = [], sentence(exc)
        self.app.call_from_thread(self._archive_answered, entries, problem)

    def _archive_answered(self, entries: list[RunEntry], problem: str) -> None:
        self.found = self.entries = entries
        self.problem = problem
        if problem:
            self.app.say(f"The archive cannot be read: {problem}", severity="error")
        self._fill()
        picked = [(e, self.spec_choice[e.path]) for e in entries if e.path in self.spec_choice]
        if picked:
            self._judge_all(picked)

    def _verdict_of(self, entry: RunEntry) -> str | None:
        spec = self.spec_for(entry)
        if spec is not None and (entry.path, spec) in self.verdicts:
            return self.verdicts[(entry.path, spec)]
        if entry.path not in self.spec_choice:
            return entry.stored_verdict
        return None

    @work(thread=True, exclusive=True, group="archive-verdicts")
    def _judge_all(self, pairs: list[tuple[RunEntry, Path | None]]) -> None:
        """Each run against its own spec (runs without one stay "—": no verdict without a spec)."""
        from textual.worker import get_current_worker

        from ..findings import study_run

        worker = get_current_worker()
        for entry, spec in pairs:
            if worker.is_cancelled:
                return
            if spec is None:
                continue
            key = (entry.path, spec)
            if key in self.verdicts:
                continue
            try:
                verdict = study_run(entry.path, spec).verdict or "—"
            except Exception:
                verdict = "unreadable"
            self.verdicts[key] = verdict
            self.app.call_from_thread(self._fill)
        if self.filter.verdict is not None and not self.from_database:
            self.app.call_from_thread(self._apply_filter)

    def _fill(self) -> None:
        table = self.query_one("#runs", DataTable)
        row = table.cursor_row
        table.clear()
        for entry in self.entries:
            spec = self.spec_for(entry)
            marks = "".join(k.upper() for k, p in sorted(self.marks.items()) if p == entry.path)
            verdict = self._verdict_of(entry)
            if verdict is None:
                verdict = "…" if spec else ("— none stored" if self.from_database else "— no spec")
            last = entry.bench or "—" if self.from_database else entry.path.name
            table.add_row(*cells(entry.started_utc.replace("T", " ")[:19], f"{entry.element} {entry.kind}"[:18],
                                 entry.serial or "—", entry.lot or "—", entry.outcome,
                                 VERDICT_WORDS.get(verdict, verdict), (f"[{marks}] " if marks else "") + last),
                          key=entry.run_id if self.from_database else str(entry.path))
        if self.entries:
            table.move_cursor(row=min(max(row, 0), len(self.entries) - 1))
        self._head()

    def _head(self) -> None:
        state = self.app.state
        entry = self.selected()
        if entry is None:
            spec = "none"
        else:
            path = self.spec_for(entry)
            how = "picked with k" if entry.path in self.spec_choice else "its own"
            spec = f"{shown(path)} ({how})" if path is not None else "none known (k picks one of its kind)"
        marks = "  ".join(f"{k.upper()}={p.name}" for k, p in sorted(self.marks.items())) or "none"
        choice = self.app.archive_choice
        if choice is not None:
            source = f"archive {self._shown_url()} ({choice.how})"
            if self.problem:
                source += " UNREADABLE"
        else:
            source = f"folder {shown(self.app.runs_dir)}"
        count = f"{len(self.entries)} run" + ("" if len(self.entries) == 1 else "s")
        if self.from_database and len(self.entries) >= LIST_LIMIT:
            count = f"newest {len(self.entries)} runs"
        typed = filter_text(self.filter)
        self.query_one("#archive-head", Static).update(
            f" {source} · {count}" + (f" · filter {typed}" if typed else "")
            + f"\n replay {speed_text(state.replay_speed)} ([ ]) · marked {marks} · selected run's spec: {spec}")

    def _own_spec(self, entry: RunEntry) -> Path | None:
        """`spec_for`, reading the header from the run file when the row came from the database without it
        (or is not listed under the present filter)."""
        if entry.header is None and entry.path not in self.spec_choice and entry.path.is_file():
            try:
                entry = scan_run(entry.path)
            except (OSError, BadInput):
                return None
        return self.spec_for(entry)

    def _shown_url(self) -> str:
        """The archive URL as it may be printed (a password, if any, masked)."""
        from benchlog.store.connect import shown_url

        try:  # the driver (+pysqlite, +psycopg) is ours to pick, not the user's: left out
            return re.sub(r"^(\w+)\+\w+:", r"\1:", shown_url(self.app.archive_choice.url))
        except BadInput:
            return "(malformed URL)"

    def on_data_table_row_highlighted(self, _event) -> None:
        self._head()

    def on_screen_resume(self) -> None:
        self.rescan()  # runs recorded since the last visit appear at once
        super().on_screen_resume()

    def refresh_view(self) -> None:
        super().refresh_view()
        if self.is_mounted:
            self._fill()

    def selected(self) -> RunEntry | None:
        if not self.entries:
            return None
        table = self.query_one("#runs", DataTable)
        return self.entries[min(max(table.cursor_row, 0), len(self.entries) - 1)]

    def here(self, path: Path) -> bool:
        """Whether a run's file can be read on this machine; if not, say so (the archive indexes runs of
        every bench, their files stay where they were recorded)."""
        if path.is_file():
            return True
        entry = next((e for e in self.entries if e.path == path), None)
        bench = f" (recorded on {entry.bench})" if entry is not None and entry.bench else ""
        self.app.say(f"{shown(path)} is not on this machine{bench}: the archive indexes it, the run file is "
                     "where it was recorded.", severity="warning")
        return False

    def action_open_run(self) -> None:
        entry = self.selected()
        if entry is None:
            self.app.say("No runs listed." if self.from_database else "No runs in this folder.")
            return
        if not self.here(entry.path):
            return
        self.app.state.findings = None
        self.app.state.model = "auto"  # every run opens on the automatic choice
        self.app.analyse(entry.path, model="auto", spec=self.spec_for(entry))
        self.app.switch_mode("results")

    def on_data_table_row_selected(self, _event) -> None:
        self.action_open_run()

    def action_replay(self) -> None:
        entry = self.selected()
        if entry is not None and self.here(entry.path):
            self.app.say(f"Replaying {entry.path.name} at {speed_text(self.app.state.replay_speed)} …")
            self.app.start_replay(entry.path)

    def _step_speed(self, step: int) -> None:
        state = self.app.state
        index = SPEEDS.index(state.replay_speed) if state.replay_speed in SPEEDS else 1
        state.replay_speed = SPEEDS[max(0, min(len(SPEEDS) - 1, index + step))]
        self._head()

    def action_faster(self) -> None:
        self._step_speed(+1)

    def action_slower(self) -> None:
        self._step_speed(-1)

    def action_mark(self, which: str) -> None:
        entry = self.selected()
        if entry is None:
            return
        other = "b" if which == "a" else "a"
        if self.marks.get(other) == entry.path:
            self.app.say(f"{entry.path.name} is already marked {other.upper()}: mark another run as "
                         f"{which.upper()}.", severity="warning")
            return
        self.marks[which] = entry.path
        self._fill()

    def action_overlay(self) -> None:
        if len(self.marks) < 2 or self.marks["a"] == self.marks["b"]:
            self.app.say("Mark two runs first: a on one, b on another, then v.")
            return
        if not (self.here(self.marks["a"]) and self.here(self.marks["b"])):
            return
        self.app.push_screen(OverlayScreen(self.marks["a"], self.marks["b"]))

    def action_compare(self) -> None:
        if len(self.marks) < 2:
            self.app.say("Mark two runs first: a on one, b on another, then c.")
            return
        if not (self.here(self.marks["a"]) and self.here(self.marks["b"])):
            return
        from .compare import CompareScreen

        self.app.push_screen(CompareScreen(self.marks["a"], self.marks["b"]))

    def action_refit_model(self) -> None:
        entry = self.selected()
        if entry is not None and self.here(entry.path):
            model = self.app.next_model()
            self.app.say(f"Re-fitting {entry.path.name} with the {model} model …")
            self.app.analyse(entry.path, model=model, spec=self.spec_for(entry))
            self.app.switch_mode("results")

    def action_refit_spec(self) -> None:
        entry = self.selected()
        if entry is None or not self.here(entry.path):
            return
        spec = self.app.next_spec(kind=entry.kind, current=self.spec_for(entry))
        if spec is None:
            self.app.say(f"No part spec of kind {entry.kind or '?'} to pick from.")
            return
        self.spec_choice[entry.path] = spec
        self.app.say(f"Judging {entry.path.name} against {shown(spec)} (picked with k).")
        self._fill()
        self._judge_all([(e, self.spec_for(e)) for e in self.entries])

    def action_rescan(self) -> None:
        self.rescan()

    # -- filter, history, trend, summary ------------------------------------------------
    def action_filter(self) -> None:
        """/: the filter field; Enter applies what was typed, Esc leaves it unchanged."""
        field = self.query_one("#archive-filter", Input)
        field.value = filter_text(self.filter)
        field.display = True
        field.focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        if event.input.id != "archive-filter":
            return
        try:
            flt = parse_filter(event.value)
        except BadInput as exc:
            self.app.say(f"Filter not applied: {exc.line()}", severity="warning")
            return
        self._close_filter()
        self.filter = flt
        typed = filter_text(flt)
        self.app.say(f"Filter: {typed}." if typed else "Filter cleared: every run.")
        if self.from_database:
            self._query_archive(flt)
        else:
            self._apply_filter()

    def on_key(self, event) -> None:
        field = self.query_one("#archive-filter", Input)
        if event.key == "escape" and field.has_focus:
            event.stop()
            self._close_filter()

    def _close_filter(self) -> None:
        field = self.query_one("#archive-filter", Input)
        field.display = False
        self.query_one("#runs", DataTable).focus()

    def action_history(self) -> None:
        """h: every measurement of the selected run's serial (from the archive; in a folder, the filter)."""
        entry = self.selected()
        if entry is None or not entry.serial:
            self.app.say("Select a run with a serial first: history follows one part by its serial.")
            return
        if not self.from_database:
            self.filter = RunFilter(serial=entry.serial)
            self._apply_filter()
            self.app.say(f"Runs of serial {entry.serial} in this folder (filter serial:{entry.serial}; "
                         "/ then Enter on an empty field shows every run).")
            return
        from .history import HistoryScreen

        self.app.push_screen(HistoryScreen(entry.serial))

    def action_trend(self) -> None:
        """t: the control chart of a fitted quantity over the runs the filter selects (archive only)."""
        if not self.from_database:
            self.app.say("The trend chart reads the lab archive: start with --db URL (or set BENCHLOG_DB, or name "
                         "one in the bench file's [archive]).", severity="warning")
            return
        from .trend import TrendScreen

        self.app.push_screen(TrendScreen(self.filter))

    def action_summary(self) -> None:
        """w: one row per run (the summary's CSV, and xlsx when openpyxl is there) of the marked runs, or of
        every listed run when none is marked."""
        marked = [p for _, p in sorted(self.marks.items())]
        by_path = {e.path: e for e in self.entries}
        paths = marked or [e.path for e in self.entries]
        if not paths:
            self.app.say("No runs listed: nothing to sum up.")
            return
        missing = [p for p in paths if not p.is_file()]
        if missing:
            self.app.say(f"Summary not written: {len(missing)} of {len(paths)} run files are not on this machine, "
                         f"{shown(missing[0])} the first.", severity="warning")
            return
        specs = [self._own_spec(by_path.get(p) or RunEntry(p, "", "", "", "", "")) for p in paths]
        which = "marked" if marked else "listed"
        self.app.say(f"Writing the summary of {len(paths)} {which} run(s) …")
        from ..summary_export import export_summary

        self.run_worker(lambda: export_summary(self.app, paths, specs, which), thread=True, exclusive=True,
                        group="summary")


class OverlayScreen(Screen):
    """Two runs on one V–I plot: A as braille dots, B as `+` marks, named in the legend."""

    BINDINGS = [Binding("escape,v", "app.pop_screen", "Back")]

    def __init__(self, a: Path, b: Path) -> None:
        super().__init__()
        self.paths = (a, b)

    def compose(self) -> ComposeResult:
        yield Plain(f" benchlog ▸ Overlay   │ A = {self.paths[0].name}   B = {self.paths[1].name}", id="view-title")
        yield CurvePlot(Axis("current", "A"), Axis("drop", "V"), id="overlay-plot")
        yield Plain("", id="status-line")
        yield KeyBar(id="keybar")

    def on_mount(self) -> None:
        from benchlog.runs import load

        series = []
        for label, path, kind in (("A", self.paths[0], "dots"), ("B", self.paths[1], "marks")):
            try:
                frame, _meta = load(path)
            except Exception as exc:
                self.query_one("#status-line", Static).update(f" {label}: {exc}")
                continue
            series.append(Series(f"{label} {path.stem}", frame["current_a"].to_numpy(float),
                                 frame["drop_v"].to_numpy(float), kind=kind, glyph="+",
                                 style="series-a" if kind == "dots" else "series-b"))
        self.query_one("#overlay-plot", CurvePlot).show(series)
