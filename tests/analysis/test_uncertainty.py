"""GUM arithmetic against the GUM's own rules and worked numbers."""

import math

import pytest

from benchlog.analysis.uncertainty import (
    Accuracy,
    Component,
    MeasurementAccuracy,
    combine,
    t_coverage_factor,
    type_b_u,
    welch_satterthwaite,
)
from benchlog.badinput import BadInput

from .monte_carlo import monte_carlo_k


def test_type_b_dmm_worked_example():
    # Issue 4 reference: 5 V on the 10 V range at ±(0.0020 % of reading + 0.0005 % of range)
    # gives a = 150 µV and u = a/√3 = 86.6 µV (rectangular distribution, GUM 4.3.7).
    acc = Accuracy(reading_pct=0.0020, range_pct=0.0005, range=10.0)
    assert acc.half_width(5.0) == pytest.approx(150e-6, rel=1e-12)
    assert type_b_u(5.0, acc) == pytest.approx(86.6e-6, abs=0.05e-6)
    # the sign of the reading does not matter, the spec is on its magnitude
    assert type_b_u(-5.0, acc) == pytest.approx(type_b_u(5.0, acc))


def test_gain_and_offset_split_of_the_spec():
    # GUM 4.3.7: each bound of a rectangular spread has u = a/√3; the two terms of the spec
    # are the gain (% of reading) and the offset (% of range).
    acc = Accuracy(reading_pct=0.0020, range_pct=0.0005, range=10.0)
    assert acc.gain_u == pytest.approx(0.0020e-2 / math.sqrt(3))
    assert acc.offset_u == pytest.approx(50e-6 / math.sqrt(3))


def test_quadrature_and_welch_satterthwaite_by_hand():
    # GUM 5.1.2 (quadrature) and G.4.1 eq. G.2b: u1 = 3 (ν = 4), u2 = 4 (ν = ∞)
    # -> u_c = 5, ν_eff = 5⁴ / (3⁴/4) = 625·4/81 = 30.86 (worked by hand).
    budget = combine([Component("a", "A", 3.0, 4), Component("b", "B", 4.0)])
    assert budget.u == pytest.approx(5.0)
    assert budget.dof == pytest.approx(625 * 4 / 81)
    # U = k_p·u_c with k_p of t₄ (scale 3) plus a rectangular (u 4), by a JCGM 101 Monte Carlo with numpy: the
    # t term's tails make it larger than 2 here, though the rectangular term has the larger u
    k_p = monte_carlo_k([("t", 3.0, 4.0), ("rectangular", 4.0, math.inf)])
    assert budget.k == pytest.approx(k_p, abs=4e-3) and budget.k > 2.0
    assert budget.expanded_u == pytest.approx(5.0 * budget.k)
    assert welch_satterthwaite([1.0, 1.0], [math.inf, math.inf]) == math.inf


@pytest.mark.parametrize(
    "dof, k",
    # GUM table G.2, coverage factor k_p for p = 95.45 % (from memory, checked against scipy t below)
    [(1, 13.97), (2, 4.53), (3, 3.31), (5, 2.65), (10, 2.28), (20, 2.13), (50, 2.05), (math.inf, 2.00)],
)
def test_t_coverage_factor_matches_gum_table_g2(dof, k):
    assert t_coverage_factor(dof) == pytest.approx(k, abs=0.006)


def test_accuracy_from_header_table():
    table = {"drop": {"reading_pct": 0.004, "range_pct": 0.0007, "range_v": 1.0},
             "current": {"reading_pct": 0.05, "range_pct": 0.05, "range_a": 10}}
    acc = MeasurementAccuracy.from_table(table)
    assert acc.drop == Accuracy(0.004, 0.0007, 1.0)
    assert acc.current == Accuracy(0.05, 0.05, 10.0)
    assert MeasurementAccuracy.from_table(None) == MeasurementAccuracy(None, None)
    assert MeasurementAccuracy.from_table(acc.to_table()) == acc  # the header round trip


@pytest.mark.parametrize(
    "block, where",
    [
        ({"drop": {"reading_pct": "x", "range_pct": 0, "range_v": 1}}, "accuracy.drop.reading_pct"),
        ({"drop": {"reading_pct": 0.1, "range_pct": 0, "range_v": 0}}, "accuracy.drop.range_v"),
        ({"current": {"reading_pct": 0.1, "range_pct": -1, "range_a": 1}}, "accuracy.current.range_pct"),
        ({"current": {"reading_pct": 0.1, "range_pct": 0.1}}, "accuracy.current.range_a"),
        ({"drop": [1, 2]}, "accuracy.drop"),
    ],
)
def test_accuracy_from_header_refuses_bad_values(block, where):
    with pytest.raises(BadInput) as info:
        MeasurementAccuracy.from_table(block, "x.run")
    assert info.value.where == where
    assert "x.run" in info.value.line()
