"""Straight-line fits of drop versus current: R_DS(on) (V = V0 + R·I) and a diode's knee line.

Weighted least squares in closed form with centred sums (no design matrix, no
N×N anything), so a million points cost a few passes over the arrays. The
parameter covariance is scaled by the residual variance s² = Σw·e²/(n−2)
(type A, ν = n−2, GUM 4.2 and H.3). The type B part follows from how the
meters' errors enter the line (see `fit_result`):
  - a drop-meter gain g_V scales every reading, so it scales R: u_rel(R) = u(g_V);
  - a current-meter gain g_I reads I·(1+g_I), so R appears as R/(1+g_I): u_rel(R) = u(g_I);
  - both offsets shift the line up or down and are taken up by V0: they do not touch R.
Errors in the current enter the weights as the effective variance u(V)² + R²·u(I)²
(Orear 1982, `effective_variance`); from a meter spec, whose offsets are one number
for the sweep, those weights are equal and the fit stays the ordinary least
squares. Points whose current is within 2·u(I) of zero are flagged unresolved and
carry no weight.
"""

from __future__ import annotations

import math

import numpy as np

from .fit_result import (
    outlier_threshold,
    FitError,
    FitResult,
    Line,
    budgets_to_dicts,
    externally_studentised,
)
from .effective_variance import (
    MAX_ITERATIONS,
    PointUncertainty,
    describe,
    point_uncertainty,
    unresolved_points,
    weights_converged,
)
from .uncertainty import Component, MeasurementAccuracy, combine


def _as_arrays(current_a, drop_v, u_drop_v, accuracy=None, u_current_a=None, offset_removed=False):
    x = np.asarray(current_a, dtype=float).ravel()
    y = np.asarray(drop_v, dtype=float).ravel()
    if x.shape != y.shape:
        raise FitError(f"current and drop differ in length ({x.size} vs {y.size})")
    if not (np.isfinite(x).all() and np.isfinite(y).all()):
        raise FitError("current and drop must be finite (drop overloads before fitting)")
    pu = point_uncertainty(x, y, accuracy, u_drop_v, u_current_a, offset_removed=offset_removed, error=FitError)
    return x, y, pu


class _LineSolution:
    """Weighted straight line by centred closed-form sums (Bevington & Robinson, ch. 6)."""

    def __init__(self, x: np.ndarray, y: np.ndarray, w: np.ndarray | None) -> None:
        n = x.size
        if n < 3:
            raise FitError(f"{n} points; a line with its scatter needs at least 3")
        if w is None:
            sw = float(n)
            xm = float(x.mean())
            ym = float(y.mean())
        else:
            sw = float(w.sum())
            xm = float(w @ x) / sw
            ym = float(w @ y) / sw
        dx = x - xm
        wdx = dx if w is None else w * dx
        sxx = float(wdx @ dx)
        if not sxx > 0.0 or sxx <= 1e-24 * sw * max(xm * xm, 1e-300):
            raise FitError("the current does not vary: no slope can be fitted")
        slope = float(wdx @ (y - ym)) / sxx if w is not None else float(dx @ y - ym * dx.sum()) / sxx
        # residuals: y − (ym + slope·dx), in place to spare memory on long runs
        res = np.multiply(dx, -slope)
        res += y
        res -= ym
        wres = res if w is None else w * res
        sse = float(wres @ res)
        dof = n - 2
        s2 = sse / dof if dof > 0 else math.inf
        self.n, self.dof, self.sse, self.s2 = n, dof, sse, s2
        self.slope, self.intercept = slope, ym - slope * xm
        self.xm, self.sw, self.sxx = xm, sw, sxx
        # covariance of (intercept, slope) scaled by s² (type A)
        var_slope = s2 / sxx
        self.cov = np.array(
            [[s2 / sw + xm * xm * var_slope, -xm * var_slope], [-xm * var_slope, var_slope]]
        )
        self.res, self.dx, self.w = res, dx, w

    def leverage(self, rows=None) -> np.ndarray:
        dx = self.dx if rows is None else self.dx[rows]
        h = 1.0 / self.sw + dx * dx / self.sxx
        if self.w is not None:
            h = h * (self.w if rows is None else self.w[rows])
        return h

    def outliers(self) -> np.ndarray:
        """Flags by the externally studentised residual (`fit_result.OUTLIER_RULE`).

        The full statistic is computed only for candidates: it grows with |e|/√(1−h),
        and h ≤ h_max, so |e·√w| ≤ r₀·s·√(1−h_max) can never pass (r₀ the internally
        studentised value equivalent to the critical t, Belsley, Kuh & Welsch 1980, eq. 2.25).
        """
        flags = np.zeros(self.n, dtype=bool)
        nu = self.dof
        if nu < 2 or not math.isfinite(self.s2) or self.s2 <= 0:
            return flags
        t_crit = outlier_threshold(self.n, nu)
        t2 = t_crit * t_crit
        r0 = math.sqrt(t2 * nu / (nu - 1 + t2))  # internal studentised equivalent of t_crit
        h_max = 1.0 / self.sw + max(float(self.dx.min() ** 2), float(self.dx.max() ** 2)) / self.sxx
        if self.w is not None:
            h_max *= float(self.w.max())
        h_max = min(h_max, 1.0 - 1e-12)
        ew = np.abs(self.res) if self.w is None else np.abs(self.res) * np.sqrt(self.w)
        cand = np.flatnonzero(ew > r0 * math.sqrt(self.s2 * (1.0 - h_max)))
        if cand.size == 0:
            return flags
        h = self.leverage(cand)
        wc = None if self.w is None else self.w[cand]
        e = self.res[cand]
        ewc = e if wc is None else e * np.sqrt(wc)
        one_minus_h = np.clip(1.0 - h, 1e-12, None)
        s2_i = np.clip((self.sse - ewc * ewc / one_minus_h) / (nu - 1), 1e-300, None)
        t = ewc / np.sqrt(s2_i * one_minus_h)
        flags[cand[np.abs(t) > t_crit]] = True
        return flags


