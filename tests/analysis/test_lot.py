"""Lot statistics: capability indices, the generalized ESD outlier test, per-part and lot verdicts."""

import numpy as np
import pytest
from scipy import stats

from benchlog.analysis.lot import capability, generalized_esd, summarize


def test_cpk_worked_example():
    # Common practice (textbook Cpk): mean 10, σ 0.5, LSL 8, USL 13 ->
    # Cpu = 3/1.5 = 2.0, Cpl = 2/1.5 = 1.333, Cpk = 1.333.
    name, value = capability(10.0, 0.5, usl=13.0, lsl=8.0)
    assert name == "Cpk" and value == pytest.approx(4 / 3, abs=1e-12)
    assert capability(10.0, 0.5, usl=13.0) == ("Cpu", pytest.approx(2.0))
    assert capability(10.0, 0.5, lsl=8.0) == ("Cpl", pytest.approx(4 / 3))


def test_summary_against_numpy_on_generated_data():
    rng = np.random.default_rng(7)
    x = rng.normal(0.026, 0.0008, 500)
    s = summarize(x, np.full(x.size, 1e-5), usl=0.030, lsl=0.022, quantity="r_on_ohm")
    mu, sd = np.mean(x), np.std(x, ddof=1)  # numpy reference, sample σ
    assert (s.mean, s.std, s.min, s.max) == (pytest.approx(mu), pytest.approx(sd), x.min(), x.max())
    assert s.capability == pytest.approx(min(0.030 - mu, mu - 0.022) / (3 * sd))
    assert s.std == pytest.approx(stats.tstd(x))  # scipy's sample σ agrees


# NIST/SEMATECH e-Handbook §1.3.5.17.3, Rosner's 54 values (from memory); the handbook finds
# 3 outliers at α = 0.05 with r = 10, statistics R1..R3 ≈ 3.12, 2.94, 3.18 against
# λ1..λ3 = 3.158, 3.151, 3.144.
ROSNER = [
    -0.25, 0.68, 0.94, 1.15, 1.20, 1.26, 1.26, 1.34, 1.38, 1.43, 1.49, 1.49, 1.55, 1.56,
    1.58, 1.65, 1.69, 1.70, 1.76, 1.77, 1.81, 1.91, 1.94, 1.96, 1.99, 2.06, 2.09, 2.10,
    2.14, 2.15, 2.23, 2.24, 2.26, 2.35, 2.37, 2.40, 2.47, 2.54, 2.62, 2.64, 2.90, 2.92,
    2.92, 2.93, 3.21, 3.26, 3.30, 3.59, 3.68, 4.30, 4.64, 5.34, 5.42, 6.01,
]


def test_generalized_esd_on_rosner_data():
    x = np.array(ROSNER)
    assert x.size == 54
    mask, r = generalized_esd(x, max_outliers=10)
    assert r == 10
    assert sorted(x[mask]) == [5.34, 5.42, 6.01]
    # First test statistic by hand from the handbook's definition: max|x − x̄|/s.
    assert np.max(np.abs(x - x.mean())) / x.std(ddof=1) == pytest.approx(3.12, abs=1.5e-3)


def test_esd_critical_value_matches_handbook():
    # λ1 for n = 54, α = 0.05 is printed as 3.158 (NIST handbook table, from memory; 3 decimals).
    n, i, a = 54, 1, 0.05
    t = stats.t.ppf(1 - a / (2 * (n - i + 1)), n - i - 1)
    lam = (n - i) * t / np.sqrt((n - i - 1 + t * t) * (n - i + 1))
    assert lam == pytest.approx(3.158, abs=1e-3)


def test_normal_data_rarely_flags_and_gross_errors_are_found():
    rng = np.random.default_rng(3)
    x = rng.normal(0.85, 0.01, 200)
    assert generalized_esd(x)[0].sum() == 0
    x[[5, 50]] = [0.95, 0.74]
    mask = generalized_esd(x)[0]
    assert set(np.flatnonzero(mask)) == {5, 50}


def test_lot_verdicts():
    rng = np.random.default_rng(11)
    x = rng.normal(0.026, 0.0005, 40)
    u = np.full(x.size, 0.0002)
    good = summarize(x, u, usl=0.032, quantity="r_on_ohm")
    assert good.capability_name == "Cpu" and good.capability > 1.33
    assert good.outcome == "pass" and good.counts["pass"] == 40
    # Same parts against a tight limit: capability falls below 1.33 -> not a pass.
    tight = summarize(x, u, usl=0.0275)
    assert tight.capability < 1.33 and tight.outcome in ("conditional", "fail")
    x_bad = x.copy()
    x_bad[0] = 0.040
    bad = summarize(x_bad, u, usl=0.032)
    assert bad.outcome == "fail" and bad.parts[0].outcome == "fail" and bad.parts[0].outlier
    assert bad.counts["fail"] == 1 and "flagged, not removed" in bad.outlier_rule
    assert bad.mean == pytest.approx(x_bad.mean())  # the outlier stays in the statistics


def test_large_lot_runs_vectorised():
    # 10,000 parts: a correctness check at scale (speed is measured in benchmarks/).
    rng = np.random.default_rng(5)
    x = rng.normal(0.85, 0.005, 10_000)
    s = summarize(x, np.full(x.size, 0.001), usl=0.90, lsl=0.80)
    assert s.n == 10_000 and len(s.parts) == 10_000
    assert s.std == pytest.approx(np.std(x, ddof=1))
