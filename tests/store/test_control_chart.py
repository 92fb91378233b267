"""Control chart limits and run rules, against the published constants and hand computations."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from benchlog.store.control_chart import (D2, a2, chart_for, d3_factor, d4_factor, individuals_chart,
                                          mean_range_chart, run_rules)

#: A2, D3, D4 for subgroups of 2..10, from the standard's table of control chart factors (ISO 7870-2,
#: Table 2; from memory, three decimals as printed).
TABLE = {2: (1.880, 0.0, 3.267), 3: (1.023, 0.0, 2.574), 4: (0.729, 0.0, 2.282), 5: (0.577, 0.0, 2.114),
         6: (0.483, 0.0, 2.004), 7: (0.419, 0.076, 1.924), 8: (0.373, 0.136, 1.864), 9: (0.337, 0.184, 1.816),
         10: (0.308, 0.223, 1.777)}


@pytest.mark.parametrize("n", sorted(TABLE))
def test_factors_match_the_standards_table(n):
    a2_t, d3_t, d4_t = TABLE[n]
    # the table's factors come from unrounded d2, d3; ours from their three-decimal values: ±0.002
    assert a2(n) == pytest.approx(a2_t, abs=2e-3)
    assert d3_factor(n) == pytest.approx(d3_t, abs=2e-3)
    assert d4_factor(n) == pytest.approx(d4_t, abs=2e-3)


@pytest.mark.parametrize("n", [2, 3, 5, 8, 12, 20, 25])
def test_d2_is_the_mean_range_of_n_normal_values(n):
    # d2(n) = ∫ [1 − Φ(x)^n − (1 − Φ(x))^n] dx (the expected range of n standard normal values;
    # Tippett 1925, handbook formula), integrated here with scipy
    value, _ = integrate.quad(lambda x: 1 - stats.norm.cdf(x) ** n - stats.norm.sf(x) ** n, -12, 12)
    assert D2[n] == pytest.approx(value, abs=6e-4)


def test_mean_range_limits_by_hand():
    groups = [("L1", [10.0, 10.4, 9.8, 10.2, 10.1]), ("L2", [10.3, 9.9, 10.0, 10.5, 10.2]),
              ("L3", [9.7, 10.0, 10.1, 9.9, 10.3]), ("L4", [10.2, 10.6, 10.1, 10.0, 10.4])]
    chart = mean_range_chart(groups)
    means = [np.mean(g) for _, g in groups]
    r_bar = np.mean([max(g) - min(g) for _, g in groups])  # (0.6 + 0.6 + 0.6 + 0.6) / 4 = 0.6
    assert r_bar == pytest.approx(0.6)
    x_bar_bar = np.mean(means)
    # hand computation with the table's A2 = 0.577, D4 = 2.114, D3 = 0 for n = 5 (ISO 7870-2 Table 2)
    assert chart.centre == pytest.approx(x_bar_bar)
    assert chart.ucl == pytest.approx(x_bar_bar + 0.577 * 0.6, abs=1e-3)
    assert chart.lcl == pytest.approx(x_bar_bar - 0.577 * 0.6, abs=1e-3)
    assert chart.spread_ucl == pytest.approx(2.114 * 0.6, abs=1e-3)
    assert chart.spread_lcl == pytest.approx(0.0)
    assert chart.kind == "mean-range" and chart.hits == ()


def test_individuals_limits_are_mean_plus_minus_2_66_moving_range():
    x = np.array([5.0, 5.2, 4.9, 5.1, 5.3, 5.0, 4.8, 5.1])
    chart = individuals_chart(x)
    mr_bar = np.mean(np.abs(np.diff(x)))
    # common practice: X̄ ± 2.66·MR̄ (2.66 = 3/d2(2) = 3/1.128), upper MR limit 3.267·MR̄
    assert chart.ucl[0] == pytest.approx(x.mean() + 2.66 * mr_bar, rel=1e-3)
    assert chart.lcl[0] == pytest.approx(x.mean() - 2.66 * mr_bar, rel=1e-3)
    assert chart.spread_ucl[0] == pytest.approx(3.267 * mr_bar, rel=1e-3)


def _rules(z):
    return {(h.rule, h.index) for h in run_rules(np.array(z, dtype=float))}


def test_each_run_rule_fires_on_its_pattern_and_not_on_a_near_miss():
    assert (1, 2) in _rules([0, 0.5, 3.2, 0])
    assert not any(r == 1 for r, _ in _rules([0, 2.9, -2.9]))
    assert (2, 8) in _rules([0.1] * 9)
    assert not any(r == 2 for r, _ in _rules([0.1] * 8 + [-0.1]))
    assert (3, 5) in _rules([-1, -0.5, 0.1, 0.2, 0.9, 1.0])
    assert not any(r == 3 for r, _ in _rules([-1, -0.5, 0.1, 0.2, 0.9, 0.8]))
    assert (5, 2) in _rules([2.1, 0, 2.5])
    assert not any(r == 5 for r, _ in _rules([2.1, 0, -2.5]))
    assert (6, 4) in _rules([1.1, 1.2, 0.0, 1.5, 1.3])
    assert not any(r == 6 for r, _ in _rules([1.1, 1.2, 0.0, 1.5, 0.9]))


def test_a_shifted_lot_is_flagged_beyond_3_sigma():
    rng = np.random.default_rng(3)
    groups = [(f"L{i}", list(10 + 0.1 * rng.standard_normal(5))) for i in range(12)]
    groups.append(("L12", list(10.5 + 0.1 * rng.standard_normal(5))))
    chart = chart_for(groups)
    assert chart.kind == "mean-range"
    assert any(h.rule == 1 and chart.labels[h.index] == "L12" for h in chart.hits)
