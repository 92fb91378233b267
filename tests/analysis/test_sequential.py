"""The group-sequential guard band: boundary constants against published tables and scipy, wrong decisions by simulation."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm

from benchlog.analysis.sequential import (
    band_factors,
    boundary_constant,
    inspection_alpha,
    judge_look,
    one_sided_alpha,
    pocock_constant,
)


def test_one_look_is_the_fixed_guard_band():
    # scipy reference: the one-sided quantile; 1 - Phi(2) is the k = 2 guard band's coverage
    assert one_sided_alpha() == pytest.approx(norm.sf(2.0), rel=1e-12)
    assert boundary_constant(1) == pytest.approx(2.0, abs=1e-9)
    assert boundary_constant(1, 0.025) == pytest.approx(norm.isf(0.025), abs=1e-9)


@pytest.mark.parametrize("looks, published", [(2, 2.178), (3, 2.289), (4, 2.361), (5, 2.413)])
def test_pocock_constants_match_the_published_table(looks, published):
    # Pocock (1977) / Jennison & Turnbull (2000) Table 2.1, two-sided 5 % (2.5 % each side), from memory
    assert pocock_constant(looks, 0.025) == pytest.approx(published, abs=2e-3)


@pytest.mark.parametrize("looks, published", [(2, 1.977), (3, 2.004), (4, 2.024), (5, 2.040)])
def test_obrien_fleming_constants_match_the_published_table(looks, published):
    # O'Brien & Fleming (1979) / Jennison & Turnbull (2000) Table 2.3, two-sided 5 %, from memory
    assert boundary_constant(looks, 0.025) == pytest.approx(published, abs=2e-3)
    assert band_factors(looks)[-1] == 1.0 and band_factors(looks)[0] == pytest.approx(np.sqrt(looks))


def test_judge_look_is_the_guard_band_rule_with_c():
    # ILAC-G8:09/2019 guard band w = U, here with U = c·u
    assert judge_look(1.0, 0.1, 1.25, 2.5, 1, 3).outcome == "pass"  # 1.0 + 0.25 <= 1.25
    assert judge_look(1.0, 0.1, 1.2, 2.5, 1, 3).outcome == "conditional"
    assert judge_look(1.3, 0.1, 1.04, 2.5, 1, 3).outcome == "fail"  # 1.3 - 0.25 > 1.04
    assert judge_look(1.0, 0.1, 0.75, 2.5, 1, 3, side="lower").outcome == "pass"


def _simulate(shape: str, u_b: float, parts: int, looks: int, seed: int, alpha: float | None = None):
    """Parts spread within 3 u of the limit; each look adds one reading; a shared type-B error per part."""
    rng = np.random.default_rng(seed)
    n = np.arange(1, looks + 1)
    u = np.sqrt(u_b**2 + 1.0 / n)
    mu = u[-1] * rng.uniform(-3.0, 3.0, parts)
    est = mu[:, None] + rng.normal(0.0, u_b, parts)[:, None] + np.cumsum(rng.normal(0.0, 1.0, (parts, looks)), 1) / n
    fixed = np.where(est[:, -1] + 2 * u[-1] <= 0, "pass", np.where(est[:, -1] - 2 * u[-1] > 0, "fail", "cond"))
    c, w = boundary_constant(looks, alpha, None, shape), band_factors(looks, None, shape)
    seq = np.full(parts, "cond", dtype=object)
    used = np.full(parts, looks)
    for k in range(looks):
        open_ = seq == "cond"
        p = open_ & (est[:, k] + c * w[k] * u[k] <= 0)
        f = open_ & (est[:, k] - c * w[k] * u[k] > 0)
        seq[p], seq[f] = "pass", "fail"
        used[p | f] = k + 1

    def wrong(d):
        return int(((d == "pass") & (mu > 0)).sum() + ((d == "fail") & (mu <= 0)).sum())

    return wrong(fixed), wrong(seq), float(used.mean())


@pytest.mark.parametrize("u_b", [0.0, 0.3, 1.0])
def test_stopping_early_makes_no_more_wrong_decisions_than_the_fixed_plan(u_b):
    # inspection's alpha (half a k = 2 look's): clearly fewer wrong decisions, beyond the binomial spread
    fixed, seq, looks_used = _simulate("obrien-fleming", u_b, 60_000, 5, seed=11, alpha=inspection_alpha())
    assert seq + 2 * np.sqrt(fixed) <= fixed
    assert looks_used < 5  # and it does stop early for some parts


def test_matched_alpha_alone_is_level_with_the_fixed_plan():
    # alpha equal to one k = 2 look's: about as many wrong decisions as the fixed plan (why inspection halves it)
    fixed, seq, _ = _simulate("obrien-fleming", 0.0, 60_000, 5, seed=12)
    assert abs(seq - fixed) <= 3 * np.sqrt(fixed)


def test_the_constant_band_would_decide_more_parts_wrongly():
    # why the code stops with O'Brien-Fleming and not Pocock (module docstring)
    fixed, seq, _ = _simulate("pocock", 0.0, 60_000, 5, seed=13)
    assert seq > fixed + 2 * np.sqrt(fixed)


def test_wrong_pass_rate_at_the_limit_is_alpha():
    # a part exactly on its limit: wrongly passed at any of 5 looks with probability alpha (binomial band)
    rng = np.random.default_rng(5)
    looks, parts = 5, 200_000
    n = np.arange(1, looks + 1)
    z = np.cumsum(rng.normal(size=(parts, looks)), 1) / np.sqrt(n)
    c, w = boundary_constant(looks), np.array(band_factors(looks))
    rate = float(np.mean(np.any(z <= -c * w, axis=1)))
    alpha = one_sided_alpha()
    assert abs(rate - alpha) < 4 * np.sqrt(alpha * (1 - alpha) / parts)
