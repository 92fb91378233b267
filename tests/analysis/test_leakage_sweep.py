"""Reverse-leakage sweeps: the simulator's leakage law, hot leakage by the doubling model, runaway of the leakage itself.

References named beside each check: Shockley's reverse branch I = I_S·(exp(−V/Vt) − 1) (Sze, *Physics of
Semiconductor Devices*, ch. 2); Miller's avalanche multiplication M = 1/(1 − (V/BV)^m) (S. L. Miller,
Phys. Rev. 99, 1955); the electro-thermal loop Tj = Ta + Rθ·P(Tj) and its tangency condition (common practice).
"""

from __future__ import annotations

import math

import pytest
from scipy.constants import Boltzmann, elementary_charge, zero_Celsius
from scipy.optimize import brentq

from benchlog.analysis.leakage_sweep import analyse_leakage, runaway_check, solve_leakage_loop
from benchlog.runs.events import ReverseResult
from benchlog.sim.elements import Leakage

from .spec_texts import spec

VT25 = Boltzmann * (25.0 + zero_Celsius) / elementary_charge


def test_sim_leakage_saturates_as_shockley_says():
    # Shockley: for V ≫ Vt the reverse current is I_S (1 − e^(−V/Vt) → 1); at V = Vt it is (1 − 1/e)·I_S.
    leak = Leakage(1e-6, v_scale_v=math.inf)
    assert leak.current_a(10 * VT25, 25.0) == pytest.approx(1e-6, rel=1e-4)
    assert leak.current_a(VT25, 25.0) == pytest.approx(1e-6 * (1 - math.exp(-1)), rel=1e-9)
    # and it doubles every 10 K (the model's doubling interval; common practice for Schottky barriers)
    assert leak.current_a(1.0, 35.0) / leak.current_a(1.0, 25.0) == pytest.approx(2.0, rel=1e-2)


def test_sim_soft_breakdown_is_millers_multiplication():
    # Miller (1955): M = 1/(1 − (V/BV)^m); at half the breakdown voltage with m = 4, M = 16/15.
    plain = Leakage(1e-6, v_scale_v=math.inf)
    soft = Leakage(1e-6, v_scale_v=math.inf, breakdown_v=50.0, breakdown_m=4.0)
    assert soft.current_a(25.0, 25.0) / plain.current_a(25.0, 25.0) == pytest.approx(16 / 15, rel=1e-12)
    # steep near breakdown: at 0.95·BV the current is several times the saturation value
    assert soft.current_a(47.5, 25.0) > 5 * plain.current_a(47.5, 25.0)


def test_runaway_loop_against_its_closed_form():
    # Tj = Ta + Rθ·V·I0·2^((Tj − T0)/Td). At the critical ambient the line Tj − Ta touches the exponential:
    # Rθ·P·ln2/Td = 1 and Tj − Ta = Rθ·P = Td/ln2, so Tj* = T0 + Td·log2(Td/(ln2·Rθ·V·I0)) and
    # Ta* = Tj* − Td/ln2 (tangency of the two sides; common practice for thermal runaway).
    i0, t0, td, v, rth = 20e-6, 25.0, 10.0, 40.0, 50.0
    tj_star = t0 + td * math.log2(td / (math.log(2) * rth * v * i0))
    ta_star = tj_star - td / math.log(2)
    check = runaway_check(i0, t0, td, v, 25.0, rth)
    assert check.critical_ambient_c == pytest.approx(ta_star, abs=0.05)
    assert not check.runaway and check.loop_gain < 1
    # the stable solution at 25 °C against scipy's root finder on the same loop
    ref = brentq(lambda t: t - 25.0 - rth * v * i0 * 2 ** ((t - t0) / td), 25.0, tj_star)
    assert check.tj_c == pytest.approx(ref, abs=1e-6)
    # above the critical ambient there is no stable junction temperature
    assert solve_leakage_loop(i0, t0, td, v, ta_star + 2.0, rth)[0] is None
    assert runaway_check(i0, t0, td, v, ta_star + 2.0, rth).runaway


SCHOTTKY = ('name = "T-SCH"\nkind = "schottky"\nvf_v = 0.55\nvf_at_a = 2.0\nvr_max_v = 40.0\n'
            "ir_max_a = 50e-6\nir_at_v = 40.0\nir_at_c = 25.0\nrth_ja_k_per_w = 50.0\ntj_max_c = 125.0\n")


def test_leakage_sweep_judged_with_hot_leakage_and_runaway():
    results = [ReverseResult(float(k), v, 0.2, i, 1e-3, True)
               for k, (v, i) in enumerate([(10.0, 10e-6), (20.0, 12e-6), (30.0, 14e-6)])]
    s = analyse_leakage(results, 25.0, "assumed", spec=spec(SCHOTTKY))
    assert s.outcome == "pass" and [p.limit_source for p in s.points] == ["spec"] * 3
    # the spec's 50 µA at 40 V is tighter than the plan's 1 mA and applies as it stands below 40 V
    assert all(p.limit_a == pytest.approx(50e-6) for p in s.points)
    # doubling every ~10 K (common practice) from 14 µA at 25 °C to Tj max 125 °C: 14 µA·2^10
    assert s.hot_a == pytest.approx(14e-6 * 2 ** 10) and "~10 K" in s.hot_model
    assert s.runaway is not None and not s.runaway.runaway
    # a part 1000 times leakier runs away at 30 V through 50 K/W: Rθ·V·I·ln2/Td = 50·30·14 mA·0.069 ≫ 1
    leaky = [ReverseResult(0.0, 30.0, 0.2, 14e-3, 1.0, True)]
    bad = analyse_leakage(leaky, 25.0, "assumed", spec=spec(SCHOTTKY.replace("50e-6", "1.0")))
    assert bad.runaway.runaway and bad.outcome == "fail"


def test_a_reading_above_its_limit_fails():
    results = [ReverseResult(0.0, 10.0, 0.2, 10e-6, 1e-3, True), ReverseResult(1.0, 20.0, 0.2, 80e-6, 1e-3, True)]
    s = analyse_leakage(results, 25.0, "assumed", spec=spec(SCHOTTKY))
    assert [p.passed for p in s.points] == [True, False] and s.outcome == "fail"
