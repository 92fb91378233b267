"""The instruments view: which resource plays which role, what it says it is, and whether it answers."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.widgets import DataTable, Static

from ..widgets import Plain, cells
from .base import View

STATE_WORDS = {"connected": "✔ answers", "not probed": "… not probed", "no answer": "✘ no answer"}


class InstrumentsView(View):
    TITLE_TEXT = "Bench"
    BINDINGS = [
        Binding("p", "probe", "Probe role"),
        Binding("a", "probe_all", "Probe all"),
    ]

    def body(self) -> ComposeResult:
        yield Plain("", id="bench-summary")
        table = DataTable(id="roles", cursor_type="row", zebra_stripes=False)
        table.add_columns("role", "state", "resource", "profile", "*IDN?")
        yield table
        yield Plain("", id="role-detail")

    def refresh_view(self) -> None:
        super().refresh_view()
        app = self.app
        table = self.query_one("#roles", DataTable)
        row = table.cursor_row
        table.clear()
        for status in app.state.roles:
            table.add_row(*cells(status.role, STATE_WORDS.get(status.state, status.state), status.resource,
                                 _short_profile(status.profile), status.idn or "—"), key=status.role)
        if app.state.roles:
            table.move_cursor(row=min(row, len(app.state.roles) - 1))
        summary = self.query_one("#bench-summary", Static)
        if app.session is None:
            summary.update(" No bench connected. Start with `benchlog ui --bench BENCH.toml` or `benchlog demo`.")
        else:
            wiring = getattr(app.session.setup, "wiring", None)
            how = (f"current forced by the {wiring.force}, read from the {wiring.current_from}"
                   if wiring is not None else "")
            summary.update(f" {app.session.label}: {how}")
        self._show_detail()

    def on_data_table_row_highlighted(self, _event) -> None:
        self._show_detail()

    def _selected(self):
        roles = self.app.state.roles
        table = self.query_one("#roles", DataTable)
        if not roles:
            return None
        return roles[min(max(table.cursor_row, 0), len(roles) - 1)]

    def _show_detail(self) -> None:
        status = self._selected()
        detail = self.query_one("#role-detail", Static)
        if status is None:
            detail.update("")
            return
        lines = [f" {status.role}: {STATE_WORDS.get(status.state, status.state)}",
                 f"   resource  {status.resource}", f"   profile   {status.profile}",
                 f"   *IDN?     {status.idn or '—'}"]
        if status.message:
            lines.append(f"   problem   {status.message}")
        detail.update("\n".join(lines))

    def action_probe(self) -> None:
        status = self._selected()
        if status is not None and self.app.session is not None:
            self.app.say(f"Probing {status.role} at {status.resource} …")
            self.app.probe_role(status.role)

    def action_probe_all(self) -> None:
        if self.app.session is not None:
            self.app.say("Probing every role …")
            self.app.probe_all()


def _short_profile(profile: str) -> str:
    return profile.rsplit("/", 1)[-1].removesuffix(".toml")
