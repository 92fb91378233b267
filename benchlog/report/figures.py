"""The report's figures, drawn with matplotlib's object API (no pyplot, no global state).

Each function takes view values (`report.views`) and returns a `Figure`;
`render(fig, "png" | "svg")` gives its bytes. Axes always name the quantity and
its unit; series differ by marker and line style so the figure survives a
grey-scale printer. PNG goes through the Agg renderer.
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import Sequence

import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from . import style
from .style import plain
from .views import (
    CandidateView,
    FitCurve,
    LotView,
    MeasuredSeries,
    OperatingPoint,
    Residuals,
    SpecCurve,
)

FIGSIZE = (7.0, 4.4)
DPI = 110

CURRENT_LABEL = "Current I (A)"
DROP_LABEL = "Drop across the element V (V)"
LOSS_LABEL = "Loss P = V·I (W)"


def _new_figure(figsize=FIGSIZE) -> Figure:
    fig = Figure(figsize=figsize, dpi=DPI, layout="constrained")
    return fig


def _legend(ax) -> None:
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize="small", framealpha=0.9)


def _plot_measured(ax, series: MeasuredSeries, values: np.ndarray, st: style.SeriesStyle, label: str) -> None:
    mask = series.outlier if series.outlier is not None else np.zeros(values.shape, dtype=bool)
    ax.plot(
        series.current_a[~mask],
        values[~mask],
        linestyle="none",
        marker=st.marker,
        color=st.color,
        markersize=4,
        markerfacecolor="none",
        label=plain(label),
    )
    if mask.any():
        ax.plot(
            series.current_a[mask],
            values[mask],
            linestyle="none",
            marker=style.OUTLIER.marker,
            color=style.OUTLIER.color,
            markersize=7,
            label=plain(f"{label}: outliers (kept, flagged)"),
        )


def _band(ax, x, lo, hi, label: str, color: str) -> None:
    ax.fill_between(
        x, lo, hi, facecolor=color, alpha=style.BAND_ALPHA, hatch=style.BAND_HATCH,
        edgecolor=color, linewidth=0.0, label=plain(label),
    )


def vi_figure(
    measured: MeasuredSeries | None,
    fit: FitCurve | None = None,
    predicted: SpecCurve | None = None,
    *,
    title: str = "",
) -> Figure:
    """Drop against current: the measured points, the fit with its k·u band, and the spec's curves."""
    fig = _new_figure()
    ax = fig.add_subplot()
    if measured is not None:
        _plot_measured(ax, measured, measured.drop_v, style.MEASURED, f"measured ({measured.label})")
    if fit is not None:
        _band(ax, fit.current_a, fit.band_lo_v, fit.band_hi_v,
              "fit uncertainty band (95.45 % coverage)", style.FIT.color)
        ax.plot(fit.current_a, fit.drop_v, **style.FIT.line_kwargs(), label=plain(f"fit: {fit.label}"))
    if predicted is not None:
        ax.plot(predicted.current_a, predicted.typical, **style.PREDICTED_TYPICAL.line_kwargs(),
                label=plain(f"spec typical: {predicted.label}"))
        if predicted.maximum is not None:
            ax.plot(predicted.current_a, predicted.maximum, **style.PREDICTED_MAX.line_kwargs(),
                    label=plain(f"spec maximum: {predicted.label}"))
    ax.set_xlabel(CURRENT_LABEL)
    ax.set_ylabel(DROP_LABEL)
    ax.set_title(plain(title or "Drop against current"))
    ax.grid(True, linewidth=0.4, alpha=0.6)
    _legend(ax)
    return fig


