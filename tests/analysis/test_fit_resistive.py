"""Resistive (R_DS(on)) and knee-line fits against numpy.polyfit and the GUM sensitivity rules."""

import math

import numpy as np
import pytest

from benchlog.analysis.fits import FitError, fit_knee, fit_resistive, studentised_residuals
from benchlog.analysis.uncertainty import Accuracy, MeasurementAccuracy

from .monte_carlo import monte_carlo_k

ACC = MeasurementAccuracy(Accuracy(0.0040, 0.0007, 1.0), Accuracy(0.05, 0.05, 10.0))


def sweep(seed=0, n=25, r=0.026, v0=3e-4, sigma=2e-5):
    rng = np.random.default_rng(seed)
    i = np.linspace(0.2, 5.0, n)
    return i, v0 + r * i + rng.normal(0.0, sigma, n)


def test_parameters_and_type_a_equal_numpy_polyfit():
    i, v = sweep()
    fit = fit_resistive(i, v)
    # reference: numpy.polyfit, covariance scaled by χ²/(N − 2) — the type A of GUM H.3
    coef, cov = np.polyfit(i, v, 1, cov=True)
    assert fit.params["r_on_ohm"] == pytest.approx(coef[0], rel=1e-10)
    assert fit.params["v0_v"] == pytest.approx(coef[1], rel=1e-8)
    assert fit.budgets["r_on_ohm"].component("fit residuals").u == pytest.approx(math.sqrt(cov[0, 0]), rel=1e-8)
    assert fit.budgets["v0_v"].component("fit residuals").u == pytest.approx(math.sqrt(cov[1, 1]), rel=1e-8)
    assert fit.dof == i.size - 2
    # no accuracy spec: type A only, and the fit says so
    assert fit.std_u["r_on_ohm"] == pytest.approx(math.sqrt(cov[0, 0]), rel=1e-8)
    assert any("type B omitted" in note for note in fit.notes)
    assert np.allclose(fit.residuals_v, v - np.polyval(coef, i), atol=1e-12)


def test_weighted_fit_equals_numpy_polyfit_with_weights():
    i, v = sweep(seed=1)
    u = np.linspace(1e-5, 6e-5, i.size)
    fit = fit_resistive(i, v, u_drop_v=u)
    # numpy.polyfit takes w = 1/σ for Gaussian uncertainties (numpy docs)
    coef, cov = np.polyfit(i, v, 1, w=1.0 / u, cov=True)
    assert fit.params["r_on_ohm"] == pytest.approx(coef[0], rel=1e-10)
    assert fit.params["v0_v"] == pytest.approx(coef[1], rel=1e-8)
    assert fit.std_u["r_on_ohm"] == pytest.approx(math.sqrt(cov[0, 0]), rel=1e-8)


def test_type_b_budget_follows_the_gain_rules():
    i, v = sweep(seed=2)
    fit = fit_resistive(i, v, ACC)
    r = fit.params["r_on_ohm"]
    b = fit.budgets["r_on_ohm"]
    # GUM 4.3.7 + 5.1.3: a gain scales R one to one, u_rel = (reading %/100)/√3 for each meter
    assert b.component("drop meter gain").u == pytest.approx(r * 0.0040e-2 / math.sqrt(3))
    assert b.component("current reading gain").u == pytest.approx(r * 0.05e-2 / math.sqrt(3))
    names = {c.name for c in b.components}
    assert "drop meter offset" not in names and "current reading offset" not in names
    # GUM 5.1.2 quadrature and G.4.1 Welch–Satterthwaite with type B at ν = ∞
    us = [c.u for c in b.components]
    assert b.u == pytest.approx(math.sqrt(sum(x * x for x in us)))
    u_a = b.component("fit residuals").u
    assert b.dof == pytest.approx(b.u**4 / (u_a**4 / (i.size - 2)))
    # U = k_p·u with k_p of the budget's combined distribution (GUM 6.3; the t term with its ν, the
    # gains rectangular), checked against a JCGM 101 Monte Carlo with numpy
    terms = [(c.distribution, c.u, c.dof) for c in b.components]
    assert [t[0] for t in terms] == ["t", "rectangular", "rectangular"]
    assert b.k == pytest.approx(monte_carlo_k(terms), abs=4e-3)
    assert fit.k == b.k and fit.expanded_u["r_on_ohm"] == pytest.approx(b.k * b.u)


def test_the_sensitivities_are_what_the_data_do():
    # The budget's claims checked on the data: a gain on the drop scales R by (1 + g),
    # a gain on the current by 1/(1 + g), offsets leave R alone (exact for a straight line).
    i, v = sweep(seed=3)
    base = fit_resistive(i, v).params["r_on_ohm"]
    g = 1e-3
    assert fit_resistive(i, v * (1 + g)).params["r_on_ohm"] == pytest.approx(base * (1 + g), rel=1e-9)
    assert fit_resistive(i * (1 + g), v).params["r_on_ohm"] == pytest.approx(base / (1 + g), rel=1e-9)
    assert fit_resistive(i, v + 1e-3).params["r_on_ohm"] == pytest.approx(base, rel=1e-9)
    assert fit_resistive(i + 1e-2, v).params["r_on_ohm"] == pytest.approx(base, rel=1e-9)


