"""A figure kept as the drawing calls that made it: written as SVG by `svgchart` or replayed on matplotlib.

Importing matplotlib's figure machinery takes about 0.26 s and laying out and
writing three SVG figures about 0.2 s more: together several times a whole `benchlog
fit` (benchmarks/RESULTS.md §6). An HTML report needs only simple line, point,
band and histogram plots, so `figures` draws on a `Chart`, which records each
Axes call; `render(chart, "svg")` writes the calls with our own small SVG writer
when it knows every one of them, and everything else (PNG, PDF, a call the
writer does not know, any attribute a caller asks of the figure) replays the
same calls on a real matplotlib `Figure`, call for call, so those look exactly
as before.
"""

from __future__ import annotations

from typing import Any

#: a call as recorded: (Axes method name, positional arguments, keyword arguments)
Call = tuple[str, tuple, dict]


class ChartAxes:
    """Records every Axes method called on it; keeps the legend labels so `_legend` can ask for them."""

    def __init__(self) -> None:
        self.calls: list[Call] = []

    def __getattr__(self, name: str):
        if name.startswith("_"):
            raise AttributeError(name)

        def record(*args: Any, **kwargs: Any) -> None:
            self.calls.append((name, args, kwargs))

        return record

    def get_legend_handles_labels(self) -> tuple[list[str], list[str]]:
        """The labels a legend would show (matplotlib leaves out labels starting with '_')."""
        labels = [str(k["label"]) for _, _, k in self.calls
                  if k.get("label") is not None and not str(k["label"]).startswith("_")]
        return labels, labels

    def legend_entry(self, **kwargs: Any) -> None:
        """A legend entry with no data (a run's marker and line style together)."""
        self.calls.append(("legend_entry", (), kwargs))


class Chart:
    """One figure: its size and its axes' recorded calls. Any other attribute is the replayed matplotlib Figure's."""

    def __init__(self, figsize: tuple[float, float], dpi: float) -> None:
        self.figsize = (float(figsize[0]), float(figsize[1]))
        self.dpi = float(dpi)
        self.chart_axes: list[ChartAxes] = []
        self.figure_calls: list[Call] = []
        self._figure = None

    def add_subplot(self) -> ChartAxes:
        ax = ChartAxes()
        self.chart_axes.append(ax)
        return ax

    def subplots(self, nrows: int, ncols: int) -> list[ChartAxes]:
        self.figure_calls.append(("subplots", (nrows, ncols), {}))
        axes = [ChartAxes() for _ in range(nrows * ncols)]
        self.chart_axes.extend(axes)
        return axes

    def suptitle(self, text: str) -> None:
        self.figure_calls.append(("suptitle", (text,), {}))

    def to_figure(self):
        """The same figure drawn by matplotlib (made once, then kept)."""
        if self._figure is None:
            from matplotlib.figure import Figure
            from matplotlib.lines import Line2D

            fig = Figure(figsize=self.figsize, dpi=self.dpi, layout="constrained")
            subplots = next((c for c in self.figure_calls if c[0] == "subplots"), None)
            if subplots is not None:
                axes = list(fig.subplots(*subplots[1]).flat)
            else:
                axes = [fig.add_subplot() for _ in self.chart_axes]
            for recorded, ax in zip(self.chart_axes, axes):
                for name, args, kwargs in recorded.calls:
                    if name == "legend_entry":
                        ax.add_line(Line2D([], [], **kwargs))
                    else:
                        getattr(ax, name)(*args, **kwargs)
            for name, args, kwargs in self.figure_calls:
                if name != "subplots":
                    getattr(fig, name)(*args, **kwargs)
            self._figure = fig
        return self._figure

    def __getattr__(self, name: str):
        if name.startswith("_"):
            raise AttributeError(name)
        return getattr(self.to_figure(), name)


def as_figure(fig):
    """A matplotlib Figure for a Chart or a Figure (PDF pages, PNG files)."""
    return fig.to_figure() if isinstance(fig, Chart) else fig