def loss_figure(
    measured: MeasuredSeries | None,
    fit: FitCurve | None = None,
    predicted: SpecCurve | None = None,
    operating: OperatingPoint | None = None,
    *,
    title: str = "",
) -> Figure:
    """Loss against current, measured (points and fit with band) against predicted, operating point marked."""
    fig = _new_figure()
    ax = fig.add_subplot()
    if measured is not None:
        _plot_measured(ax, measured, measured.power_w, style.MEASURED, f"measured ({measured.label})")
    if fit is not None:
        i = fit.current_a
        _band(ax, i, i * fit.band_lo_v, i * fit.band_hi_v,
              "fit uncertainty band (95.45 % coverage)", style.FIT.color)
        ax.plot(i, i * fit.drop_v, **style.FIT.line_kwargs(), label=plain(f"from fit: {fit.label}"))
    if predicted is not None:
        ax.plot(predicted.current_a, predicted.typical, **style.PREDICTED_TYPICAL.line_kwargs(),
                label=plain(f"predicted typical: {predicted.label}"))
        if predicted.maximum is not None:
            ax.plot(predicted.current_a, predicted.maximum, **style.PREDICTED_MAX.line_kwargs(),
                    label=plain(f"predicted maximum: {predicted.label}"))
    if operating is not None:
        ax.axvline(operating.current_a, color="#7f7f7f", linestyle=(0, (1, 2)), linewidth=0.9)
        if operating.measured_loss_w is not None:
            yerr = operating.measured_expanded_u_w
            ax.errorbar(
                [operating.current_a], [operating.measured_loss_w],
                yerr=None if yerr is None else [[yerr], [yerr]],
                marker=style.OPERATING_POINT.marker, color=style.OPERATING_POINT.color,
                markersize=11, linestyle="none", capsize=4,
                label=plain(f"operating point {operating.current_a:g} A (measured ± U)"),
            )
        for value, marker, what in (
            (operating.predicted_typical_w, "d", "typical"),
            (operating.predicted_max_w, "^", "maximum"),
        ):
            if value is not None:
                ax.plot([operating.current_a], [value], marker=marker, markersize=8, linestyle="none",
                        color="#5a5a5a", markerfacecolor="white",
                        label=plain(f"predicted {what} at {operating.current_a:g} A"))
    ax.set_xlabel(CURRENT_LABEL)
    ax.set_ylabel(LOSS_LABEL)
    ax.set_title(plain(title or "Loss against current"))
    ax.grid(True, linewidth=0.4, alpha=0.6)
    _legend(ax)
    return fig


def residuals_figure(residuals: Residuals, *, title: str = "") -> Figure:
    """Residuals of the fit in mV against current, with the ±k·u lines of one reading when known."""
    fig = _new_figure((7.0, 3.4))
    ax = fig.add_subplot()
    r_mv = residuals.residual_v * 1e3
    mask = residuals.outlier if residuals.outlier is not None else np.zeros(r_mv.shape, dtype=bool)
    ax.axhline(0.0, color="#000000", linewidth=0.8)
    ax.plot(residuals.current_a[~mask], r_mv[~mask], linestyle="none", marker=style.MEASURED.marker,
            markerfacecolor="none", markersize=4, color=style.MEASURED.color, label="residual")
    if mask.any():
        ax.plot(residuals.current_a[mask], r_mv[mask], linestyle="none", marker=style.OUTLIER.marker,
                markersize=7, color=style.OUTLIER.color, label="outlier (kept, flagged)")
    if residuals.u_v is not None and np.isfinite(residuals.u_v):
        lim = residuals.k * residuals.u_v * 1e3
        ax.axhline(lim, **style.PREDICTED_TYPICAL.line_kwargs(), linewidth=0.9,
                   label=plain(f"± k·{residuals.u_label} (k = {residuals.k:g})"))
        ax.axhline(-lim, **style.PREDICTED_TYPICAL.line_kwargs(), linewidth=0.9)
    ax.set_xlabel(CURRENT_LABEL)
    ax.set_ylabel("Residual, measured − fit (mV)")
    ax.set_title(plain(title or f"Fit residuals ({residuals.label})"))
    ax.grid(True, linewidth=0.4, alpha=0.6)
    _legend(ax)
    return fig


