"""Diode-law fit against the Shockley reference numbers and scipy.optimize.curve_fit."""

import math

import numpy as np
import pytest
from scipy import constants
from scipy.optimize import curve_fit

from benchlog.analysis.fits import FitError, fit_diode, shockley_drop_v, thermal_voltage_v
from benchlog.analysis.uncertainty import Accuracy, MeasurementAccuracy

T300_C = 300.0 - constants.zero_Celsius  # 300 K
TRUE = dict(ideality=1.5, i_s_a=1e-9, r_s_ohm=0.020)
ACC = MeasurementAccuracy(Accuracy(0.0040, 0.0007, 10.0), Accuracy(0.05, 0.01, 10.0))


def sweep(seed=0, n=30, sigma=2e-4):
    rng = np.random.default_rng(seed)
    i = np.geomspace(0.01, 5.0, n)
    return i, shockley_drop_v(i, TRUE["ideality"], TRUE["i_s_a"], TRUE["r_s_ohm"], T300_C) + rng.normal(0, sigma, n)


def test_shockley_reference_values():
    # Issue 4 reference: Is = 1 nA, n = 1.5, Rs = 20 mΩ at 300 K -> Vf(1 A) = 0.8236 V, Vf(5 A) = 0.9660 V
    assert thermal_voltage_v(T300_C) == pytest.approx(0.025852, abs=1e-6)  # kT/q at 300 K (CODATA)
    vf = shockley_drop_v(np.array([1.0, 5.0]), 1.5, 1e-9, 0.020, T300_C)
    assert vf[0] == pytest.approx(0.8236, abs=5e-5)
    assert vf[1] == pytest.approx(0.9660, abs=5e-5)


def test_noise_free_data_recovers_the_reference_parameters():
    i = np.geomspace(0.01, 5.0, 30)
    v = shockley_drop_v(i, 1.5, 1e-9, 0.020, T300_C)
    fit = fit_diode(i, v, temperature_c=T300_C)
    assert fit.params["ideality"] == pytest.approx(1.5, rel=1e-7)
    assert fit.params["i_s_a"] == pytest.approx(1e-9, rel=1e-5)
    assert fit.params["r_s_ohm"] == pytest.approx(0.020, rel=1e-6)
    # Vf at chosen currents: the reference values
    assert fit.drop_at(1.0)[0] == pytest.approx(0.8236, abs=5e-5)
    assert fit.drop_at(5.0)[0] == pytest.approx(0.9660, abs=5e-5)


def test_noisy_sweep_recovers_truth_within_expanded_uncertainty():
    i, v = sweep(seed=1)
    fit = fit_diode(i, v, ACC, temperature_c=T300_C)
    for key, true in TRUE.items():
        assert abs(fit.params[key] - true) <= fit.expanded_u[key], key
    for at in (1.0, 5.0):
        value, u = fit.drop_at(at)
        true_v = float(shockley_drop_v(at, 1.5, 1e-9, 0.020, T300_C))
        assert abs(value - true_v) <= 2 * u


def test_parameters_and_covariance_equal_scipy_curve_fit():
    i, v = sweep(seed=2)
    fit = fit_diode(i, v, temperature_c=T300_C)
    vt = thermal_voltage_v(T300_C)

    def model(current, n, ln_is, rs):
        return n * vt * np.log1p(current / np.exp(ln_is)) + rs * current

    # reference: scipy.optimize.curve_fit (absolute_sigma=False scales pcov by χ²/(N − 3))
    popt, pcov = curve_fit(model, i, v, p0=[1.3, -19.0, 0.01])
    assert fit.params["ideality"] == pytest.approx(popt[0], rel=1e-6)
    assert fit.params["i_s_a"] == pytest.approx(math.exp(popt[1]), rel=1e-5)
    assert fit.params["r_s_ohm"] == pytest.approx(popt[2], rel=1e-6)
    assert np.allclose(fit.covariance, pcov, rtol=1e-4)
    assert fit.std_u["ideality"] == pytest.approx(math.sqrt(pcov[0, 0]), rel=1e-4)
    assert fit.std_u["i_s_a"] == pytest.approx(math.exp(popt[1]) * math.sqrt(pcov[1, 1]), rel=1e-4)
    # Vf(I) uncertainty by the Jacobian through curve_fit's covariance (GUM 5.2.2)
    at = 2.0
    x = at / math.exp(popt[1])
    g = np.array([vt * math.log1p(x), -popt[0] * vt * x / (1 + x), at])
    assert fit.drop_at(at)[0] == pytest.approx(model(at, *popt), rel=1e-9)
    assert fit.drop_at(at)[1] == pytest.approx(math.sqrt(g @ pcov @ g), rel=1e-4)


