"""`junction.sweep_heating` works in place on its own arrays: same numbers as the plain projection, the fit untouched."""

from __future__ import annotations

import math

import numpy as np
import pytest

from benchlog.analysis.fit_resistive import fit_resistive
from benchlog.analysis.junction import sweep_heating


def _reference(fit, sensitivity, gradient, dq_dt):
    # the projection written plainly (numpy.linalg.lstsq as the reference least squares):
    # z = s·I·V projected off the model's directions, θ = z⊥·e / z⊥·z⊥, its standard error from the rest
    keep = ~fit.outliers
    if fit.excluded is not None:
        keep &= ~fit.excluded
    e, i, v = fit.residuals_v[keep], fit.current_a[keep], fit.drop_v[keep]
    z = np.asarray(sensitivity(i, v), dtype=float) * i * v
    basis = fit.curve.gradient(i)
    if fit.weights is not None:
        sw = np.sqrt(fit.weights[keep])
        e, z, basis = e * sw, z * sw, basis * sw[:, None]
    coef = np.linalg.lstsq(basis, z, rcond=None)[0]
    zp = z - basis @ coef
    theta = (zp @ e) / (zp @ zp)
    dof = e.size - fit.covariance.shape[0] - 1
    se = math.sqrt(((e - theta * zp) @ (e - theta * zp)) / dof / (zp @ zp))
    share = float(np.asarray(gradient, dtype=float) @ coef) / dq_dt
    return theta * share, abs(se * share)


@pytest.mark.parametrize("weighted", [False, True])
@pytest.mark.parametrize("outlier", [False, True])
def test_same_numbers_as_the_plain_projection_and_the_fit_is_not_changed(weighted, outlier):
    rng = np.random.default_rng(5)
    i = np.linspace(0.1, 3.0, 400)
    v = 0.01 * (1 + 3e-4 * i * i) * i + rng.normal(0.0, 3e-6, i.size)  # invented: a little self-heating
    if outlier:
        v[17] += 5e-4
    u_drop = 1e-6 + 1e-3 * np.abs(v) if weighted else None  # per-point u: unequal weights
    fit = fit_resistive(i, v, u_drop_v=u_drop, exclude_outliers=outlier)
    assert fit.weights is not None or not weighted  # the weighted case really is weighted
    before = [a.copy() for a in (fit.residuals_v, fit.current_a, fit.drop_v)]
    sens = lambda ii, vv: fit.params["r_on_ohm"] * 4e-3 * ii  # noqa: E731
    got = sweep_heating(fit, sens, np.array([0.0, 1.0]), fit.params["r_on_ohm"] * 4e-3)
    want = _reference(fit, sens, np.array([0.0, 1.0]), fit.params["r_on_ohm"] * 4e-3)
    assert got.rise_c == pytest.approx(want[0], rel=1e-9)
    assert got.u_c == pytest.approx(want[1], rel=1e-9)
    for a, b in zip(before, (fit.residuals_v, fit.current_a, fit.drop_v)):
        assert np.array_equal(a, b)  # in place on its own arrays only


def test_a_sensitivity_that_returns_its_input_is_not_changed():
    i = np.linspace(0.1, 3.0, 50)
    v = 0.01 * i + np.random.default_rng(2).normal(0.0, 3e-6, i.size)
    fit = fit_resistive(i, v)
    before = fit.current_a.copy()
    sweep_heating(fit, lambda ii, vv: ii, np.array([0.0, 1.0]), 1e-4)  # returns the current array itself
    assert np.array_equal(fit.current_a, before)
