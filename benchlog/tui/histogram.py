"""A lot's spread as text: one bar per bin in eighth-block characters, with the spec limits marked and named.

Limits are drawn as `│` columns and named `LSL`/`USL` under the axis, so they read
without colour.
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np
from rich.style import Style
from rich.text import Text

from .plotting import Axis, nice_ticks, _tick_text
from .units import prefix_for

_EIGHTHS = " ▁▂▃▄▅▆▇█"


def render_histogram(
    values: Sequence[float],
    width: int,
    height: int,
    axis: Axis,
    lower: float | None = None,
    upper: float | None = None,
    bar_style: Style | None = None,
    limit_style: Style | None = None,
) -> Text:
    """Histogram of `values` across the whole width (one bin per column pair), limits included in the range."""
    out = Text(no_wrap=True, overflow="crop")
    values = np.asarray([v for v in values if v is not None and math.isfinite(v)], dtype=float)
    bars_h = height - 3
    cols = width - 6
    if bars_h < 1 or cols < 8:
        out.append("(too small)")
        return out
    marks = [v for v in (lower, upper) if v is not None and math.isfinite(v)]
    pool = np.concatenate([values, np.asarray(marks, dtype=float)]) if marks else values
    if len(pool) == 0:
        out.append("no parts measured yet")
        return out
    lo, hi = float(pool.min()), float(pool.max())
    if hi <= lo:
        pad = abs(lo) * 0.05 or 1.0
        lo, hi = lo - pad, hi + pad
    span = hi - lo
    lo, hi = lo - span * 0.05, hi + span * 0.05
    bins = max(4, cols // 2)
    counts, edges = np.histogram(values, bins=bins, range=(lo, hi))
    top = max(1, int(counts.max()) if len(counts) else 1)

    def column_of(v: float) -> int:
        return min(cols - 1, max(0, int((v - lo) / (hi - lo) * cols)))

    limit_cols = {}
    if lower is not None and math.isfinite(lower):
        limit_cols[column_of(lower)] = "LSL"
    if upper is not None and math.isfinite(upper):
        limit_cols[column_of(upper)] = "USL"

    out.append(f"{top:>4} ")
    out.append("count\n" if cols > 10 else "\n")
    for row in range(bars_h):
        level_top = (bars_h - row) / bars_h * top
        level_bottom = (bars_h - row - 1) / bars_h * top
        out.append("     " if row else "     ")
        out.append("│")
        for col in range(cols):
            if col in limit_cols:
                out.append("┃", limit_style or Style())
                continue
            count = counts[min(bins - 1, col * bins // cols)]
            if count >= level_top:
                glyph = "█"
            elif count <= level_bottom:
                glyph = " "
            else:
                glyph = _EIGHTHS[int((count - level_bottom) / (level_top - level_bottom) * 8)]
            out.append(glyph, bar_style or Style())
        out.append("\n")
    scale, prefix = prefix_for(max(abs(lo), abs(hi)))
    axis_line = [" "] * (cols + 6)
    for t in nice_ticks(lo, hi, max(2, cols // 10)):
        text = _tick_text(t, scale)
        start = 6 + column_of(t) - len(text) // 2
        if start >= 0 and start + len(text) <= len(axis_line) and all(c == " " for c in axis_line[max(0, start - 1):start + len(text) + 1]):
            axis_line[start:start + len(text)] = list(text)
    for col, name in limit_cols.items():
        start = min(len(axis_line) - len(name), max(0, 6 + col - 1))
        axis_line[start:start + len(name)] = list(name)
    out.append("     └" + "─" * cols + "\n")
    out.append("".join(axis_line).rstrip() + f"  {axis.quantity}/{prefix}{axis.unit}")
    return out
