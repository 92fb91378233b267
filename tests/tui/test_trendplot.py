"""The control chart laid out for the braille plot: every number drawn is the chart's own.

The chart is an individuals chart of invented values; its limits are checked here against the
textbook form X̄ ± 2.66·MR̄ (ISO 7870-2, individuals chart: 2.66 = 3/d2 with d2(2) = 1.128,
from memory) before the layout is checked against it.
"""

from __future__ import annotations

import numpy as np
import pytest

from benchlog.store.control_chart import individuals_chart, mean_range_from_stats
from benchlog.tui.plotting import render_plot
from benchlog.tui.trendplot import chart_axes, chart_series, chart_text

VALUES = [10.0, 10.2, 9.9, 10.1, 10.0, 9.8, 10.1, 12.5, 10.0, 9.9]  # invented; the 8th is far out


def test_values_limits_and_hits_are_the_charts_own():
    chart = individuals_chart(VALUES, [f"D{i}" for i in range(len(VALUES))])
    mr_bar = np.mean(np.abs(np.diff(VALUES)))
    assert chart.ucl[0] == pytest.approx(np.mean(VALUES) + 2.66 * mr_bar, rel=2e-3)  # 2.66 vs 3/1.1284
    centre, limits, values, hits = chart_series(chart)
    assert list(values.x) == list(range(1, 11)) and list(values.y) == VALUES
    assert set(centre.y) == {chart.centre}
    assert set(np.round(limits.y, 12)) == set(np.round([chart.ucl[0], chart.lcl[0]], 12))
    assert limits.x.min() == 0.5 and limits.x.max() == 10.5  # each subgroup's limit across its own cell
    assert [int(x) for x in hits.x] == sorted({h.index + 1 for h in chart.hits}) and 8 in hits.x
    assert hits.glyph == "!" and values.glyph == "o"
    text = chart_text(chart, "r_on_ohm", "day", 10)
    assert "rule 1 (one point beyond 3σ) at 8 D7" in text and "1=D0" in text


def test_a_limit_that_follows_the_subgroup_size_is_drawn_in_steps():
    chart = mean_range_from_stats(["A", "B", "C"], [2, 5, 2], [1.0, 1.1, 0.9], [0.1, 0.2, 0.1])
    _, limits, _, *_ = chart_series(chart)
    upper = limits.y[: limits.y.size // 2]
    per = upper.size // 3
    assert [upper[i * per] for i in range(3)] == pytest.approx(list(chart.ucl))
    assert chart.ucl[1] < chart.ucl[0]  # a larger subgroup: a narrower mean limit (3σ/√n)


def test_the_hit_is_drawn_where_its_value_lies():
    chart = individuals_chart(VALUES)
    x_axis, y_axis = chart_axes("r_on_ohm")
    lines = render_plot(chart_series(chart), 60, 20, x_axis, y_axis, x_range=(0.5, 10.5), whole_x=True).plain.split("\n")
    rows = [i for i, line in enumerate(lines[1:-3]) if "!" in line[8:]]
    assert len(rows) == 1  # one flagged point, above every other value: on the top-most marked row
    marked = [i for i, line in enumerate(lines[1:-3]) if "o" in line[8:] or "!" in line[8:]]
    assert rows[0] == min(marked)
    assert y_axis.quantity == "R_on" and y_axis.unit == "Ω"
