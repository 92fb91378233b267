"""Choosing between the resistive and the diode model by AICc, with the numbers in the reason.

AICc = N·ln(RSS/N) + 2K + 2K(K+1)/(N−K−1) for least squares with K = p + 1
estimated quantities (the p curve parameters and the noise variance) —
Hurvich & Tsai (1989); Burnham & Anderson, "Model Selection and Multimodel
Inference" (2002), §2.4 and §7.4. AICc rather than BIC: sweeps hold 10–50
points, where plain AIC favours the bigger model and AICc's correction matters,
and we want the better predictor of the drop, not the "true" model BIC looks for.
Both models are scored on the same points (I > 0) with the same weights. A
difference under 2 is no real support for either (Burnham & Anderson §2.6), so
the simpler, resistive model is kept unless the caller breaks the tie (`fit_run`
uses the element kind recorded in the run); a diode fit whose Is exceeds the largest
current (no exponential region) or with an ideality outside 0.5–10 is refused
as unphysical.

A cheap test first (`concave_curvature`): the diode law is concave everywhere,
d²V/dI² = −n·Vt/(I + Is)² < 0 (differentiate the Shockley law twice), while a
line has none and a channel that warms up bends upwards. A weighted quadratic
V = a + b·I + c·I² on the same points gives c and its standard uncertainty; when
c > −CURVATURE_T·u(c) the data show no concave bend the diode law could use, so it
cannot beat the line by the AICc margin, and it is not fitted: the reason says
so. The test is skipped (AICc decides as before) when a tie would go to the
diode (a junction element), and AICc stays the decision whenever the diode is fitted.

With errors in the current each model weighs the points by its own effective
variance u_eff,i² = u(V)² + (f'(I)·u(I))² (`effective_variance`), so the
weights no longer cancel between the models: the Gaussian log-likelihood with
an unknown scale, −2 ln L = N·ln(RSS_w/N) + Σ ln u_eff,i² + const, keeps its
Σ ln u_eff,i² term. Both are scored on the same points: those neither model
calls unresolved (the junction's rule, drop resolved above zero, included).
"""

from __future__ import annotations

from benchlog.quantity import with_standard

import math

import numpy as np

from .fit_diode import fit_diode
from .fit_resistive import fit_resistive
from .effective_variance import point_uncertainty, unresolved_points
from .fit_result import FitError, FitResult
from .uncertainty import MeasurementAccuracy

#: AICc difference below which two models are taken as equally supported (Burnham & Anderson 2002, §2.6).
AICC_TIE = 2.0
IDEALITY_RANGE = (0.5, 10.0)
#: The diode law is not tried when the quadratic term is above −CURVATURE_T standard uncertainties.
CURVATURE_T = 2.0
#: Most points the choice is scored on; longer runs are thinned by an even stride for the choice only.
CHOICE_POINTS = 5000


def aicc(residuals_v: np.ndarray, parameters: int, weights=None) -> float:
    """AICc of a least-squares fit with `parameters` curve parameters (plus the variance)."""
    e = np.asarray(residuals_v, dtype=float)
    n = e.size
    k = parameters + 1
    rss = float(e @ e) if weights is None else float((weights * e) @ e)
    if n - k - 1 <= 0:
        return math.inf
    rss = max(rss, 1e-300 * n)
    return n * math.log(rss / n) + 2 * k + 2 * k * (k + 1) / (n - k - 1)


def concave_curvature(current_a: np.ndarray, drop_v: np.ndarray, weights=None) -> tuple[float, float]:
    """(c, u(c)) of the weighted least-squares quadratic V = a + b·I + c·I² (type A, s²·(XᵀWX)⁻¹)."""
    i = np.asarray(current_a, dtype=float)
    v = np.asarray(drop_v, dtype=float)
    n = i.size
    if n < 5:
        return math.nan, math.nan
    scale = float(np.max(np.abs(i))) or 1.0
    x = i / scale  # columns of one size, so XᵀWX is well conditioned
    basis = np.column_stack([np.ones_like(x), x, x * x])
    sw = np.ones_like(x) if weights is None else np.sqrt(np.asarray(weights, dtype=float))
    a_mat, rhs = basis * sw[:, None], v * sw
    coef, *_ = np.linalg.lstsq(a_mat, rhs, rcond=None)
    resid = rhs - a_mat @ coef
    s2 = float(resid @ resid) / (n - 3)
    try:
        cov = s2 * np.linalg.inv(a_mat.T @ a_mat)
    except np.linalg.LinAlgError:
        return math.nan, math.nan
    return float(coef[2]) / scale**2, math.sqrt(max(float(cov[2, 2]), 0.0)) / scale**2


def _score(fit: FitResult, parameters: int, used: np.ndarray, varying_weights: bool) -> float:
    """AICc of `fit` on the `used` points; with weights of its own, plus Σ ln u_eff² (module docstring)."""
    w = None if fit.weights is None else fit.weights[used]
    score = aicc(fit.residuals_v[used], parameters, w)
    if varying_weights and w is not None:
        score -= float(np.sum(np.log(w)))
    return score


