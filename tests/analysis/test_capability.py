"""Capability with confidence: Bissell's lower bound, the lot verdict it drives, and ESD without masking."""

import math

import numpy as np
import pytest
from scipy import stats

from benchlog.analysis.capability import CAPABILITY_MIN, capability_with_bound, lower_bound
from benchlog.analysis.lot import generalized_esd, summarize


def test_bissell_bound_worked_value():
    # Bissell, Applied Statistics 39 (1990) 331-340: C_L = C - z(1-a)·sqrt(1/(9n) + C²/(2(n-1))).
    # n = 18, Cpu = 1.61, 95 %: by hand with z = 1.6449 (scipy.stats.norm.ppf(0.95)) -> 1.138,
    # the "near 1.14" an independent recomputation of a lot of 18 found.
    z = stats.norm.ppf(0.95)
    by_hand = 1.61 - z * math.sqrt(1 / (9 * 18) + 1.61 ** 2 / (2 * 17))
    assert lower_bound(1.61, 18) == pytest.approx(by_hand, rel=1e-12)
    assert lower_bound(1.61, 18) == pytest.approx(1.14, abs=0.005)
    assert lower_bound(1.61, 1) is None  # no spread from one part


def test_bissell_bound_close_to_exact_noncentral_t_for_one_sided_index():
    # Exact one-sided bound: √n·(USL − x̄)/s follows a non-central t with n − 1 degrees of
    # freedom and non-centrality 3√n·Cpu (e.g. Kotz & Johnson, Process Capability Indices,
    # 1993); its 95 % lower bound solves nct.cdf(t_obs, n−1, δ) = 0.95 (scipy.stats.nct).
    from scipy.optimize import brentq

    for n, cpu in ((30, 1.5), (100, 1.33), (50, 2.0)):
        t_obs = 3 * math.sqrt(n) * cpu
        delta = brentq(lambda d: stats.nct.cdf(t_obs, n - 1, d) - 0.95, 0.0, t_obs)
        exact = delta / (3 * math.sqrt(n))
        assert lower_bound(cpu, n) == pytest.approx(exact, abs=0.03)


def test_bound_covers_the_true_capability_about_95_percent_of_the_time():
    # Monte Carlo with numpy's normal generator: true Cpu = 1.5 (μ 0, σ 1, USL 4.5), n = 40.
    rng = np.random.default_rng(2026)
    trials, n, covered = 3000, 40, 0
    for _ in range(trials):
        x = rng.normal(0.0, 1.0, n)
        c = capability_with_bound(x.mean(), x.std(ddof=1), n, usl=4.5)
        covered += c.lower <= 1.5
    assert 0.93 <= covered / trials <= 0.97


def test_lot_needs_the_bound_not_the_estimate_to_pass():
    # Cpu about 1.6 on 18 parts: the estimate clears 1.33, Bissell's bound (≈ 1.14) does not.
    rng = np.random.default_rng(18)
    x = rng.normal(0.0, 1.0, 18)
    x = (x - x.mean()) / x.std(ddof=1)  # exactly mean 0, σ 1
    u = np.full(18, 1e-3)
    s = summarize(x, u, usl=3 * 1.61)
    assert s.capability == pytest.approx(1.61) and s.capability > CAPABILITY_MIN
    assert s.capability_lower == pytest.approx(lower_bound(1.61, 18))
    assert s.counts["pass"] == 18 and s.outcome == "conditional"
    assert any("not demonstrated at 95% confidence" in n for n in s.notes)
    # The same spread over 200 parts: the bound clears 1.33 and the lot passes.
    y = rng.normal(0.0, 1.0, 200)
    y = (y - y.mean()) / y.std(ddof=1)
    big = summarize(y, np.full(200, 1e-3), usl=3 * 1.61)
    assert big.capability_lower > CAPABILITY_MIN and big.outcome == "pass"


def test_esd_bound_does_not_mask_a_cluster():
    # Masking (Rosner 1983; NIST/SEMATECH e-Handbook §1.3.5.17.3): six equal gross values among
    # 24 normal ones hide each other when the test may look for only n // 10 = 3; with the bound
    # ⌊(n − 1)/2⌋ = 14 all six are found.
    rng = np.random.default_rng(0)
    x = np.concatenate([rng.normal(10.0, 0.1, 24), [11.0] * 6])
    masked, r_small = generalized_esd(x, max_outliers=x.size // 10)
    assert r_small == 3 and masked.sum() == 0  # the old bound misses all six
    found, r = generalized_esd(x)
    assert r == 14 and set(np.flatnonzero(found)) == set(range(24, 30))


def test_esd_matches_a_plain_reference_implementation():
    # Reference: the handbook's procedure written out directly (remove the value farthest
    # from the current mean, recompute mean and s with numpy, λ from scipy.stats.t).
    def reference(x, r, a=0.05):
        x = list(x)
        n, stat, crit, gone = len(x), [], [], []
        alive = list(range(n))
        for i in range(1, r + 1):
            v = np.array([x[j] for j in alive])
            k = int(np.argmax(np.abs(v - v.mean())))
            stat.append(abs(v[k] - v.mean()) / v.std(ddof=1))
            t = stats.t.ppf(1 - a / (2 * (n - i + 1)), n - i - 1)
            crit.append((n - i) * t / math.sqrt((n - i - 1 + t * t) * (n - i + 1)))
            gone.append(alive.pop(k))
        count = max([i + 1 for i in range(r) if stat[i] > crit[i]], default=0)
        return sorted(gone[:count])

    rng = np.random.default_rng(12)
    for trial in range(20):
        x = rng.normal(0, 1, 41)
        x[:trial % 5] += rng.choice([-1, 1], trial % 5) * rng.uniform(3, 8, trial % 5)
        mask, r = generalized_esd(x)
        assert sorted(np.flatnonzero(mask)) == reference(x, r)