def studentised_residuals(current_a, drop_v, u_drop_v=None) -> np.ndarray:
    """Externally studentised residuals of the straight-line fit, for every point (reports, tests)."""
    x, y, pu = _as_arrays(current_a, drop_v, u_drop_v)
    w = pu.drop_weights()
    sol = _LineSolution(x, y, w)
    return externally_studentised(sol.res, sol.leverage(), w, sol.dof)


def _solve_line(x: np.ndarray, y: np.ndarray, pu: PointUncertainty) -> tuple[_LineSolution, np.ndarray | None, int, bool]:
    """The weighted line with effective-variance weights at its own slope, iterated to a fixed point."""
    w = pu.drop_weights()
    if not pu.errors_in_current:
        return _LineSolution(x, y, w), w, 0, True
    if pu.equal_weights:
        # u_eff the same at every point whatever the slope (the spec's offsets): equal weights, no iteration
        return _LineSolution(x, y, None), None, 0, True
    sol = _LineSolution(x, y, w)
    for iteration in range(1, MAX_ITERATIONS + 1):
        new = pu.weights(sol.slope)
        if new is None:  # no u(V) and a zero slope: u_eff is 0 everywhere, i.e. equal weights
            return (sol, w, iteration, True) if w is None else (_LineSolution(x, y, None), None, iteration, True)
        done = weights_converged(w, new)
        w = new
        sol = _LineSolution(x, y, w)
        if done:
            return sol, w, iteration, True
    return sol, w, MAX_ITERATIONS, False


def _line_fit(
    model: str,
    names: tuple[str, str],
    x: np.ndarray,
    y: np.ndarray,
    pu: PointUncertainty,
    accuracy: MeasurementAccuracy | None,
    *,
    offset_removed: bool,
    exclude_outliers: bool,
    point_index,
    temperature_c,
    notes: tuple[str, ...],
    reason: str,
    unresolved: np.ndarray | None = None,
) -> FitResult:
    index = np.arange(x.size) if point_index is None else np.asarray(point_index)
    if unresolved is None:
        unresolved = unresolved_points(x, y, pu, conduction=False)
    unresolved = np.asarray(unresolved, dtype=bool)
    some_unresolved = bool(unresolved.any())
    used = ~unresolved
    xs, ys, pus = (x[used], y[used], pu.subset(used)) if some_unresolved else (x, y, pu)
    if xs.size < 3:
        raise FitError(f"{xs.size} point(s) with a resolved current; a line with its scatter needs at least 3")
    sol, w, iterations, converged = _solve_line(xs, ys, pus)
    flags_used = sol.outliers()
    excluded_used = None
    notes = list(notes)
    if exclude_outliers and flags_used.any():
        keep = ~flags_used
        sol, w_keep, it2, converged = _solve_line(xs[keep], ys[keep], pus.subset(keep))
        iterations += it2
        if w is not None and w_keep is not None:
            w = np.zeros_like(w)
            w[keep] = w_keep
        excluded_used = flags_used.copy()
        notes.append(f"refitted without {int(flags_used.sum())} outlier(s), as asked")
    elif flags_used.any():
        notes.append(f"{int(flags_used.sum())} outlier(s) flagged and kept in the fit")
    if pu.errors_in_current:
        notes += describe(int(unresolved.sum()), iterations, converged, index[unresolved], weighted=w is not None)
    v0, r = sol.intercept, sol.slope
    u_v0_a, u_r_a = math.sqrt(sol.cov[0, 0]), math.sqrt(sol.cov[1, 1])
    r_comps = [Component("fit residuals", "A", u_r_a, float(sol.dof))]
    v0_comps = [Component("fit residuals", "A", u_v0_a, float(sol.dof))]
    if accuracy is not None and accuracy.drop is not None:
        r_comps.append(Component("drop meter gain", "B", abs(r) * accuracy.drop.gain_u))
        v0_comps.append(Component("drop meter gain", "B", abs(v0) * accuracy.drop.gain_u))
        if not offset_removed:
            v0_comps.append(Component("drop meter offset", "B", accuracy.drop.offset_u))
    if accuracy is not None:
        for name, rel in accuracy.current_gain_terms():
            r_comps.append(Component(name, "B", abs(r) * rel))
        if accuracy.current is not None:
            v0_comps.append(Component(f"{accuracy.current_name} offset", "B", abs(r) * accuracy.current.offset_u))
    if accuracy is None or accuracy.empty:
        notes.append("no accuracy spec: type B omitted, uncertainty is type A only")
    v0_name, r_name = names
    budgets = {r_name: combine(r_comps), v0_name: combine(v0_comps)}
    std_u, expanded = budgets_to_dicts(budgets)
    line = Line(v0, r)
    if not some_unresolved and excluded_used is None:
        residuals, flags, excluded, weights = sol.res, flags_used, None, w
    else:
        residuals = y - line.value(x)
        flags = _spread(flags_used, used, False)
        excluded = unresolved | _spread(excluded_used, used, False) if excluded_used is not None else unresolved
        weights = None if w is None else _spread(w, used, 0.0)
        if weights is not None and excluded_used is not None:
            weights[excluded] = 0.0
    return FitResult(
        model=model,
        params={r_name: r, v0_name: v0},
        std_u=std_u,
        expanded_u=expanded,
        budgets=budgets,
        residuals_v=residuals,
        outliers=flags,
        reason=reason,
        notes=tuple(notes),
        temperature_c=temperature_c,
        current_a=x,
        drop_v=y,
        point_index=index,
        curve=line,
        covariance=sol.cov,
        dof=sol.dof,
        accuracy=accuracy,
        offset_removed=offset_removed,
        excluded=excluded,
        unresolved=unresolved if some_unresolved else None,
        weights=weights,
    )


