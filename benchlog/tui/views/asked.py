"""What the archive's own screens share (history, trend): a title, a body asked of the database, the status
line and the key bar; and the one-sentence form of whatever went wrong asking."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.screen import Screen
from textual.widgets import Static

from ..widgets import KeyBar, Plain


def sentence(exc: BaseException) -> str:
    """An error as one line: a BadInput's own line, else the first line of its text."""
    line = getattr(exc, "line", None)
    if callable(line):
        return line()
    return (str(exc).strip() or type(exc).__name__).splitlines()[0]


class AskedScreen(Screen):
    """A screen over the archive: subclasses compose `body()` and start their database question in `ask()`
    (a thread worker); the status line shows the app's newest message, as the views' does."""

    TITLE_TEXT = ""

    def compose(self) -> ComposeResult:
        yield Plain(f" benchlog ▸ {self.TITLE_TEXT}", id="view-title")
        yield from self.body()
        yield Plain("", id="status-line")
        yield KeyBar(id="keybar")

    def body(self) -> ComposeResult:
        yield from ()

    def refresh_view(self) -> None:
        last = self.app.messages[-1] if self.app.messages else ""
        self.query_one("#status-line", Static).update(f" {last}")

    def on_mount(self) -> None:
        self.refresh_view()
        self.ask()

    def ask(self) -> None:
        """Start the screen's question (override)."""
