"""A control chart as braille-plot series: the plotted statistic, its centre line, its limits, the run-rule hits.

The chart itself is computed once, by `store.trend` (ISO 7870-2 limits, the run
rules of `store.control_chart`); this module only lays its numbers out for
`plotting.render_plot`. Subgroup i sits at x = i + 1; a limit that changes with
the subgroup size is drawn as a step across each subgroup's cell.
"""

from __future__ import annotations

import numpy as np

from benchlog.quantity import engineering, unit_of
from benchlog.store.control_chart import LIMITS_SOURCE, RULES, ControlChart

from .plotting import Axis, Series

#: Samples across the whole chart for the centre and limit lines: more than a wide terminal has braille
#: columns, so every cell a line crosses is touched.
_LINE_SAMPLES = 1200


def _steps(levels: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    per = max(2, -(-_LINE_SAMPLES // max(1, levels.size)))
    x = np.concatenate([np.linspace(i + 0.5, i + 1.5, per) for i in range(levels.size)])
    return x, np.repeat(levels, per)


def chart_series(chart: ControlChart) -> list[Series]:
    """Values as `o`, rule hits as `!` over them, centre `·`, limits `-`; each named in the legend."""
    n = len(chart.values)
    x = np.arange(1, n + 1, dtype=float)
    what = "value" if chart.kind == "individuals" else "subgroup mean"
    cx, cy = _steps(np.full(n, chart.centre))
    ux, uy = _steps(np.asarray(chart.ucl, dtype=float))
    lx, ly = _steps(np.asarray(chart.lcl, dtype=float))
    series = [
        Series("centre", cx, cy, kind="line", glyph="·", style="model"),
        Series("3σ limits", np.concatenate([ux, lx]), np.concatenate([uy, ly]), kind="line", glyph="-",
               style="limit"),
        Series(what, x, np.asarray(chart.values, dtype=float), kind="marks", glyph="o", style="series-a"),
    ]
    hit_at = sorted({h.index for h in chart.hits})
    if hit_at:
        series.append(Series("run rule", x[hit_at], np.asarray(chart.values, dtype=float)[hit_at], kind="marks",
                             glyph="!", style="series-b"))
    return series


#: Short symbols of the fitted quantities for the y axis (the plot's label column is seven characters wide);
#: the text under the plot names the quantity by its JSON key.
SYMBOLS = {"r_on_ohm": "R_on", "v0_v": "V0", "r_s_ohm": "Rs", "i_s_a": "Is", "ideality": "n"}


def chart_axes(quantity: str) -> tuple[Axis, Axis]:
    return Axis("subgroup", "#"), Axis(SYMBOLS.get(quantity, quantity), unit_of(quantity))


def chart_text(chart: ControlChart, quantity: str, by: str, runs: int, *, most_labels: int = 12) -> str:
    """What the plot shows, in words: the chart, its centre and σ̂, each rule hit, and which subgroup is which."""
    unit = unit_of(quantity)
    hits = "; ".join(f"rule {h.rule} ({RULES[h.rule]}) at {h.index + 1} {chart.labels[h.index]}"
                     for h in chart.hits) or "none"
    labels = " ".join(f"{i + 1}={chart.labels[i]}" for i in range(min(len(chart.labels), most_labels)))
    more = f" … ({len(chart.labels) - most_labels} more)" if len(chart.labels) > most_labels else ""
    return (f" {chart.kind} chart of {quantity} by {by}: {runs} runs in {len(chart.values)} subgroups · centre "
            f"{engineering(chart.centre, unit)} · σ̂ {engineering(chart.sigma, unit, 2)} · limits {LIMITS_SOURCE}, 3σ\n"
            f" run-rule hits (!): {hits}\n subgroups: {labels}{more}")


def comparison_text(c, quantity: str, level: float = 0.05) -> str:
    """Two lots compared (`store.lots.LotComparison`) in one line: A − B with its 95 % expanded uncertainty
    (Welch–Satterthwaite ν), the test and whether the difference is significant at `level`."""
    from benchlog.quantity import measured

    unit = unit_of(quantity)
    verdict = "different" if c.p_two_sided < level else "not shown different"
    return (f" {c.a.name} − {c.b.name}: {measured(c.difference, c.expanded_u_95, unit, None)} (95 %, "
            f"ν = {c.dof:.1f}; n = {c.a.n}, {c.b.n}) · {c.test}: t = {c.t:.2f}, p = {c.p_two_sided:.2g} · "
            f"{verdict} at {level:.0%}")
