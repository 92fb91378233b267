"""The text plots: braille dot positions, tick choice, axis labels with units."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from rich.style import Style

from benchlog.tui.histogram import render_histogram
from benchlog.tui.plotting import Axis, PlotStyles, Series, dot_grid, dot_indices, nice_ticks, render_plot

from .reference_plot import reference_render_plot


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


# -- the vectorised rasteriser against the per-point reference ------------------------------------

# Bit of each braille dot by (row, column) in its cell: dots 1-2-3-7 down the left, 4-5-6-8 down the
# right, dot n is bit n-1 (Unicode Standard ch. 21 "Braille Patterns", U+2800 + bits).
UNICODE_DOT_BIT = {(0, 0): 0x01, (1, 0): 0x02, (2, 0): 0x04, (3, 0): 0x40,
                   (0, 1): 0x08, (1, 1): 0x10, (2, 1): 0x20, (3, 1): 0x80}


def _dots_one_by_one(x, y, x_range, y_range, plot_w, plot_h):
    """The plain method: each point on its own, in Python floats, to its cell and dot."""
    import math

    bits = np.zeros((plot_h, plot_w), dtype=np.uint8)
    for xv, yv in zip(x.tolist(), y.tolist()):
        if not (math.isfinite(xv) and math.isfinite(yv)):
            continue
        fx = (xv - x_range[0]) / (x_range[1] - x_range[0])
        fy = (yv - y_range[0]) / (y_range[1] - y_range[0])
        if not (0.0 <= fx <= 1.0 and 0.0 <= fy <= 1.0):
            continue
        col = min(int(fx * plot_w * 2), plot_w * 2 - 1)
        row = min(int((1.0 - fy) * plot_h * 4), plot_h * 4 - 1)
        bits[row // 4, col // 2] |= UNICODE_DOT_BIT[(row % 4, col % 2)]
    return bits


def _random_points(rng, n):
    x = rng.uniform(-0.2, 1.2, n)
    y = rng.normal(0.5, 0.4, n)
    x[rng.random(n) < 0.02] = np.nan
    y[rng.random(n) < 0.02] = np.inf
    edges = rng.random(n) < 0.05  # values exactly on the range ends
    x[edges] = rng.choice([0.0, 1.0], edges.sum())
    return x, y


@pytest.mark.parametrize("seed", range(8))
def test_vectorised_dots_are_exactly_the_dots_of_the_point_by_point_method(seed):
    rng = np.random.default_rng(seed)
    plot_w, plot_h = int(rng.integers(4, 120)), int(rng.integers(2, 40))
    x, y = _random_points(rng, int(rng.integers(0, 20_000)))
    x_range, y_range = (0.0, 1.0), (float(rng.uniform(-0.5, 0.4)), float(rng.uniform(0.6, 1.5)))
    dx, dy = dot_indices(x, y, x_range, y_range, plot_w, plot_h)
    bits = dot_grid(dx, dy, plot_w, plot_h)
    assert np.array_equal(bits, _dots_one_by_one(x, y, x_range, y_range, plot_w, plot_h))


STYLES = PlotStyles(axis=Style(color="white"), label=Style(dim=True),
                    series={"series-a": Style(color="green"), "series-b": Style(color="cyan"),
                            "model": Style(color="yellow"), "limit": Style(color="red")})


@st.composite
def _plots(draw):
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    series = []
    for i in range(draw(st.integers(1, 4))):
        kind = draw(st.sampled_from(["dots", "dots", "marks", "line"]))
        glyph = draw(st.sampled_from(["·", "+", "x"]))
        style = draw(st.sampled_from(["series-a", "series-b", "model", "limit", "unknown"]))
        x, y = _random_points(rng, draw(st.integers(0, 3000)))
        series.append(Series(f"s{i}", x, y, kind=kind, glyph=glyph, style=style))
    width, height = draw(st.integers(8, 130)), draw(st.integers(5, 40))
    ranges = draw(st.sampled_from([None, ((0.0, 1.0), (0.0, 1.0)), ((0.2, 0.8), (0.3, 0.6))]))
    return series, width, height, ranges


@settings(max_examples=60, deadline=None)
@given(_plots())
def test_render_plot_gives_the_same_text_and_styles_as_the_per_point_renderer(plot):
    series, width, height, ranges = plot
    x_range, y_range = ranges or (None, None)
    args = (series, width, height, Axis("current", "A"), Axis("drop", "V"), STYLES, x_range, y_range)
    ours, reference = render_plot(*args), reference_render_plot(*args)
    assert ours.plain == reference.plain
    # rich Text equality compares the plain text and every style span: what the terminal is sent.
    assert ours == reference
