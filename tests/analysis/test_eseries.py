"""E-series per IEC 60063: the lists themselves and the picking of standard values."""

import math

import pytest

from benchlog.analysis import eseries
from benchlog.badinput import BadInput


def test_e6_e12_e24_exact_lists():
    # IEC 60063:2015 tables, from memory (reprinted in every resistor catalogue).
    assert eseries.E6 == (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
    assert eseries.E12 == (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
    assert eseries.E24 == (
        1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
    )


def test_lower_series_are_subsets():
    # IEC 60063: each series contains every value of the coarser ones.
    assert set(eseries.E6) <= set(eseries.E12) <= set(eseries.E24)
    assert set(eseries.E48) <= set(eseries.E96)


def test_e24_departs_from_rounded_geometric_values():
    # IEC 60063 keeps historic E24 values: the rounded geometric value of
    # 10**(10/24) is 2.6, the standard value is 2.7 (from memory).
    assert round(10 ** (10 / 24), 1) == 2.6
    assert eseries.E24[10] == 2.7


@pytest.mark.parametrize("index, value", [(0, 1.00), (1, 1.02), (24, 1.78), (48, 3.16), (67, 4.99), (95, 9.76)])
def test_e96_spot_values(index, value):
    # IEC 60063 E96 values, from memory (e.g. 4.99 and 3.16 are well-known E96 members).
    assert eseries.E96[index] == value


def test_e48_e96_match_three_figure_geometric_rounding():
    # IEC 60063: E48 and E96 are 10**(i/n) rounded to three significant figures
    # (the one listed exception, 9.20 for 9.19, belongs to E192 only).
    for n, table in ((48, eseries.E48), (96, eseries.E96)):
        assert len(table) == n
        assert table == tuple(round(10 ** (i / n), 2) for i in range(n))


def test_picking_values():
    # Worked by hand from the E24 table above.
    assert eseries.at_least(4520.0, "E24") == 4700.0
    assert eseries.at_least(4700.0, "E24") == 4700.0
    assert eseries.at_most(4520.0, "E24") == 4300.0
    assert eseries.nearest(4520.0, "E24") == 4700.0
    assert eseries.nearest(4480.0, "E24") == 4300.0  # log midpoint of 4.3k/4.7k is 4.496k
    assert eseries.at_least(9.5, "E12") == 10.0  # crosses the decade
    assert eseries.at_least(0.0305, "e6") == 0.033
    assert eseries.values("E6", 1000, 10000) == (1000.0, 1500.0, 2200.0, 3300.0, 4700.0, 6800.0, 10000.0)


def test_log_midpoint_choice_against_math():
    # Geometric series: the boundary between 4.3 and 4.7 is their geometric mean.
    mid = math.sqrt(4.3 * 4.7) * 1000
    assert eseries.nearest(mid * 1.001) == 4700.0
    assert eseries.nearest(mid * 0.999) == 4300.0


def test_bad_series_and_value():
    with pytest.raises(BadInput):
        eseries.series("E7")
    with pytest.raises(BadInput):
        eseries.at_least(-1.0)
