"""The junction temperature a fitted value stands at: its value, standard uncertainty and source.

A limit from a datasheet holds at one junction temperature Tj, so a measured
R_DS(on), R or Vf can only be judged once the Tj it was measured at is stated.
Three sources, in order of preference:
  - `measured`: temperatures recorded with the points (the bench's [sensor], a probe on the
    element's case or tab; its u is the probe's stated accuracy a/√3, GUM 4.3.7, else the
    default below, combined with the readings' spread; the case is taken as the junction);
  - `inferred` from the spec's transient thermal impedance Zth(t) and the
    recorded power: the junction rise at each point by superposing the power
    pulses, ΔT(t_k) = Σ_j P_j·(Zth(t_k − s_j) − Zth(t_k − e_j)) (the superposition
    of step responses, common practice for pulse trains; e.g. JESD51-14's use of
    the thermal step response, from memory), and the rise the fitted value stands
    at by projecting s_i·ΔT_i on the model as below; u is the spec's `zth_u_pct`
    of that rise, else 20 % (a datasheet's Zth curve is typical, parts differ by
    about that much, from memory);
  - `inferred` from the sweep's own heating seen in the drop — the residuals of the
    fit regressed on the heating shape s(I)·P (s the drop's temperature
    sensitivity at each point, P = I·V; ΔT = θ·P in the steady state), after
    removing what the fitted model absorbs (Frisch–Waugh–Lovell). The fitted
    value takes up a share of that heating: Q_fit = Q_cold + θ·(∇Q·c), with c
    the heating shape's projection on the model's own directions, so it stands
    at Tj = Ta + θ·(∇Q·c)/(dQ/dT), with u from the standard error of θ
    (ordinary least squares, GUM H.3);
  - `assumed`: the ambient, when that heating is below its resolution
    (not significant at `self_heating.ALPHA`); the unresolved rise and its
    standard error are then kept in u(Tj), never dropped. With too few points
    to test at all, the steady-state rise P_max·RθJA (spec) bounds it instead.
The ambient's own standard uncertainty is the plan's `ambient_u_c`; on the
simulated bench, which holds its ambient exactly, 0; else the stated default
below (a rectangular ±2 K, GUM 4.3.7).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from benchlog.ambient import DEFAULT_AMBIENT_HALF_WIDTH_K
from benchlog.quantity import p_value, with_standard
from .fit_result import scatter_shapes, unfollowed_shapes, without

TJ_SOURCES = ("measured", "inferred", "assumed")


#: Relative standard uncertainty of a rise computed from the datasheet's (typical) Zth curve (from memory).
ZTH_RELATIVE_U = 0.20

#: Standard uncertainty of a recorded element temperature taken as the junction's, when the
#: reading comes without its own budget (from memory: a thermocouple on a tab, plus the junction-to-case rise).
DEFAULT_SENSOR_U_C = 0.5


@dataclass(frozen=True)
class JunctionTemperature:
    """Tj in °C with its standard uncertainty and where it comes from (`TJ_SOURCES`)."""

    value_c: float
    u_c: float
    source: str
    why: str

    def __post_init__(self) -> None:
        if self.source not in TJ_SOURCES:
            raise ValueError(f"source must be one of {TJ_SOURCES}, got {self.source!r}")

    def text(self) -> str:
        return f"Tj {with_standard(self.value_c, self.u_c, '°C')}, {self.source}: {self.why}"


@dataclass(frozen=True)
class SweepHeating:
    """The heating inside a sweep as it shows in one fitted quantity Q."""

    rise_c: float  # θ·(∇Q·c)/(dQ/dT): the rise the fitted value stands at
    u_c: float  # its standard uncertainty from the regression
    p_value: float  # two-sided test of θ = 0 (Student's t)
    significant: bool  # p < ALPHA with the heating sign


def zth_at(zth_t_s, zth_k_per_w, rth_ja_k_per_w, t_s: np.ndarray) -> np.ndarray:
    """Zth(t) from the curve: log-log interpolation between its points; ∝ t below the first (the
    junction's heat capacity alone, common practice); at most RθJA (or the last point) beyond the last."""
    t_pts = np.log(np.asarray(zth_t_s, dtype=float))
    z_pts = np.log(np.asarray(zth_k_per_w, dtype=float))
    t = np.asarray(t_s, dtype=float)
    out = np.zeros_like(t)
    pos = t > 0
    out[pos] = np.exp(np.interp(np.log(t[pos]), t_pts, z_pts))
    early = pos & (t < zth_t_s[0])
    out[early] = zth_k_per_w[0] * t[early] / zth_t_s[0]
    top = rth_ja_k_per_w if rth_ja_k_per_w is not None else zth_k_per_w[-1]
    late = t > zth_t_s[-1]
    out[late] = max(top, zth_k_per_w[-1])
    return out


def rise_at_points(t_s, power_w, zth, off_s: float = 0.0, lag_s: float = 0.0, on_s: float | None = None) -> np.ndarray:
    """ΔT at each point's drop reading by superposing its power pulses through Zth (module docstring).

    Point k's power is on from the previous point's time stamp plus the plan's cool-down `off_s` (the
    output is off that long between points; the first: one step interval earlier) up to its own time
    stamp; a pulse [s, e] adds P·(Zth(t − s) − Zth(t − e)) at a later time t, and while on,
    P·Zth(t − s). The drop is read `lag_s` before the stamp (the middle of the meter's integration
    window: the point is stamped after the drop reading and the current read-back), so each rise
    is taken at t_k − lag_s. Early in a short pulse the rise grows about in proportion to the time
    on, so reading it at the stamp instead overstates it (by 20 % for a 60 ms pulse read 10 ms early).
    `on_s`, when given, is each pulse's length instead (the current on that long before its stamp).
    """
    t = np.asarray(t_s, dtype=float)
    p = np.nan_to_num(np.asarray(power_w, dtype=float), nan=0.0)
    if t.size == 0:
        return t
    starts = np.empty_like(t)
    starts[1:] = t[:-1] + off_s
    starts[0] = t[0] - (t[1] - t[0] if t.size > 1 else 0.0) + off_s
    if on_s is not None:
        starts = np.maximum(starts, t - on_s)
    starts = np.minimum(starts, t)
    read = t - min(max(lag_s, 0.0), float(np.min(t - starts)) if t.size else 0.0)  # never before its pulse
    on = np.arange(t.size)[None, :] <= np.arange(t.size)[:, None]  # pulses up to the reading
    since_start = np.where(on, read[:, None] - starts[None, :], 0.0)
    since_end = np.where(on, np.clip(read[:, None] - t[None, :], 0.0, None), 0.0)  # 0 for the pulse being read
    return ((zth(since_start) - zth(since_end)) * p[None, :] * on).sum(axis=1)


def projected_rise(fit, rows_rise: np.ndarray, sensitivity, quantity_gradient, dq_dt: float) -> float:
    """The rise a fitted quantity stands at, when each point's rise is known: the least-squares
    projection of s_i·ΔT_i on the model's directions (as in `sweep_heating`), ∇Q·c/(dQ/dT)."""
    keep = ~fit.outliers
    if fit.excluded is not None:
        keep = keep & ~fit.excluded
    i, v = fit.current_a[keep], fit.drop_v[keep]
    z = np.asarray(sensitivity(i, v), dtype=float) * rows_rise[keep]
    basis = fit.curve.gradient(i)
    if fit.weights is not None:
        sw = np.sqrt(fit.weights[keep])
        z, basis = z * sw, basis * sw[:, None]
    coef, *_ = np.linalg.lstsq(basis, z, rcond=None)
    return float(np.asarray(quantity_gradient, dtype=float) @ coef) / dq_dt


def scatter_without_heating(fit, rows_rise: np.ndarray, sensitivity) -> float | None:
    """s'/s: the fit's residual scatter once the known heating is taken out of the residuals, over its own.

    Heating inside a sweep bends the drop by s_i·ΔT_i; the part of that bend the model cannot follow
    (its component orthogonal to the model's directions, as in `projected_rise`) stays in the
    residuals and would be counted again in the type A term, although the judged value already stands
    at the Tj that heating reached (GUM 3.2.3: a known systematic effect is corrected, not counted as
    scatter). The type A term scales with s (GUM H.3: the covariance is s²·(XᵀWX)⁻¹), so it is
    multiplied by this ratio. None when there is nothing to compare.
    """
    keep = ~fit.outliers
    if fit.excluded is not None:
        keep = keep & ~fit.excluded
    i, v = fit.current_a[keep], fit.drop_v[keep]
    e = np.asarray(fit.residuals_v, dtype=float)[keep]
    z = np.asarray(sensitivity(i, v), dtype=float) * rows_rise[keep]
    basis = fit.curve.gradient(i)
    if fit.weights is not None:
        sw = np.sqrt(fit.weights[keep])
        z, basis, e = z * sw, basis * sw[:, None], e * sw
    coef, *_ = np.linalg.lstsq(basis, z, rcond=None)
    z_perp = z - basis @ coef
    # the meters' bends the fit's own scatter already leaves out (`fit_result.unfollowed_shapes`)
    shapes = scatter_shapes(fit.curve, fit.accuracy, fit.offset_removed, i)
    if fit.weights is not None:
        shapes = [dv * sw for dv in shapes]
    bends = unfollowed_shapes(basis, shapes, e.size - basis.shape[1])
    e, z_perp = without(bends, e), without(bends, z_perp)
    sse = float(e @ e)
    if not sse > 0 or e.size <= basis.shape[1]:
        return None
    return math.sqrt(float((e - z_perp) @ (e - z_perp)) / sse)


def junction_above_case(power_w, rth_jc_k_per_w: float | None, rth_ja_k_per_w: float | None,
                        pulse_zth_k_per_w=None) -> tuple[float, float, str] | None:
    """How far the junction sits above a measured case: (estimate K, standard u K, why), None when unbounded.

    Tj = Tc + P·RθJC in the steady state (the definition of junction-to-case thermal resistance,
    JESD51 series). A sweep's pulses are mostly shorter than the junction–case time constant, so
    the junction is above the case by somewhere between 0 and P·RθJC; with no transient data to
    place it, the difference is taken as rectangular on that interval (GUM 4.3.7): P·RθJC/2 with
    u = P·RθJC/√12. Without RθJC, RθJA bounds it the same way (the case lies between junction and
    ambient), more loosely. With the spec's Zth curve, each point's pulse cannot lift the junction
    above the case by more than P·Zth(pulse length) either (the case only lags the junction), so the
    bound per point is P_i·min(R, Zth(t_i)) (`pulse_zth_k_per_w`, one per point). The bound used is
    the mean over the points with a temperature reading.
    """
    p = np.abs(np.asarray(power_w, dtype=float))
    if rth_jc_k_per_w is not None:
        r, what = float(rth_jc_k_per_w), f"the spec's RθJC {float(rth_jc_k_per_w):g} K/W"
    elif rth_ja_k_per_w is not None:
        r, what = float(rth_ja_k_per_w), f"the spec's RθJA {float(rth_ja_k_per_w):g} K/W (no RθJC given)"
    else:
        return None
    per_point = np.full(p.shape, r)
    if pulse_zth_k_per_w is not None:
        per_point = np.minimum(per_point, np.asarray(pulse_zth_k_per_w, dtype=float))
        what += " and Zth of each pulse's length"
    ok = np.isfinite(p) & np.isfinite(per_point)
    if not ok.any():
        return None
    top = float(np.mean(p[ok] * per_point[ok]))
    return (top / 2.0, top / math.sqrt(12.0),
            f"the junction above the case by 0 to {top:.3g} K (P times {what}), taken as {top / 2.0:.3g} K, "
            f"rectangular")


def ambient_u(value: float | None, simulated: bool) -> tuple[float, str]:
    """Standard uncertainty of the recorded ambient (the plan's `ambient_u_c`, None: not stated), and why."""
    if value is not None and math.isfinite(value) and value >= 0:
        return float(value), f"the plan's ambient_u_c {float(value):g} K"
    if simulated:
        return 0.0, "the simulated bench holds its ambient at exactly the plan's ambient_c"
    u = DEFAULT_AMBIENT_HALF_WIDTH_K / math.sqrt(3.0)
    return u, (f"the ambient taken as known to ±{DEFAULT_AMBIENT_HALF_WIDTH_K:g} K (rectangular, "
               f"u = {u:.2g} K; state ambient_u_c in the plan's [element] to change it)")


def _own(a, *inputs) -> np.ndarray:
    """`a` as a float array that may be changed in place: copied only if it could be one of `inputs`."""
    out = np.asarray(a, dtype=float)
    if out.ndim == 0 or not out.flags.writeable or any(np.may_share_memory(out, x) for x in inputs):
        out = np.array(out, dtype=float, copy=True)
    return out


def sweep_heating(fit, sensitivity, quantity_gradient, dq_dt: float) -> SweepHeating | None:
    """The rise a fitted quantity stands at, from the fit's residuals (module docstring).

    `sensitivity(i, v)` gives the drop's temperature sensitivity at each point (V/K),
    `quantity_gradient` the gradient of the judged quantity in the fit's parameters,
    `dq_dt` the quantity's own temperature sensitivity (its unit per K).
    """
    from .student_t import t_sf  # scipy.stats.t.sf's value without scipy's import time

    from .self_heating import ALPHA

    keep = ~fit.outliers
    if fit.excluded is not None:
        keep = keep & ~fit.excluded
    every = bool(keep.all())  # the usual case: views of the fit's arrays, not copies of a long run
    e = fit.residuals_v if every else fit.residuals_v[keep]
    i = fit.current_a if every else fit.current_a[keep]
    v = fit.drop_v if every else fit.drop_v[keep]
    p_params = fit.covariance.shape[0]
    dof = e.size - p_params - 1
    if dof < 3 or dq_dt == 0 or not math.isfinite(dq_dt):
        return None
    # run-long arrays are changed in place where they are our own (1e6 points: a few columns, not a dozen)
    z = _own(sensitivity(i, v), i, v)
    z *= i
    z *= v
    basis = _own(fit.curve.gradient(i), i, v)
    if fit.weights is not None:
        sw = np.sqrt(fit.weights if every else fit.weights[keep])
        e = e * sw
        z *= sw
        basis *= sw[:, None]
        del sw
    # the normal equations scaled by the columns' norms (for their condition), on the small matrices only
    gram = basis.T @ basis
    norms = np.sqrt(np.diag(gram)).copy()
    norms[norms == 0] = 1.0
    coef = np.linalg.solve(gram / np.outer(norms, norms), (basis.T @ z) / norms) / norms
    z -= basis @ coef
    del basis
    z_perp = z
    szz = float(z_perp @ z_perp)
    if not szz > 0:
        return None
    theta = float(z_perp @ e) / szz  # K/W
    z_perp *= theta
    rest = e - z_perp
    s2 = float(rest @ rest) / dof
    se = math.sqrt(s2 / szz) if s2 > 0 else 0.0
    t = theta / se if se > 0 else math.inf
    p = float(2.0 * t_sf(abs(t), dof))
    share = float(np.asarray(quantity_gradient, dtype=float) @ coef) / dq_dt  # K per (K/W)
    return SweepHeating(rise_c=theta * share, u_c=abs(se * share), p_value=p, significant=p < ALPHA and theta > 0)


def junction_temperature(
    ambient_c: float,
    ambient_u_c: float,
    ambient_why: str,
    heating: SweepHeating | None,
    measured_c=None,
    steady_rise_c: float | None = None,
    zth_rise_c: float | None = None,
    *,
    sensor_u_c: float | None = None,
    sensor_why: str = "",
    zth_u_pct: float | None = None,
    zth_timing_u_c: float | None = None,
    case_rise: tuple[float, float, str] | None = None,
) -> JunctionTemperature:
    """Choose Tj: measured temperatures when recorded, else inferred from the drop, else assumed (module docstring)."""
    if measured_c is not None:
        t = np.asarray(measured_c, dtype=float)
        t = t[np.isfinite(t)]
        if t.size:
            spread = float(t.std(ddof=1)) if t.size > 1 else 0.0
            # the probe's own stated accuracy when the header has it, else the default above
            own = sensor_u_c if sensor_u_c is not None and math.isfinite(sensor_u_c) else None
            sensor = own if own is not None else DEFAULT_SENSOR_U_C
            u = math.hypot(spread, sensor)
            by = f" by the {sensor_why}" if sensor_why else ""
            stated = "its stated accuracy" if own is not None else "the default for an unstated probe"
            if case_rise is None:
                jc, u_jc, jc_why = 0.0, 0.0, ("the case is taken as the junction (no junction-to-case rise added: "
                                             "the spec gives neither RθJC nor RθJA to bound it)")
            else:
                jc, u_jc, jc_why = case_rise
            return JunctionTemperature(float(t.mean()) + jc, math.hypot(u, u_jc), "measured",
                                       f"mean of {t.size} recorded temperature(s){by}, spread {spread:.2g} K "
                                       f"and the sensor's {sensor:.2g} K ({stated}); {jc_why}")
    if zth_rise_c is not None:
        stated = zth_u_pct is not None and math.isfinite(zth_u_pct)
        rel = zth_u_pct / 100.0 if stated else ZTH_RELATIVE_U
        u_rise = rel * abs(zth_rise_c)
        timing = zth_timing_u_c if zth_timing_u_c is not None and math.isfinite(zth_timing_u_c) else 0.0
        u = math.sqrt(ambient_u_c ** 2 + u_rise ** 2 + timing ** 2)
        whence = "the spec's zth_u_pct" if stated else "a datasheet's typical curve, the default"
        on_times = f", ± {timing:.2g} K for the pulses' on-times" if timing > 0 else ""
        return JunctionTemperature(ambient_c + zth_rise_c, u, "inferred",
                                   f"ambient {ambient_c:g} °C plus the sweep's own heating {zth_rise_c:.3g} K "
                                   f"(u {rel * 100:g} % for the curve, {whence}{on_times}) from the recorded power "
                                   f"and the spec's transient thermal impedance; {ambient_why}")
    if heating is not None and heating.significant:
        u = math.hypot(ambient_u_c, heating.u_c)
        return JunctionTemperature(ambient_c + heating.rise_c, u, "inferred",
                                   f"ambient {ambient_c:g} °C plus the sweep's own heating "
                                   f"{with_standard(heating.rise_c, heating.u_c, 'K')} seen in the drop "
                                   f"({p_value(heating.p_value)}); {ambient_why}")
    if heating is not None:
        # a bend of the other sign is not heating (the model fits less well there): only a rise counts
        unresolved = math.hypot(max(heating.rise_c, 0.0), heating.u_c)
        u = math.hypot(ambient_u_c, unresolved)
        seen = f"({with_standard(heating.rise_c, heating.u_c, 'K')}, {p_value(heating.p_value)})"
        if heating.rise_c < 0 and heating.p_value < _alpha():
            # a firm bend the other way: the model does not fit the drop, so no rise can be read from it
            why = f"the drop bends the other way from heating {seen}: the model does not fit, no rise read from it"
        else:
            why = f"the sweep's own heating is below resolution {seen}"
        return JunctionTemperature(ambient_c, u, "assumed", f"the ambient; {why}; kept in u; {ambient_why}")
    if steady_rise_c is not None and steady_rise_c > 0:
        # untested: the steady-state rise P·RθJA bounds what any sweep can reach (rectangular, GUM 4.3.7)
        u = math.hypot(ambient_u_c, steady_rise_c / math.sqrt(3.0))
        return JunctionTemperature(ambient_c, u, "assumed",
                                   f"the ambient; too few points to test the sweep's heating, so the steady-state "
                                   f"rise {steady_rise_c:.3g} K (the largest power × RθJA) bounds it in u; {ambient_why}")
    return JunctionTemperature(ambient_c, ambient_u_c, "assumed",
                               f"the ambient (too few points to test the sweep's heating, no RθJA to bound it); "
                               f"{ambient_why}")


def _alpha() -> float:
    from .self_heating import ALPHA

    return ALPHA
