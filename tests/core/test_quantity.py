"""The one way a result is written, against GUM's rounding rule and its worked examples."""

import math

import pytest

from benchlog.quantity import engineering, margin, measured, round_together, unit_of, with_standard


def test_gum_7_2_2_standard_uncertainty_form():
    # JCGM 100:2008 (GUM) 7.2.2 example: m_S = 100.021 47 g with u_c = 0.35 mg
    assert with_standard(100.02147, 0.00035, "g") == "100.02147 g (u = 0.00035 g)"


def test_gum_7_2_4_expanded_uncertainty_form():
    # JCGM 100:2008 (GUM) 7.2.4 example: m_S = (100.021 47 ± 0.000 79) g, k = 2.26
    assert measured(100.02147, 0.00079, "g", k=2.26) == "100.02147 ± 0.00079 g (k = 2.26)"
    # the same example states the coverage probability with k (there "about 95 percent", from t for ν = 9)
    assert measured(100.02147, 0.00079, "g", k=2.26, coverage=0.95) == "100.02147 ± 0.00079 g (k = 2.26, 95 % coverage)"
    # k_p of a budget is written to two decimals with its p (GUM G.1.3: one rectangular term, k_p = √3·p)
    assert measured(0.0105145, 0.0000123, "Ω", k=1.7320508 * 0.9545, coverage=0.9545) == \
        "10.514 ± 0.012 mΩ (k = 1.65, 95.45 % coverage)"


def test_two_significant_digits_and_value_to_the_same_place():
    # GUM 7.2.6: U to at most two significant digits, the estimate rounded to the same place
    assert measured(0.0105145, 0.0000123, "Ω") == "10.514 ± 0.012 mΩ (k = 2)"
    assert measured(0.0421437, 0.00073, "W") == "42.14 ± 0.73 mW (k = 2)"
    assert measured(12.3456, 0.26, "V") == "12.35 ± 0.26 V (k = 2)"


def test_uncertainty_carry_to_a_new_place():
    # 0.0996 to two significant digits is 0.10 (a carry), so the value keeps two decimals (GUM 7.2.6)
    assert measured(9.96, 0.0996, "V") == "9.96 ± 0.10 V (k = 2)"
    # U = 0.996 -> 1.0, value 9.96 -> 10.0 (carry in the value too)
    assert measured(9.96, 0.996, "V") == "10.0 ± 1.0 V (k = 2)"


def test_value_carry_moves_the_prefix():
    # 0.99996 V rounded to 0.0001 V is 1.0000 V: written in V, not as 1000.0 mV (SI Brochure prefixes)
    assert measured(0.99996, 0.0012, "V") == "1.0000 ± 0.0012 V (k = 2)"
    assert engineering(0.99996, "V") == "1.000 V"


def test_negative_values_keep_their_sign_and_no_minus_zero():
    assert measured(-0.0421437, 0.00073, "W") == "-42.14 ± 0.73 mW (k = 2)"
    assert measured(-0.0004, 0.012, "V") == "0 ± 12 mV (k = 2) — not determined"


def test_uncertainty_larger_than_the_value_is_flagged():
    text = measured(218e-12, 11460e-12, "A")
    assert text == "0 ± 11 nA (k = 2) — not determined"
    assert "not determined" not in measured(218e-12, 11e-12, "A")


def test_zero_or_unknown_uncertainty_is_said_not_hidden():
    assert measured(0.01, 0.0, "V") == "10.00 mV (no uncertainty)"
    assert measured(0.01, None, "V") == "10.00 mV (no uncertainty)"
    assert measured(None, 0.1, "V") == "—"
    assert measured(float("nan"), 0.1, "V") == "—"
    with pytest.raises(ValueError):
        round_together(1.0, 0.0)


def test_rounding_agrees_with_a_decimal_place_computed_independently():
    # the place of U's second significant digit is floor(log10 U) - 1 (GUM 7.2.6, common practice)
    for value, u in [(3.14159, 0.0271), (271.8, 3.3), (0.0005123, 0.0000091)]:
        r = round_together(value, u)
        place = math.floor(math.log10(u)) - 1
        assert float(r.uncertainty) == pytest.approx(round(u, -place))
        assert float(r.value) == pytest.approx(round(value, -place))


def test_units_without_prefix_and_keys():
    assert measured(1.92, 0.05, "") == "1.920 ± 0.050 (k = 2)"
    assert measured(85.3, 1.27, "°C") == "85.3 ± 1.3 °C (k = 2)"
    assert unit_of("r_on_ohm") == "Ω" and unit_of("ideality") == "" and unit_of("tj_c") == "°C"
    assert engineering(0.02612, "Ω") == "26.12 mΩ"
    assert engineering(1.5e-9, "A") == "1.500 nA"


def test_margin_never_a_double_negative():
    assert margin(21.0, "K", "Tj max") == "21.0 K below Tj max"
    assert margin(-3.04, "K", "Tj max") == "3.0 K above Tj max"


def test_a_chosen_coverage_factor_is_written_with_three_digits_at_most():
    # GUM 7.2.4 states k beside U; a factor such as a t quantile (2.30769...) is written 2.31, not to six digits
    from benchlog.quantity import coverage_text

    assert coverage_text(2.0) == "k = 2"
    assert coverage_text(2.3076923) == "k = 2.31"
    assert coverage_text(1.7143, 0.9545) == "k = 1.71, 95.45 % coverage"
