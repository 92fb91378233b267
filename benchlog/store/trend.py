"""A fitted quantity's control chart across the archive: one computation for the CLI, the UI and the report.

The database aggregates each subgroup (count, mean, range; `queries.subgroup_stats`),
`control_chart.chart_from_stats` puts the ISO 7870-2 limits and the run rules on it.
`archive trend`, the UI's trend chart and `report --trend` all call `trend()`, so
their centre lines, limits and flagged points are the same numbers.
"""

from __future__ import annotations

from dataclasses import dataclass

from benchlog.badinput import BadInput

from .control_chart import LIMITS_SOURCE, RULES_SOURCE, ControlChart, chart_from_stats
from .queries import RunFilter, SubgroupStats, known_quantities, subgroup_stats


@dataclass(frozen=True)
class Trend:
    """A quantity's subgroups by lot, day or bench, and the control chart computed on them."""

    quantity: str
    by: str
    stats: SubgroupStats
    chart: ControlChart

    def payload(self) -> dict:
        """The chart's numbers as `archive trend --json` writes them."""
        chart = self.chart
        return {"quantity": self.quantity, "by": self.by, "chart": chart.kind, "limits_by": LIMITS_SOURCE,
                "runs": self.stats.runs, "centre": chart.centre, "sigma": chart.sigma,
                "subgroups": [{"name": chart.labels[i], "n": chart.sizes[i], "value": chart.values[i],
                               "lcl": chart.lcl[i], "ucl": chart.ucl[i], "spread": chart.spread[i]}
                              for i in range(len(chart.values))],
                "rule_hits": [{"rule": h.rule, "text": h.text, "subgroup": chart.labels[h.index]}
                              for h in chart.hits],
                "rules_source": RULES_SOURCE}


def trend(archive, quantity: str, by: str, flt: RunFilter | None = None) -> Trend:
    """The control chart of `quantity` (a fitted parameter's JSON key) by `by`; BadInput when the archive
    holds no such values or too few subgroups for a chart."""
    stats = subgroup_stats(archive, quantity, by, flt)
    if not stats.names:
        known = known_quantities(archive)
        raise BadInput(archive.shown_url, quantity, "no run in the archive has this fitted quantity"
                       + (" (among the runs the filter selects)" if flt is not None and flt != RunFilter() else ""),
                       " or ".join(known) if known else "an archive with fitted runs")
    try:
        chart = chart_from_stats(stats.names, stats.sizes, stats.means, stats.ranges)
    except ValueError as exc:
        raise BadInput(archive.shown_url, quantity, f"{exc} (found {len(stats.names)} by {by})",
                       "more runs or another grouping") from None
    return Trend(quantity, by, stats, chart)
