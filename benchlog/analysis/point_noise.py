"""The random scatter of a diode sweep's points, told apart into the drop reading's and the current reading's.

Each point's residual from the fitted law holds three things:
  - the drop reading's noise σ_V;
  - the current reading's noise σ_I, seen through the drop's slope f'(I): large on a junction's
    steep low end;
  - bends from the meters' fixed errors that the law cannot follow (a current offset bends the
    log law at its low end). They are type B terms already, so their directions are taken out
    first (`fit_result.unfollowed_shapes`).
Successive differences in the order the points were recorded remove what is left of a smooth
misfit (von Neumann et al., Ann. Math. Stat. 12, 1941): in a stepped sweep each pair is one step
apart in current and in time, so a bend of the law and the element's drift with its own heating
both difference out (sorting an up-and-down sweep by current would pair a cold point with a hot
one). Each squared difference has the expectation
    E[d_j²] = a_j·σ_V² + b_j·σ_I²,   a_j = Σ_k c_jk²,  b_j = Σ_k c_jk²·f'_k²,
where c_j is the difference's row of the map from the points' noise to the differenced residuals
(the fit's hat matrix and the bends' projection included, so the leverage of the steep low points
is counted, not assumed away). σ_V², σ_I² ≥ 0 are then solved by least squares weighted by each
difference's own variance (method of moments, iterated; common practice). Above EXACT_MAX points
the map is taken as the differencing alone (a_j = 2, b_j = f'_j² + f'_{j+1}²), where the few
fitted directions no longer matter.

Why both: the zero-current offset is one reading of the same meter, subtracted from every drop,
so σ_V is that reading's noise (a type A term of the judged value); and with the effective-
variance weights built from the current meter's *accuracy* (mostly a fixed offset, not noise)
the relative weights are not the points' real variances, so the fit's type A covariance is the
sandwich (JᵀWJ)⁻¹·JᵀWΣWJ·(JᵀWJ)⁻¹ with Σ_k = σ_V² + f'_k²·σ_I² (Huber 1967; White 1980), not
s²·(JᵀWJ)⁻¹, which holds only when the weights are the real ones.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .fit_result import without

EXACT_MAX = 2000  # points; above it the n×n map is not formed
#: Below this many residual degrees of freedom the two noises are not told apart (two variances from
#: two or three differences are mostly noise): all the scatter is taken as the drop's, σ_I = 0.
SPLIT_MIN_DOF = 4
ITERATIONS = 5


@dataclass(frozen=True)
class PointNoise:
    """One point's random scatter: the drop reading's (V) and the current reading's (A), with ν."""

    drop_sd_v: float
    current_sd_a: float
    dof: int
    split: bool = True  # False: too few points to tell them apart, all the scatter taken as the drop's

    def variances(self, slope: np.ndarray) -> np.ndarray:
        """Σ_k = σ_V² + f'_k²·σ_I²: each point's noise variance as a drop."""
        return self.drop_sd_v**2 + np.asarray(slope, dtype=float) ** 2 * self.current_sd_a**2


def point_noise(residuals_v, slope, gradient, weights, bends) -> PointNoise | None:
    """Estimate σ_V and σ_I from a fit's residuals (see the module docstring).

    The points come in the order they were recorded. `gradient` is the law's (unweighted) gradient in
    its parameters at the points, `weights` the fit's (None: equal), `bends` the orthonormal basis (in
    the weighted space) of the meter bends left out.
    ν: the residual degrees of freedom, less one for the second variance when the two are told apart.
    None when no degree of freedom is left.
    """
    n, p = gradient.shape
    left = n - p - bends.shape[1]  # the residuals' own degrees of freedom
    if left < 1:
        return None
    split = left >= SPLIT_MIN_DOF
    dof = left - 1 if split else left
    sw = np.ones(n) if weights is None else np.sqrt(np.asarray(weights, dtype=float))
    e = without(bends, np.asarray(residuals_v, dtype=float) * sw) / sw
    s2 = np.asarray(slope, dtype=float) ** 2
    if n > EXACT_MAX:
        a = np.full(n - 1, 2.0)
        b = s2[1:] + s2[:-1]
    else:
        w = sw * sw
        hat = gradient @ np.linalg.solve(gradient.T @ (w[:, None] * gradient), (gradient * w[:, None]).T)
        keep_bends = np.eye(n) - bends @ bends.T
        to_residuals = ((keep_bends * sw[None, :]) / sw[:, None]) @ (np.eye(n) - hat)
        c = np.diff(to_residuals, axis=0)
        a, b = (c * c).sum(axis=1), (c * c) @ s2
    d2 = np.diff(e) ** 2
    if split:
        var_v, var_i = _components(d2, a, b)
    else:  # too few to tell two noises apart: all of it taken as the drop's (the larger term for the offset)
        var_v, var_i = float(d2.sum() / a.sum()), 0.0
    return PointNoise(math.sqrt(var_v), math.sqrt(var_i), dof, split)


def _components(d2: np.ndarray, a: np.ndarray, b: np.ndarray) -> tuple[float, float]:
    """σ_V², σ_I² with E[d²] = a·σ_V² + b·σ_I², weighted by 1/E[d²]² (a squared normal's variance).

    Each is solved without a bound on the other, then floored at zero on its own: bounding σ_I² at
    zero while solving would bias σ_V² low whenever the current's noise is nil (half the time its
    free estimate is negative).
    """
    design = np.column_stack([a, b])
    floor = 1e-6 * float(np.mean(d2)) if d2.size and np.mean(d2) > 0 else 1e-300
    wt = np.ones(d2.size)
    var_v = var_i = 0.0
    for _ in range(ITERATIONS):
        (var_v, var_i), *_ = np.linalg.lstsq(design * wt[:, None], d2 * wt, rcond=None)
        expected = a * max(var_v, 0.0) + b * max(var_i, 0.0)
        wt = 1.0 / np.maximum(expected, floor)
    return float(max(var_v, 0.0)), float(max(var_i, 0.0))
