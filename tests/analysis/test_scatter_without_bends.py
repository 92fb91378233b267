"""The type A scatter of a diode fit and the drop reading's own noise, when a current offset bends the data.

A fixed current offset o bends a diode's log law at its low end (V = f(I_read − o)), which the law
cannot follow; that bend is the offset's, already a type B term, so it must not come back as scatter.
References: the spread of seeded Monte Carlo sweeps (numpy's generator, the noise it was given), as a
GUM type A standard uncertainty is meant to predict (GUM 4.2; JCGM 101 for the Monte Carlo check).
"""

import math

import numpy as np
import pytest

from benchlog.analysis.fits import fit_diode, shockley_drop_v
from benchlog.analysis.uncertainty import Accuracy, MeasurementAccuracy

# A supply read-back on its 10 A range, ±(0.1 % + 0.05 % of range) = ±5 mA offset, and a meter on its
# 10 V range (invented figures of the usual size, as the simulated bench's)
ACC = MeasurementAccuracy(Accuracy(reading_pct=0.004, range_pct=0.0008, range=10.0),
                          Accuracy(reading_pct=0.1, range_pct=0.05, range=10.0))
PART = dict(ideality=1.8, i_s_a=6e-9, r_s_ohm=0.03)  # a silicon rectifier (invented part)
T_C = 25.0
I_TRUE = np.geomspace(0.005, 2.0, 25)


def sweep(seed: int, offset_a: float, sd_v: float, sd_i: float):
    rng = np.random.default_rng(seed)
    v = shockley_drop_v(I_TRUE, PART["ideality"], PART["i_s_a"], PART["r_s_ohm"], T_C) + rng.normal(0, sd_v, I_TRUE.size)
    return I_TRUE + offset_a + rng.normal(0, sd_i, I_TRUE.size), v


def fit(seed, offset_a, sd_v=20e-6, sd_i=100e-6):
    i, v = sweep(seed, offset_a, sd_v, sd_i)
    return fit_diode(i, v, ACC, temperature_c=T_C, offset_removed=True)


@pytest.mark.parametrize("offset_a, sd_v, sd_i", [(-3e-3, 20e-6, 100e-6), (3e-3, 20e-6, 100e-6),
                                                  (-3e-3, 60e-6, 300e-6), (3e-3, 20e-6, 0.0)])
def test_type_a_of_vf_predicts_the_spread_over_noise_not_the_offsets_bend(offset_a, sd_v, sd_i):
    fits = [fit(seed, offset_a, sd_v, sd_i) for seed in range(150)]
    vf = np.array([f.drop_at(1.0)[0] for f in fits])
    type_a = np.array([f.drop_budget_at(1.0).component("fit residuals").u for f in fits])
    spread = float(vf.std(ddof=1))
    # the rms type A over the seeds against the Monte Carlo spread (150 seeds: about ±6 % sampling
    # of a standard deviation, common practice: 1/√(2(n−1)))
    assert math.sqrt(float(np.mean(type_a**2))) == pytest.approx(spread, rel=0.3)
    assert all("residual scatter leaves out the bend" in " ".join(f.notes) for f in fits)


@pytest.mark.parametrize("sd_v, sd_i", [(20e-6, 100e-6), (20e-6, 0.0), (60e-6, 300e-6)])
def test_drop_reading_noise_is_told_apart_from_the_currents(sd_v, sd_i):
    # rms over seeds: the variance estimate is unbiased enough for a GUM type A term
    estimates = np.array([fit(seed, 2e-3, sd_v, sd_i).point_noise.drop_sd_v for seed in range(80)])
    assert math.sqrt(float(np.mean(estimates**2))) == pytest.approx(sd_v, rel=0.2)


def test_type_a_degrees_of_freedom_are_the_scatters_less_the_bends_and_the_second_variance():
    f = fit(0, 2e-3)
    # the law's 3 parameters, the current offset's bend to first and second order, σ_I beside σ_V
    assert f.point_noise.dof == f.dof == f.points_used - 3 - 2 - 1


@pytest.mark.parametrize("points", [4, 5, 6, 8])
def test_a_short_sweep_still_has_a_type_a_and_a_zero_reading_term(points):
    # too few points to tell the two noises apart: all the scatter is taken as the drop's, never none of it
    rng = np.random.default_rng(points)
    i = np.geomspace(0.05, 2.0, points)
    v = shockley_drop_v(i, PART["ideality"], PART["i_s_a"], PART["r_s_ohm"], T_C) + rng.normal(0, 20e-6, points)
    f = fit_diode(i + rng.normal(0, 1e-4, points), v, ACC, temperature_c=T_C, offset_removed=True)
    assert f.point_noise.drop_sd_v > 0 and f.point_noise.dof >= 1
    assert f.drop_budget_at(1.0).component("fit residuals").u > 0
    if points - 3 < 4:  # and says so, rather than stating a current noise of 0 A
        assert f.point_noise.current_sd_a == 0.0 and not f.point_noise.split
        assert any("all taken as the drop's" in n for n in f.notes)
        assert not any("current 0 A" in n for n in f.notes)
