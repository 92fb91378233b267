"""Student's t without scipy (analysis/student_t.py) against scipy.special, the reference implementation."""

from __future__ import annotations

import math

import pytest
from scipy import special

from benchlog.analysis.fit_diode import BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C, ZERO_C_K
from benchlog.analysis.student_t import incomplete_beta, t_quantile, t_sf

DOFS = [1, 2, 3, 4.5, 7, 10, 28, 30.7, 60, 100, 300, 500, 999, 1000.5, 3000, 1e4, 99999, 1e5 + 1, 1e6, 1e9]
# the coverage factor's p = 95.45 % two-sided, and the Bonferroni outlier test's 1 − α/(2n) out to n = 1e7
PROBS = [0.6, 0.9, 0.97725, 0.995, 1 - 1e-6, 1 - 2.5e-9, 1 - 5e-10]


@pytest.mark.parametrize("dof", DOFS)
def test_quantile_matches_scipy_stdtrit(dof):
    for p in PROBS:
        # reference: scipy.special.stdtrit, the inverse CDF behind scipy.stats.t.ppf
        assert t_quantile(dof, p) == pytest.approx(float(special.stdtrit(dof, p)), rel=1e-9)
        assert t_quantile(dof, 1 - p) == pytest.approx(-float(special.stdtrit(dof, p)), rel=1e-9)


def test_quantile_at_infinite_dof_is_the_normal_quantile():
    # reference: scipy.special.ndtri; 2.00 for p = 95.45 % is the GUM's k = 2 (GUM G.3, common practice)
    for p in PROBS:
        assert t_quantile(math.inf, p) == pytest.approx(float(special.ndtri(p)), rel=1e-12)
    assert t_quantile(math.inf, 0.5 + 0.9545 / 2) == pytest.approx(2.0, abs=1e-3)


def test_textbook_t_table_values():
    # two-sided 95 % values of a printed t table (e.g. GUM Table G.2, from memory): 12.71, 2.571, 2.228, 1.960
    assert t_quantile(1, 0.975) == pytest.approx(12.706, abs=1e-3)
    assert t_quantile(5, 0.975) == pytest.approx(2.571, abs=1e-3)
    assert t_quantile(10, 0.975) == pytest.approx(2.228, abs=1e-3)
    assert t_quantile(math.inf, 0.975) == pytest.approx(1.960, abs=1e-3)


@pytest.mark.parametrize("dof", DOFS + [math.inf])
def test_tail_matches_scipy_stdtr(dof):
    for t in [1e-5, 0.01, 0.5, 0.99, 1.0, 1.01, 2.0, 3.0, 6.0, 20.0, 1e3]:
        # reference: scipy.special.stdtr(ν, −t) = P(T > t) (scipy.special.ndtr(−t) for ν = ∞)
        ref = float(special.stdtr(dof, -t)) if math.isfinite(dof) else float(special.ndtr(-t))
        tol = 1e-9 if dof <= 1e5 or t <= 6 else 1e-4  # inverted expansion far out in the tail: 1e-4 at 1e-75
        assert t_sf(t, dof) == pytest.approx(ref, rel=tol)
        assert t_sf(-t, dof) == pytest.approx(1 - ref, rel=1e-9)


def test_incomplete_beta_matches_scipy_betainc():
    for a, b in [(0.5, 0.5), (2.0, 3.0), (0.5, 250.0), (250.0, 0.5), (10.0, 10.0)]:
        for x in [1e-6, 0.01, 0.3, 0.5, 0.9, 0.999]:
            assert incomplete_beta(x, a, b) == pytest.approx(float(special.betainc(a, b, x)), rel=1e-11, abs=1e-300)


def test_the_written_out_constants_are_scipys():
    from scipy import constants

    # exact SI values since 2019 (BIPM SI Brochure, 9th ed.), as scipy.constants has them
    assert BOLTZMANN_J_PER_K == constants.k
    assert ELEMENTARY_CHARGE_C == constants.e
    assert ZERO_C_K == constants.zero_Celsius


def test_normal_quantile_matches_scipy_ndtri():
    from benchlog.analysis.student_t import normal_quantile

    for p in [1e-300, 1e-12, 1e-9, 0.001, 0.1, 0.3, 0.5, 0.6, 0.9, 0.97725, 0.999, 1 - 1e-6, 1 - 5e-10]:
        assert normal_quantile(p) == pytest.approx(float(special.ndtri(p)), rel=1e-13, abs=1e-15)


def test_median_matches_numpy_median():
    import numpy as np

    from benchlog.analysis.verdict import median_of

    rng = np.random.default_rng(3)
    for n in (1, 2, 3, 10, 11, 1000):
        x = rng.normal(size=n)
        assert median_of(x) == float(np.median(x))  # reference: numpy.median


def test_quantile_and_tail_over_a_wide_grid_against_scipy():
    # reference: scipy.special.stdtrit and scipy.special.stdtr over a grid far wider than the tool uses:
    # ν from 1 to 1e8 (60 values, log-spaced, mostly not integers) × p from 0.5 to 1 − 1e-10
    import numpy as np

    dofs = np.geomspace(1.0, 1e8, 60)
    probs = np.concatenate([np.linspace(0.5, 0.99, 25), 1 - np.geomspace(1e-2, 1e-10, 25)])
    worst_q = worst_sf = 0.0
    for dof in dofs:
        for p in probs:
            ref = float(special.stdtrit(dof, p))
            got = t_quantile(float(dof), float(p))
            if ref == 0.0:
                assert abs(got) < 1e-12
                continue
            # p itself is known to half an ulp: far out in the tail that alone moves the quantile by
            # ulp(p) / density (the density of Student's t, a handbook formula, e.g. Abramowitz & Stegun 26.7.1)
            log_pdf = (math.lgamma((dof + 1) / 2) - math.lgamma(dof / 2) - 0.5 * math.log(dof * math.pi)
                       - (dof + 1) / 2 * math.log1p(ref * ref / dof))
            conditioning = 4 * math.ulp(float(p)) / math.exp(log_pdf)
            worst_q = max(worst_q, abs(got - ref) / max(abs(ref) * 1e-9, conditioning) * 1e-9)
            # and back: the tail at the reference quantile is 1 − p (scipy.special.stdtr(ν, −t) = P(T > t))
            tail = float(special.stdtr(dof, -ref))
            worst_sf = max(worst_sf, abs(t_sf(ref, float(dof)) / tail - 1))
    assert worst_q < 1e-9
    assert worst_sf < 1e-9
