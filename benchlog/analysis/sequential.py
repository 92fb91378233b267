"""Stopping a part's measurement once its guard-banded verdict is decided, with the wrong-decision rate held.

Looking at the verdict after every group of points and stopping at the first
decided look would, left alone, pass or fail more parts wrongly than one look at
the end: each look is another chance for the noise to cross the guard band. A
group-sequential boundary pays for the looks by widening the band. We use the
constant boundary of Pocock (S. J. Pocock, "Group sequential methods in the
design and analysis of clinical trials", Biometrika 64(2), 1977, 191-199) has
the same band c·u at every look; the boundary of O'Brien and Fleming (P. C.
O'Brien, T. R. Fleming, "A multiple testing procedure for clinical trials",
Biometrics 35(3), 1979, 549-556) has c·sqrt(n_K/n_k)·u at look k: wide early,
close to the fixed plan's k·u at the last look. Either way c is chosen so that a
part exactly on the limit is wrongly passed (or wrongly failed) at any of the K
looks with a set probability alpha. One look with k = 2 has alpha = 1 - Phi(2)
(the one-sided coverage of the ILAC-G8 guard band w = U, U = 2u); inspection uses
half of it (`INSPECTION_ALPHA`): matched alpha alone left the wrong decisions for
parts just beyond the limit level with the fixed plan's within the noise of our
simulation (173 against 162 in 60,000, one seed), half of it gives about half as
many (70 against 162) at the price of more parts left undecided near the limit,
while parts far from it, most of a lot, still stop at the first look.

We stop with O'Brien-Fleming. In our simulation of parts spread within three
standard uncertainties of the limit, Pocock's constant band wrongly decided more
parts than the fixed plan (790 against 556 in 200,000, type A only): a part just
beyond the limit has a fair chance to slip through one of the early, noisy looks.
O'Brien-Fleming's early looks decide only parts far from the limit, which is
where the time goes in a lot of good parts (tests/analysis/test_sequential.py).

c solves P(Z_1 > -c·w_1, ..., Z_K > -c·w_K) = 1 - alpha for the standardised estimates
Z_k after n_k points, which are jointly normal with corr(Z_i, Z_j) = sqrt(n_i/n_j)
for i <= j (independent increments; Jennison & Turnbull, "Group Sequential
Methods with Applications to Clinical Trials", 2000, section 3.1). The joint
probability comes from scipy's multivariate normal distribution function.

A part of the bench also carries a type-B share of its uncertainty that does not
shrink between looks; it makes the looks more alike (higher correlation), and by
Slepian's inequality the chance of a crossing at any look can only fall, so the
boundary stays on the safe side (the simulation in the tests checks this).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

#: The guard band's coverage factor the fixed plan decides with (ILAC-G8:09/2019, U = k·u, k = 2).
FIXED_K = 2.0


def one_sided_alpha(k: float = FIXED_K) -> float:
    """1 - Phi(k): how often one look wrongly passes a part exactly on its limit."""
    return 0.5 * math.erfc(k / math.sqrt(2.0))


SHAPES = ("obrien-fleming", "pocock")


def pocock_constant(looks: int, alpha: float | None = None, spacing: tuple[float, ...] | None = None) -> float:
    """Pocock's constant c (band c·u at every look)."""
    return boundary_constant(looks, alpha, spacing, "pocock")


def band_factors(looks: int, spacing: tuple[float, ...] | None = None, shape: str = "obrien-fleming") -> list[float]:
    """w_k of the band c·w_k·u at each look: 1 (Pocock) or sqrt(n_K / n_k) (O'Brien-Fleming)."""
    n = [float(x) for x in (spacing if spacing is not None else range(1, looks + 1))]
    if shape == "pocock":
        return [1.0] * looks
    if shape == "obrien-fleming":
        return [math.sqrt(n[-1] / x) for x in n]
    raise ValueError(f"shape must be one of {', '.join(SHAPES)}, got {shape!r}")


def inspection_alpha() -> float:
    """The wrong-decision probability at the limit that inspection stops with: half of one k = 2 look's."""
    return one_sided_alpha() / 2.0


@lru_cache(maxsize=64)
def boundary_constant(looks: int, alpha: float | None = None, spacing: tuple[float, ...] | None = None,
                      shape: str = "obrien-fleming") -> float:
    """c of the boundary c·w_k for `looks` looks at information levels `spacing` (default 1, 2, ..., K)."""
    from scipy.optimize import brentq
    from scipy.stats import multivariate_normal, norm
    import numpy as np

    if looks < 1:
        raise ValueError(f"looks must be at least 1, got {looks}")
    alpha = one_sided_alpha() if alpha is None else float(alpha)
    if not 0.0 < alpha < 0.5:
        raise ValueError(f"alpha must be in (0, 0.5), got {alpha}")
    if looks == 1:
        return float(norm.isf(alpha))
    n = np.asarray(spacing if spacing is not None else range(1, looks + 1), dtype=float)
    if n.size != looks or np.any(np.diff(n) <= 0) or n[0] <= 0:
        raise ValueError("spacing must be K increasing positive information levels")
    cov = np.sqrt(np.minimum.outer(n, n) / np.maximum.outer(n, n))
    dist = multivariate_normal(mean=np.zeros(looks), cov=cov, allow_singular=False)
    w = np.asarray(band_factors(looks, tuple(n), shape))

    def crossing(c: float) -> float:
        # P(some Z_k <= -c·w_k) = 1 - P(all -Z_k < c·w_k); -Z has the same law as Z
        return 1.0 - float(dist.cdf(c * w, rng=np.random.default_rng(12345))) - alpha

    return float(brentq(crossing, 0.5 * float(norm.isf(alpha)), float(norm.isf(alpha / looks)) + 0.5, xtol=1e-5))


@dataclass(frozen=True)
class SequentialLook:
    """The verdict at one look: decided (pass/fail) or go on (conditional)."""

    outcome: str  # "pass" | "fail" | "conditional"
    value: float
    u: float
    band: float  # c·u, the guard band used at this look
    look: int
    looks: int


def judge_look(value: float, u: float, limit: float, c: float, look: int, looks: int,
               side: str = "upper") -> SequentialLook:
    """The guard-band rule with c in place of k (upper limit: pass if x + c·u <= L, fail if x - c·u > L)."""
    band = c * u
    if side == "upper":
        outcome = "pass" if value + band <= limit else "fail" if value - band > limit else "conditional"
    else:
        outcome = "pass" if value - band >= limit else "fail" if value + band < limit else "conditional"
    return SequentialLook(outcome, value, u, band, look, looks)
