"""Fit of the Shockley diode law with series resistance, V = n·Vt·ln(I/Is + 1) + Rs·I.

Vt = k·T/q at the recorded temperature (scipy.constants, CODATA). The start
comes from the linear form V ≈ a·ln I + b + c·I (a = n·Vt, b = −n·Vt·ln Is,
c = Rs, valid for I ≫ Is) solved with numpy.linalg.lstsq; scipy's
least_squares then refines (n, ln Is, Rs) — ln Is, because Is spans decades.
Type A covariance: s²·(JᵀWJ)⁻¹ with s² = Σw·e²/(n−3), the same as
scipy.optimize.curve_fit with absolute_sigma=False.

Type B: each meter error (gain and offset of drop and current, `fit_result`)
is a fixed shift δV_i of the data; its effect on the parameters is the least-
squares projection δp = (JᵀWJ)⁻¹JᵀW·δV (linearised, GUM 5.1.3). That gives,
e.g., u_rel(n) = u_rel(Rs) = u(g_V) for a drop gain, and u(ln Is) = u(o_V)/(n·Vt)
for a drop offset, without writing each case by hand.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import constants, optimize

from .fit_result import (
    FitError,
    FitResult,
    Shockley,
    budgets_to_dicts,
    externally_studentised,
    outlier_flags,
)
from .uncertainty import Component, MeasurementAccuracy, combine

ZERO_C_K = constants.zero_Celsius  # 273.15 K


def thermal_voltage_v(temperature_c: float) -> float:
    """Vt = k·T/q (Boltzmann constant and elementary charge from scipy.constants, CODATA)."""
    return constants.k * (float(temperature_c) + ZERO_C_K) / constants.e


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


def fit_diode(
    current_a,
    drop_v,
    temperature_c: float,
    accuracy: MeasurementAccuracy | None = None,
    *,
    u_drop_v=None,
    offset_removed: bool = False,
    exclude_outliers: bool = False,
    point_index=None,
    reason: str = "diode model asked for",
) -> FitResult:
    """Fit the diode law to the points with I > 0; `params` = {ideality, i_s_a, r_s_ohm}."""
    i_all = np.asarray(current_a, dtype=float).ravel()
    v_all = np.asarray(drop_v, dtype=float).ravel()
    if i_all.shape != v_all.shape:
        raise FitError(f"current and drop differ in length ({i_all.size} vs {v_all.size})")
    if not (np.isfinite(i_all).all() and np.isfinite(v_all).all()):
        raise FitError("current and drop must be finite (drop overloads before fitting)")
    if temperature_c is None or not math.isfinite(float(temperature_c)):
        raise FitError("the diode law needs the temperature")
    idx_all = np.arange(i_all.size) if point_index is None else np.asarray(point_index)
    keep = i_all > 0
    notes = []
    if not keep.all():
        notes.append(f"{int((~keep).sum())} point(s) at I <= 0 left out: ln I is undefined there")
    i, v, idx = i_all[keep], v_all[keep], idx_all[keep]
    w = None
    if u_drop_v is not None:
        u = np.broadcast_to(np.asarray(u_drop_v, dtype=float), i_all.shape)[keep]
        if not np.all(np.isfinite(u)) or np.any(u <= 0):
            raise FitError("every point's standard uncertainty must be finite and > 0")
        w = 1.0 / (u * u)
    if i.size < 4:
        raise FitError(f"{i.size} points at I > 0; the diode law with its scatter needs at least 4")
    if float(np.max(i)) <= float(np.min(i)) * (1.0 + 1e-9):
        raise FitError("the current does not vary: the diode law cannot be fitted")
    vt = thermal_voltage_v(temperature_c)

    def solve(i, v, w):
        sw = None if w is None else np.sqrt(w)
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
        return curve, e, dof, s2, jtj_inv, lev, jw

    curve, e, dof, s2, jtj_inv, lev, jw = solve(i, v, w)
    flags = outlier_flags(externally_studentised(e, lev, w, dof), dof)
    excluded = None
    if exclude_outliers and flags.any():
        keep2 = ~flags
        curve, _, dof, s2, jtj_inv, _, _ = solve(i[keep2], v[keep2], None if w is None else w[keep2])
        jw = curve.gradient(i) if w is None else curve.gradient(i) * np.sqrt(w)[:, None]
        jw = jw[keep2]
        e = v - curve.value(i)
        excluded = flags.copy()
        notes.append(f"refitted without {int(flags.sum())} outlier(s), as asked")
    elif flags.any():
        notes.append(f"{int(flags.sum())} outlier(s) flagged and kept in the fit")
    cov = s2 * jtj_inv

    # Type B: project each meter error's shift of the data onto the parameters.
    used = slice(None) if excluded is None else ~excluded
    iu = i[used]
    sw_u = None if w is None else np.sqrt(w[used])
    shifts: list[tuple[str, np.ndarray]] = []
    if accuracy is not None and accuracy.drop is not None:
        shifts.append(("drop meter gain", curve.value(iu) * accuracy.drop.gain_u))
        if not offset_removed:
            shifts.append(("drop meter offset", np.full(iu.size, accuracy.drop.offset_u)))
    if accuracy is not None and accuracy.current is not None:
        slope = curve.slope(iu)
        shifts.append(("current meter gain", slope * iu * accuracy.current.gain_u))
        shifts.append(("current meter offset", slope * accuracy.current.offset_u))
    if not shifts:
        notes.append("no accuracy spec: type B omitted, uncertainty is type A only")
    projected = []
    for name, dv in shifts:
        dvw = dv if sw_u is None else dv * sw_u
        projected.append((name, jtj_inv @ (jw.T @ dvw)))

    n, ln_is, rs = curve.ideality, curve.ln_i_s, curve.r_s_ohm
    i_s = math.exp(ln_is)
    scale = {"ideality": (0, 1.0), "i_s_a": (1, i_s), "r_s_ohm": (2, 1.0)}  # u(Is) = Is·u(ln Is)
    budgets = {}
    for key, (k, factor) in scale.items():
        comps = [Component("fit residuals", "A", factor * math.sqrt(max(cov[k, k], 0.0)), float(dof))]
        comps += [Component(name, "B", factor * abs(float(dp[k]))) for name, dp in projected]
        budgets[key] = combine(comps)
    std_u, expanded = budgets_to_dicts(budgets)
    if i_s >= float(np.max(i)):
        notes.append("fitted Is exceeds the largest current: no exponential region in the data")
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
    )
