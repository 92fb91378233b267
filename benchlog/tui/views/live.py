"""The live view: the curves growing as points arrive, the latest points, progress, supply state and limits.

It draws from the app's `LiveRun` when the app's timer says a batch arrived, so
redraws stay at ~15 per second however fast the points come.
"""

from __future__ import annotations

import numpy as np
from textual.app import ComposeResult

from benchlog.runs.events import FLAG_SOAK, SOAK_STARTED
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.widgets import DataTable, Static

from ..plotting import Axis, Series
from ..units import duration, si
from ..widgets import CurvePlot, bar, Plain, cells
from .base import View

LATEST_ROWS = 8


class LiveView(View):
    TITLE_TEXT = "Live sweep"
    BINDINGS = [
        Binding("r", "run", "Run again"),
        Binding("escape", "app.stop", "Stop", show=False),
    ]

    _latest_of = None  # the run and point count the latest-points table shows
    _latest_count = -1
    _soak_key: tuple | None = None  # the run, point and note counts the soak drift was built from
    _soak = None

    def body(self) -> ComposeResult:
        yield Plain("", id="live-head")
        with Horizontal(id="live-body"):
            with Vertical(id="live-plots"):
                yield CurvePlot(Axis("current", "A"), Axis("drop", "V"), id="plot-vi")
                yield CurvePlot(Axis("current", "A"), Axis("loss", "W"), id="plot-loss")
            with Vertical(id="live-side"):
                yield Plain("", id="live-limits")
                table = DataTable(id="latest", show_cursor=False)
                table.add_columns("#", "I", "drop", "mode")
                yield table
        yield Plain("", id="live-alert")

    def refresh_view(self) -> None:
        super().refresh_view()
        app = self.app
        live = app.state.live
        elapsed = app.elapsed_s()
        progress = live.progress(elapsed)
        element = live.element
        if element is None:
            head = " No run yet: r starts one (set-up view: 2), an archived run replays from 6."
        else:
            who = f"{element.id or '?'} {element.kind or ''}"
            if element.serial:
                who += f" #{element.serial}"
            planned = f"/{progress.planned}" if progress.planned else ""
            kind = "replay" if live.source == "replay" else "live"
            head = (f" {who} │ {kind} │ supply {live.supply_mode()} │ elapsed {duration(progress.elapsed_s)}"
                    f" │ ETA {duration(progress.eta_s)}\n"
                    f" {bar(progress.fraction, 24)} {progress.done}{planned} points")
        self.query_one("#live-head", Static).update(head)

        data = live.arrays()
        self.query_one("#plot-vi", CurvePlot).show([Series("drop (measured)", data["current_a"], data["drop_v"])])
        key = (id(live), len(live.points), len(live.notes))
        if self._soak_key != key:  # rebuilt only when a point arrived, so an unchanged plot is not redrawn
            self._soak_key, self._soak = key, soak_drift(live)
        soak = self._soak
        if soak is not None:
            # a heat-soak: the drop's drift against time since the current step (ΔTj needs the analysis: 4)
            self.query_one("#plot-loss", CurvePlot).show(
                [Series("drop while soaking", soak[0], soak[1], style="series-b")],
                x_axis=Axis("time since step", "s"), y_axis=Axis("drop", "V"))
        else:
            self.query_one("#plot-loss", CurvePlot).show([Series("loss I·V", data["current_a"], data["power_w"],
                                                                 style="series-b")],
                                                         x_axis=Axis("current", "A"), y_axis=Axis("loss", "W"))
        self._show_limits(live, elapsed)
        self._show_latest(live)
        self._show_alert(live)

    def _show_limits(self, live, elapsed) -> None:
        lines = ["limits (used)"]
        for use in live.limits(elapsed):
            pct = use.fraction * 100
            mark = "‼" if pct >= 100 else ("!" if pct >= 80 else " ")
            if use.unit == "s":
                value = f"{duration(use.worst)}/{duration(use.limit)}"
            else:
                value = f"{si(use.worst, use.unit, 3)}/{si(use.limit, use.unit, 3)}"
            lines.append(f"{mark}{use.what:<8} {pct:3.0f}% {value}")
        if len(lines) == 1:
            lines.append(" (none recorded)")
        self.query_one("#live-limits", Static).update("\n".join(lines))

    def _show_latest(self, live) -> None:
        if self._latest_of is live and self._latest_count == len(live.points):
            return  # the table is rebuilt only when a point arrived, at most once per redraw
        self._latest_of, self._latest_count = live, len(live.points)
        table = self.query_one("#latest", DataTable)
        table.clear()
        for p in live.points[-LATEST_ROWS:][::-1]:
            flags = "*" if p.flags else ""
            table.add_row(*cells(str(p.index), si(p.current_a, "A", 3), si(p.drop_v, "V", 4) + flags, p.supply_mode or "—"))

    def _show_alert(self, live) -> None:
        alert = self.query_one("#live-alert", Static)
        serious = [n for n in live.notes if n.kind in ("limit", "fault", "cancel")]
        outcome = self.app.state.last_outcome
        state = _safe_state(outcome, live.finished)
        if serious:
            note = serious[-1]
            alert.update(f" {note.kind.upper()}: {_with_outputs(note.message, state)}")
        elif outcome is not None and outcome.outcome not in ("complete",) and outcome.message:
            alert.update(f" {outcome.outcome.upper()}: {_with_outputs(outcome.message, state)}")
        elif live.finished is not None:
            alert.update(f" Run {live.finished.outcome}: {live.finished.points} points. Results: 4.")
        else:
            alert.update("")
        alert.set_class(bool(serious) or (outcome is not None and outcome.outcome in ("fault", "limit")), "bad")

    def action_run(self) -> None:
        self.app.request_sweep()


def soak_drift(live) -> tuple[np.ndarray, np.ndarray] | None:
    """(s since the soak's current step, drop) of the heat-soak readings so far; None before any."""
    start = next((n.t_s for n in live.notes if n.kind == "info" and n.message.startswith(SOAK_STARTED + ":")), None)
    if start is None:
        return None
    points = [p for p in live.points if FLAG_SOAK in p.flags]
    if not points:
        return None
    return (np.array([p.t_s - start for p in points]), np.array([p.drop_v for p in points]))


def _safe_state(outcome, finished) -> tuple[str, str] | None:
    """(state, statement) from the session's outcome, else from the run's end record; None while running."""
    if outcome is not None and getattr(outcome, "safe_state", ""):
        return outcome.safe_state, outcome.safe_statement
    recorded = getattr(finished, "safe_state", None)
    return (recorded, "") if recorded else None


def _with_outputs(message: str, state: tuple[str, str] | None) -> str:
    """A note with what the instruments said about the outputs; nothing is claimed before it is read back."""
    if state is None or message.startswith("OUTPUTS MAY BE ON"):
        return message
    if state[0] == "verified":
        return f"{message} — outputs are off."
    return f"{message} — {state[1] or 'OUTPUTS MAY BE ON: not read back, switch them off by hand'}."
