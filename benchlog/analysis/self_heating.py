"""Self-heating: does the element warm up during the sweep enough to bend or split its curve?

Two signs, each tested against the scatter of the data (the meters' gain and
offset are common to every point, so only type A counts here):
  1. hysteresis — on an up-then-down sweep the down pass is hotter at the same
     current; the residuals at matched setpoints differ (paired t test on the
     differences, as scipy.stats.ttest_1samp; t tails from analysis/student_t.py);
  2. trend — the junction rise follows the power, ΔT = θ·P with P = I·V, so the
     excess drop grows as R·α·θ·P·I for a resistance (∝ I³: the apparent R rises
     with I²) and as (dV/dT)·θ·P for a diode. The residuals are regressed on that
     shape after removing what the fitted model can already absorb (Frisch–Waugh–
     Lovell), and the slope is t-tested (Student's t, analysis/student_t.py); with the fit's weights
     when it has them (weighted least squares, as the fit itself).
For the trend the sign must be the heating sign — R_DS(on) rises with
temperature, Vf falls (common practice); a significant bend of the other sign is
reported as a poor model, not as heating. Up and down passes that disagree are
reported whatever the sign, with the sign named. With a known temperature coefficient (`tempco_per_k`:
relative per K for a resistance, V/K for a diode's drop) the slope gives θ and
the rise at the highest power, the hysteresis the extra heat of the down pass.
"""

from __future__ import annotations

from benchlog.quantity import engineering, p_value

import math
from dataclasses import dataclass

import numpy as np

from .fit_result import FitResult
from .student_t import t_sf

#: Significance of each test: a flag on a clean run should be a 1-in-1000 event.
ALPHA = 0.001


@dataclass(frozen=True)
class SelfHeating:
    detected: bool
    reason: str
    delta_t_c: float | None  # the best estimate of the temperature rise, when a tempco is known
    updown_p: float | None = None
    updown_shift_v: float | None = None  # mean (down − up) residual at matched setpoints
    updown_delta_t_c: float | None = None
    trend_p: float | None = None
    trend_delta_t_c: float | None = None  # rise at the highest power, from the trend


def _paired_t_p(diffs: np.ndarray) -> float:
    """Two-sided p of the one-sample t test of mean 0, t = mean/(s/√n), ν = n − 1 (Student 1908;
    scipy.stats.ttest_1samp's value)."""
    n = diffs.size
    mean = float(diffs.mean())
    s = float(diffs.std(ddof=1))
    if s == 0.0:
        return math.nan if mean == 0.0 else 0.0
    return 2.0 * t_sf(abs(mean) / (s / math.sqrt(n)), n - 1)


def _heating_sign(fit: FitResult, tempco_per_k: float | None) -> float:
    if tempco_per_k:
        return math.copysign(1.0, tempco_per_k)
    return 1.0 if fit.model == "resistive" else -1.0


def _directions(frame, fit: FitResult):
    """Direction (as compared with "up"/"down") and setpoint of each fitted point, or (None, None)."""
    if frame is None:
        return None, None
    arrays = hasattr(frame, "has_flag")  # runs.PointArrays (the light loader) rather than a DataFrame
    if not arrays and ("direction" not in frame.columns or "index" not in frame.columns):
        return None, None
    index = frame.index if arrays else frame["index"].to_numpy()
    if index.size == fit.point_index.size and np.array_equal(index, fit.point_index):
        pos = None  # every point was fitted, in file order: the columns as they are, no copies
    else:
        pos = np.searchsorted(index, fit.point_index)  # a run's index increases strictly (runs/format.py)
        if pos.size and (pos.max() >= index.size or not np.array_equal(index[pos], fit.point_index)):
            return None, None
    column = frame.direction if arrays else frame["direction"]
    if hasattr(column, "cat"):  # a loaded DataFrame's categorical column (pandas is not imported for this)
        names = np.asarray([str(c) for c in column.cat.categories] + ["nan"], dtype=object)
        codes = column.cat.codes.to_numpy()
        direction = names[codes if pos is None else codes[pos]]  # code −1 (missing) picks "nan"
    else:
        values = column if arrays else column.to_numpy()  # object array of str, compared with "up"/"down"
        direction = values if pos is None else values[pos]
    if arrays or "setpoint_a" in frame.columns:
        setpoint = frame.setpoint_a if arrays else frame["setpoint_a"].to_numpy(dtype=float)
        setpoint = setpoint if pos is None else setpoint[pos]
    else:
        setpoint = fit.current_a
    return direction, setpoint


