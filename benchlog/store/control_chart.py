"""Shewhart control charts of a fitted quantity across runs, with the run rules flagged.

Limits follow ISO 7870-2 (Shewhart control charts):
- subgroups of size n >= 2: the mean-and-range chart. Centre X̿ (mean of subgroup
  means), σ̂ = mean over subgroups of R_i / d2(n_i); mean chart limits
  X̿ ± 3 σ̂ / √n_i, range chart centre d2(n_i) σ̂ and limits D3(n_i)·d2 σ̂,
  D4(n_i)·d2 σ̂. With equal n these are the table forms X̿ ± A2·R̄, D3·R̄, D4·R̄
  since A2 = 3/(d2 √n), D3 = max(0, 1 − 3 d3/d2), D4 = 1 + 3 d3/d2.
- every subgroup of size 1 (or `individuals=True`): the individuals chart with
  the moving range of two, σ̂ = MR̄ / d2(2), limits X̄ ± 3 σ̂ (2.66·MR̄).

The run rules are those of the Western Electric handbook (1956), numbered as
Nelson (1984) lists them; each is flagged on the plotted statistic as a z-score
against its own limits:
  1  one point beyond 3σ;
  2  nine points in a row on one side of the centre line;
  3  six points in a row steadily increasing or decreasing;
  5  two of three points in a row beyond 2σ on the same side;
  6  four of five points in a row beyond 1σ on the same side.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: d2 and d3 (mean and standard deviation of the range of n standard normal values) for n = 2 .. 25,
#: from the table of control chart constants in ISO 7870-2 (from memory; d2 is checked in the tests
#: against its defining integral). For n = 2 both are exact: |X1 − X2| of two unit normals has mean
#: 2/√π and variance 2 − 4/π.
D2 = {2: 2 / math.sqrt(math.pi), 3: 1.693, 4: 2.059, 5: 2.326, 6: 2.534, 7: 2.704, 8: 2.847, 9: 2.970, 10: 3.078,
      11: 3.173, 12: 3.258, 13: 3.336, 14: 3.407, 15: 3.472, 16: 3.532, 17: 3.588, 18: 3.640,
      19: 3.689, 20: 3.735, 21: 3.778, 22: 3.819, 23: 3.858, 24: 3.895, 25: 3.931}
D3_SD = {2: math.sqrt(2 - 4 / math.pi), 3: 0.888, 4: 0.880, 5: 0.864, 6: 0.848, 7: 0.833, 8: 0.820, 9: 0.808, 10: 0.797,
         11: 0.787, 12: 0.778, 13: 0.770, 14: 0.763, 15: 0.756, 16: 0.750, 17: 0.744, 18: 0.739,
         19: 0.734, 20: 0.729, 21: 0.724, 22: 0.720, 23: 0.716, 24: 0.712, 25: 0.708}
MAX_SUBGROUP = 25

RULES = {
    1: "one point beyond 3σ",
    2: "nine points in a row on one side of the centre line",
    3: "six points in a row steadily increasing or decreasing",
    5: "two of three points in a row beyond 2σ on the same side",
    6: "four of five points in a row beyond 1σ on the same side",
}
RULES_SOURCE = "Western Electric run rules, numbered as in Nelson (1984)"
LIMITS_SOURCE = "ISO 7870-2 Shewhart control chart"


def a2(n: int) -> float:
    return 3.0 / (D2[n] * math.sqrt(n))


def d3_factor(n: int) -> float:
    """D3, the lower range-chart factor."""
    return max(0.0, 1.0 - 3.0 * D3_SD[n] / D2[n])


def d4_factor(n: int) -> float:
    """D4, the upper range-chart factor."""
    return 1.0 + 3.0 * D3_SD[n] / D2[n]


@dataclass(frozen=True)
class RuleHit:
    rule: int
    index: int  # the point (subgroup) that completes the pattern

    @property
    def text(self) -> str:
        return RULES[self.rule]


@dataclass(frozen=True)
class ControlChart:
    """A computed chart: the plotted statistic, its centre and limits per point, the range chart, rule hits."""

    kind: str  # "individuals" | "mean-range"
    labels: tuple[str, ...]
    sizes: tuple[int, ...]
    values: np.ndarray  # the plotted statistic: individual values or subgroup means
    centre: float
    sigma: float  # σ̂ of one individual value
    lcl: np.ndarray
    ucl: np.ndarray
    spread: np.ndarray  # moving ranges (first is NaN) or subgroup ranges
    spread_centre: np.ndarray
    spread_lcl: np.ndarray
    spread_ucl: np.ndarray
    hits: tuple[RuleHit, ...]

    def zscores(self) -> np.ndarray:
        sd = (self.ucl - self.centre) / 3.0
        return (self.values - self.centre) / sd


def _windows(flags: np.ndarray, width: int) -> np.ndarray:
    """Count of True in each window of `width` points ending at each index (0 before the first full window)."""
    counts = np.convolve(flags.astype(int), np.ones(width, dtype=int))[:flags.size]
    counts[:width - 1] = 0
    return counts


def run_rules(z: np.ndarray) -> tuple[RuleHit, ...]:
    """The run rules (module docstring) on z-scores of the plotted points; each hit once, at its last point."""
    z = np.asarray(z, dtype=float)
    hits: list[tuple[int, int]] = []
    rising = np.concatenate([[False], np.diff(z) > 0])
    falling = np.concatenate([[False], np.diff(z) < 0])
    found = {
        1: np.abs(z) > 3,
        2: (_windows(z > 0, 9) == 9) | (_windows(z < 0, 9) == 9),
        3: (_windows(rising, 5) == 5) | (_windows(falling, 5) == 5),
        5: (_windows(z > 2, 3) >= 2) | (_windows(z < -2, 3) >= 2),
        6: (_windows(z > 1, 5) >= 4) | (_windows(z < -1, 5) >= 4),
    }
    for rule, mask in found.items():
        hits += [(int(i), rule) for i in np.flatnonzero(mask)]
    return tuple(RuleHit(rule, i) for i, rule in sorted(hits))


def individuals_chart(values, labels=None) -> ControlChart:
    """Individuals chart with the moving range of two (module docstring)."""
    x = np.asarray(values, dtype=float)
    if x.size < 2:
        raise ValueError("a control chart needs at least two values")
    mr = np.abs(np.diff(x))
    mr_bar = float(mr.mean())
    sigma = mr_bar / D2[2]
    centre = float(x.mean())
    ones = np.ones_like(x)
    spread = np.concatenate([[np.nan], mr])
    chart = ControlChart(
        "individuals", tuple(labels or (str(i + 1) for i in range(x.size))), tuple(1 for _ in x), x, centre, sigma,
        centre - 3 * sigma * ones, centre + 3 * sigma * ones, spread, mr_bar * ones, d3_factor(2) * mr_bar * ones,
        d4_factor(2) * mr_bar * ones, ())
    return _with_hits(chart)


def mean_range_chart(groups: list[tuple[str, list[float]]]) -> ControlChart:
    """Mean-and-range chart of subgroups of 2 .. 25 values (module docstring); a larger one is refused."""
    return mean_range_from_stats([k for k, _ in groups], [len(g) for _, g in groups],
                                 [float(np.mean(g)) for _, g in groups], [float(np.ptp(g)) for _, g in groups])


def mean_range_from_stats(names, sizes, means, ranges) -> ControlChart:
    """The mean-and-range chart from each subgroup's size, mean and range (what a database aggregates)."""
    sizes = np.asarray(sizes, dtype=int)
    if sizes.size < 2:
        raise ValueError("a control chart needs at least two subgroups")
    if sizes.min() < 2 or sizes.max() > MAX_SUBGROUP:
        raise ValueError(f"subgroups of a mean-and-range chart hold 2 to {MAX_SUBGROUP} values")
    means = np.asarray(means, dtype=float)
    ranges = np.asarray(ranges, dtype=float)
    d2_table = np.array([np.nan, np.nan] + [D2[n] for n in range(2, MAX_SUBGROUP + 1)])
    d3_table = np.array([np.nan, np.nan] + [d3_factor(n) for n in range(2, MAX_SUBGROUP + 1)])
    d4_table = np.array([np.nan, np.nan] + [d4_factor(n) for n in range(2, MAX_SUBGROUP + 1)])
    d2 = d2_table[sizes]
    sigma = float(np.mean(ranges / d2))
    centre = float(means.mean())
    half = 3 * sigma / np.sqrt(sizes)
    chart = ControlChart(
        "mean-range", tuple(names), tuple(int(n) for n in sizes), means, centre, sigma,
        centre - half, centre + half, ranges, d2 * sigma, d3_table[sizes] * d2 * sigma,
        d4_table[sizes] * d2 * sigma, ())
    return _with_hits(chart)


def chart_from_stats(names, sizes, means, ranges) -> ControlChart:
    """`chart_for` from each subgroup's size, mean and range."""
    sizes = list(sizes)
    if len(sizes) >= 2 and min(sizes) >= 2 and max(sizes) <= MAX_SUBGROUP:
        return mean_range_from_stats(names, sizes, means, ranges)
    return individuals_chart(list(means), list(names))


def _with_hits(chart: ControlChart) -> ControlChart:
    from dataclasses import replace

    if not chart.sigma > 0:
        return chart
    return replace(chart, hits=run_rules(chart.zscores()))


def chart_for(groups: list[tuple[str, list[float]]]) -> ControlChart:
    """The chart the data allows: mean-and-range when every subgroup holds 2 .. 25 values, else individuals
    of the subgroup means (one value per subgroup)."""
    sizes = [len(g) for _, g in groups]
    if len(groups) >= 2 and min(sizes) >= 2 and max(sizes) <= MAX_SUBGROUP:
        return mean_range_chart(groups)
    if all(n == 1 for n in sizes):
        return individuals_chart([g[0] for _, g in groups], [k for k, _ in groups])
    return individuals_chart([float(np.mean(g)) for _, g in groups], [k for k, _ in groups])
