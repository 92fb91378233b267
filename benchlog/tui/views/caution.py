"""The safety caution shown before the first output-on of a session; nothing is switched on without a yes."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Static

from ..widgets import Plain

CAUTION_TEXT = """\
⚠ CAUTION: this run switches real power into real hardware.

• Supplies and batteries store energy: a short or a wrong lead can burn,
  arc or start a fire. Use current limits and fused leads.
• Parts under test get hot; let them cool before you touch them.
• A reversed-polarity test can destroy the board if its protection
  does not work. Test a part you can afford to lose first.
• Follow your lab's safety rules and the local electrical codes;
  they come before anything this tool says.

The outputs go off when a run ends, at any limit or fault, and on s."""


class CautionScreen(ModalScreen[bool]):
    """Returns True only when the user confirms (y or the button)."""

    BINDINGS = [
        Binding("y", "answer(True)", "Yes, switch on"),
        Binding("n,escape", "answer(False)", "No"),
    ]

    def compose(self) -> ComposeResult:
        with Vertical(id="caution-box"):
            yield Plain(CAUTION_TEXT, id="caution-text")
            with Horizontal(id="caution-buttons"):
                yield Button("y  I understand, switch on", id="caution-yes", variant="warning")
                yield Button("n  Cancel", id="caution-no")

    def on_mount(self) -> None:
        self.query_one("#caution-no", Button).focus()  # Enter alone never switches power on

    def on_button_pressed(self, event: Button.Pressed) -> None:
        self.dismiss(event.button.id == "caution-yes")

    def action_answer(self, yes: bool) -> None:
        self.dismiss(yes)


class QuitDuringRunScreen(ModalScreen[bool]):
    """Asked when q is pressed while a sweep runs: y stops it (outputs to the safe state) and quits."""

    BINDINGS = [
        Binding("y", "answer(True)", "Yes, stop and quit"),
        Binding("n,escape", "answer(False)", "No, keep running"),
    ]

    def compose(self) -> ComposeResult:
        with Vertical(id="caution-box"):
            yield Plain("A sweep is running.\n\nStop it, switch every output to its safe state and quit?\n"
                        "(y: stop and quit · n or Esc: keep the run going)", id="caution-text")
            with Horizontal(id="caution-buttons"):
                yield Button("y  Stop the run and quit", id="quit-yes", variant="warning")
                yield Button("n  Keep running", id="quit-no")

    def on_mount(self) -> None:
        self.query_one("#quit-no", Button).focus()  # Enter alone keeps the run going

    def on_button_pressed(self, event: Button.Pressed) -> None:
        self.dismiss(event.button.id == "quit-yes")

    def action_answer(self, yes: bool) -> None:
        self.dismiss(yes)
