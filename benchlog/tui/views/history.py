"""One part's history from the archive: every measurement of a serial, in time order, with fits and verdicts."""

from __future__ import annotations

from pathlib import Path

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.widgets import DataTable, Static

from benchlog.quantity import measured, unit_of

from ..archive_query import worst_verdict
from ..widgets import Plain, RowTable, cells
from .asked import AskedScreen, sentence
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


class HistoryScreen(AskedScreen):
    """Every archived run of one serial; `o` opens the selected run's file in Results."""

    TITLE_TEXT = "History"

    BINDINGS = [
        Binding("o", "open_run", "Open"),
        Binding("escape,h", "app.pop_screen", "Back"),
    ]

    def __init__(self, serial: str) -> None:
        super().__init__()
        self.serial = serial
        self.runs: list[dict] = []

    def body(self) -> ComposeResult:
        yield Plain(" reading the archive …", id="history-head")
        table = RowTable(id="history", cursor_type="row")
        table.add_columns("date (UTC)", "bench", "lot", "outcome", "verdict", "meter", "fit (expanded U)")
        yield table

    def on_mount(self) -> None:
        super().on_mount()
        self.query_one("#view-title", Static).update(f" benchlog ▸ History   │ serial {self.serial}")

    @work(thread=True, exclusive=True, group="history")
    def ask(self) -> None:
        from benchlog.store.queries import history

        try:
            runs, problem = history(self.app.archive_store(), self.serial), ""
        except Exception as exc:  # the database: one sentence
            runs, problem = [], sentence(exc)
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
