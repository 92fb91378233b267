"""Automatic model choice by AICc (Hurvich & Tsai 1989) on resistive and diode-like data."""

import math
import re

import numpy as np
import pytest

from benchlog.analysis.fits import aicc, fit_auto, shockley_drop_v


def test_aicc_formula_by_hand():
    # AICc = N·ln(RSS/N) + 2K + 2K(K+1)/(N−K−1), K = p + 1 (Burnham & Anderson 2002, eq. 2.2 and §2.4)
    e = np.array([1.0, -1.0, 2.0, -2.0, 0.5, -0.5, 1.0, -1.0, 0.0, 0.0])
    n, k = 10, 3
    expected = n * math.log(float(e @ e) / n) + 2 * k + 2 * k * (k + 1) / (n - k - 1)
    assert aicc(e, 2) == pytest.approx(expected)


@pytest.mark.parametrize("seed", range(5))
def test_mosfet_channel_and_resistor_data_pick_resistive(seed):
    rng = np.random.default_rng(seed)
    i = np.linspace(0.0, 5.0, 26)
    v = 0.026 * i + rng.normal(0, 2e-5, i.size)  # a P-MOSFET channel, R_DS(on) = 26 mΩ (invented part)
    fit = fit_auto(i, v, temperature_c=25.0)
    assert fit.model == "resistive"
    assert fit.params["r_on_ohm"] == pytest.approx(0.026, rel=1e-3)
    assert "AICc" in fit.reason and fit.reason.endswith("resistive")


@pytest.mark.parametrize(
    "label, n, i_s, r_s",
    [
        ("silicon rectifier", 1.8, 2e-9, 0.030),
        ("schottky", 1.05, 2e-5, 0.040),
        ("body diode", 1.2, 1e-10, 0.010),
    ],
)
def test_diode_data_pick_diode(label, n, i_s, r_s):
    rng = np.random.default_rng(7)
    i = np.linspace(0.05, 3.0, 25)
    v = shockley_drop_v(i, n, i_s, r_s, 25.0) + rng.normal(0, 2e-4, i.size)
    fit = fit_auto(i, v, temperature_c=25.0)
    assert fit.model == "diode", label
    assert fit.params["ideality"] == pytest.approx(n, rel=0.1)
    # the reason quotes both scores and the difference, and they are the scores it computed
    numbers = [float(x) for x in re.findall(r"-?\d+\.\d", fit.reason)]
    assert fit.criterion["resistive"] == pytest.approx(numbers[0], abs=0.06)
    assert fit.criterion["diode"] == pytest.approx(numbers[1], abs=0.06)
    assert fit.criterion["resistive"] - fit.criterion["diode"] >= 2.0


def test_without_temperature_only_resistive_is_possible():
    i = np.linspace(0.05, 3.0, 25)
    v = shockley_drop_v(i, 1.5, 1e-9, 0.02, 25.0)
    fit = fit_auto(i, v, temperature_c=None)
    assert fit.model == "resistive"
    assert "no temperature" in fit.reason


def test_a_tie_is_broken_by_the_caller_and_said_so():
    # Only the straight upper part of a rectifier's curve, noisy: the data cannot tell the models
    # apart (|ΔAICc| < 2, "no real support", Burnham & Anderson 2002 §2.6).
    rng = np.random.default_rng(6)
    i = np.linspace(1.5, 3.0, 15)
    v = shockley_drop_v(i, 1.8, 5e-9, 0.03, 25.0) + rng.normal(0, 2e-3, i.size)
    plain = fit_auto(i, v, temperature_c=25.0)
    assert abs(plain.criterion["resistive"] - plain.criterion["diode"]) < 2.0
    assert plain.model == "resistive" and "simpler model" in plain.reason
    told = fit_auto(i, v, temperature_c=25.0, tie_break="diode", tie_why="the run records a rectifier element")
    assert told.model == "diode" and "rectifier" in told.reason