def lot_figure(lot: LotView, *, title: str = "") -> Figure:
    """Histogram of one parameter over a lot, the spec limits as vertical lines, Cpk in the title."""
    fig = _new_figure()
    ax = fig.add_subplot()
    unit = lot.scaled_unit or lot.unit
    values = lot.values * lot.scale
    finite = values[np.isfinite(values)]
    bins = int(np.clip(np.ceil(np.sqrt(max(finite.size, 1))) + 2, 5, 40))
    ax.hist(finite, bins=bins, facecolor="#bfbfbf", edgecolor="#000000", hatch="//", label="parts")
    if lot.outlier is not None and lot.outlier.any():
        out = values[lot.outlier & np.isfinite(values)]
        ax.plot(out, np.zeros_like(out), linestyle="none", marker=style.OUTLIER.marker, markersize=9,
                color="#000000", clip_on=False, label="outlier parts")
    for limit, name, st in (
        (lot.lower_limit, "lower spec limit", style.PREDICTED_MAX),
        (lot.upper_limit, "upper spec limit", style.PREDICTED_TYPICAL),
    ):
        if limit is not None:
            ax.axvline(limit * lot.scale, color=st.color, linestyle=st.linestyle, linewidth=1.6,
                       label=f"{name} {limit * lot.scale:.4g} {unit}")
    if finite.size:
        ax.axvline(float(np.mean(finite)), color="#000000", linestyle="-.", linewidth=1.0,
                   label=f"mean {np.mean(finite):.4g} {unit}")
    cap = "n/a" if lot.capability is None or not np.isfinite(lot.capability) else f"{lot.capability:.3g}"
    ax.set_xlabel(plain(f"{lot.quantity} ({unit})"))
    ax.set_ylabel("Parts (count)")
    ax.set_title(plain(title or f"{lot.quantity} over {finite.size} parts, {lot.capability_name} = {cap}"))
    ax.grid(True, axis="y", linewidth=0.4, alpha=0.6)
    _legend(ax)
    return fig


def design_figure(candidates: Sequence[CandidateView], *, title: str = "") -> Figure:
    """Candidates side by side: loss, junction temperature against Tj max, and margins to the ratings."""
    fig = _new_figure((9.0, 4.2))
    axes = fig.subplots(1, 3)
    names = [plain(c.name) for c in candidates]
    x = np.arange(len(candidates))
    hatches = [style.HATCHES[i % len(style.HATCHES)] for i in range(len(candidates))]

    ax = axes[0]
    ax.bar(x, [c.loss_w for c in candidates], color="#d9d9d9", edgecolor="#000000", hatch=hatches)
    ax.set_ylabel("Loss P (W)")
    ax.set_title("Worst-case loss")

    ax = axes[1]
    tj = [np.nan if c.tj_c is None else c.tj_c for c in candidates]
    ax.bar(x, tj, color="#d9d9d9", edgecolor="#000000", hatch=hatches, label="Tj at max ambient")
    tj_max = [np.nan if c.tj_max_c is None else c.tj_max_c for c in candidates]
    ax.plot(x, tj_max, linestyle="none", marker="_", markersize=28, markeredgewidth=2.5,
            color="#000000", label="Tj max (rating)")
    ax.set_ylabel("Junction temperature Tj (°C)")
    ax.set_title("Junction temperature")
    top = np.nanmax(np.array(tj + tj_max, dtype=float)) if candidates else np.nan
    if np.isfinite(top):
        ax.set_ylim(0.0, top * 1.3)
    ax.legend(fontsize="x-small", loc="upper right")

    ax = axes[2]
    labels = list(dict.fromkeys(name for c in candidates for name, _ in c.margins_pct))
    width = 0.8 / max(len(labels), 1)
    for j, label in enumerate(labels):
        vals = [dict(c.margins_pct).get(label, np.nan) for c in candidates]
        ax.bar(x + (j - (len(labels) - 1) / 2) * width, vals, width=width, color="#ffffff",
               edgecolor="#000000", hatch=style.HATCHES[j % len(style.HATCHES)], label=plain(label))
    ax.axhline(0.0, color="#000000", linewidth=0.8)
    all_margins = [v for c in candidates for _, v in c.margins_pct if np.isfinite(v)]
    if all_margins:
        ax.set_ylim(min(0.0, min(all_margins) * 1.2), max(max(all_margins), 1.0) * 1.35)
    ax.set_ylabel("Margin to rating (%)")
    ax.set_title("Margins (< 0: exceeded)")
    if labels:
        ax.legend(fontsize="x-small", loc="upper left")

    for ax in axes:
        ax.set_xticks(x, names, rotation=20, ha="right", fontsize="small")
        ax.grid(True, axis="y", linewidth=0.4, alpha=0.6)
    fig.suptitle(plain(title or "Design review: candidates side by side"))
    return fig