def test_drop_at_propagates_the_covariance():
    i, v = sweep(seed=4)
    fit = fit_resistive(i, v)
    coef, cov = np.polyfit(i, v, 1, cov=True)
    at = 3.3
    value, u = fit.drop_at(at)
    # reference: u² = gᵀ C g with g = (I, 1) (GUM 5.2.2, correlated inputs), C from numpy.polyfit
    g = np.array([at, 1.0])
    assert value == pytest.approx(np.polyval(coef, at), rel=1e-10)
    assert u == pytest.approx(math.sqrt(g @ cov @ g), rel=1e-8)
    # with the spec: the drop meter gain adds |V|·u(g_V), its offset u(o_V)
    fit_b = fit_resistive(i, v, ACC)
    budget = fit_b.drop_budget_at(at)
    assert budget.component("drop meter gain").u == pytest.approx(value * 0.0040e-2 / math.sqrt(3), rel=1e-8)
    assert budget.component("drop meter offset").u == pytest.approx(0.0007e-2 / math.sqrt(3), rel=1e-8)
    # once the zero-current offset is subtracted the drop meter's offset has cancelled
    fit_c = fit_resistive(i, v, ACC, offset_removed=True)
    assert "drop meter offset" not in {c.name for c in fit_c.drop_budget_at(at).components}


def test_outlier_is_flagged_not_dropped():
    i, v = sweep(seed=5)
    v = v.copy()
    v[9] += 15 * 2e-5
    fit = fit_resistive(i, v)
    assert np.flatnonzero(fit.outliers).tolist() == [9]
    assert fit.points == i.size and fit.excluded is None
    # the rule's statistic against a direct leave-one-out refit (Belsley, Kuh & Welsch 1980):
    # t_9 = e_9 / (s_(9)·√(1 + x₀ᵀ(XᵀX)⁻¹x₀)) with the fit made without point 9
    keep = np.arange(i.size) != 9
    coef, cov = np.polyfit(i[keep], v[keep], 1, cov=True)
    pred_u = math.sqrt(np.array([i[9], 1]) @ cov @ np.array([i[9], 1]))
    s = math.sqrt(np.sum((v[keep] - np.polyval(coef, i[keep])) ** 2) / (keep.sum() - 2))
    t_direct = (v[9] - np.polyval(coef, i[9])) / math.sqrt(s**2 + pred_u**2)
    assert studentised_residuals(i, v)[9] == pytest.approx(t_direct, rel=1e-8)
    # refit without outliers only when asked, and the flags still say which
    refit = fit_resistive(i, v, exclude_outliers=True)
    assert refit.excluded[9] and refit.outliers[9]
    assert refit.params["r_on_ohm"] == pytest.approx(coef[0], rel=1e-10)


def test_clean_sweep_has_no_outliers():
    i, v = sweep(seed=6)
    assert not fit_resistive(i, v).outliers.any()


def test_bad_data_is_refused():
    with pytest.raises(FitError):
        fit_resistive([1.0, 2.0], [0.1, 0.2])
    with pytest.raises(FitError):
        fit_resistive([1.0, 1.0, 1.0], [0.1, 0.2, 0.3])
    with pytest.raises(FitError):
        fit_resistive([1.0, 2.0, np.nan], [0.1, 0.2, 0.3])


def test_knee_line_uses_the_upper_currents():
    i = np.linspace(0.1, 4.0, 40)
    v = 0.70 + 0.05 * i + np.where(i < 2.0, -0.05 * (2.0 - i) ** 2, 0.0)
    fit = fit_knee(i, v)
    assert fit.model == "knee"
    assert fit.points == int((i >= 2.0).sum())
    # above 2 A the curve is exactly the line 0.70 + 0.05·I
    assert fit.params["v_knee_v"] == pytest.approx(0.70, abs=1e-9)
    assert fit.params["r_d_ohm"] == pytest.approx(0.05, abs=1e-9)
    wide = fit_knee(i, v, above_a=0.0)
    assert wide.points == i.size and wide.params["r_d_ohm"] > 0.05


@pytest.mark.slow
def test_false_flag_rate_on_clean_sweeps_is_the_rules_alpha():
    # The Bonferroni outlier test (Weisberg, Applied Linear Regression §9.1.3) flags a clean sweep
    # with probability <= α = 0.01. Over 1000 seeded clean sweeps we expect <= 10 flagged
    # (binomial σ ≈ 3.1); 20 leaves > 3σ of room, while a fixed |t| > 3.5 rule would flag ~50.
    from benchlog.analysis.fit_result import OUTLIER_ALPHA

    assert OUTLIER_ALPHA == 0.01
    flagged = sum(fit_resistive(*sweep(seed=1000 + k)).outliers.any() for k in range(1000))
    assert flagged <= 20