def _spread(values: np.ndarray | None, rows: np.ndarray, fill):
    """Values of the used rows put back among all rows (`fill` elsewhere)."""
    if values is None:
        values = np.zeros(int(rows.sum()), dtype=bool)
    out = np.full(rows.shape, fill, dtype=np.asarray(values).dtype)
    out[rows] = values
    return out


def fit_resistive(
    current_a,
    drop_v,
    accuracy: MeasurementAccuracy | None = None,
    *,
    u_drop_v=None,
    u_current_a=None,
    offset_removed: bool = False,
    exclude_outliers: bool = False,
    point_index=None,
    temperature_c: float | None = None,
    unresolved=None,
    reason: str = "resistive model asked for",
) -> FitResult:
    """Fit V = V0 + R·I (a MOSFET channel, a resistor); `params` = {r_on_ohm, v0_v}.

    Weights: with a u(I) (`u_current_a`, or the current meter's spec in `accuracy`)
    the effective variance u(V)² + R²·u(I)², iterated with the fitted R
    (`effective_variance`); else 1/u_drop_v² when given; else equal, which is
    the ordinary least squares. Points with |I| ≤ 2·u(I) are flagged unresolved
    and get zero weight (`unresolved` overrides the rule with a given mask).
    `offset_removed` says the zero-current offset was subtracted beforehand.
    """
    x, y, pu = _as_arrays(current_a, drop_v, u_drop_v, accuracy, u_current_a, offset_removed)
    return _line_fit(
        "resistive", ("v0_v", "r_on_ohm"), x, y, pu, accuracy,
        offset_removed=offset_removed, exclude_outliers=exclude_outliers,
        point_index=point_index, temperature_c=temperature_c, notes=(), reason=reason,
        unresolved=unresolved,
    )


def fit_knee(
    current_a,
    drop_v,
    accuracy: MeasurementAccuracy | None = None,
    *,
    above_a: float | None = None,
    u_drop_v=None,
    u_current_a=None,
    offset_removed: bool = False,
    exclude_outliers: bool = False,
    point_index=None,
    temperature_c: float | None = None,
    reason: str = "knee line asked for",
) -> FitResult:
    """Fit the straight-line diode form V = V_knee + r_d·I above the knee; `params` = {v_knee_v, r_d_ohm}.

    The line stands for the diode over its operating range only, so only points
    with I ≥ `above_a` enter; by default the upper half of the measured currents
    (I ≥ I_max/2), where ln I changes by less than ln 2 and a line is a fair
    stand-in (common practice for the piecewise-linear diode model). Weights as
    in `fit_resistive`, with r_d as the slope; a junction's drop must be resolved
    above zero too.
    """
    x, y, pu = _as_arrays(current_a, drop_v, u_drop_v, accuracy, u_current_a, offset_removed)
    if x.size == 0:
        raise FitError("no points")
    limit = 0.5 * float(np.max(x)) if above_a is None else float(above_a)
    keep = x >= limit
    idx = np.arange(x.size) if point_index is None else np.asarray(point_index)
    note = f"knee line over {int(keep.sum())} point(s) with I >= {limit:.6g} A"
    return _line_fit(
        "knee", ("v_knee_v", "r_d_ohm"), x[keep], y[keep], pu.subset(keep), accuracy,
        offset_removed=offset_removed, exclude_outliers=exclude_outliers,
        point_index=idx[keep], temperature_c=temperature_c, notes=(note,), reason=reason,
        unresolved=unresolved_points(x[keep], y[keep], pu.subset(keep), conduction=True),
    )
