"""Small widgets the views share: the key bar, the view title line, a curve plot and a histogram."""

from __future__ import annotations

from typing import Sequence

from rich.cells import cell_len
from rich.style import Style
from rich.text import Text
from textual.binding import Binding
from textual.widget import Widget
from textual.widgets import DataTable, Static

from .histogram import render_histogram
from .plotting import Axis, PlotStyles, Series, render_plot


class Plain(Static):
    """Static text that is never read as markup: serials, file names and messages may hold `[` and `]`."""

    def __init__(self, content="", **kwargs) -> None:
        kwargs.setdefault("markup", False)
        super().__init__(content, **kwargs)

    def update(self, content="", *, layout: bool = True) -> None:
        """Show `content`; the same text again is no change, and text that keeps the widget's size
        needs no layout pass (a layout re-arranges the whole screen; the live view updates ~15 times a second)."""
        old = self.content
        if isinstance(content, str) and isinstance(old, str):
            if content == old:
                return
            if layout and self.is_mounted and not self._size_may_change(old, content):
                layout = False
        super().update(content, layout=layout)

    def _size_may_change(self, old: str, new: str) -> bool:
        """True unless the new text surely takes the same cells: a fixed size, or an auto height
        with the same number of lines and no line that wraps (old or new)."""
        styles = self.styles
        if styles.width is not None and styles.width.is_auto:
            return True  # (unset width fills the container, whatever the text)
        if styles.height is not None and not styles.height.is_auto:
            return False
        width = self.content_region.width
        old_lines, new_lines = old.split("\n"), new.split("\n")
        if width <= 0 or len(old_lines) != len(new_lines):
            return True
        return any(cell_len(line) > width for line in (*old_lines, *new_lines))


def cells(*values: object) -> tuple[Text, ...]:
    """Table cells as plain text (DataTable would read a str as markup)."""
    return tuple(Text(str(v)) for v in values)


class KeyBar(Static):
    """Every key that works here, wrapped over as many lines as the width needs (textual's footer scrolls instead)."""

    DEFAULT_CSS = "KeyBar { height: auto; }"
    _shown: tuple | None = None  # the text the bar shows and the size it was drawn at

    def on_mount(self) -> None:
        self.screen.bindings_updated_signal.subscribe(self, self._bindings_changed)
        self.call_after_refresh(self._draw)

    def on_unmount(self) -> None:
        self.screen.bindings_updated_signal.unsubscribe(self)

    def _bindings_changed(self, _screen) -> None:
        self.call_after_refresh(self._draw)

    def on_resize(self) -> None:
        self._draw()

    def _draw(self) -> None:
        if not self.is_attached:
            return
        key_style = self.get_component_rich_style("keybar--key")
        text_style = self.get_component_rich_style("keybar--text")
        current_style = self.get_component_rich_style("keybar--current")
        seen: set[str] = set()
        app_items: list[tuple[str, str, bool]] = []
        view_items: list[tuple[str, str, bool]] = []
        current = f"view('{getattr(self.app, 'current_mode', '')}')"
        for _key, active in self.screen.active_bindings.items():
            binding = active.binding
            if not binding.show or binding.action in seen or not active.enabled:
                continue
            seen.add(binding.action)
            target = app_items if active.node is self.app else view_items
            target.append((self.app.get_key_display(binding), binding.description, binding.action == current))
        items = view_items + app_items
        from textual.widgets import Input

        if isinstance(self.screen.focused, Input):
            items = [("Tab", "next field", False), ("Shift+Tab", "previous field", False), ("Enter", "done", False),
                     ("Esc", "leave the field (view keys work again)", False)]
        width = max(20, self.size.width or 80)
        line_len = 0
        text = Text(no_wrap=True)
        for key, description, here in items:
            if here:
                description = f"[{description}]"
            piece_len = len(key) + len(description) + 3
            if line_len and line_len + piece_len > width:
                text.append("\n")
                line_len = 0
            text.append(f" {key} ", key_style)
            text.append(f"{description} ", current_style if here else text_style)
            line_len += piece_len
        lines = text.plain.count("\n") + 1
        max_height = self.styles.max_height
        wanted = min(lines, int(max_height.value)) if max_height is not None and max_height.is_cells else lines
        drawn = (text, self.size)
        if drawn == self._shown and self.size.height >= wanted:
            return  # the bindings signal fires on every cursor move; the same keys, laid out, need no redraw
        lines_before = self._shown[0].plain.count("\n") + 1 if self._shown else -1
        self._shown = drawn
        if lines != lines_before or self.size.height < wanted:
            self.clear_cached_dimensions()  # `Static.update` keeps the auto height measured for the old text
            self.update(text)
        else:
            self.update(text, layout=False)  # each line is cut to the width: the same lines take the same cells

    COMPONENT_CLASSES = {"keybar--key", "keybar--text", "keybar--current"}


