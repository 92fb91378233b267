"""The help view: every key of every view, and what the views are for."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import VerticalScroll
from textual.widgets import Static

from ..widgets import Plain, cells
from .base import View

INTRO = """\
benchlog measures the reverse-polarity protection element of a board: it steps
the current, records the drop, fits it and judges it against the part spec.
A first run: 1 check the bench answers · 2 pick plan and spec, r to run (the
safety caution comes first) · 3 watch it, s stops · 4 read the verdict ·
6 replay a run from the archive."""


class HelpView(View):
    TITLE_TEXT = "Help"

    def body(self) -> ComposeResult:
        with VerticalScroll(id="help-body"):
            yield Plain(INTRO, id="help-intro")
            yield Plain("", id="help-keys")

    def refresh_view(self) -> None:
        super().refresh_view()
        lines = ["", "Everywhere:"]
        for binding in self.app.BINDINGS:
            if binding.show:
                lines.append(f"  {self.app.get_key_display(binding):>6}  {binding.description}")
        for name, view in self.app.MODES.items():  # the app's views, in their key order
            if name == "help":
                continue
            keys = [b for b in view.BINDINGS if b.description]  # also the keys a view names elsewhere than its bar
            lines.append(f"\n{view.TITLE_TEXT}:")
            for binding in keys:
                lines.append(f"  {self.app.get_key_display(binding):>6}  {binding.description}")
        lines.append("\nCaution: y confirms, n or Esc cancels.  Overlay: Esc goes back.")
        self.query_one("#help-keys", Static).update("\n".join(lines))
