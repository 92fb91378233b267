"""The lot view: incoming inspection — type the next serial, run it, see each part's verdict and the lot's spread."""

from __future__ import annotations

import math

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.widgets import DataTable, Input, Static

from ..plotting import Axis
from benchlog.quantity import measured

from ..units import si
from ..lotview import QUANTITY_NAMES
from ..widgets import HistogramPlot, Plain, RowTable, cells
from .base import View
from .results import VERDICT_WORDS


class LotView(View):
    TITLE_TEXT = "Lot"
    AUTO_FOCUS = "#lot-parts"  # n moves to the serial box; after Enter the table has the keys again (s stops)
    BINDINGS = [
        Binding("n", "focus_serial", "Next serial"),
        Binding("r", "remeasure", "Re-measure part"),
        Binding("x", "remove", "Remove part"),
        Binding("w", "summary", "Summary"),
        Binding("escape", "leave_field", "Leave field", show=False),
    ]

    def body(self) -> ComposeResult:
        with Horizontal(id="lot-entry"):
            yield Plain(" next serial ▸", id="lot-prompt")
            yield Input(placeholder="n, then type the serial; Enter runs it", id="lot-serial", compact=True)
        with Horizontal(id="lot-body"):
            table = RowTable(id="lot-parts", cursor_type="row")
            table.add_columns("serial", "value ± U (95.45 %)", "verdict")
            yield table
            with Vertical(id="lot-side"):
                yield Plain("", id="lot-stats")
                yield HistogramPlot(Axis("value", ""), id="lot-histogram")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        if event.input.id == "lot-serial":
            serial = event.value
            event.input.value = ""
            self.query_one("#lot-parts", DataTable).focus()  # keys (s to stop) belong to the view again
            self.app.run_lot_part(serial)

    def action_focus_serial(self) -> None:
        self.query_one("#lot-serial", Input).focus()

    def action_leave_field(self) -> None:
        self.query_one("#lot-parts", DataTable).focus()

    def _selected_serial(self) -> str | None:
        lot = self.app.state.lot
        if not lot:
            self.app.say("No parts in this lot yet: n, type a serial, Enter.")
            return None
        row = self.query_one("#lot-parts", DataTable).cursor_row
        return lot[min(max(row, 0), len(lot) - 1)].serial

    def action_remeasure(self) -> None:
        serial = self._selected_serial()
        if serial is not None:
            self.app.remeasure_lot_part(serial)

    def action_remove(self) -> None:
        serial = self._selected_serial()
        if serial is not None:
            self.app.remove_lot_part(serial)

    def action_summary(self) -> None:
        """w: one row per part of the lot (its current run), judged against the lot's spec, as .csv and .xlsx."""
        paths = [e.run_path for e in self.app.state.lot if e.run_path is not None and e.run_path.is_file()]
        if not paths:
            self.app.say("No part of the lot has a run yet: nothing to sum up.")
            return
        from ..summary_export import export_summary

        spec = self.app.state.spec_path
        self.app.say(f"Writing the summary of the lot's {len(paths)} run(s) …")
        self.run_worker(lambda: export_summary(self.app, paths, [spec] * len(paths), "lot"), thread=True,
                        exclusive=True, group="summary")

    def refresh_view(self) -> None:
        super().refresh_view()
        state = self.app.state
        summary = state.lot_summary
        by_run = {str(part.run): part for part in getattr(summary, "parts", ())}
        table = self.query_one("#lot-parts", DataTable)
        row = table.cursor_row
        table.clear()
        for entry in state.lot:
            part = by_run.get(str(entry.run_path)) if entry.run_path else None
            if entry.value is None:
                value = entry.message[:30] if entry.message else ("…" if entry.run_path else "no run")
            elif part is not None:  # the U the part's verdict used (k_p of its comparison, 95.45 % coverage)
                value = measured(entry.value, part.expanded_u, entry.unit, k=None)
            else:  # not summed up yet (or no spec): the part's own U, the same coverage
                value = measured(entry.value, entry.expanded_u, entry.unit, k=None)
            outcome = part.outcome if part is not None else entry.verdict
            verdict = VERDICT_WORDS.get(outcome or "", "—" if entry.outcome == "complete" else entry.outcome)
            if part is not None and part.outlier:
                verdict += " ‼ OUTLIER"  # said in words: colour alone is lost on a monochrome terminal
            pending = entry.serial == state.lot_pending_serial
            table.add_row(*cells(entry.serial, "re-measuring …" if pending else value, verdict))
        if state.lot_pending_serial and not any(e.serial == state.lot_pending_serial for e in state.lot):
            table.add_row(*cells(state.lot_pending_serial, "measuring …", ""))
        if table.row_count:
            table.move_cursor(row=min(max(row, 0), table.row_count - 1))
        self._show_stats()

    def _show_stats(self) -> None:
        state = self.app.state
        summary = state.lot_summary
        stats = self.query_one("#lot-stats", Static)
        histogram = self.query_one("#lot-histogram", HistogramPlot)
        measured = [e for e in state.lot if e.value is not None]
        lines = [f" parts {len(state.lot)} measured {len(measured)}"]
        if summary is None:
            if state.lot_summary_error:
                lines.append(f" ✘ {state.lot_summary_error}")
            elif state.spec_path is None:
                lines.append(" no part spec (k in set-up): no limits, no Cpk")
            else:
                lines.append(" type a serial, Enter measures it")
            unit = measured[0].unit if measured else ""
            name = measured[0].quantity if measured else "value"
            stats.update("\n".join(lines))
            histogram.show([e.value for e in measured], Axis(name, unit), None, None)
            return
        name, unit = QUANTITY_NAMES.get(summary.quantity, (summary.quantity, ""))
        c = summary.counts
        lines[0] += f": PASS {c.get('pass', 0)} FAIL {c.get('fail', 0)} COND {c.get('conditional', 0)}"
        lines.append(f" {name} mean {si(summary.mean, unit)}  σ {si(summary.std, unit, 3)}")
        lines.append(f" min {si(summary.min, unit)}  max {si(summary.max, unit)}")
        limits = "  ".join(f"{label} {si(v, unit)}" for label, v in (("LSL", summary.lsl), ("USL", summary.usl))
                           if v is not None)
        if limits:
            lines.append(f" {limits}")
        if summary.capability is not None:
            low = "—" if summary.capability_lower is None else f"{summary.capability_lower:.2f}"
            lines.append(f" {summary.capability_name} {summary.capability:.2f} ({summary.capability_confidence:.0%} ≥ {low})   "
                         f"outliers {summary.outliers}")
        else:
            lines.append(f" capability: none yet   outliers {summary.outliers}")
        lines.append(f" LOT: {VERDICT_WORDS.get(summary.outcome, summary.outcome.upper())}")
        lines.extend(f" · {note}" for note in summary.notes[:2])
        stats.update("\n".join(lines))
        histogram.show([p.value for p in summary.parts], Axis(name, unit), summary.lsl, summary.usl)
