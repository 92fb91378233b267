"""The electro-thermal loop against closed-form solutions."""

import math

import pytest

from benchlog.analysis.predict import predict
from benchlog.analysis.thermal import CEILING_C, solve_junction

from .spec_texts import spec


def resistor(r0, alpha, rth):
    return spec(
        f'name = "T-R"\nkind = "resistor"\nresistance_ohm = {r0}\nresistance_tempco_per_k = {alpha}\n'
        f"rth_ja_k_per_w = {rth}\n"
    )


def closed_form_tj(i, r0, alpha, rth, ta):
    # P = I²R0(1 + α(Tj − 25)), Tj = Ta + P·Rθ  =>  Tj = (Ta + RθI²R0(1 − 25α)) / (1 − RθI²R0α)
    # (linear in Tj, solved by hand; JESD51 ΔT = P·RθJA).
    q = rth * i * i * r0
    return (ta + q * (1 - 25 * alpha)) / (1 - q * alpha)


@pytest.mark.parametrize(
    "i, r0, alpha, rth, ta",
    [
        (1.0, 1.0, 0.004, 50.0, 25.0),  # s = 0.2: Tj = 87.5 °C
        (2.0, 0.05, 0.0039, 60.0, 40.0),  # copper-like tempco
        (3.0, 0.02, -0.002, 80.0, 0.0),  # negative tempco
    ],
)
def test_loop_matches_closed_form(i, r0, alpha, rth, ta):
    p = predict(resistor(r0, alpha, rth), i, ambient_c=ta)
    expected = closed_form_tj(i, r0, alpha, rth, ta)
    assert p.converged and not p.runaway
    assert p.tj_c == pytest.approx(expected, abs=1e-5)
    assert p.loss_w == pytest.approx(i * i * r0 * (1 + alpha * (expected - 25)), rel=1e-6)
    assert p.iterations >= 1


def test_slow_loop_finishes_with_brentq():
    # Loop gain s = 0.97: the fixed point would need ~700 steps; the bracketed root must still
    # equal the closed form (ceiling raised so the distant equilibrium is admissible).
    i, r0, alpha, rth, ta = 1.0, 1.0, 0.0097, 100.0, 25.0
    sol = solve_junction(lambda t: i * i * r0 * (1 + alpha * (t - 25)), ta, rth, ceiling_c=5000.0)
    assert sol.converged and "brentq" in sol.method
    assert sol.tj_c == pytest.approx(closed_form_tj(i, r0, alpha, rth, ta), abs=1e-4)


def test_closed_form_spot_value():
    # Hand arithmetic: 1 A, 1 Ω, 0.4 %/K, 50 K/W at 25 °C -> ΔT = 50/(1 − 0.2) = 62.5 K.
    assert predict(resistor(1.0, 0.004, 50.0), 1.0).tj_c == pytest.approx(87.5, abs=1e-5)


@pytest.mark.parametrize("s", [1.0, 1.5, 4.0])
def test_runaway_when_gain_reaches_one(s):
    # The linear loop has no equilibrium when I²R0·α·Rθ >= 1 (the loop gain is s).
    i, r0, rth = 5.0, 1.0, 10.0
    alpha = s / (i * i * r0 * rth)
    p = predict(resistor(r0, alpha, rth), i)
    assert p.runaway and not p.converged
    assert p.tj_c is None and p.loss_w is None and p.drop_v is None
    assert "runaway" in p.typical.message


def test_just_below_runaway_is_not_called_runaway_unless_beyond_ceiling():
    # s = 0.5: ΔT = q/(1 − s) with q = 10 K -> 20 K, comfortably solved.
    p = predict(resistor(1.0, 0.05, 10.0), 1.0)
    assert not p.runaway and p.tj_c == pytest.approx(closed_form_tj(1.0, 1.0, 0.05, 10.0, 25.0), abs=1e-5)
    # s = 0.99: the equilibrium would be thousands of kelvin up, beyond the model's ceiling: runaway.
    p = predict(resistor(1.0, 0.00396, 10.0), 5.0)
    assert closed_form_tj(5.0, 1.0, 0.00396, 10.0, 25.0) > CEILING_C and p.runaway


def test_no_thermal_data_means_tj_is_ambient_and_says_so():
    p = predict(spec('name = "T-R"\nkind = "resistor"\nresistance_ohm = 2.0\n'), 1.5, ambient_c=31.0)
    assert p.tj_c == 31.0 and p.iterations == 0 and p.loss_w == pytest.approx(4.5)
    assert "Tj taken as the ambient" in p.typical.message


def test_undefined_loss_is_not_converged_not_a_number():
    sol = solve_junction(lambda t: math.nan, 25.0, 10.0)
    assert not sol.converged and not sol.runaway and sol.tj_c is None


def test_diode_negative_tempco_closed_form():
    # At I = vf_at_a the log term vanishes: Vf = V0 + c(Tj − 25), Tj = Ta + Rθ·I·Vf
    # => Tj = (Ta + RθI(V0 − 25c)) / (1 − RθIc), solved by hand.
    v0, c, i, rth, ta = 0.85, -2e-3, 2.0, 40.0, 25.0
    p = predict(spec(f'name = "D"\nkind = "rectifier"\nvf_v = {v0}\nvf_at_a = {i}\n'
                     f"vf_tempco_v_per_k = {c}\nrth_ja_k_per_w = {rth}\n"), i, ambient_c=ta)
    expected = (ta + rth * i * (v0 - 25 * c)) / (1 - rth * i * c)
    assert p.tj_c == pytest.approx(expected, abs=1e-5)
    assert p.drop_v == pytest.approx(v0 + c * (expected - 25), abs=1e-7)
