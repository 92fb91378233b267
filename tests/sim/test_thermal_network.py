"""The simulator's junction–case–ambient network against scipy and the JESD51 definitions."""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.linalg import expm

from benchlog.sim.bench import SimBench
from benchlog.sim.config import SimConfig
from benchlog.sim.elements import NOMINAL, thermal_of
from benchlog.sim.thermal import Thermal, step_junction_c

NETWORK = Thermal(rth_ja_k_per_w=62.5, cth_j_per_k=0.1, rth_jc_k_per_w=12.0, cth_case_j_per_k=0.12)


def _matrix(t: Thermal) -> np.ndarray:
    r1, r2, cj, cc = t.rth_jc_k_per_w, t.rth_ca_k_per_w, t.cth_j_per_k, t.cth_case_j_per_k
    return np.array([[-1 / (r1 * cj), 1 / (r1 * cj)], [1 / (r1 * cc), -(1 / r1 + 1 / r2) / cc]])


@pytest.mark.parametrize("dt", [1e-3, 0.3, 2.0, 40.0])
def test_exact_step_matches_scipy_matrix_exponential(dt):
    # x(t+dt) = x∞ + e^(A·dt)(x − x∞), e^(A·dt) by scipy.linalg.expm (reference)
    ta, p, tj, tc = 25.0, 0.3, 40.0, 31.0
    x_inf = np.array([p * NETWORK.rth_ja_k_per_w, p * NETWORK.rth_ca_k_per_w])
    want = x_inf + expm(_matrix(NETWORK) * dt) @ (np.array([tj - ta, tc - ta]) - x_inf)
    got = NETWORK.advance(tj, tc, ta, p, dt)
    assert got == pytest.approx(tuple(ta + want), rel=1e-12, abs=1e-10)


def test_foster_terms_reproduce_the_network_step_response_by_solve_ivp():
    # the network's ODEs integrated by scipy.integrate.solve_ivp (reference) against Σ P·Rᵢ(1 − e^(−t/τᵢ))
    p, times = 0.25, np.array([0.05, 0.3, 1.0, 3.0, 10.0, 30.0, 60.0])
    a, b = _matrix(NETWORK), np.array([p / NETWORK.cth_j_per_k, 0.0])
    sol = solve_ivp(lambda t, x: a @ x + b, (0, times[-1]), [0.0, 0.0], t_eval=times, rtol=1e-10, atol=1e-12)
    ours = [NETWORK.step_response_k(p, t) for t in times]
    assert ours == pytest.approx(sol.y[0], rel=1e-6, abs=1e-9)
    terms = NETWORK.foster()
    assert sum(r for r, _ in terms) == pytest.approx(NETWORK.rth_ja_k_per_w, rel=1e-12)  # ΣRᵢ = RθJA
    assert [tau for _, tau in terms] == sorted((tau for _, tau in terms), reverse=True)  # dominant first
    assert all(r > 0 for r, _ in terms)


def test_steady_state_follows_the_jesd51_definitions():
    # JESD51-2: Tj = Ta + P·RθJA; junction-to-case: Tj − Tc = P·RθJC (JESD51 series)
    tj, tc = NETWORK.advance(25.0, 25.0, 25.0, 0.4, 1e4)
    assert tj == pytest.approx(25.0 + 0.4 * 62.5, rel=1e-9)
    assert tj - tc == pytest.approx(0.4 * 12.0, rel=1e-9)


def test_single_pole_special_case_is_the_first_order_model():
    # Cc = 0: one τ = RθJA·Cth and Tj(t) = Tss + (Tj0 − Tss)·e^(−t/τ) (first-order RC, common practice)
    single = Thermal(62.5, 0.2)
    assert single.tau_s == (12.5,)
    tj, _ = single.advance(25.0, 25.0, 25.0, 0.04, 12.5)
    assert tj == pytest.approx(25.0 + 2.5 * (1 - math.exp(-1)), rel=1e-12)
    assert tj == step_junction_c(25.0, 25.0, 0.04, single, 12.5)


def test_time_scale_scales_every_tau_and_keeps_the_resistances():
    fast = NETWORK.scaled(0.05)
    assert fast.tau_s == pytest.approx(tuple(0.05 * t for t in NETWORK.tau_s), rel=1e-12)
    assert [r for r, _ in fast.foster()] == pytest.approx([r for r, _ in NETWORK.foster()], rel=1e-12)


def test_default_pmos_settles_within_a_minute_and_has_two_poles():
    t = thermal_of(NOMINAL["pmos"])
    assert len(t.tau_s) == 2 and 5 * t.tau_s[0] <= 60.0  # 5 τ: within 1 % of the steady rise (e^-5)


def test_truth_writes_rth_and_the_time_constants_with_the_scale():
    truth = SimBench(SimConfig(element="pmos", seed=2, thermal_time_scale=0.1)).truth()
    base = SimBench(SimConfig(element="pmos", seed=2)).truth()
    assert isinstance(truth["tau_s"], list) and len(truth["tau_s"]) == 2
    assert truth["rth_ja_k_per_w"] == base["rth_ja_k_per_w"]
    assert truth["tau_s"] == pytest.approx([0.1 * t for t in base["tau_s"]], rel=1e-12)
    assert truth["thermal_time_scale"] == 0.1
    assert sum(truth["foster_rth_k_per_w"]) == pytest.approx(truth["rth_ja_k_per_w"], rel=1e-12)