def detect_self_heating(frame, fit: FitResult, tempco_per_k: float | None = None, *, alpha: float = ALPHA) -> SelfHeating:
    """Test a fitted sweep for self-heating (module docstring); `frame` supplies direction and setpoint."""
    keep = ~fit.outliers
    if fit.excluded is not None:
        keep &= ~fit.excluded
    every = bool(keep.all())  # the usual case: views of the fit's arrays, not copies of a long run
    e = fit.residuals_v if every else fit.residuals_v[keep]
    i = fit.current_a if every else fit.current_a[keep]
    v = fit.drop_v if every else fit.drop_v[keep]
    sign = _heating_sign(fit, tempco_per_k)
    resistive = fit.model == "resistive"
    r_value = fit.params.get("r_on_ohm", math.nan)
    found: list[str] = []
    quiet: list[str] = []
    out: dict[str, float | None] = {}

    direction, setpoint = _directions(frame, fit)
    if direction is not None:
        if not every:
            direction, setpoint = direction[keep], setpoint[keep]
        _updown(e, i, direction, setpoint, sign, resistive, r_value, tempco_per_k, alpha, found, quiet, out)
    else:
        quiet.append("no direction column: hysteresis not tested")
    _trend(fit, None if every else keep, e, i, v, sign, resistive, r_value, tempco_per_k, alpha, found, quiet, out)

    detected = bool(found)
    delta = out.get("trend_delta_t_c")
    if delta is None:
        delta = out.get("updown_delta_t_c")
    reason = "; ".join(found + quiet) if found else "no self-heating seen: " + "; ".join(quiet)
    return SelfHeating(detected=detected, reason=reason, delta_t_c=delta if detected else None,
                       updown_p=out.get("updown_p"), updown_shift_v=out.get("updown_shift_v"),
                       updown_delta_t_c=out.get("updown_delta_t_c"), trend_p=out.get("trend_p"),
                       trend_delta_t_c=out.get("trend_delta_t_c"))


def _updown(e, i, direction, setpoint, sign, resistive, r_value, tempco, alpha, found, quiet, out):
    up = direction == "up"
    down = direction == "down"
    if up.sum() < 3 or down.sum() < 3:
        quiet.append("fewer than 3 points in each direction: hysteresis not tested")
        return
    key = np.round(setpoint, 9)
    common = np.intersect1d(key[up], key[down])
    if common.size < 3:
        quiet.append("fewer than 3 setpoints met in both directions: hysteresis not tested")
        return
    # mean residual and current per setpoint and direction (bincount keeps it vectorised)
    pos = np.searchsorted(common, key)
    pos = np.clip(pos, 0, common.size - 1)
    matched = common[pos] == key
    diffs = np.zeros(common.size)
    curr = np.zeros(common.size)
    for mask, sgn in ((down & matched, 1.0), (up & matched, -1.0)):
        cnt = np.bincount(pos[mask], minlength=common.size)
        diffs += sgn * np.bincount(pos[mask], weights=e[mask], minlength=common.size) / cnt
        curr += 0.5 * np.bincount(pos[mask], weights=i[mask], minlength=common.size) / cnt
    p = _paired_t_p(diffs)
    shift = float(diffs.mean())
    out["updown_p"], out["updown_shift_v"] = p, shift
    if tempco:
        if resistive:
            # Δ = R·α·δT·I at each setpoint: least squares for δT through the origin
            out["updown_delta_t_c"] = float(diffs @ curr / (curr @ curr)) / (r_value * tempco)
        else:
            out["updown_delta_t_c"] = shift / tempco
    mark = "+" if shift >= 0 else "−"
    text = (f"down-sweep minus up-sweep {mark}{engineering(abs(shift), 'V')} over {common.size} setpoints "
            f"(paired t test {p_value(p)})")
    if "updown_delta_t_c" in out:
        text += f", the down pass {out['updown_delta_t_c']:.3g} K warmer"
    if p < alpha:
        # disagreement beyond the scatter is reported whatever its sign; the sign is told, because
        # heating raises a resistance's drop and lowers a diode's
        if math.copysign(1.0, shift) == sign:
            found.append("hysteresis: " + text)
        else:
            found.append("hysteresis of the sign opposite to this model's heating (a diode's drop falls "
                         "when warm, a resistance's rises: check the element kind): " + text)
    else:
        quiet.append("up/down agree within their scatter: " + text)