def test_weighted_fit_equals_curve_fit_with_sigma():
    i, v = sweep(seed=3)
    u = 1e-4 + 1e-4 * i
    fit = fit_diode(i, v, temperature_c=T300_C, u_drop_v=u)
    vt = thermal_voltage_v(T300_C)
    popt, pcov = curve_fit(lambda c, n, l, r: n * vt * np.log1p(c / np.exp(l)) + r * c, i, v,
                           p0=[1.3, -19.0, 0.01], sigma=u)
    assert fit.params["ideality"] == pytest.approx(popt[0], rel=1e-6)
    assert fit.std_u["r_s_ohm"] == pytest.approx(math.sqrt(pcov[2, 2]), rel=1e-4)


def test_type_b_on_the_parameters():
    i, v = sweep(seed=4)
    fit = fit_diode(i, v, ACC, temperature_c=T300_C)
    n, rs = fit.params["ideality"], fit.params["r_s_ohm"]
    g_v = 0.0040e-2 / math.sqrt(3)
    # a drop gain g scales V: n and Rs scale by (1 + g), Is does not move (the law is linear in n, Rs)
    assert fit.budgets["ideality"].component("drop meter gain").u == pytest.approx(n * g_v, rel=1e-6)
    assert fit.budgets["r_s_ohm"].component("drop meter gain").u == pytest.approx(rs * g_v, rel=1e-6)
    # a drop offset o shifts ln Is by o/(n·Vt) (I ≫ Is); u(Is) = Is·u(o)/(n·Vt)
    u_o = 0.0007e-2 * 10.0 / math.sqrt(3)
    expected = fit.params["i_s_a"] * u_o / (n * thermal_voltage_v(T300_C))
    assert fit.budgets["i_s_a"].component("drop meter offset").u == pytest.approx(expected, rel=1e-4)
    # and the data agree: refitting scaled data scales n and Rs
    scaled = fit_diode(i, v * (1 + 1e-3), temperature_c=T300_C)
    plain = fit_diode(i, v, temperature_c=T300_C)
    assert scaled.params["ideality"] == pytest.approx(plain.params["ideality"] * 1.001, rel=1e-7)
    assert scaled.params["i_s_a"] == pytest.approx(plain.params["i_s_a"], rel=1e-5)


def test_outlier_flagged_and_points_at_zero_current_left_out():
    i, v = sweep(seed=5)
    i = np.concatenate([[0.0], i])
    v = np.concatenate([[0.0], v])
    v[12] += 0.01  # 50 σ
    fit = fit_diode(i, v, temperature_c=T300_C)
    assert fit.points == i.size - 1
    assert fit.point_index[np.flatnonzero(fit.outliers)].tolist() == [12]
    assert any("I <= 0" in note for note in fit.notes)
    refit = fit_diode(i, v, temperature_c=T300_C, exclude_outliers=True)
    assert refit.excluded.sum() == 1
    assert abs(refit.params["ideality"] - 1.5) < abs(fit.params["ideality"] - 1.5)


def test_refuses_what_it_cannot_fit():
    with pytest.raises(FitError):
        fit_diode([0.1, 0.2, 0.3], [0.6, 0.62, 0.64], temperature_c=25.0)
    with pytest.raises(FitError):
        fit_diode(np.linspace(0.1, 1, 10), np.full(10, 0.7) - 0.01 * np.linspace(0.1, 1, 10) ** 0.1, temperature_c=25.0)
