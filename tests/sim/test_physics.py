"""Element, circuit and thermal physics of the simulated bench against published formulas and facts."""

from __future__ import annotations

import dataclasses
import math
import random

import numpy as np
import pytest
from scipy import constants
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from benchlog.sim.circuit import Drive, solve
from benchlog.sim.elements import (
    build_element,
    gate_source_v,
    shockley_current_a,
    shockley_drop_v,
    thermal_voltage_v,
)
from benchlog.sim.thermal import Thermal, steady_junction_c, step_junction_c


def test_thermal_voltage_from_exact_si_constants():
    # Vt = kT/q with k = 1.380649e-23 J/K and q = 1.602176634e-19 C, exact in the 2019 SI
    # (scipy.constants): 25.852 mV at 300 K, 25.693 mV at 298.15 K.
    assert constants.k == 1.380649e-23 and constants.e == 1.602176634e-19
    assert thermal_voltage_v(300.0 - 273.15) * 1e3 == pytest.approx(25.852, abs=5e-4)
    assert thermal_voltage_v(25.0) * 1e3 == pytest.approx(25.693, abs=5e-4)


def test_shockley_worked_example():
    # Shockley with series resistance V = n Vt ln(I/Is + 1) + I Rs (Sze, Physics of Semiconductor
    # Devices, ch. 2): Is = 1 nA, n = 1.5, Rs = 20 mΩ at 300 K -> Vf(1 A) = 0.8236 V, Vf(5 A) = 0.9660 V.
    t_c = 300.0 - constants.zero_Celsius
    assert shockley_drop_v(1.0, 1e-9, 1.5, 0.020, t_c) == pytest.approx(0.8236, abs=5e-5)
    assert shockley_drop_v(5.0, 1e-9, 1.5, 0.020, t_c) == pytest.approx(0.9660, abs=5e-5)


@pytest.mark.parametrize("current", [1e-9, 1e-6, 1e-3, 0.1, 1.0, 5.0, 30.0])
def test_lambert_w_inverse_matches_a_numerical_root(current):
    # closed form with Lambert W (scipy.special.lambertw) against scipy's brentq on the forward law
    drop = shockley_drop_v(current, 1e-9, 1.5, 0.020, 25.0)
    closed = shockley_current_a(drop, 1e-9, 1.5, 0.020, 25.0)
    numeric = brentq(lambda i: shockley_drop_v(i, 1e-9, 1.5, 0.020, 25.0) - drop, 0, 100, xtol=1e-16, rtol=1e-14)
    assert closed == pytest.approx(numeric, rel=1e-9) and closed == pytest.approx(current, rel=1e-9)


def test_lambert_w_inverse_does_not_overflow_at_large_drops():
    # 30 V across a 20 mΩ diode would need exp(30/0.0385) inside W: the log-domain path takes over.
    current = shockley_current_a(30.0, 1e-9, 1.5, 0.020, 25.0)
    assert current == pytest.approx(30.0 / 0.020, rel=0.05)
    assert shockley_drop_v(current, 1e-9, 1.5, 0.020, 25.0) == pytest.approx(30.0, rel=1e-9)


def _element(kind, **overrides):
    return build_element(kind, random.Random(0), overrides)


def test_element_at_25c_is_the_plain_shockley_law():
    diode = _element("rectifier", i_s_a=1e-9, ideality=1.5, r_s_ohm=0.02)
    assert diode.forward_drop_v(1.0, 25.0) == pytest.approx(shockley_drop_v(1.0, 1e-9, 1.5, 0.02, 25.0), rel=1e-12)


