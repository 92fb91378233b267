"""What every view has: a title line naming the view and the bench, a status line, and the key bar."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Vertical
from textual.screen import Screen
from textual.widgets import Static

from ..widgets import KeyBar, Plain, cells


class View(Screen):
    """A view: subclasses compose `body()` and redraw from the app's shared state in `refresh_view()`."""

    TITLE_TEXT = "view"

    def compose(self) -> ComposeResult:
        yield Plain(self._title(), id="view-title")
        with Vertical(id="view-body"):
            yield from self.body()
        yield Plain("", id="status-line")
        yield KeyBar(id="keybar")

    def body(self) -> ComposeResult:
        yield from ()

    def _title(self) -> str:
        app = self.app
        bench = app.session.label if getattr(app, "session", None) is not None else "no bench (archive only)"
        return f" benchlog ▸ {self.TITLE_TEXT}   │ {bench}"

    def on_screen_resume(self) -> None:
        self.refresh_view()

    def on_mount(self) -> None:
        self.refresh_view()

    def refresh_view(self) -> None:
        self.query_one("#view-title", Static).update(self._title())
        self.show_status()

    def show_status(self) -> None:
        app = self.app
        state = app.state.sweep_state
        words = {"running": "▶ RUNNING", "stopping": "■ STOPPING", "replaying": "▷ REPLAY",
                 "finished": "■ STOPPED", "idle": "○ IDLE"}
        last = app.messages[-1] if app.messages else "Press ? for every key."
        self.query_one("#status-line", Static).update(f" {words.get(state, state)} │ {last}")