def fit_auto(
    current_a,
    drop_v,
    accuracy: MeasurementAccuracy | None = None,
    *,
    temperature_c: float | None,
    u_drop_v=None,
    u_current_a=None,
    offset_removed: bool = False,
    exclude_outliers: bool = False,
    point_index=None,
    tie_break: str = "resistive",
    tie_why: str = "",
    quick: bool = True,
) -> FitResult:
    """Fit both models, keep the one with the lower AICc; `reason` says why.

    `quick`: skip the diode law when the data show no concave bend (module docstring).

    Within `AICC_TIE` the data do not decide; `tie_break` does ("resistive", the
    simpler model, unless the caller knows better — e.g. the element's recorded
    kind — and says so in `tie_why`).
    """
    i_all = np.asarray(current_a, dtype=float).ravel()
    v_all = np.asarray(drop_v, dtype=float).ravel()
    common = dict(u_drop_v=u_drop_v, u_current_a=u_current_a, offset_removed=offset_removed,
                  exclude_outliers=exclude_outliers, point_index=point_index)
    if i_all.shape != v_all.shape:
        raise FitError(f"current and drop differ in length ({i_all.size} vs {v_all.size})")
    if not (np.isfinite(i_all).all() and np.isfinite(v_all).all()):
        raise FitError("current and drop must be finite (drop overloads before fitting)")
    pu_all = point_uncertainty(i_all, v_all, accuracy, u_drop_v, u_current_a, offset_removed=offset_removed,
                               error=FitError)
    # Both models are scored on the points with I > 0; a long run is scored on an even
    # stride of them (the choice needs the shape, not a million points), then refitted in full.
    positive = np.flatnonzero(i_all > 0)
    stride = max(1, -(-positive.size // CHOICE_POINTS))
    rows = positive[::stride]
    i, v, pu = i_all[rows], v_all[rows], pu_all.subset(rows)
    unresolved = unresolved_points(i, v, pu, conduction=True)
    used = ~unresolved
    varying = pu.errors_in_current
    choice = dict(u_drop_v=None if u_drop_v is None else pu.u_drop_v,
                  u_current_a=None if u_current_a is None else pu.u_current_a,
                  offset_removed=offset_removed, unresolved=unresolved)
    scores: dict[str, float] = {}
    why_not_diode = ""
    diode = None
    line = fit_resistive(i, v, accuracy, **choice)
    scores["resistive"] = _score(line, 2, used, varying)
    if temperature_c is None:
        why_not_diode = "no temperature recorded, the diode law cannot be evaluated"
    elif quick and tie_break != "diode":
        c, u_c = concave_curvature(i[used], v[used], None if line.weights is None else line.weights[used])
        if math.isfinite(c) and u_c > 0 and c > -CURVATURE_T * u_c:
            why_not_diode = (f"no concave bend (quadratic term {with_standard(c, u_c, 'V/A²')}, above −{CURVATURE_T:g} u): "
                             "the diode law, concave everywhere, cannot win; not fitted")
    if temperature_c is not None and not why_not_diode:
        try:
            diode = fit_diode(i, v, accuracy, temperature_c=temperature_c, **choice)
        except FitError as exc:
            why_not_diode = f"diode fit failed: {exc}"
    if diode is not None:
        scores["diode"] = _score(diode, 3, used, varying)
        n_fit, i_s = diode.params["ideality"], diode.params["i_s_a"]
        if i_s >= float(np.max(i)):
            why_not_diode = f"the diode fit's Is = {i_s:.3g} A exceeds the largest current: no exponential region"
        elif not IDEALITY_RANGE[0] <= n_fit <= IDEALITY_RANGE[1]:
            why_not_diode = f"the diode fit's ideality {n_fit:.3g} is outside {IDEALITY_RANGE[0]}–{IDEALITY_RANGE[1]}"
    where = f"{int(used.sum())} points" if stride == 1 else f"{int(used.sum())} of {positive.size} points (every {stride}th)"
    head = f"AICc on {where}: resistive {scores['resistive']:.1f}"
    if "diode" in scores:
        head += f", diode {scores['diode']:.1f}"
    if diode is not None and not why_not_diode:
        delta = scores["resistive"] - scores["diode"]
        if delta >= AICC_TIE:
            reason = f"{head}; diode lower by {delta:.1f} (>= {AICC_TIE:g}) -> diode"
            return _with(fit_diode(i_all, v_all, accuracy, temperature_c=temperature_c, **common), reason, scores)
        if abs(delta) < AICC_TIE:
            lower = "diode" if delta > 0 else "resistive"
            why = tie_why or ("the simpler model" if tie_break == "resistive" else "as asked")
            reason = (f"{head}; {lower} lower by only {abs(delta):.1f} (< {AICC_TIE:g}, no real support) "
                      f"-> {tie_break}, {why}")
            if tie_break == "diode":
                return _with(fit_diode(i_all, v_all, accuracy, temperature_c=temperature_c, **common), reason, scores)
        else:
            reason = f"{head}; resistive lower by {-delta:.1f} -> resistive"
    else:
        reason = f"{head}; {why_not_diode} -> resistive"
    return _with(fit_resistive(i_all, v_all, accuracy, temperature_c=temperature_c, **common), reason, scores)


def _with(fit: FitResult, reason: str, scores: dict[str, float]) -> FitResult:
    from dataclasses import replace

    return replace(fit, reason=reason, criterion=dict(scores))