def test_silicon_vf_falls_about_2_mv_per_kelvin():
    # common practice: a silicon junction's forward voltage falls about 2 mV/K
    diode = _element("rectifier", tempco_v_per_k=-2.0e-3)
    slope = (diode.forward_drop_v(1.0, 35.0) - diode.forward_drop_v(1.0, 15.0)) / 20.0
    assert slope == pytest.approx(-2.0e-3, rel=0.05)
    # and a real junction's tempco shrinks as the current rises (the barrier form gives that)
    slope_low = (diode.forward_drop_v(0.01, 35.0) - diode.forward_drop_v(0.01, 15.0)) / 20.0
    assert slope_low < slope < 0


def test_schottky_reverse_leakage_doubles_per_10_kelvin():
    # common practice: Schottky reverse leakage roughly doubles every 10 K
    diode = _element("schottky")
    ratio = diode.reverse_current_a(12.0, 85.0) / diode.reverse_current_a(12.0, 75.0)
    assert ratio == pytest.approx(2.0, rel=0.01)


def test_junction_temperature_steady_state_jesd51():
    # JESD51-2 definition RθJA = (Tj - Ta)/P: 2 A through 10 mΩ (P = 40 mW) with RθJA = 62.5 K/W
    # at 25 °C ambient gives Tj = 27.5 °C.
    power = 2.0**2 * 0.010
    assert steady_junction_c(25.0, power, 62.5) == pytest.approx(27.5, abs=1e-12)


def test_thermal_step_matches_a_numerical_ode_solution():
    # reference: scipy's solve_ivp on dTj/dt = (P RθJA - (Tj - Ta)) / (RθJA Cth)
    thermal = Thermal(62.5, 0.2)
    ode = solve_ivp(lambda t, y: [(1.5 * 62.5 - (y[0] - 25.0)) / thermal.tau_s], (0, 7.0), [30.0],
                    rtol=1e-10, atol=1e-10)
    assert step_junction_c(30.0, 25.0, 1.5, thermal, 7.0) == pytest.approx(ode.y[0, -1], abs=1e-6)


def test_protection_mosfet_gate_facts():
    # common practice for a high-side P-MOSFET with its gate to ground:
    pmos = _element("pmos", vgs_th_v=2.0)
    # 12 V input, about 1 V across the body diode at first -> Vgs ≈ -11 V -> the channel turns on
    assert gate_source_v(12.0, 1.0, None) == pytest.approx(-11.0)
    assert pmos.channel_ohm(gate_source_v(12.0, 1.0, None), 25.0) is not None
    # reversed, Vgs would be about +12 V -> it stays off
    assert gate_source_v(-12.0, 0.0, None) == pytest.approx(12.0)
    assert pmos.channel_ohm(gate_source_v(-12.0, 0.0, None), 25.0) is None
    # 30 V input with a 10 V zener: Vgs clamped to -10 V
    assert gate_source_v(30.0, 1.0, 10.0) == pytest.approx(-10.0)


def test_rds_on_falls_with_drive_and_rises_with_temperature():
    pmos = _element("pmos", r_on_ohm=0.010, vgs_th_v=2.0, tempco_per_k=0.005)
    r = [pmos.channel_ohm(-v, 25.0) for v in (3.0, 4.5, 6.0, 10.0, 12.0)]
    assert r[0] > r[1] > r[2] > r[3] and r[3] == pytest.approx(0.010) and r[4] == pytest.approx(0.010)
    assert pmos.channel_ohm(-1.9, 25.0) is None  # below threshold the channel is off
    assert pmos.channel_ohm(-10.0, 125.0) == pytest.approx(0.010 * 1.5)  # (1 + α ΔT), α = 0.5 %/K


def _drive(**kw):
    base = dict(output_on=True, inverted=False, voltage_v=12.0, current_limit_a=5.0, load_on=False,
                load_current_a=0.0, lead_ohm=0.020, load_min_ohm=0.05)
    base.update(kw)
    return Drive(**base)


