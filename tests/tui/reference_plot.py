"""The plot renderer as it was before it was vectorised: one Python step per point and per cell.

Kept only as the reference the tests hold the numpy rasteriser to (same dots,
same glyphs, same styles, the same rich Text); the app never imports it.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np
from rich.style import Style
from rich.text import Text

from benchlog.tui.plotting import (_BRAILLE_BASE, _DOT_BITS, Y_LABEL_WIDTH, Axis, PlotStyles, Series, _tick_text,
                                   data_range, nice_ticks)
from benchlog.tui.units import prefix_for


def reference_render_plot(
    series: Sequence[Series],
    width: int,
    height: int,
    x_axis: Axis,
    y_axis: Axis,
    styles: PlotStyles | None = None,
    x_range: tuple[float, float] | None = None,
    y_range: tuple[float, float] | None = None,
) -> Text:
    """Draw the series into a `width`×`height` block of text: legend, y ticks, plot area, x ticks, x label."""
    styles = styles or PlotStyles()
    out = Text(no_wrap=True, overflow="crop")
    plot_w = width - Y_LABEL_WIDTH - 1
    plot_h = height - 4  # legend line, x rule, x tick line, x label line
    if plot_w < 4 or plot_h < 2:
        out.append("(too small to plot)", styles.label)
        return out

    x_lo, x_hi = x_range or data_range([s.x for s in series], include_zero=True)
    y_lo, y_hi = y_range or data_range([s.y for s in series], include_zero=False)
    x_scale, x_prefix = prefix_for(max(abs(x_lo), abs(x_hi)))
    y_scale, y_prefix = prefix_for(max(abs(y_lo), abs(y_hi)))

    cells_bits = np.zeros((plot_h, plot_w), dtype=np.uint8)
    cell_glyph: dict[tuple[int, int], tuple[str, str]] = {}
    cell_dot_style: dict[tuple[int, int], str] = {}

    def to_dots(s: Series) -> tuple[np.ndarray, np.ndarray]:
        ok = np.isfinite(s.x) & np.isfinite(s.y)
        fx = (s.x[ok] - x_lo) / (x_hi - x_lo)
        fy = (s.y[ok] - y_lo) / (y_hi - y_lo)
        inside = (fx >= 0) & (fx <= 1) & (fy >= 0) & (fy <= 1)
        dx = np.minimum((fx[inside] * (plot_w * 2)).astype(int), plot_w * 2 - 1)
        dy = np.minimum(((1.0 - fy[inside]) * (plot_h * 4)).astype(int), plot_h * 4 - 1)
        return dx, dy

    for s in series:
        x = np.asarray(s.x, dtype=float)
        y = np.asarray(s.y, dtype=float)
        s = Series(s.label, x, y, s.kind, s.glyph, s.style)
        dx, dy = to_dots(s)
        if s.kind == "dots":
            rows, cols = dy // 4, dx // 2
            np.bitwise_or.at(cells_bits, (rows, cols), _DOT_BITS[dy % 4, dx % 2])
            for key in zip(rows.tolist(), cols.tolist()):
                cell_dot_style.setdefault(key, s.style)
        else:
            for key in set(zip((dy // 4).tolist(), (dx // 2).tolist())):
                if s.kind == "marks" or key not in cell_glyph:
                    cell_glyph[key] = (s.glyph, s.style)

    # Legend: glyph and name of each series, so no series is told by colour only.
    for i, s in enumerate(series):
        if i:
            out.append("   ")
        glyph = "⣿" if s.kind == "dots" else s.glyph
        out.append(glyph, styles.series.get(s.style, Style()))
        out.append(f" {s.label}", styles.label)
    out.append("\n")

    y_ticks = nice_ticks(y_lo, y_hi, max(2, min(6, plot_h // 2 + 1)))
    tick_rows = {}
    for t in y_ticks:
        row = int(round((1.0 - (t - y_lo) / (y_hi - y_lo)) * (plot_h - 1)))
        tick_rows.setdefault(row, _tick_text(t, y_scale))
    y_title = f"{y_axis.quantity}/{y_prefix}{y_axis.unit}"
    for row in range(plot_h):
        if row in tick_rows:
            label = tick_rows[row].rjust(Y_LABEL_WIDTH)
        elif row == 0 and 0 not in tick_rows:
            label = y_title[:Y_LABEL_WIDTH].rjust(Y_LABEL_WIDTH)
        else:
            label = " " * Y_LABEL_WIDTH
        out.append(label, styles.label)
        out.append("┤" if row in tick_rows else "│", styles.axis)
        for col in range(plot_w):
            key = (row, col)
            if key in cell_glyph and not cells_bits[row, col]:
                glyph, style = cell_glyph[key]
                out.append(glyph, styles.series.get(style, Style()))
            elif key in cell_glyph and cell_glyph[key][0] != "·":
                glyph, style = cell_glyph[key]
                out.append(glyph, styles.series.get(style, Style()))
            elif cells_bits[row, col]:
                out.append(chr(_BRAILLE_BASE + int(cells_bits[row, col])),
                           styles.series.get(cell_dot_style.get(key, ""), Style()))
            else:
                out.append(" ")
        out.append("\n")

    # x axis: a rule with tick marks, then the tick values, then the quantity and unit.
    x_ticks = nice_ticks(x_lo, x_hi, max(2, min(8, plot_w // 9 + 1)))
    rule = ["─"] * plot_w
    labels = [" "] * (plot_w + Y_LABEL_WIDTH + 1)
    for t in x_ticks:
        col = int(round((t - x_lo) / (x_hi - x_lo) * (plot_w - 1)))
        rule[col] = "┬"
        text = _tick_text(t, x_scale)
        start = Y_LABEL_WIDTH + 1 + col - len(text) // 2
        if start >= 0 and start + len(text) <= len(labels) and all(c == " " for c in labels[max(0, start - 1):start + len(text)]):
            labels[start:start + len(text)] = list(text)
    out.append(y_title[:Y_LABEL_WIDTH].rjust(Y_LABEL_WIDTH) if 0 in tick_rows else " " * Y_LABEL_WIDTH, styles.label)
    out.append("└" + "".join(rule), styles.axis)
    out.append("\n")
    out.append("".join(labels).rstrip(), styles.label)
    out.append("\n")
    x_title = f"{x_axis.quantity} / {x_prefix}{x_axis.unit}"
    out.append(x_title.center(width).rstrip(), styles.label)
    return out