class CurvePlot(Widget):
    """A braille plot that redraws only when told (`show`), so a flood of points costs one draw per batch."""

    COMPONENT_CLASSES = {"plot--axis", "plot--label", "plot--series-a", "plot--series-b", "plot--model", "plot--limit"}
    DEFAULT_CSS = "CurvePlot { height: 1fr; min-height: 6; }"

    def __init__(self, x_axis: Axis, y_axis: Axis, *, id: str | None = None, classes: str | None = None) -> None:
        super().__init__(id=id, classes=classes)
        self.x_axis = x_axis
        self.y_axis = y_axis
        self.series: list[Series] = []
        self.empty_text = "waiting for points"
        self.whole_x = False  # only whole-number x ticks (an axis that counts)
        self.x_range: tuple[float, float] | None = None

    def show(self, series: Sequence[Series], x_axis: Axis | None = None, y_axis: Axis | None = None) -> None:
        series = list(series)
        x_axis, y_axis = x_axis or self.x_axis, y_axis or self.y_axis
        if _same_series(series, self.series) and (x_axis, y_axis) == (self.x_axis, self.y_axis):
            return  # nothing new to draw (the live view asks ~15 times a second)
        self.series, self.x_axis, self.y_axis = series, x_axis, y_axis
        self.refresh()

    def render(self) -> Text:
        if not any(len(s.x) for s in self.series):
            return Text(f"{self.y_axis.quantity} vs {self.x_axis.quantity}: {self.empty_text}",
                        self.get_component_rich_style("plot--label"))
        styles = PlotStyles(
            axis=self.get_component_rich_style("plot--axis"),
            label=self.get_component_rich_style("plot--label"),
            series={name: self.get_component_rich_style(f"plot--{name}") for name in ("series-a", "series-b", "model", "limit")},
        )
        return render_plot(self.series, self.size.width, self.size.height, self.x_axis, self.y_axis, styles,
                           x_range=self.x_range, whole_x=self.whole_x)


def _same_series(new: Sequence[Series], old: Sequence[Series]) -> bool:
    """The same curves: equal labels and looks, and the very same (unchanging) arrays."""
    return len(new) == len(old) and all(
        a.x is b.x and a.y is b.y and (a.label, a.kind, a.glyph, a.style) == (b.label, b.kind, b.glyph, b.style)
        for a, b in zip(new, old))


class HistogramPlot(Widget):
    COMPONENT_CLASSES = {"plot--series-a", "plot--limit"}
    DEFAULT_CSS = "HistogramPlot { height: 1fr; min-height: 6; }"

    def __init__(self, axis: Axis, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.axis = axis
        self.values: list[float] = []
        self.lower: float | None = None
        self.upper: float | None = None

    def show(self, values: Sequence[float], axis: Axis, lower: float | None, upper: float | None) -> None:
        self.values, self.axis, self.lower, self.upper = list(values), axis, lower, upper
        self.refresh()

    def render(self) -> Text:
        return render_histogram(self.values, self.size.width, self.size.height, self.axis, self.lower, self.upper,
                                self.get_component_rich_style("plot--series-a"),
                                self.get_component_rich_style("plot--limit"))


def bar(fraction: float | None, width: int) -> str:
    """A text progress bar `[#####.....]`: its meaning is in the characters, not in colour."""
    if fraction is None:
        return "[" + "?" * width + "]"
    filled = int(round(max(0.0, min(1.0, fraction)) * width))
    return "[" + "█" * filled + "·" * (width - filled) + "]"


class RowTable(DataTable):
    """A table of runs or parts moved by row: Home/End go to the first/last row, PgUp/PgDn by a page."""

    BINDINGS = [  # one entry in the key bar for all four, so the bar keeps room for STOP
        Binding("home", "scroll_top", "rows", key_display="Home/End/PgUp/PgDn"),
        Binding("end", "scroll_bottom", "Last row", show=False),
        Binding("pageup", "page_up", "Page up", show=False),
        Binding("pagedown", "page_down", "Page down", show=False),
    ]
