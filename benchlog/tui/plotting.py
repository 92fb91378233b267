"""Curves in a terminal: braille dots for measured points, character marks for a second run or a model line.

A character cell holds a 2×4 grid of braille dots (Unicode block U+2800–U+28FF,
dot numbering per the Unicode Standard, ch. 21 "Braille Patterns"), so a plot of
W×H cells resolves 2W×4H points. Series are told apart by their glyph and by
the legend text, never by colour alone.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
from rich.style import Style
from rich.text import Text

from .units import prefix_for

# Bit of each dot, indexed [row][column] inside a cell (Unicode braille dots 1-8).
_DOT_BITS = np.array([[0x01, 0x08], [0x02, 0x10], [0x04, 0x20], [0x40, 0x80]], dtype=np.uint8)
_BRAILLE_BASE = 0x2800

Y_LABEL_WIDTH = 7


@dataclass(frozen=True)
class Series:
    """One set of (x, y) values; `kind` is "dots" (braille), "marks" (one glyph per cell) or "line"."""

    label: str
    x: np.ndarray
    y: np.ndarray
    kind: str = "dots"
    glyph: str = "+"
    style: str = "series-a"


@dataclass(frozen=True)
class Axis:
    """What an axis shows: the quantity and its SI unit (prefixes are chosen from the data)."""

    quantity: str
    unit: str


@dataclass
class PlotStyles:
    axis: Style = field(default_factory=Style)
    label: Style = field(default_factory=Style)
    series: dict[str, Style] = field(default_factory=dict)


def nice_ticks(lo: float, hi: float, most: int) -> list[float]:
    """Round tick values (1, 2, 5 × 10^n steps) covering [lo, hi], at most `most` of them (common practice)."""
    if not (math.isfinite(lo) and math.isfinite(hi)) or most < 2:
        return []
    if hi <= lo:
        return [lo]
    raw = (hi - lo) / (most - 1)
    power = 10.0 ** math.floor(math.log10(raw))
    for mult in (1.0, 2.0, 2.5, 5.0, 10.0):
        step = mult * power
        if (hi - lo) / step <= most - 1:
            break
    first = math.ceil(lo / step - 1e-9) * step
    ticks = []
    value = first
    while value <= hi + step * 1e-9:
        ticks.append(0.0 if abs(value) < step * 1e-9 else value)
        value += step
    return ticks


def data_range(values: Sequence[np.ndarray], include_zero: bool) -> tuple[float, float]:
    finite = [v[np.isfinite(v)] for v in values if len(v)]
    finite = [v for v in finite if len(v)]
    if not finite:
        return (0.0, 1.0)
    lo = min(float(v.min()) for v in finite)
    hi = max(float(v.max()) for v in finite)
    if include_zero:
        lo, hi = min(lo, 0.0), max(hi, 0.0)
    if hi - lo <= 0.0:
        pad = abs(hi) * 0.05 or 1.0
        lo, hi = lo - pad, hi + pad
    else:
        pad = (hi - lo) * 0.04
        lo = lo - pad if lo != 0.0 else lo
        hi = hi + pad
    return lo, hi


def _tick_text(value: float, scale: float) -> str:
    scaled = value / scale
    if abs(scaled) >= 100 or scaled == int(scaled):
        return f"{scaled:.0f}"
    if abs(scaled) >= 10:
        return f"{scaled:.1f}".rstrip("0").rstrip(".")
    return f"{scaled:.2f}".rstrip("0").rstrip(".")


def dot_indices(
    x: np.ndarray, y: np.ndarray, x_range: tuple[float, float], y_range: tuple[float, float], plot_w: int, plot_h: int,
) -> tuple[np.ndarray, np.ndarray]:
    """Braille dot column and row (0 = left, top) of every finite point inside the ranges, all at once.

    The canvas is 2·plot_w dots wide and 4·plot_h high; a value on the upper edge
    of a range falls in the last dot rather than one past it.
    """
    (x_lo, x_hi), (y_lo, y_hi) = x_range, y_range
    ok = np.isfinite(x) & np.isfinite(y)
    with np.errstate(all="ignore"):  # a zero-width range gives NaN fractions, which the `inside` test drops
        fx = (x[ok] - x_lo) / (x_hi - x_lo)
        fy = (y[ok] - y_lo) / (y_hi - y_lo)
    inside = (fx >= 0) & (fx <= 1) & (fy >= 0) & (fy <= 1)
    dx = np.minimum((fx[inside] * (plot_w * 2)).astype(np.intp), plot_w * 2 - 1)
    dy = np.minimum(((1.0 - fy[inside]) * (plot_h * 4)).astype(np.intp), plot_h * 4 - 1)
    return dx, dy


def dot_grid(dx: np.ndarray, dy: np.ndarray, plot_w: int, plot_h: int) -> np.ndarray:
    """The braille bits of each cell (uint8, plot_h × plot_w) with the dots (dx, dy) set.

    The dots go into a boolean canvas at dot resolution in one fancy-index
    assignment; then each of the eight dot positions of a cell adds its bit, so
    the cost is O(points + canvas) with no Python loop over points.
    """
    canvas = np.zeros((plot_h * 4, plot_w * 2), dtype=bool)
    canvas[dy, dx] = True
    bits = np.zeros((plot_h, plot_w), dtype=np.uint8)
    for r in range(4):
        for c in range(2):
            bits |= canvas[r::4, c::2] * _DOT_BITS[r, c]
    return bits


def render_plot(
    series: Sequence[Series],
    width: int,
    height: int,
    x_axis: Axis,
    y_axis: Axis,
    styles: PlotStyles | None = None,
    x_range: tuple[float, float] | None = None,
    y_range: tuple[float, float] | None = None,
    whole_x: bool = False,
) -> Text:
    """Draw the series into a `width`×`height` block of text: legend, y ticks, plot area, x ticks, x label.

    `whole_x`: the x axis counts things (subgroups), so only whole-number ticks are drawn."""
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

    bits = np.zeros((plot_h, plot_w), dtype=np.uint8)
    dot_owner = np.full((plot_h, plot_w), -1, dtype=np.intp)  # first dots series to reach a cell styles it
    glyph_owner = np.full((plot_h, plot_w), -1, dtype=np.intp)  # marks win over lines, later marks over earlier
    for i, s in enumerate(series):
        x = np.asarray(s.x, dtype=float)
        y = np.asarray(s.y, dtype=float)
        dx, dy = dot_indices(x, y, (x_lo, x_hi), (y_lo, y_hi), plot_w, plot_h)
        touched = np.zeros((plot_h, plot_w), dtype=bool)
        touched[dy // 4, dx // 2] = True
        if s.kind == "dots":
            bits |= dot_grid(dx, dy, plot_w, plot_h)
            dot_owner[touched & (dot_owner < 0)] = i
        elif s.kind == "marks":
            glyph_owner[touched] = i
        else:
            glyph_owner[touched & (glyph_owner < 0)] = i
    # A model line's "·" gives way to measured dots in the same cell; any other glyph stays on top.
    soft = np.array([s.kind != "dots" and s.glyph == "·" for s in series] + [False])
    glyph_wins = (glyph_owner >= 0) & ((bits == 0) | ~soft[glyph_owner])
    filled = glyph_wins | (bits != 0)
    series_styles = [styles.series.get(s.style, Style()) for s in series]

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
        shown = 0  # columns of this row written so far; a run of empty cells is one append (no style)
        for col in np.flatnonzero(filled[row]).tolist():
            if col > shown:
                out.append(" " * (col - shown))
            if glyph_wins[row, col]:
                owner = int(glyph_owner[row, col])
                out.append(series[owner].glyph, series_styles[owner])
            else:
                out.append(chr(_BRAILLE_BASE + int(bits[row, col])), series_styles[int(dot_owner[row, col])])
            shown = col + 1
        if shown < plot_w:
            out.append(" " * (plot_w - shown))
        out.append("\n")

    # x axis: a rule with tick marks, then the tick values, then the quantity and unit.
    x_ticks = nice_ticks(x_lo, x_hi, max(2, min(8, plot_w // 9 + 1)))
    if whole_x:
        x_ticks = [t for t in x_ticks if t == int(t)]
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


def line_series(label: str, x_lo: float, x_hi: float, fn, samples: int = 160, glyph: str = "·",
                style: str = "model") -> Series:
    """A model curve sampled across [x_lo, x_hi] and drawn with `glyph` (under the measured dots)."""
    x = np.linspace(x_lo, x_hi, samples)
    with np.errstate(all="ignore"):
        y = np.array([fn(v) for v in x], dtype=float)
    return Series(label, x, y, kind="line", glyph=glyph, style=style)
