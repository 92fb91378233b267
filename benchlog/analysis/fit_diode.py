"""Fit of the Shockley diode law with series resistance, V = n·Vt·ln(I/Is + 1) + Rs·I.

Vt = k·T/q at the recorded temperature (k and q exact by the 2019 SI definition, as in
scipy.constants; they are written out so that a resistive fit never imports scipy). The start
comes from the linear form V ≈ a·ln I + b + c·I (a = n·Vt, b = −n·Vt·ln Is,
c = Rs, valid for I ≫ Is) solved with numpy.linalg.lstsq; scipy's
least_squares then refines (n, ln Is, Rs) — ln Is, because Is spans decades.
Type A covariance: with the drop's own weights, s²·(JᵀWJ)⁻¹ with s² = Σw·e²/ν, as
scipy.optimize.curve_fit with absolute_sigma=False. With weights built from the current
meter's accuracy (below), whose offset is fixed rather than noise, the relative weights are
not the points' real variances, and the covariance is the sandwich with the points' own
scatter told apart into drop and current noise (`point_noise`). Either way the scatter leaves
out the bends of the meters' fixed errors the law cannot follow (a current offset bends its
low end; those are type B terms already, `fit_result.unfollowed_shapes`).

Weights: the current is a reading too, and on the steep part of the curve a
small current error is a large drop error; W holds the effective variances
u(V)² + (dV/dI·u(I))² with dV/dI = n·Vt/(I + Is) + Rs at the current estimate,
refitted until the weights settle (Orear 1982, `effective_variance`). Points
whose current or drop is not resolved from zero stay in the result with zero weight.

Type B: each meter error (gain and offset of drop and current, `fit_result`)
is a fixed shift δV_i of the data; its effect on the parameters is the least-
squares projection δp = (JᵀWJ)⁻¹JᵀW·δV (linearised, GUM 5.1.3). That gives,
e.g., u_rel(n) = u_rel(Rs) = u(g_V) for a drop gain, and u(ln Is) = u(o_V)/(n·Vt)
for a drop offset, without writing each case by hand.
"""

from __future__ import annotations

import math

import numpy as np

from benchlog.quantity import engineering

from .fit_result import (
    FitError,
    FitResult,
    Shockley,
    budgets_to_dicts,
    error_shapes,
    externally_studentised,
    offset_curvature_shapes,
    outlier_flags,
    unfollowed_shapes,
    without,
)
from .effective_variance import (
    MAX_ITERATIONS,
    PointUncertainty,
    describe,
    point_uncertainty,
    unresolved_points,
    weights_converged,
)
from .point_noise import point_noise
from .uncertainty import Component, MeasurementAccuracy, combine

from .si_constants import BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C, ZERO_C_K


def thermal_voltage_v(temperature_c: float) -> float:
    """Vt = k·T/q (Boltzmann constant and elementary charge, exact SI values)."""
    return BOLTZMANN_J_PER_K * (float(temperature_c) + ZERO_C_K) / ELEMENTARY_CHARGE_C


def shockley_drop_v(current_a, ideality: float, i_s_a: float, r_s_ohm: float, temperature_c: float):
    """V = n·Vt·ln(I/Is + 1) + Rs·I (Shockley 1949, with an ohmic series term)."""
    i = np.asarray(current_a, dtype=float)
    return ideality * thermal_voltage_v(temperature_c) * np.log1p(i / i_s_a) + r_s_ohm * i


def _start(i: np.ndarray, v: np.ndarray, sqrt_w: np.ndarray | None, vt: float) -> np.ndarray:
    a_mat = np.column_stack([np.log(i), np.ones_like(i), i])
    rhs = v
    if sqrt_w is not None:
        a_mat = a_mat * sqrt_w[:, None]
        rhs = v * sqrt_w
    (a, b, c), *_ = np.linalg.lstsq(a_mat, rhs, rcond=None)
    if not a > 0:
        raise FitError("the drop does not grow with ln I: no exponential region to fit the diode law to")
    return np.array([a / vt, -b / a, c])


def _solve(i: np.ndarray, v: np.ndarray, w: np.ndarray | None, vt: float, p0: np.ndarray | None = None):
    """One weighted nonlinear least squares of the diode law at fixed weights."""
    from scipy import optimize  # only a diode fit needs it: a resistive fit never waits for its import

    sw = None if w is None else np.sqrt(w)
    if p0 is None:
        p0 = _start(i, v, sw, vt)

    def residual(p):
        r = Shockley(p[0], p[1], p[2], vt).value(i) - v
        return r if sw is None else r * sw

    def jac(p):
        j = Shockley(p[0], p[1], p[2], vt).gradient(i)
        return j if sw is None else j * sw[:, None]

    # Bounds only keep a hopeless fit (data with no exponential region) from overflowing;
    # on a real diode they are far from the answer and inactive.
    lo = np.array([0.05, -300.0, -np.inf])
    hi = np.array([100.0, math.log(float(np.max(i))) + 30.0, np.inf])
    p0 = np.clip(p0, lo + 1e-9, hi - 1e-9)
    with np.errstate(over="ignore", invalid="ignore"):
        sol = optimize.least_squares(residual, p0, jac=jac, bounds=(lo, hi), method="trf",
                                     x_scale="jac", xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=400)
    if sol.status <= 0 or not np.all(np.isfinite(sol.x)):
        raise FitError(f"the diode fit did not converge ({sol.message})")
    curve = Shockley(float(sol.x[0]), float(sol.x[1]), float(sol.x[2]), vt)
    jw = jac(sol.x)
    e = v - curve.value(i)
    dof = i.size - 3
    ew = e if sw is None else e * sw
    s2 = float(ew @ ew) / dof
    try:
        jtj_inv = np.linalg.inv(jw.T @ jw)
    except np.linalg.LinAlgError as exc:
        raise FitError("the diode parameters are not separable on these points") from exc
    lev = np.einsum("ij,jk,ik->i", jw, jtj_inv, jw)
    return curve, e, dof, s2, jtj_inv, lev, jw, sol.x


