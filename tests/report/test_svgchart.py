"""Our SVG writer (report/svgchart.py): where it puts the data, what its legend holds, and when it hands over to matplotlib."""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from benchlog.report import figures, style
from benchlog.report.chart import Chart
from benchlog.report.svgchart import nice_ticks, render_svg

from . import samples

SVG = "{http://www.w3.org/2000/svg}"


def _uses(svg: bytes) -> list[tuple[float, float]]:
    root = ET.fromstring(svg)
    return [(float(u.get("x")), float(u.get("y"))) for u in root.iter(f"{SVG}use")]


def _texts(svg: bytes) -> list[str]:
    return ["".join(t.itertext()) for t in ET.fromstring(svg).iter(f"{SVG}text")]


def test_points_land_on_a_linear_map_of_the_data_with_y_upwards():
    chart = Chart((7.0, 4.4), 110)
    ax = chart.add_subplot()
    x = np.array([0.0, 1.0, 2.0, 3.0])
    y = np.array([0.0, 2.0, 1.0, 3.0])
    ax.plot(x, y, linestyle="none", marker="o", color="#000000", markerfacecolor="none")
    pts = _uses(render_svg(chart))
    assert len(pts) == 4
    px = np.array([p[0] for p in pts])
    py = np.array([p[1] for p in pts])
    # a linear map: x positions equally spaced like the data, and y positions an affine function of y
    # (numpy.polyfit as the reference line; residual at the 0.01 pt of the written coordinates)
    assert np.ptp(np.diff(px)) < 0.02
    slope, intercept = np.polyfit(y, py, 1)
    assert np.max(np.abs(slope * y + intercept - py)) < 0.02
    assert slope < 0  # larger values are higher up the page


def test_ticks_are_one_two_two_and_a_half_or_five_times_a_power_of_ten():
    # the usual "nice number" steps (common practice); every tick inside the range, at most 8
    rng = np.random.default_rng(13)
    for _ in range(500):
        lo = float(rng.uniform(-1, 1) * 10 ** rng.uniform(-6, 3))
        hi = lo + float(10 ** rng.uniform(-6, 3))
        ticks = nice_ticks(lo, hi)
        assert 2 <= len(ticks) <= 8
        assert ticks[0] >= lo - 1e-9 * (hi - lo) and ticks[-1] <= hi + 1e-9 * (hi - lo)
        step = ticks[1] - ticks[0]
        mantissa = step / 10 ** math.floor(math.log10(step))
        assert min(abs(mantissa - m) for m in (1.0, 2.0, 2.5, 5.0, 10.0)) < 1e-6
        assert ticks[0] - lo < step * (1 + 1e-9)  # no room for one more tick below


@pytest.mark.parametrize("name", ["vi", "loss", "residuals", "lot", "overlay"])
def test_the_legend_lists_what_matplotlibs_legend_lists(name):
    # reference: matplotlib's own legend of the same recorded calls (Axes.get_legend_handles_labels)
    chart = samples.all_figures()[name]
    svg = render_svg(chart)
    assert svg is not None, "the report's own figures are drawn without matplotlib"
    texts = _texts(svg)
    labels = chart.to_figure().axes[0].get_legend_handles_labels()[1]
    assert labels
    for label in labels:
        assert label.replace("\\$", "$") in texts
    ax = chart.to_figure().axes[0]
    assert ax.get_xlabel() in texts and ax.get_ylabel() in texts and ax.get_title() in texts


def test_a_chart_it_cannot_draw_goes_to_matplotlib():
    design = samples.all_figures()["design"]  # three axes with bars
    assert render_svg(design) is None
    svg = figures.render(design, "svg")
    assert ET.fromstring(svg).tag == f"{SVG}svg"
    chart = Chart((4, 3), 110)
    ax = chart.add_subplot()
    ax.plot([0, 1], [0, 1], marker="8", color="#000000")  # a marker the writer does not know
    assert render_svg(chart) is None
    assert b"<svg" in figures.render(chart, "svg")


def test_user_text_is_escaped_and_no_markup_gets_through():
    chart = Chart((7.0, 4.4), 110)
    ax = chart.add_subplot()
    evil = '<script>alert("x")</script> & "q"'
    ax.plot([0, 1], [1, 2], color="#000000", label=style.plain(evil))
    ax.set_title(evil)
    ax.legend()
    svg = render_svg(chart)
    root = ET.fromstring(svg)  # well-formed XML
    assert not [e for e in root.iter() if e.tag.endswith("script")]
    assert evil in _texts(svg)
    assert not re.search(rb"<script", svg)


def test_the_plain_report_page_draws_without_matplotlib_and_png_with_it(tmp_path):
    chart = samples.all_figures()["vi"]
    svg = figures.render(chart, "svg")
    assert svg == render_svg(chart)
    png = figures.render(chart, "png")
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
