"""Numbers for people: prefixes, uncertainty rounding, durations."""

from __future__ import annotations

from benchlog.tui.units import duration, si, with_uncertainty


def test_si_prefix_puts_the_value_between_one_and_a_thousand():
    assert si(0.02612, "Ω") == "26.12 mΩ"
    assert si(1.7, "W") == "1.700 W"
    assert si(4.2e-6, "A") == "4.200 µA"
    assert si(None, "V") == "—"


def test_uncertainty_has_two_significant_digits_and_the_value_the_same_decimals():
    # GUM (JCGM 100:2008) 7.2.6: uncertainty to at most two significant digits, value rounded to match.
    assert with_uncertainty(0.026995, 0.0000085, "Ω") == "26.995 ± 0.017 mΩ (k = 2)"
    assert with_uncertainty(0.6512, 0.0012, "V") == "651.2 ± 2.4 mV (k = 2)"


def test_durations_read_as_minutes_and_seconds():
    assert duration(75.4) == "1:15"
    assert duration(3723) == "1:02:03"
    assert duration(None) == "—"