def overlay_figure(
    runs: Sequence[MeasuredSeries],
    fits: Sequence[FitCurve | None] = (),
    *,
    title: str = "",
) -> Figure:
    """Several runs on one V–I axis; run i has its own marker and line style (its fit line, if any)."""
    fig = _new_figure()
    ax = fig.add_subplot()
    fits = list(fits) + [None] * (len(runs) - len(fits))
    for i, (series, fit) in enumerate(zip(runs, fits)):
        st = style.series_style(i)
        ax.plot(series.current_a, series.drop_v, linestyle="none", marker=st.marker, color=st.color,
                markersize=4, markerfacecolor="none")
        if fit is not None:
            ax.plot(fit.current_a, fit.drop_v, linestyle=st.linestyle, color=st.color, linewidth=1.2)
        # one legend entry per run showing both its marker and its line style
        ax.add_line(Line2D([], [], marker=st.marker, linestyle=st.linestyle if fit is not None else "none",
                           color=st.color, markerfacecolor="none", label=plain(series.label)))
    ax.set_xlabel(CURRENT_LABEL)
    ax.set_ylabel(DROP_LABEL)
    ax.set_title(plain(title or f"Overlay of {len(runs)} runs"))
    ax.grid(True, linewidth=0.4, alpha=0.6)
    _legend(ax)
    return fig


def band_figure(
    current_a: np.ndarray,
    median_v: np.ndarray,
    low_v: np.ndarray,
    high_v: np.ndarray,
    alone: Sequence[FitCurve | MeasuredSeries] = (),
    *,
    quantiles: tuple[float, float] = (0.10, 0.90),
    count: int = 0,
    title: str = "",
) -> Figure:
    """Many runs as their median fitted curve and a quantile band; the runs in `alone` (outliers) drawn one by one.

    A band with one median line stays readable at 20 or 200 parts where one trace per
    part and a legend entry each would not; an outlier keeps its own line and label.
    """
    fig = _new_figure()
    ax = fig.add_subplot()
    lo_pct, hi_pct = (round(q * 100) for q in quantiles)
    ax.fill_between(current_a, low_v, high_v, color=style.FIT.color, alpha=style.BAND_ALPHA,
                    hatch=style.BAND_HATCH, linewidth=0,
                    label=plain(f"{lo_pct}–{hi_pct} % of the {count} fitted curves" if count else
                                f"{lo_pct}–{hi_pct} % band"))
    ax.plot(current_a, median_v, color=style.FIT.color, linestyle="-", linewidth=1.6, label="median curve")
    for i, item in enumerate(alone):
        st = style.series_style(i + 1)
        label = plain(f"outlier {item.label}")
        if isinstance(item, MeasuredSeries):
            ax.plot(item.current_a, item.drop_v, linestyle="none", marker=st.marker, color=st.color,
                    markersize=4, markerfacecolor="none", label=label)
        else:
            ax.plot(item.current_a, item.drop_v, linestyle=st.linestyle, color=st.color, linewidth=1.2,
                    marker=st.marker, markevery=8, markerfacecolor="none", label=label)
    ax.set_xlabel(CURRENT_LABEL)
    ax.set_ylabel(DROP_LABEL)
    ax.set_title(plain(title or "Lot: median curve and band"))
    ax.grid(True, linewidth=0.4, alpha=0.6)
    _legend(ax)
    return fig


# -- output ------------------------------------------------------------------------------------

_SVG_RC = {"svg.fonttype": "none", "svg.hashsalt": "benchlog"}
_NO_METADATA_SVG = {"Date": None, "Creator": None, "Format": None, "Type": None}


def render(fig: Figure, fmt: str) -> bytes:
    """The figure as PNG (Agg) or SVG bytes; SVG keeps text as text so it stays searchable."""
    import matplotlib

    buf = io.BytesIO()
    if fmt == "png":
        fig.savefig(buf, format="png", metadata={"Software": None})
    elif fmt == "svg":
        with matplotlib.rc_context(_SVG_RC):
            fig.savefig(buf, format="svg", metadata=_NO_METADATA_SVG)
    else:
        raise ValueError(f"unknown figure format {fmt!r} (png or svg)")
    return buf.getvalue()


def save(fig: Figure, path: str | Path) -> Path:
    """Write the figure to `path`; the suffix (.png or .svg) picks the format."""
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".")
    path.write_bytes(render(fig, fmt))
    return path
