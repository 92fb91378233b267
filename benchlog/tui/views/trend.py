"""The archive's trend: a fitted quantity's control chart over the runs the archive view's filter selects."""

from __future__ import annotations

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.widgets import Static

from benchlog.store.filters import GROUPINGS, RunFilter

from ..trendplot import chart_axes, chart_series, chart_text, comparison_text
from ..archive_query import filter_text
from ..plotting import Axis
from ..widgets import CurvePlot, Plain
from .asked import AskedScreen, sentence


class TrendScreen(AskedScreen):
    """`n` picks the next fitted quantity, `g` groups by lot, day or bench; the chart is `store.trend`'s."""

    TITLE_TEXT = "Trend"

    BINDINGS = [
        Binding("n", "next_quantity", "Quantity"),
        Binding("g", "next_grouping", "Group by"),
        Binding("c", "compare_lots", "Last two lots"),
        Binding("escape,t", "app.pop_screen", "Back"),
    ]

    def __init__(self, flt: RunFilter) -> None:
        super().__init__()
        self.filter = flt
        self.quantities: list[str] = []
        self.quantity: str | None = None
        self.by = "lot"
        self.trend = None  # store.trend.Trend, when the archive gave one
        self.problem = ""
        self.comparison = None  # store.lots.LotComparison of the last two lots, after c

    def body(self) -> ComposeResult:
        plot = CurvePlot(Axis("subgroup", "#"), Axis("value", ""), id="trend-plot")
        plot.empty_text = "reading the archive …"
        yield plot
        yield Plain("", id="trend-text")
        yield Plain("", id="trend-compare")

    def ask(self) -> None:
        self._ask(None, self.by)

    @work(thread=True, exclusive=True, group="trend")
    def _ask(self, quantity: str | None, by: str) -> None:
        from benchlog.store.queries import known_quantities
        from benchlog.store.trend import trend

        try:
            archive = self.app.archive_store()
            if not self.quantities:
                self.quantities = known_quantities(archive)
            if quantity is None:
                quantity = "r_on_ohm" if "r_on_ohm" in self.quantities else (self.quantities or [None])[0]
            if quantity is None:
                found, problem = None, "no run in the archive has a fitted quantity yet"
            else:
                found, problem = trend(archive, quantity, by, self.filter), ""
        except Exception as exc:  # BadInput (too few subgroups, unknown quantity) or the database: one sentence
            found, problem = None, sentence(exc)
        self.app.call_from_thread(self._show, quantity, by, found, problem)

    def _show(self, quantity, by, found, problem: str) -> None:
        self.quantity, self.by, self.trend, self.problem = quantity, by, found, problem
        typed = filter_text(self.filter)
        self.query_one("#view-title", Static).update(
            f" benchlog ▸ Trend   │ {quantity or '—'} by {by}" + (f" · filter {typed}" if typed else ""))
        plot = self.query_one("#trend-plot", CurvePlot)
        if found is None:
            plot.empty_text = "no chart"
            plot.show([])
            self.query_one("#trend-text", Static).update(f" No chart: {problem}")
            return
        x_axis, y_axis = chart_axes(quantity)
        plot.whole_x, plot.x_range = True, (0.5, len(found.chart.values) + 0.5)
        plot.show(chart_series(found.chart), x_axis, y_axis)
        self.query_one("#trend-text", Static).update(chart_text(found.chart, quantity, by, found.stats.runs))

    def action_next_quantity(self) -> None:
        if not self.quantities:
            return
        index = (self.quantities.index(self.quantity) + 1) % len(self.quantities) if self.quantity in self.quantities else 0
        self.quantity = self.quantities[index]  # at once: a second press goes on from here, not from the last answer
        self._ask_again()

    def action_next_grouping(self) -> None:
        self.by = GROUPINGS[(GROUPINGS.index(self.by) + 1) % len(GROUPINGS)]
        self._ask_again()

    def action_compare_lots(self) -> None:
        """c: the newest lot against the one before it (Welch's t, as `archive compare-lots`), on the chart's
        quantity and the view's filter."""
        chart = self.trend.chart if self.trend is not None else None
        if self.by != "lot" or chart is None or len(chart.labels) < 2:
            self.app.say("Compare needs the chart by lot with two lots or more (g groups by lot).")
            return
        self.comparison = None
        self._compare(self.quantity, chart.labels[-2], chart.labels[-1])

    @work(thread=True, exclusive=True, group="trend-compare")
    def _compare(self, quantity: str, lot_a: str, lot_b: str) -> None:
        from benchlog.store.lots import compare_lots

        try:
            found, text = compare_lots(self.app.archive_store(), quantity, lot_a, lot_b, flt=self.filter), ""
        except Exception as exc:  # a lot with fewer than two fitted runs, or the database: one sentence
            found, text = None, f" No comparison: {sentence(exc)}"
        if found is not None:
            text = comparison_text(found, quantity)
        self.app.call_from_thread(self._compared, found, text)

    def _compared(self, found, text: str) -> None:
        self.comparison = found
        self.query_one("#trend-compare", Static).update(text)

    def _ask_again(self) -> None:
        self.trend, self.problem = None, ""  # until the answer comes
        self.query_one("#trend-compare", Static).update("")
        self._ask(self.quantity, self.by)
