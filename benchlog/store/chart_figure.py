"""The control chart as a figure (PNG or SVG): the statistic with its limits above, its spread below."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .control_chart import LIMITS_SOURCE, RULES_SOURCE, ControlChart


def draw(chart: ControlChart, quantity: str, by: str, path: str | Path) -> None:
    """Write the chart to a .png or .svg file."""
    chart_figure(chart, quantity, by).savefig(path)


def chart_figure(chart: ControlChart, quantity: str, by: str):
    """The chart as a matplotlib Figure (no pyplot state); points that complete a run rule are ringed
    and numbered with the rule."""
    from matplotlib.figure import Figure

    x = np.arange(len(chart.values))
    fig = Figure(figsize=(9, 6))
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(2, 1))
    top.plot(x, chart.values, marker="o", lw=1, color="tab:blue")
    top.axhline(chart.centre, color="k", lw=1)
    top.step(x, chart.ucl, where="mid", color="tab:red", lw=1, ls="--", label="limits (3σ)")
    top.step(x, chart.lcl, where="mid", color="tab:red", lw=1, ls="--")
    rules_at: dict[int, list[int]] = {}
    for hit in chart.hits:
        rules_at.setdefault(hit.index, []).append(hit.rule)
    for i, rules in rules_at.items():
        top.plot(i, chart.values[i], "o", ms=12, mfc="none", mec="tab:red")
        top.annotate(",".join(str(r) for r in sorted(set(rules))), (i, chart.values[i]),
                     textcoords="offset points", xytext=(6, 8), color="tab:red", fontsize=8)
    what = "individual values" if chart.kind == "individuals" else "subgroup means"
    top.set_ylabel(f"{quantity} ({what})")
    top.set_title(f"{quantity} by {by}: {LIMITS_SOURCE} ({chart.kind}); ringed: {RULES_SOURCE}", fontsize=9)
    top.legend(fontsize=8)
    bottom.plot(x, chart.spread, marker="o", lw=1, color="tab:green")
    bottom.step(x, chart.spread_centre, where="mid", color="k", lw=1)
    bottom.step(x, chart.spread_ucl, where="mid", color="tab:red", lw=1, ls="--")
    bottom.step(x, chart.spread_lcl, where="mid", color="tab:red", lw=1, ls="--")
    bottom.set_ylabel("moving range" if chart.kind == "individuals" else "range")
    step = max(1, len(x) // 25)
    bottom.set_xticks(x[::step], [chart.labels[i] for i in x[::step]], rotation=60, fontsize=7, ha="right")
    fig.tight_layout()
    return fig