def test_forced_current_into_the_near_short_measures_the_body_diode():
    # The supply in CC into the lead resistance: its output is only drop + lead drop, so the gate
    # (tied to the return) sees |Vgs| ≈ I·R_lead = 0.1 V: the channel cannot enhance.
    pmos = _element("pmos", r_on_ohm=0.010)
    op = solve(pmos, _drive(voltage_v=12.0, current_limit_a=5.0), 25.0)
    assert op.supply_mode == "CC" and op.conduction == "body_diode"
    assert op.current_a == pytest.approx(5.0)
    assert op.supply_v == pytest.approx(op.element_v + 5.0 * 0.020)
    assert abs(op.vgs_v) == pytest.approx(0.1)
    assert op.element_v > 0.6  # a diode drop, not 5 A × 10 mΩ


def test_load_wiring_at_12_v_turns_the_channel_fully_on():
    pmos = _element("pmos", r_on_ohm=0.010)
    op = solve(pmos, _drive(voltage_v=12.0, current_limit_a=8.0, load_on=True, load_current_a=5.0), 25.0)
    assert op.supply_mode == "CV" and op.conduction == "channel"
    assert op.element_v == pytest.approx(5.0 * 0.010, rel=1e-3)
    assert op.vgs_v < -10.0


def test_cv_cc_crossover():
    res = _element("resistor", r_on_ohm=1.0)
    cv = solve(res, _drive(voltage_v=2.0, current_limit_a=5.0), 25.0)
    assert cv.supply_mode == "CV" and cv.current_a == pytest.approx(2.0 / 1.02)
    cc = solve(res, _drive(voltage_v=12.0, current_limit_a=1.0), 25.0)
    assert cc.supply_mode == "CC" and cc.current_a == pytest.approx(1.0) and cc.supply_v == pytest.approx(1.02)
    off = solve(res, _drive(output_on=False), 25.0)
    assert off.supply_mode == "OFF" and off.current_a == 0.0


def test_load_cannot_draw_more_than_the_supply_limit():
    res = _element("resistor", r_on_ohm=0.1)
    op = solve(res, _drive(voltage_v=12.0, current_limit_a=2.0, load_on=True, load_current_a=5.0), 25.0)
    assert op.supply_mode == "CC" and op.current_a == pytest.approx(2.0)


def test_reversed_elements_block_with_small_leakage_and_a_resistor_conducts():
    for kind in ("rectifier", "schottky", "pmos", "nmos"):
        op = solve(_element(kind), _drive(inverted=True, voltage_v=12.0), 25.0)
        assert op.current_a < 0 and abs(op.current_a) < 1e-3
        assert op.element_v == pytest.approx(-12.0, rel=1e-3)
    res = solve(_element("resistor", r_on_ohm=1.0), _drive(inverted=True, voltage_v=2.0), 25.0)
    assert res.current_a == pytest.approx(-2.0 / 1.02)


def test_forward_drop_rises_monotonically_with_current():
    for kind in ("rectifier", "schottky", "pmos", "nmos", "resistor"):
        element = _element(kind)
        drops = [solve(element, _drive(current_limit_a=i), 25.0).element_v for i in np.linspace(0.01, 9.0, 40)]
        assert all(b > a for a, b in zip(drops, drops[1:])), kind
        assert all(math.isfinite(d) for d in drops)


@pytest.mark.parametrize("input_v", [1.5, 2.3, 2.6, 3.0, 4.5, 12.0, 30.0])
@pytest.mark.parametrize("current", [0.01, 1.0, 5.0])
def test_pmos_drop_solves_its_own_current_balance(input_v, current):
    # channel + body diode must carry exactly the forced current at the Vgs the drop leaves
    pmos = _element("pmos", zener_v=10.0)
    drop = pmos.forward_drop_v(current, 40.0, input_v=input_v)
    vgs = gate_source_v(input_v, drop, 10.0)
    r = pmos.channel_ohm(vgs, 40.0)
    carried = (drop / r if r else 0.0) + pmos.body.current_a(drop, 40.0)
    assert carried == pytest.approx(current, rel=1e-8)
    assert 0.0 < drop <= pmos.body.drop_v(current, 40.0) * (1 + 1e-12)


