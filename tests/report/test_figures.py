"""Figures render as PNG and SVG, name their units, and stay readable in grey scale."""

from __future__ import annotations

import io
import itertools
import xml.etree.ElementTree as ET

import matplotlib.image
import numpy as np
import pytest
from matplotlib.collections import PolyCollection
from matplotlib.lines import Line2D

from benchlog.report import figures, style, views

from . import samples


@pytest.fixture(scope="module")
def all_figures():
    return samples.all_figures()


@pytest.mark.parametrize("name", ["vi", "loss", "residuals", "lot", "design", "overlay"])
def test_renders_png_and_svg(all_figures, name, tmp_path):
    fig = all_figures[name]
    png = figures.render(fig, "png")
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    image = matplotlib.image.imread(io.BytesIO(png), format="png")
    width_in, height_in = fig.get_size_inches()
    assert image.shape[1] == round(width_in * figures.DPI)
    assert image.shape[0] == round(height_in * figures.DPI)
    # the image is not blank: dark ink (axes, text, markers) covers part of it
    assert (image[..., :3].mean(axis=2) < 0.5).mean() > 0.005
    svg = figures.render(fig, "svg")
    root = ET.fromstring(svg)
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    # text is kept as text, so it is searchable and escaped by the SVG writer
    assert b"<text" in svg
    path = figures.save(fig, tmp_path / f"{name}.svg")
    assert path.read_bytes() == svg


def test_unknown_format_is_refused(all_figures):
    with pytest.raises(ValueError):
        figures.render(all_figures["vi"], "bmp")


@pytest.mark.parametrize(
    "name, units",
    [
        ("vi", ["(A)", "(V)"]),
        ("loss", ["(A)", "(W)"]),
        ("residuals", ["(A)", "(mV)"]),
        ("lot", ["(mΩ)", "(count)"]),
        ("design", ["(W)", "(°C)", "(%)"]),
        ("overlay", ["(A)", "(V)"]),
    ],
)
def test_axes_name_their_units(all_figures, name, units):
    labels = " ".join(ax.get_xlabel() + " " + ax.get_ylabel() for ax in all_figures[name].axes)
    for unit in units:
        assert unit in labels


def _legend_lines(fig):
    ax = fig.axes[0]
    handles, labels = ax.get_legend_handles_labels()
    return [(h, l) for h, l in zip(handles, labels) if isinstance(h, Line2D)]


def _look(line: Line2D):
    # custom dash sequences all report "--" from get_linestyle(); the dash pattern tells them apart
    dashes = getattr(line, "_unscaled_dash_pattern", None)
    pattern = str(dashes) if line.get_linestyle() not in ("None", "none", "", " ") else "none"
    return (line.get_marker(), pattern)


@pytest.mark.parametrize("name", ["vi", "loss", "overlay"])
def test_series_differ_without_colour(all_figures, name):
    """Grey-scale readability: no two legend entries share both marker and line style."""
    looks = [_look(h) for h, _ in _legend_lines(all_figures[name])]
    assert len(looks) >= 2
    assert len(set(looks)) == len(looks), looks


def test_overlay_styles_differ_in_marker_and_linestyle():
    styles = [style.series_style(i) for i in range(12)]
    assert len({s.marker for s in styles}) == 12
    for a, b in itertools.combinations(styles[:6], 2):
        assert a.linestyle != b.linestyle
    runs = [samples.measured(f"run {i}", seed=i) for i in range(6)]
    fig = figures.overlay_figure(runs, [samples.fit_curve()] * 6)
    looks = [_look(h) for h, _ in _legend_lines(fig)]
    assert len(looks) == 6
    assert len({m for m, _ in looks}) == 6 and len({ls for _, ls in looks}) == 6


def test_uncertainty_band_is_hatched_not_only_tinted(all_figures):
    bands = [c for c in all_figures["vi"].axes[0].collections if isinstance(c, PolyCollection)]
    assert bands and all(b.get_hatch() for b in bands)


def test_fit_band_spans_the_given_limits():
    fc = samples.fit_curve()
    fig = figures.vi_figure(None, fc, None)
    band = next(c for c in fig.axes[0].collections if isinstance(c, PolyCollection))
    ys = band.get_paths()[0].vertices[:, 1]
    assert np.isclose(ys.min(), min(fc.band_lo_v.min(), fc.band_hi_v.min()))
    assert np.isclose(ys.max(), max(fc.band_lo_v.max(), fc.band_hi_v.max()))


def test_outliers_are_drawn_not_dropped(all_figures):
    m = samples.measured()
    fig = figures.vi_figure(m)
    drawn = sum(len(line.get_xdata()) for line in fig.axes[0].get_lines())
    assert drawn == len(m.current_a)
    assert any("outlier" in label for _, label in _legend_lines(fig))


def test_loss_marks_the_operating_point(all_figures):
    labels = all_figures["loss"].axes[0].get_legend_handles_labels()[1]
    assert any(l.startswith("operating point 2 A") for l in labels)
    assert any(l.startswith("predicted maximum at 2 A") for l in labels)


def test_lot_shows_limits_and_capability(all_figures):
    ax = all_figures["lot"].axes[0]
    assert "Cpu = 3" in ax.get_title()
    xs = [line.get_xdata()[0] for line in ax.get_lines() if "spec limit" in line.get_label()]
    assert xs == [pytest.approx(35.0)]  # 0.035 Ω shown in mΩ


def test_user_text_with_dollar_signs_prints_as_itself():
    fig = figures.vi_figure(samples.measured("lot $A$ 5$"), title="price $5 and $6")
    svg = figures.render(fig, "svg").decode()
    assert "price $5 and $6" in svg
    assert "lot $A$ 5$" in svg


def test_measured_series_checks_lengths():
    with pytest.raises(ValueError):
        views.MeasuredSeries("x", [1, 2], [1])
