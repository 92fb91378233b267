"""Two marked runs compared with numbers: each fitted value and the loss, d ± U(d), and whether it is significant."""

from __future__ import annotations

from pathlib import Path

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import Static

from benchlog.badinput import BadInput

from ..widgets import KeyBar, Plain


class CompareScreen(Screen):
    """B against A (analysis.compare): the same meter on the same range cancels, everything else adds."""

    BINDINGS = [Binding("escape", "app.pop_screen", "Back")]

    def __init__(self, a: Path, b: Path) -> None:
        super().__init__()
        self.paths = (a, b)

    def compose(self) -> ComposeResult:
        yield Plain(f" benchlog ▸ Compare   │ A = {self.paths[0].name}   B = {self.paths[1].name}", id="view-title")
        yield Static(" comparing …", id="compare-text")
        yield KeyBar(id="keybar")

    def on_mount(self) -> None:
        self._compare()

    @work(thread=True, exclusive=True)
    def _compare(self) -> None:
        from benchlog.analysis.compare import compare_runs, comparison_lines
        from benchlog.runs import load

        try:
            c = compare_runs([load(p) for p in self.paths])
            text = "\n".join(" " + line for line in comparison_lines(c, names_only=True))
        except BadInput as exc:
            text = f" ✘ {exc.line()}"
        self.app.call_from_thread(self.query_one("#compare-text", Static).update, text)