def test_nmos_in_the_return_gate_facts():
    # Kirchhoff's voltage law around the return (common practice for an N-MOSFET in the ground
    # return with its gate on the input): the source sits at the board's ground, the drop above
    # the supply's return, so Vgs = +(Vin - drop); reversed it is negative and the channel is off.
    nmos = _element("nmos", vgs_th_v=1.8)
    assert gate_source_v(12.0, 1.0, None, "n") == pytest.approx(11.0)
    assert nmos.vgs_v(12.0, 1.0) == pytest.approx(11.0)
    assert nmos.channel_ohm(nmos.vgs_v(12.0, 1.0), 25.0) is not None
    assert nmos.vgs_v(-12.0, 0.0) == pytest.approx(-12.0)
    assert nmos.channel_ohm(nmos.vgs_v(-12.0, 0.0), 25.0) is None
    assert nmos.channel_ohm(-11.0, 25.0) is None  # the P-channel's enhancing sign leaves an N-channel off
    # 30 V input with a 10 V zener from gate to source: Vgs clamped to +10 V
    assert gate_source_v(30.0, 1.0, 10.0, "n") == pytest.approx(10.0)
    clamped = _element("nmos", zener_v=10.0)
    assert clamped.vgs_v(30.0, 1.0) == pytest.approx(10.0)


def test_nmos_is_the_mirror_of_the_pmos():
    # The same die and wiring magnitudes: |Vgs| = Vin - drop for both (KVL), so with equal parameters
    # the two kinds drop exactly the same at every operating point, in both wirings.
    pmos = _element("pmos", r_on_ohm=0.008, vgs_th_v=2.0)
    nmos = _element("nmos", **dataclasses.asdict(pmos.params))
    for drive in (_drive(voltage_v=12.0, current_limit_a=8.0, load_on=True, load_current_a=3.0),
                  _drive(voltage_v=3.0, current_limit_a=8.0, load_on=True, load_current_a=3.0),
                  _drive(voltage_v=12.0, current_limit_a=2.0)):
        p, n = solve(pmos, drive, 40.0), solve(nmos, drive, 40.0)
        assert n.element_v == p.element_v and n.conduction == p.conduction
        assert n.vgs_v == pytest.approx(-p.vgs_v)


def test_nmos_powers_up_on_its_body_diode_then_the_channel_takes_over():
    nmos = _element("nmos", r_on_ohm=0.004, vgs_th_v=1.8)
    # Supply in CC into the near-short: the gate sees only I·R_lead, below threshold: body diode.
    cc = solve(nmos, _drive(voltage_v=12.0, current_limit_a=5.0), 25.0)
    assert cc.conduction == "body_diode" and cc.element_v > 0.6 and cc.vgs_v == pytest.approx(0.1)
    # The load draws 5 A from a 12 V rail: Vgs ≈ 12 V, the channel carries it: V = I·R (Ohm's law).
    on = solve(nmos, _drive(voltage_v=12.0, current_limit_a=8.0, load_on=True, load_current_a=5.0), 25.0)
    assert on.conduction == "channel" and on.vgs_v > 10.0
    assert on.element_v == pytest.approx(5.0 * 0.004, rel=1e-3)


@pytest.mark.parametrize("input_v", [1.5, 2.3, 3.0, 12.0, 30.0])
@pytest.mark.parametrize("current", [0.01, 1.0, 5.0])
def test_nmos_drop_solves_its_own_current_balance(input_v, current):
    nmos = _element("nmos", zener_v=10.0)
    drop = nmos.forward_drop_v(current, 40.0, input_v=input_v)
    r = nmos.channel_ohm(gate_source_v(input_v, drop, 10.0, "n"), 40.0)
    carried = (drop / r if r else 0.0) + nmos.body.current_a(drop, 40.0)
    assert carried == pytest.approx(current, rel=1e-8)