def _solve_weighted(i: np.ndarray, v: np.ndarray, pu: PointUncertainty, vt: float):
    """The diode law with effective-variance weights at its own slope n·Vt/(I + Is) + Rs, iterated
    (Orear 1982): returns the last solve, its weights, the iteration count and whether it converged."""
    w = pu.drop_weights()
    out = _solve(i, v, w, vt)
    if not pu.errors_in_current:
        return out, w, 0, True
    for iteration in range(1, MAX_ITERATIONS + 1):
        new = pu.weights(out[0].slope(i))
        if new is None:
            return out, w, iteration, False
        done = weights_converged(w, new)
        w = new
        out = _solve(i, v, w, vt, out[7])
        if done:
            return out, w, iteration, True
    return out, w, MAX_ITERATIONS, False


def fit_diode(
    current_a,
    drop_v,
    accuracy: MeasurementAccuracy | None = None,
    *,
    temperature_c: float,
    u_drop_v=None,
    u_current_a=None,
    offset_removed: bool = False,
    exclude_outliers: bool = False,
    point_index=None,
    unresolved=None,
    reason: str = "diode model asked for",
) -> FitResult:
    """Fit the diode law to the points with I > 0; `params` = {ideality, i_s_a, r_s_ohm}.

    Weights: with a u(I) (`u_current_a`, or the current meter's spec in
    `accuracy`) the effective variance u(V)² + (dV/dI·u(I))², iterated with the
    fitted curve's slope (`effective_variance`); else 1/u_drop_v² when given;
    else equal. Points whose current is within 2·u(I) of zero, or whose drop is
    not resolved above zero, are unresolved: kept in the result, zero weight
    (`unresolved`, aligned with the input, overrides the rule with a given mask).
    """
    i_all = np.asarray(current_a, dtype=float).ravel()
    v_all = np.asarray(drop_v, dtype=float).ravel()
    if i_all.shape != v_all.shape:
        raise FitError(f"current and drop differ in length ({i_all.size} vs {v_all.size})")
    if not (np.isfinite(i_all).all() and np.isfinite(v_all).all()):
        raise FitError("current and drop must be finite (drop overloads before fitting)")
    if temperature_c is None or not math.isfinite(float(temperature_c)):
        raise FitError("the diode law needs the temperature")
    idx_all = np.arange(i_all.size) if point_index is None else np.asarray(point_index)
    pu_all = point_uncertainty(i_all, v_all, accuracy, u_drop_v, u_current_a, offset_removed=offset_removed,
                               error=FitError)
    keep = i_all > 0
    notes = []
    if not keep.all():
        shown = ", ".join(str(int(k)) for k in idx_all[~keep][:10]) + (", ..." if (~keep).sum() > 10 else "")
        notes.append(f"{int((~keep).sum())} point(s) at I <= 0 left out (points {shown}): ln I is undefined there")
    i, v, idx, pu = i_all[keep], v_all[keep], idx_all[keep], pu_all.subset(keep)
    if unresolved is None:
        unres = unresolved_points(i, v, pu, conduction=True)
    else:
        unres = np.asarray(unresolved, dtype=bool).ravel()
        if unres.shape != i_all.shape:
            raise FitError(f"the unresolved mask has {unres.size} entries for {i_all.size} points")
        unres = unres[keep]
    used = ~unres
    some_unresolved = bool(unres.any())
    iu, vu, puu = (i[used], v[used], pu.subset(used)) if some_unresolved else (i, v, pu)
    if iu.size < 4:
        raise FitError(f"{iu.size} resolved point(s) at I > 0; the diode law with its scatter needs at least 4")
    if float(np.max(iu)) <= float(np.min(iu)) * (1.0 + 1e-9):
        raise FitError("the current does not vary: the diode law cannot be fitted")
    vt = thermal_voltage_v(temperature_c)

    (curve, e_u, dof, s2, jtj_inv, lev, jw, _), w, iterations, converged = _solve_weighted(iu, vu, puu, vt)
    flags_u = outlier_flags(externally_studentised(e_u, lev, w, dof), dof)
    fit_rows = np.ones(iu.size, dtype=bool)  # rows of the used points that carry weight in the final fit
    if exclude_outliers and flags_u.any():
        fit_rows = ~flags_u
        if fit_rows.sum() < 4:
            raise FitError(f"{int(fit_rows.sum())} point(s) left without the {int(flags_u.sum())} outlier(s); "
                           "the diode law with its scatter needs at least 4")
        (curve, _, dof, s2, jtj_inv, _, jw, _), w_keep, it2, converged = _solve_weighted(
            iu[fit_rows], vu[fit_rows], puu.subset(fit_rows), vt)
        iterations += it2
        if w_keep is not None:
            w = np.zeros(iu.size)
            w[fit_rows] = w_keep
        notes.append(f"refitted without {int(flags_u.sum())} outlier(s), as asked")
    elif flags_u.any():
        notes.append(f"{int(flags_u.sum())} outlier(s) flagged and kept in the fit")
    if pu.errors_in_current:
        notes += describe(int(unres.sum()), iterations, converged, idx[unres])
    # Type B: project each meter error's shift of the data onto the parameters.
    iw = iu[fit_rows]
    sw_u = None if w is None else np.sqrt(w[fit_rows])
    shifts = error_shapes(curve, accuracy, offset_removed, iw)
    if not shifts:
        notes.append("no accuracy spec: type B omitted, uncertainty is type A only")
    weighted = [(name, dv if sw_u is None else dv * sw_u) for name, dv in shifts]
    projected = [(name, jtj_inv @ (jw.T @ dvw)) for name, dvw in weighted]

    # Type A: the scatter without the bends of those errors the law cannot follow (counted above).
    second = [dv if sw_u is None else dv * sw_u for dv in offset_curvature_shapes(curve, accuracy, iw)]
    bends = unfollowed_shapes(jw, [dvw for _, dvw in weighted] + second, dof)
    e_rows = vu[fit_rows] - curve.value(iw)
    w_rows = None if w is None else w[fit_rows]
    noise = point_noise(e_rows, curve.slope(iw), curve.gradient(iw), w_rows, bends)
    if bends.shape[1]:
        notes.append(f"the residual scatter leaves out the bend {bends.shape[1]} meter error(s) give the data "
                     "(already type B terms)")
    if pu.errors_in_current and noise is not None:
        # the weights hold the meters' accuracy, not the points' noise: the sandwich with their own scatter
        meat = jw.T @ ((w_rows * noise.variances(curve.slope(iw)))[:, None] * jw)
        cov = jtj_inv @ meat @ jtj_inv
        dof = noise.dof
        drop = engineering(noise.drop_sd_v, "V", 3)
        notes.append(f"type A from the points' own scatter: drop {drop}, current "
                     f"{engineering(noise.current_sd_a, 'A', 3)} per point (ν = {dof})" if noise.split else
                     f"type A from the points' own scatter: {drop} per point, all taken as the drop's (too few "
                     f"points to tell the current reading's noise apart; ν = {dof})")
    else:
        ew = without(bends, e_rows if sw_u is None else e_rows * sw_u)
        dof -= bends.shape[1]
        s2 = float(ew @ ew) / dof
        cov = s2 * jtj_inv

    n, ln_is, rs = curve.ideality, curve.ln_i_s, curve.r_s_ohm
    i_s = math.exp(ln_is)
    scale = {"ideality": (0, 1.0), "i_s_a": (1, i_s), "r_s_ohm": (2, 1.0)}  # u(Is) = Is·u(ln Is)
    budgets = {}
    for key, (k, factor) in scale.items():
        comps = [Component("fit residuals", "A", factor * math.sqrt(max(cov[k, k], 0.0)), float(dof))]
        comps += [Component(name, "B", factor * abs(float(dp[k]))) for name, dp in projected]
        budgets[key] = combine(comps)
    std_u, expanded = budgets_to_dicts(budgets)
    if i_s >= float(np.max(iu)):
        notes.append("fitted Is exceeds the largest current: no exponential region in the data")

    # Everything aligned with the points at I > 0, unresolved ones included.
    e = v - curve.value(i)
    flags = np.zeros(i.size, dtype=bool)
    flags[used] = flags_u
    excluded = None
    if some_unresolved or not fit_rows.all():
        excluded = unres.copy()
        excluded[np.flatnonzero(used)[~fit_rows]] = True
    weights = None
    if w is not None:
        weights = np.zeros(i.size)
        weights[used] = w
        if excluded is not None:
            weights[excluded] = 0.0
    return FitResult(
        model="diode",
        params={"ideality": n, "i_s_a": i_s, "r_s_ohm": rs},
        std_u=std_u,
        expanded_u=expanded,
        budgets=budgets,
        residuals_v=e,
        outliers=flags,
        reason=reason,
        notes=tuple(notes),
        temperature_c=float(temperature_c),
        current_a=i,
        drop_v=v,
        point_index=idx,
        curve=curve,
        covariance=cov,
        dof=dof,
        accuracy=accuracy,
        offset_removed=offset_removed,
        excluded=excluded,
        unresolved=unres if some_unresolved else None,
        weights=weights,
        b_shifts=tuple((name, np.asarray(dp, dtype=float)) for name, dp in projected),
        point_noise=noise,
    )
