"""One part's history from the archive: every measurement of a serial, in time order, with fits and verdicts."""

from __future__ import annotations

from pathlib import Path

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Static

from benchlog.quantity import measured, unit_of

from ..archive_query import worst_verdict
from ..widgets import KeyBar, Plain, RowTable, cells
from .results import VERDICT_WORDS


def main_value(fit: dict | None) -> str:
    """The run's headline fitted value with its expanded U (R_DS(on) where fitted, else the first parameter)."""
    if not fit or not fit.get("params"):
        return "no fit"
    params = fit["params"]
    key = "r_on_ohm" if "r_on_ohm" in params else next(iter(params))
    p = params[key]
    return f"{key} {measured(p['value'], p['expanded_u'], unit_of(key), p['k'])}"


def meter_name(idn: str | None) -> str:
    """The meter as its *IDN? reply names it: model and serial (IEEE 488.2 10.14: maker, model, serial, firmware)."""
    if not idn:
        return "—"
    fields = [f.strip() for f in idn.split(",")]
    return " ".join(fields[1:3]) if len(fields) >= 3 else idn


class HistoryScreen(Screen):
    """Every archived run of one serial; `o` opens the selected run's file in Results."""

    BINDINGS = [
        Binding("o", "open_run", "Open"),
        Binding("escape,h", "app.pop_screen", "Back"),
    ]

    def __init__(self, serial: str) -> None:
        super().__init__()
        self.serial = serial
        self.runs: list[dict] = []

    def compose(self) -> ComposeResult:
        yield Plain(f" benchlog ▸ History   │ serial {self.serial}", id="view-title")
        yield Plain(" reading the archive …", id="history-head")
        table = RowTable(id="history", cursor_type="row")
        table.add_columns("date (UTC)", "bench", "lot", "outcome", "verdict", "meter", "fit (expanded U)")
        yield table
        yield Plain("", id="status-line")
        yield KeyBar(id="keybar")

    def refresh_view(self) -> None:
        """The app's newest message on the status line (the views' own line, so none is missed here)."""
        last = self.app.messages[-1] if self.app.messages else ""
        self.query_one("#status-line", Static).update(f" {last}")

    def on_mount(self) -> None:
        self.refresh_view()
        self._ask()

    @work(thread=True, exclusive=True, group="history")
    def _ask(self) -> None:
        from benchlog.store.queries import history

        try:
            runs, problem = history(self.app.archive_store(), self.serial), ""
        except Exception as exc:  # the database: one sentence
            line = getattr(exc, "line", None)
            runs, problem = [], line() if callable(line) else (str(exc).splitlines() or [type(exc).__name__])[0]
        self.app.call_from_thread(self._show, runs, problem)

    def _show(self, runs: list[dict], problem: str) -> None:
        self.runs = runs
        table = self.query_one("#history", DataTable)
        table.clear()
        for run in runs:
            verdict = worst_verdict(v["verdict"] for v in run["verdicts"]) or "— none stored"
            idn = next((i["idn"] for i in run.get("instruments", []) if i["role"] == "meter"), None)
            table.add_row(*cells(run["started_utc"].replace("T", " ")[:19], run["bench_host"] or "—",
                                 run["lot"] or "—", run["outcome"], VERDICT_WORDS.get(verdict, verdict),
                                 meter_name(idn), main_value(run.get("fit"))), key=run["run_id"])
        head = (f" The archive cannot be read: {problem}" if problem else
                f" {len(runs)} measurement(s) of serial {self.serial}, oldest first")
        self.query_one("#history-head", Static).update(head)

    def action_open_run(self) -> None:
        if not self.runs:
            return
        table = self.query_one("#history", DataTable)
        run = self.runs[min(max(table.cursor_row, 0), len(self.runs) - 1)]
        path = Path(run["path"])
        if not path.is_file():
            self.app.say(f"{path} is not on this machine: the archive indexes it, the run file is elsewhere.",
                         severity="warning")
            return
        self.app.pop_screen()
        self.app.state.findings = None
        self.app.state.model = "auto"
        self.app.analyse(path, model="auto", spec=None)
        self.app.switch_mode("results")
