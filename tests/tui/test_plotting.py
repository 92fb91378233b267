"""The text plots: braille dot positions, tick choice, axis labels with units."""

from __future__ import annotations

import numpy as np

from benchlog.tui.histogram import render_histogram
from benchlog.tui.plotting import Axis, Series, nice_ticks, render_plot


def _plot_rows(text: str) -> list[str]:
    return text.split("\n")


def test_single_point_at_the_corners_uses_the_unicode_dot_numbering():
    # Unicode Standard ch. 21 (Braille Patterns): dot 1 (top left) is U+2801, dot 8 (bottom right) U+2880.
    x = np.array([0.0, 1.0])
    y = np.array([1.0, 0.0])
    text = render_plot([Series("p", x, y)], 20, 8, Axis("current", "A"), Axis("drop", "V"),
                       x_range=(0.0, 1.0), y_range=(0.0, 1.0)).plain
    rows = _plot_rows(text)
    plot_rows = rows[1:5]  # legend, then height - 4 = 4 plot rows
    assert plot_rows[0][8] == "\u2801"  # after the 7-wide labels and the axis line
    assert plot_rows[-1][-1] == "\u2880"


def test_two_series_are_told_apart_by_glyph_and_legend_not_by_colour():
    x = np.linspace(0, 1, 10)
    text = render_plot([Series("run A", x, x), Series("run B", x, x * 0.5, kind="marks", glyph="+")],
                       40, 12, Axis("current", "A"), Axis("drop", "V")).plain
    legend = text.split("\n")[0]
    assert "⣿ run A" in legend and "+ run B" in legend
    assert "+" in "".join(text.split("\n")[1:-3])


def test_axis_labels_carry_the_unit_with_an_si_prefix():
    x = np.linspace(0.1, 3.0, 20)
    text = render_plot([Series("m", x, 0.027 * x)], 60, 14, Axis("current", "A"), Axis("drop", "V")).plain
    assert "current / A" in text
    assert "drop/mV" in text  # 0.08 V peak is drawn in millivolts


def test_nice_ticks_are_one_two_five_steps_within_the_range():
    # 1-2-5 series of round steps (common practice for chart axes).
    ticks = nice_ticks(0.0, 3.1, 6)
    steps = np.diff(ticks)
    assert np.allclose(steps, steps[0])
    mantissa = steps[0] / 10 ** np.floor(np.log10(steps[0]))
    assert round(mantissa, 6) in (1.0, 2.0, 2.5, 5.0)
    assert ticks[0] >= 0.0 and ticks[-1] <= 3.1 and len(ticks) <= 6


def test_histogram_counts_every_value_and_names_the_limits():
    values = [1.0, 1.1, 1.1, 1.2, 1.9]
    text = render_histogram(values, 50, 10, Axis("R_on", "Ω"), lower=0.8, upper=2.0).plain
    assert text.split()[0] == "2"  # tallest bin holds two values (the two 1.1)
    assert "LSL" in text and "USL" in text
    assert "┃" in text
