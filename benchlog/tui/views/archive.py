"""The archive view: the run files in a folder; open one, replay it, re-judge it, overlay two."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Static

from benchlog.badinput import BadInput
from benchlog.runs.reader import read_summary
from benchlog.runs.record import RunHeader

from ..plotting import Axis, Series
from ..paths import shown
from ..widgets import CurvePlot, KeyBar, Plain, RowTable, cells
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


def scan_run(path: Path) -> RunEntry:
    """Header and end record of a run file, cheaply: the archive must list hundreds of runs at once."""
    try:
        header, outcome = read_summary(path)
    except BadInput as exc:
        raise OSError(exc.line()) from None  # the file went away or cannot be read: not listed
    if header is None:
        return RunEntry(path, "", "", "", "", outcome, None)
    e = header.element
    return RunEntry(path, header.started_utc, e.id, e.kind or "", e.serial or "", outcome, header)


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
    BINDINGS = [
        Binding("o", "open_run", "Open"),
        Binding("p", "replay", "Replay"),
        Binding("right_square_bracket", "faster", "Fast", key_display="]"),
        Binding("left_square_bracket", "slower", "Slow", key_display="["),
        Binding("a", "mark('a')", "Mark A"),
        Binding("b", "mark('b')", "Mark B"),
        Binding("v", "overlay", "Overlay A+B"),
        Binding("c", "compare", "Compare A−B"),
        Binding("m", "refit_model", "Model"),
        Binding("k", "refit_spec", "Spec"),
        Binding("g", "rescan", "Rescan"),
    ]

    def __init__(self) -> None:
        super().__init__()
        self.entries: list[RunEntry] = []
        self.verdicts: dict[tuple[Path, Path | None], str] = {}
        self.marks: dict[str, Path] = {}
        self.spec_choice: dict[Path, Path] = {}  # a spec picked with k for one run, over the one it goes with

    def spec_for(self, entry: RunEntry) -> Path | None:
        """The spec this run is judged against: one picked with k, else its own (app.spec_of_run)."""
        return self.spec_choice.get(entry.path) or self.app.spec_of_run(entry.header)

    def body(self) -> ComposeResult:
        yield Plain("", id="archive-head")
        table = RowTable(id="runs", cursor_type="row")
        table.add_columns("date (UTC)", "element", "serial", "outcome", "verdict", "file")
        yield table

    def on_mount(self) -> None:
        self.rescan()
        super().on_mount()

    def rescan(self) -> None:
        folder = self.app.runs_dir
        self.entries = list_runs(folder) if folder.is_dir() else []
        self._fill()
        self._judge_all([(e, self.spec_for(e)) for e in self.entries])

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

    def _fill(self) -> None:
        table = self.query_one("#runs", DataTable)
        row = table.cursor_row
        table.clear()
        for entry in self.entries:
            spec = self.spec_for(entry)
            marks = "".join(k.upper() for k, p in sorted(self.marks.items()) if p == entry.path)
            verdict = self.verdicts.get((entry.path, spec), "…" if spec else "— no spec")
            table.add_row(*cells(entry.started_utc.replace("T", " ")[:19], f"{entry.element} {entry.kind}"[:18],
                                 entry.serial or "—", entry.outcome, VERDICT_WORDS.get(verdict, verdict),
                                 (f"[{marks}] " if marks else "") + entry.path.name), key=str(entry.path))
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
        self.query_one("#archive-head", Static).update(
            f" folder {shown(self.app.runs_dir)} · {len(self.entries)} runs · replay {speed_text(state.replay_speed)}"
            f" · marked {marks}\n selected run's spec: {spec}")

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

    def action_open_run(self) -> None:
        entry = self.selected()
        if entry is None:
            self.app.say("No runs in this folder.")
            return
        self.app.state.findings = None
        self.app.state.model = "auto"  # every run opens on the automatic choice
        self.app.analyse(entry.path, model="auto", spec=self.spec_for(entry))
        self.app.switch_mode("results")

    def on_data_table_row_selected(self, _event) -> None:
        self.action_open_run()

    def action_replay(self) -> None:
        entry = self.selected()
        if entry is not None:
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
        self.app.push_screen(OverlayScreen(self.marks["a"], self.marks["b"]))

    def action_compare(self) -> None:
        if len(self.marks) < 2:
            self.app.say("Mark two runs first: a on one, b on another, then c.")
            return
        from .compare import CompareScreen

        self.app.push_screen(CompareScreen(self.marks["a"], self.marks["b"]))

    def action_refit_model(self) -> None:
        entry = self.selected()
        if entry is not None:
            model = self.app.next_model()
            self.app.say(f"Re-fitting {entry.path.name} with the {model} model …")
            self.app.analyse(entry.path, model=model, spec=self.spec_for(entry))
            self.app.switch_mode("results")

    def action_refit_spec(self) -> None:
        entry = self.selected()
        if entry is None:
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