def _trend(fit, keep, e, i, v, sign, resistive, r_value, tempco, alpha, found, quiet, out):
    n = e.size
    p_params = fit.covariance.shape[0]
    if n - p_params - 1 < 3:
        quiet.append("too few points for the trend test")
        return
    power = i * v
    z = power * i if resistive else power.copy()
    basis = fit.curve.gradient(i)
    ee = float(e @ e)
    if fit.weights is not None:
        # the regression in the fit's own metric (its weights, e.g. the effective variance), so points
        # the fit trusts little do not swamp the test
        sw = np.sqrt(fit.weights if keep is None else fit.weights[keep])
        e = e * sw
        ee = float(e @ e)
        z *= sw
        basis *= sw[:, None]
        del sw
    # projection on the model's own directions by scaled normal equations (p <= 3 columns): the n-long
    # arrays are z, the basis and one residual; every other quantity is a dot product (memory ~ a few n)
    norms = np.sqrt(np.einsum("ij,ij->j", basis, basis))
    norms[norms == 0] = 1.0
    gram = (basis.T @ basis) / np.outer(norms, norms)
    coef = np.linalg.solve(gram, (basis.T @ z) / norms) / norms
    z -= basis @ coef  # z is now z⊥, the part of the heating shape the model cannot absorb
    del basis
    szz = float(z @ z)
    if not szz > 0:
        quiet.append("the heating shape is already inside the model: trend not tested")
        return
    ze = float(z @ e)
    b = ze / szz
    dof = n - p_params - 1
    s2 = max(ee - 2.0 * b * ze + b * b * szz, 0.0) / dof  # Σ(e − b·z⊥)², expanded
    se = math.sqrt(s2 / szz) if s2 > 0 else 0.0
    t = b / se if se > 0 else math.inf
    p = 2.0 * t_sf(abs(t), dof)
    out["trend_p"] = p
    if tempco and math.copysign(1.0, b) == sign:  # a rise only from a bend of the heating sign
        # in the joint model V = V0 + R₀·I + b·I·P the unheated R₀ is the fitted R less what
        # the heating term lent it (Frisch–Waugh–Lovell): R₀ = R − b·(coefficient of I in z)
        r_cold = r_value - b * float(coef[1]) if resistive else math.nan
        theta = b / (r_cold * tempco) if resistive else b / tempco  # K/W
        out["trend_delta_t_c"] = float(theta * np.max(power))
    shape = "I·P (apparent R rising with I²)" if resistive else "P = I·V"
    text = f"residuals trend with {shape}: t = {t:.3g}, {p_value(p)}"
    if "trend_delta_t_c" in out:
        text += f", rise at the highest power {out['trend_delta_t_c']:.3g} K"
    if p < alpha and math.copysign(1.0, b) == sign:
        found.append("trend: " + text)
    elif p < alpha:
        quiet.append("bend of the sign opposite to heating (model does not fit well): " + text)
    else:
        quiet.append("no trend with power: " + text)
