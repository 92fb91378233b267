"""Choosing between the resistive and the diode model by AICc, with the numbers in the reason.

AICc = N·ln(RSS/N) + 2K + 2K(K+1)/(N−K−1) for least squares with K = p + 1
estimated quantities (the p curve parameters and the noise variance) —
Hurvich & Tsai (1989); Burnham & Anderson, "Model Selection and Multimodel
Inference" (2002), §2.4 and §7.4. AICc rather than BIC: sweeps hold 10–50
points, where plain AIC favours the bigger model and AICc's correction matters,
and we want the better predictor of the drop, not the "true" model BIC looks for.
Both models are scored on the same points (I > 0) with the same weights. A
difference under 2 is no real support for either (Burnham & Anderson §2.6), so
the simpler, resistive model is kept; a diode fit whose Is exceeds the largest
current (no exponential region) or with an ideality outside 0.5–10 is refused
as unphysical.
"""

from __future__ import annotations

import math

import numpy as np

from .fit_diode import fit_diode
from .fit_resistive import fit_resistive
from .fit_result import FitError, FitResult
from .uncertainty import MeasurementAccuracy

#: AICc difference below which two models are taken as equally supported (Burnham & Anderson 2002, §2.6).
AICC_TIE = 2.0
IDEALITY_RANGE = (0.5, 10.0)


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


def _weights(u_drop_v, shape, rows):
    if u_drop_v is None:
        return None
    u = np.broadcast_to(np.asarray(u_drop_v, dtype=float), shape)[rows]
    return 1.0 / (u * u)


def fit_auto(
    current_a,
    drop_v,
    temperature_c: float | None,
    accuracy: MeasurementAccuracy | None = None,
    *,
    u_drop_v=None,
    offset_removed: bool = False,
    exclude_outliers: bool = False,
    point_index=None,
) -> FitResult:
    """Fit both models, keep the one with the lower AICc (ties to resistive); `reason` says why."""
    i = np.asarray(current_a, dtype=float).ravel()
    v = np.asarray(drop_v, dtype=float).ravel()
    common = dict(u_drop_v=u_drop_v, offset_removed=offset_removed, exclude_outliers=exclude_outliers,
                  point_index=point_index)
    positive = i > 0
    w = _weights(u_drop_v, i.shape, positive)
    scores: dict[str, float] = {}
    why_not_diode = ""
    diode = None
    if temperature_c is None:
        why_not_diode = "no temperature recorded, the diode law cannot be evaluated"
    else:
        try:
            diode = fit_diode(i, v, temperature_c, accuracy, **common)
        except FitError as exc:
            why_not_diode = f"diode fit failed: {exc}"
    # the resistive score on the same points as the diode's (I > 0)
    line_pos = fit_resistive(i[positive], v[positive], None, u_drop_v=None if u_drop_v is None
                             else np.broadcast_to(np.asarray(u_drop_v, float), i.shape)[positive])
    scores["resistive"] = aicc(line_pos.residuals_v, 2, w)
    if diode is not None:
        scores["diode"] = aicc(v[positive] - diode.curve.value(i[positive]), 3, w)
        n_fit, i_s = diode.params["ideality"], diode.params["i_s_a"]
        if i_s >= float(np.max(i)):
            why_not_diode = f"the diode fit's Is = {i_s:.3g} A exceeds the largest current: no exponential region"
        elif not IDEALITY_RANGE[0] <= n_fit <= IDEALITY_RANGE[1]:
            why_not_diode = f"the diode fit's ideality {n_fit:.3g} is outside {IDEALITY_RANGE[0]}–{IDEALITY_RANGE[1]}"
    head = f"AICc on {int(positive.sum())} points: resistive {scores['resistive']:.1f}"
    if "diode" in scores:
        head += f", diode {scores['diode']:.1f}"
    if diode is not None and not why_not_diode:
        delta = scores["resistive"] - scores["diode"]
        if delta >= AICC_TIE:
            reason = f"{head}; diode lower by {delta:.1f} (>= {AICC_TIE:g}): diode"
            return _with(diode, reason, scores)
        if delta > 0:
            reason = f"{head}; diode lower by only {delta:.1f} (< {AICC_TIE:g}, no real support): simpler resistive kept"
        else:
            reason = f"{head}; resistive lower by {-delta:.1f}: resistive"
    else:
        reason = f"{head}; {why_not_diode}: resistive"
    return _with(fit_resistive(i, v, accuracy, temperature_c=temperature_c, **common), reason, scores)


def _with(fit: FitResult, reason: str, scores: dict[str, float]) -> FitResult:
    from dataclasses import replace

    return replace(fit, reason=reason, criterion=dict(scores))
