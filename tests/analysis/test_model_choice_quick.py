"""The automatic model choice's quick rule: no concave bend, no diode fit; AICc decides whenever the diode is fitted.

The diode law V = n·Vt·ln(I/Is + 1) + Rs·I is concave, d²V/dI² = −n·Vt/(I + Is)² < 0
(differentiate twice; Shockley 1949). The curvature test is checked against
numpy.polyfit, and the rule against the full AICc decision on seeded synthetic sweeps
(invented data, for this check only).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from benchlog.analysis.fit_diode import shockley_drop_v
from benchlog.analysis.model_choice import concave_curvature, fit_auto


def test_curvature_matches_numpy_polyfit():
    rng = np.random.default_rng(5)
    i = np.linspace(0.1, 3.0, 40)
    v = 0.01 * i - 3e-4 * i**2 + rng.normal(0, 2e-5, i.size)
    w = rng.uniform(0.5, 2.0, i.size)
    c, u = concave_curvature(i, v, w)
    # reference: numpy.polyfit with weights √w (it weights the residuals), unscaled covariance times s²
    coef, cov = np.polyfit(i, v, 2, w=np.sqrt(w), cov="unscaled")
    resid = (np.polyval(coef, i) - v) * np.sqrt(w)
    s2 = float(resid @ resid) / (i.size - 3)
    assert c == pytest.approx(coef[0], rel=1e-9)
    assert u == pytest.approx(math.sqrt(cov[0, 0] * s2), rel=1e-7)


def _sweeps(count: int):
    rng = np.random.default_rng(11)
    for k in range(count):
        n = int(rng.integers(8, 40))
        i = np.linspace(0.1, 3.0, n)
        shape = k % 4
        if shape == 0:  # a channel: straight
            v = 0.01 * i
        elif shape == 1:  # a channel warming up: bends upwards
            v = 0.01 * i + 2e-5 * i**2
        elif shape == 2:  # slightly concave, not a diode
            v = 0.01 * i - rng.uniform(0, 5e-5) * i**2
        else:  # a junction
            v = shockley_drop_v(i, rng.uniform(1, 2), 10 ** rng.uniform(-12, -5), rng.uniform(0, 0.2), 25.0)
        yield i, v + rng.normal(0, rng.choice([1e-6, 1e-5, 1e-4]), n)


def test_the_quick_rule_never_changes_the_decision():
    skipped = 0
    for i, v in _sweeps(100):
        quick = fit_auto(i, v, temperature_c=25.0)
        full = fit_auto(i, v, temperature_c=25.0, quick=False)
        assert quick.model == full.model, (quick.reason, full.reason)
        skipped += "not fitted" in quick.reason
    assert skipped >= 30  # it does skip: most straight and upward-bent sweeps


def test_a_junction_is_never_skipped_and_a_straight_line_is():
    i = np.linspace(0.01, 2.0, 25)
    diode = shockley_drop_v(i, 1.5, 1e-9, 0.03, 25.0) + np.random.default_rng(1).normal(0, 1e-4, i.size)
    fit = fit_auto(i, diode, temperature_c=25.0)
    assert fit.model == "diode" and "not fitted" not in fit.reason and "diode" in fit.criterion
    line = 0.01 * i + np.random.default_rng(2).normal(0, 1e-6, i.size)
    fit = fit_auto(i, line, temperature_c=25.0)
    assert fit.model == "resistive" and "no concave bend" in fit.reason and "diode" not in fit.criterion


def test_a_junction_kind_keeps_the_full_aicc():
    # a tie would go to the diode for a rectifier, so the diode law is always tried for one
    i = np.linspace(0.1, 3.0, 20)
    v = 0.01 * i + np.random.default_rng(3).normal(0, 1e-6, i.size)
    assert "no concave bend" in fit_auto(i, v, temperature_c=25.0).reason
    fit = fit_auto(i, v, temperature_c=25.0, tie_break="diode", tie_why="the run records a rectifier element")
    assert "no concave bend" not in fit.reason
