"""One judging path: a fitted run against its part spec's limit at the run's own Tj and gate drive.

`check`, `lot`, the UI and the report all call `judge` (through `judging.check_run`
or `lot.lot_from_runs`), so they give the same verdict and the same U for the same
run and spec. What is judged:
  - a channel (P/N-MOSFET) or a resistor: R, the slope of the resistive fit with the
    zero-current offset subtracted; the drop at the operating current is R·I and the
    loss R·I² (the current is where the value is evaluated, not a reading), never a
    free intercept;
  - a junction (rectifier, Schottky, a body diode measured on purpose): Vf at the
    operating current from the diode-law fit.
The limit is the spec's maximum (and minimum, when it has one) AT the junction
temperature the value stands at (`junction`), from the spec's temperature curve or
coefficient, and for a MOSFET channel at the |Vgs| of the test: when that differs
from the |Vgs| the spec's maximum is stated at, the limit is translated along the
spec's R_DS(on)(Vgs) points (`predict.channel_model`), within their range only, and
the translation enters the budget of the comparison as a rectangular term whose
half-width is half the translation (ours: the model passes through the datasheet
points, so its error between them is taken as at most half the correction). Outside
that range, or with |Vgs| unknown, the verdict cannot pass and says why.

Budget of the judged value (GUM 5.1.2): the fit's own terms (type A, the meters'
gains and offsets, each current source by name, a shunt's tolerance and tempco),
the junction temperature u(Tj)·|dQ/dT| with dQ/dT from the spec, and for a drop
with the zero-current offset subtracted, that one reading's own noise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from benchlog.quantity import engineering

from .case_temperature import measured_case_temperature
from .junction import JunctionTemperature, ambient_u, junction_above_case, junction_temperature, sweep_heating
from .predict import OperatingPoint, channel_model, predict
from .reverse import judge_reverse

from .spec import MosfetSpec, PartSpec, ResistorSpec
from .fit_result import FitError
from .uncertainty import Budget, Component, combine
from .verdict import (
    Check,
    Extrapolation,
    RunConditions,
    Verdict,
    _extrapolated,
    decide,
    extrapolation,
    rule_text,
    run_conditions,
    run_state,
)
from .columns import column
from .tempco import TEMPERATURE_SHAPE, TEMPERATURE_TERM, default_sensitivity  # noqa: F401 - one name for the budget term

#: A test |Vgs| within 2 % of a datasheet point counts as that point (a gate supply's setting and
#: the drop across the element move it by about that much; ours).
GATE_MATCH_FRACTION = 0.02

TRANSLATION_TERM = "gate-drive translation of the limit"
OFFSET_NOISE_TERM = "zero-offset reading noise"
FIT_RESIDUALS_TERM = "fit residuals"


def is_channel(spec: PartSpec, body_diode: bool) -> bool:
    return (isinstance(spec.part, MosfetSpec) and not body_diode) or isinstance(spec.part, ResistorSpec)


def quantity_of(spec: PartSpec, body_diode: bool) -> str:
    return "r_on_ohm" if is_channel(spec, body_diode) else "drop_v"


def fit_model_of(spec: PartSpec, body_diode: bool) -> str:
    return "resistive" if is_channel(spec, body_diode) else "diode"


# --------------------------------------------------------------------------- temperature sensitivity
def relative_tempco(spec: PartSpec, tj_c: float) -> tuple[float, str]:
    """(1/R)·dR/dT at Tj for a channel or a resistor, from the spec's curve or coefficient."""
    if isinstance(spec.part, ResistorSpec):
        r = spec.part
        a = r.resistance_tempco_per_k
        return a / (1.0 + a * (tj_c - r.resistance_at_c)), f"the spec's resistance tempco {a:g}/K"
    from .predict import _temperature_factor

    notes: list[str] = []
    f = _temperature_factor(spec.part, notes)
    h = 0.01
    left, right = (f(tj_c) - f(tj_c - h)) / h, (f(tj_c + h) - f(tj_c)) / h
    slope = right if abs(right) >= abs(left) else left  # at a knot of the curve, the steeper side (cautious)
    why = "the spec's R_DS(on)-vs-Tj curve" if spec.part.rds_on_tj_c is not None else (
        notes[0] if notes else "the spec's R_DS(on) tempco")
    return slope / f(tj_c), why


def vf_tempco(spec: PartSpec, body_diode: bool) -> tuple[float, str]:
    """dVf/dT in V/K from the spec, else the kind's common-practice value."""
    if spec.element.family == "diode" and spec.part.vf_tempco_v_per_k is not None:
        return spec.part.vf_tempco_v_per_k, "the spec's vf_tempco_v_per_k"
    if body_diode:
        from .predict import BODY_VF_TEMPCO_V_PER_K

        return BODY_VF_TEMPCO_V_PER_K, "a silicon body diode's −2 mV/K (common practice)"
    value, why = spec.element.default_vf_tempco_v_per_k
    return value, why


# --------------------------------------------------------------------------- gate drive
@dataclass(frozen=True)
class GateDrive:
    """The |Vgs| a MOSFET channel was tested at, against the |Vgs| of the spec's maximum."""

    vgs_v: float | None
    how: str
    spec_vgs_v: float
    range_v: tuple[float, float]  # the spec's R_DS(on)(Vgs) points span
    factor: float  # limit at the test's |Vgs| / limit at the spec's |Vgs|
    u_rel: float  # standard uncertainty of the factor, relative
    bar: str  # why the verdict cannot pass ("" when it can)
    input_for_spec_v: float | None  # the input voltage that would test at the spec's |Vgs| (gate to the return)

    def text(self) -> str:
        if self.vgs_v is None:
            return f"|Vgs| unknown ({self.how}); the spec's maximum is at {self.spec_vgs_v:g} V"
        text = f"|Vgs| {self.vgs_v:.4g} V ({self.how}); the spec's maximum is at {self.spec_vgs_v:g} V"
        if self.factor != 1.0 and not self.bar:
            text += f", limit translated ×{self.factor:.4f} along the spec's R_DS(on)(Vgs) points"
        return text


def gate_drive(spec: PartSpec, element, cond: RunConditions, drop_v: float) -> GateDrive:
    """|Vgs| of the test (plan's gate_v, or the recorded input less the drop, clamped) and the limit's translation."""
    m = spec.part
    v_spec = m.rds_on_vgs_v
    points = [v_spec] + ([m.rds_on_2_vgs_v] if m.rds_on_2_vgs_v is not None else [])
    lo, hi = min(points), max(points)
    zener = cond.zener_v
    input_for_spec = None
    if element.gate == "driven":  # `element`: the run header's typed element (runs.record.ElementRecord)
        gate_v = element.gate_v
        if gate_v is not None and math.isfinite(gate_v):
            vgs, how = float(gate_v), "the plan's gate_v for the driven gate"
        else:
            vgs, how = None, "a driven gate with no gate_v in the plan"
    elif cond.vin_v is not None:
        vgs = cond.vin_v - drop_v
        how = f"gate to the return: recorded input {cond.vin_v:.4g} V less the drop {drop_v:.3g} V"
        if zener is not None and vgs > zener:
            vgs, how = zener, how + f", clamped by the {zener:g} V zener"
        if zener is None or zener >= v_spec:
            input_for_spec = v_spec + drop_v
    else:
        vgs, how = None, "gate to the return but no input voltage recorded"
    if vgs is None:
        return GateDrive(None, how, v_spec, (lo, hi), 1.0, 0.0,
                         "the test's |Vgs| is not known, so the limit's gate drive cannot be matched", input_for_spec)
    tol = GATE_MATCH_FRACTION
    if abs(vgs - v_spec) <= tol * v_spec:
        return GateDrive(vgs, how, v_spec, (lo, hi), 1.0, 0.0, "", input_for_spec)
    if not (lo * (1 - tol) <= vgs <= hi * (1 + tol)):
        span = f"{lo:g} V" if lo == hi else f"{lo:g}–{hi:g} V"
        bar = (f"|Vgs| {vgs:.4g} V is outside the spec's R_DS(on)(Vgs) points ({span}): the limit cannot be "
               "translated to the test's gate drive")
        return GateDrive(vgs, how, v_spec, (lo, hi), 1.0, 0.0, bar, input_for_spec)
    notes: list[str] = []
    model = channel_model(m, "max", notes)
    t_ref = m.rds_on_at_c
    factor = model.rds_on_ohm(min(max(vgs, lo), hi), t_ref) / model.rds_on_ohm(v_spec, t_ref)
    if not math.isfinite(factor):
        return GateDrive(vgs, how, v_spec, (lo, hi), 1.0, 0.0,
                         f"|Vgs| {vgs:.4g} V is at or below the spec's threshold", input_for_spec)
    u_rel = abs(factor - 1.0) / 2.0 / math.sqrt(3.0)
    return GateDrive(vgs, how, v_spec, (lo, hi), factor, u_rel, "", input_for_spec)


# --------------------------------------------------------------------------- the limit at the conditions
def _min_variant_spec(spec: PartSpec) -> PartSpec | None:
    """The spec with its minimum in the place of the maximum, so `predict` gives the lower limit."""
    return spec.min_as_max()


def spec_value_at(spec: PartSpec, quantity: str, current_a: float, tj_c: float, vin_v=None) -> float | None:
    """The spec's maximum (typical when it has none) of `quantity` at `current_a` and exactly Tj.

    A channel is taken at the spec's own |Vgs| (the gate translation is applied by the caller).
    """
    fixed = replace(spec, thermal=replace(spec.thermal, rth_ja_k_per_w=None))  # Tj is given, not solved
    point = predict(fixed, current_a, tj_c, vin_v=vin_v).limit
    return point.resistance_ohm if quantity == "r_on_ohm" else point.drop_v


@dataclass(frozen=True)
class Judgement:
    """A run's value against its spec at the run's own conditions; everything that produced the verdict."""

    quantity: str  # "r_on_ohm" | "drop_v"
    value: float
    budget: Budget  # the measurement's budget (with the temperature term)
    decision_budget: Budget  # the comparison's: the measurement's plus the limit's translation, if any
    current_a: float
    current_source: str
    tj: JunctionTemperature
    gate: GateDrive | None
    limit: float | None  # upper limit at the conditions
    limit_min: float | None
    limit_at: str
    verdict: Verdict
    bars: tuple[str, ...]
    extrapolation: Extrapolation
    notes: tuple[str, ...]

    @property
    def std_u(self) -> float:
        return self.budget.u

    @property
    def expanded_u(self) -> float:
        return self.budget.expanded_u

    @property
    def decision_u(self) -> float:
        return self.decision_budget.expanded_u

    @property
    def vgs_v(self) -> float | None:
        return self.gate.vgs_v if self.gate is not None else None

    @property
    def outcome(self) -> str:
        return self.verdict.outcome

    @property
    def drop_v(self) -> float:
        return self.value * self.current_a if self.quantity == "r_on_ohm" else self.value

    def scale(self) -> float:
        """drop = scale·value: I for a resistance, 1 for a drop."""
        return self.current_a if self.quantity == "r_on_ohm" else 1.0


def _with_bars(v: Verdict, bars: list[str]) -> Verdict:
    if not bars:
        return v
    why = "; ".join(bars)
    if v.outcome == "pass":
        return replace(v, outcome="conditional", caveat=(v.caveat + " " if v.caveat else "")
                       + f"Would pass by the guard band, but {why}.")
    return replace(v, caveat=(v.caveat + " " if v.caveat else "") + f"Also: {why}.")


def judge(fit, data, meta, spec: PartSpec, cond: RunConditions) -> Judgement:
    """Judge `fit` (of the run `data`/`meta`, by `fit_model_of`) against `spec` at the run's conditions."""
    header = meta.header
    channel = is_channel(spec, cond.body_diode)
    quantity = quantity_of(spec, cond.body_diode)
    i_op = cond.current_a
    notes: list[str] = []
    u_amb, amb_why = ambient_u(header.element.ambient_u_c, header.bench is not None and header.bench.simulated)
    if channel:
        value = float(fit.params["r_on_ohm"])
        base = fit.budgets["r_on_ohm"]
        alpha, tc_why = relative_tempco(spec, cond.ambient_c)
        heating = sweep_heating(fit, lambda i, v: value * alpha * i, np.array([0.0, 1.0]), value * alpha)
    else:
        value = float(fit.curve.value(np.array([i_op]))[0])
        base = fit.drop_budget_at(i_op)
        tc, tc_why = vf_tempco(spec, cond.body_diode)
        grad = fit.curve.gradient(np.array([i_op]))[0]
        heating = sweep_heating(fit, lambda i, v: np.full_like(i, tc), grad, tc)
    case = measured_case_temperature(data, meta)  # None: nothing recorded in temperature_c
    measured = case.values_c if case is not None else None
    steady = None
    if spec.thermal.rth_ja_k_per_w is not None and fit.current_a.size:
        steady = float(np.max(np.abs(fit.current_a * fit.drop_v))) * spec.thermal.rth_ja_k_per_w
    zth_rise = zth_timing_u = scatter_ratio = None
    if spec.thermal.zth_t_s is not None and measured is None:
        found = _zth_rise(fit, data, meta, spec, value if channel else None, alpha if channel else tc,
                          None if channel else grad)
        if found is not None:
            zth_rise, zth_timing_u, scatter_ratio = found
    case_rise = None
    if case is not None:
        i_pts, v_pts = column(data, "current_a"), column(data, "drop_v")
        if i_pts is not None and v_pts is not None:
            read = np.isfinite(case.values_c)
            case_rise = junction_above_case((i_pts * v_pts)[read], spec.thermal.rth_jc_k_per_w,
                                            spec.thermal.rth_ja_k_per_w, _pulse_zth(data, meta, spec, read))
    tj = junction_temperature(cond.ambient_c, u_amb, amb_why, heating, measured, steady, zth_rise,
                              sensor_u_c=case.u_c if case is not None else None,
                              sensor_why=case.describe() if case is not None else "",
                              zth_u_pct=spec.thermal.zth_u_pct, zth_timing_u_c=zth_timing_u, case_rise=case_rise)
    if tj.source == "inferred":
        notes.append(f"heating inside the sweep: the fitted value stands at Tj {tj.value_c:.2f} °C, "
                     f"{tj.value_c - cond.ambient_c:.3g} K above the ambient; the limit is taken there")
    if channel:
        alpha, tc_why = relative_tempco(spec, tj.value_c)
        sens = abs(value * alpha)
    else:
        sens = abs(tc)
    comps = [c for c in base.components if c.name != TEMPERATURE_TERM]
    if tj.source == "inferred" and zth_rise is not None and scatter_ratio is not None:
        # the heating the judged value is corrected for is taken out of the type A scatter (GUM 3.2.3)
        comps = [replace(c, u=c.u * scatter_ratio) if c.name == FIT_RESIDUALS_TERM else c for c in comps]
        if abs(scatter_ratio - 1.0) > 0.05:
            notes.append(f"the fit's residual scatter with the Zth heating taken out is {scatter_ratio:.2f} of its "
                         "own; the type A term uses that")
    if not channel and zth_rise is not None and tj.source == "inferred":
        comps = _offset_through_tj(comps, fit, data, meta, spec, tc, i_op, zth_rise)
    comps.append(Component(TEMPERATURE_TERM, "B", sens * tj.u_c, shape=TEMPERATURE_SHAPE))
    if not channel and fit.offset_removed:
        noise = fit.point_noise  # the offset is one reading of the same meter as each point's drop
        if noise is not None:
            comps.append(Component(OFFSET_NOISE_TERM, "A", noise.drop_sd_v, float(noise.dof)))
    budget = combine(comps)

    gate = None
    bars: list[str] = []
    limit_quantity = quantity
    vin = cond.vin_v if cond.body_diode else None
    limit = spec_value_at(spec, limit_quantity, i_op, tj.value_c, vin)
    low_spec = _min_variant_spec(spec)
    limit_min = spec_value_at(low_spec, limit_quantity, i_op, tj.value_c, vin) if low_spec is not None else None
    decision_comps = list(comps)
    named = "maximum" if spec.has_max else "typical (the spec gives no maximum)"
    where = f"at {i_op:.4g} A, " if not channel else ""
    limit_at = f"spec {named} {where}at Tj {tj.value_c:.2f} °C ({tj.source})"
    if spec.element.family == "mosfet" and not cond.body_diode:
        gate = gate_drive(spec, header.element, cond, value * i_op)
        limit_at += f", |Vgs| {spec.part.rds_on_vgs_v:g} V"
        if gate.bar:
            bars.append(gate.bar)
        elif gate.factor != 1.0:
            limit = None if limit is None else limit * gate.factor
            limit_min = None if limit_min is None else limit_min * gate.factor
            limit_at += f" translated to the test's |Vgs| {gate.vgs_v:.4g} V (×{gate.factor:.4f})"
            if limit is not None:
                decision_comps.append(Component(TRANSLATION_TERM, "B", value * gate.u_rel))
        if gate.bar and gate.input_for_spec_v is not None:
            notes.append(f"an input of {gate.input_for_spec_v:.4g} V would test at the spec's "
                         f"|Vgs| {gate.spec_vgs_v:g} V")
    if not spec.has_max:
        notes.append("the spec gives no maximum: judged against the typical value")
    decision = combine(decision_comps)
    k = float(decision.k)  # the guard band U = k_p·u of the comparison's own distribution (ILAC-G8)
    p = decision.coverage_probability
    if limit is None:
        v = Verdict("conditional", rule_text("upper", k, p), quantity, value, decision.expanded_u, k, None, "upper",
                    f"no limit at the conditions ({limit_at})", coverage_probability=p)
    else:
        v = decide(value, decision.expanded_u, limit, k=k, quantity=quantity, limit_source=limit_at,
                   coverage_probability=p)
        if limit_min is not None:
            low = decide(value, decision.expanded_u, limit_min, side="lower", k=k, quantity=quantity,
                         limit_source=limit_at, coverage_probability=p)
            v = _worse(v, low)
    ext = extrapolation(fit, i_op)
    v = _with_bars(_extrapolated(v, ext), bars)
    return Judgement(quantity, value, budget, decision, i_op, cond.current_source, tj, gate, limit, limit_min,
                     limit_at, v, tuple(bars), ext, tuple(notes))


def _zth_rise(fit, data, meta, spec: PartSpec, r_value, tempco, grad) -> tuple[float, float, float | None] | None:
    """The rise the fitted value stands at, from every recorded point's power through the spec's Zth, its
    standard uncertainty from the pulses' unknown on-times, and the residual scatter's ratio once that
    heating is taken out (`junction.scatter_without_heating`).

    A run file knows each point's time stamp, not when the current came on. Each pulse lasted at most
    from the previous stamp plus the cool-down (`off_s`) to its own stamp, at least the settle dwell
    plus the readings (the current must be on for those); the command round trips in between fall
    somewhere. The rise is taken as the mean of the two ends, with the rectangular u of half their
    difference (GUM 4.3.7; the full range over √12).
    """
    from .junction import projected_rise, rise_at_points, scatter_without_heating, zth_at

    t, i, v = column(data, "t_s"), column(data, "current_a"), column(data, "drop_v")
    if t is None or i is None or v is None:
        return None
    ok = np.isfinite(t)
    if ok.sum() < 2:
        return None
    th = spec.thermal
    plan = meta.header.plan
    cool = plan.table.get("cooldown") if plan is not None else None
    off_s = cool.get("off_s") if hasattr(cool, "get") and isinstance(cool.get("off_s"), (int, float)) else 0.0
    settle_rule = plan.table.get("settle") if plan is not None else None
    dwell = settle_rule.get("dwell_s") if hasattr(settle_rule, "get") else None
    dwell = float(dwell) if isinstance(dwell, (int, float)) and not isinstance(dwell, bool) else 0.0
    lag = reading_lag_s(meta.header)
    power = np.where(np.isfinite(i * v), i * v, 0.0)[ok]
    zth = lambda s: zth_at(th.zth_t_s, th.zth_k_per_w, th.rth_ja_k_per_w, s)  # noqa: E731
    longest = np.zeros(t.size)
    longest[ok] = rise_at_points(t[ok], power, zth, float(off_s or 0.0), lag)
    shortest = np.zeros(t.size)
    shortest[ok] = rise_at_points(t[ok], power, zth, float(off_s or 0.0), lag, on_s=dwell + 2.0 * lag)
    index = column(data, "index")
    index = index.astype(np.int64) if index is not None else np.arange(t.size)
    pos = np.searchsorted(index, fit.point_index)  # a run's index increases strictly (runs/format.py)
    if pos.size == 0 or pos.max() >= index.size or not np.array_equal(index[pos], fit.point_index):
        return None
    if r_value is not None:  # a resistance: s_i = R·α·I_i, Q = R
        sens, q_grad, dq_dt = (lambda ii, vv: r_value * tempco * ii), np.array([0.0, 1.0]), r_value * tempco
    else:
        sens, q_grad, dq_dt = (lambda ii, vv: np.full_like(ii, tempco)), grad, tempco
    hi = projected_rise(fit, longest[pos], sens, q_grad, dq_dt)
    lo = projected_rise(fit, shortest[pos], sens, q_grad, dq_dt)
    rise = 0.5 * (longest[pos] + shortest[pos])
    return 0.5 * (hi + lo), abs(hi - lo) / math.sqrt(12.0), scatter_without_heating(fit, rise, sens)


def _offset_through_tj(comps: list[Component], fit, data, meta, spec: PartSpec, tempco: float, i_op: float,
                       rise: float) -> list[Component]:
    """`comps` with the current offset's term on the judged error when the rise is inferred.

    The current reading's offset moves the fitted drop and also the rise the value is said to stand
    at (through the fit's weights and the recorded power); the truth at that Tj moves with it by
    dVf/dT·ΔTj. One input reaching the result by two paths has the sensitivity of their sum (GUM
    5.1.3): Δvalue − dVf/dT·ΔTj, found by refitting with the current shifted by u(o) (the response
    is linear to 0.4 % over the offset's bound on the simulated bench). On that bench the two paths
    cancel about 6 % of the drop's own shift.
    """
    acc = fit.accuracy
    if fit.model != "diode" or acc is None or acc.current is None or not acc.current.offset_u > 0:
        return comps
    name = f"{acc.current_name} offset"
    if not any(c.name == name for c in comps):
        return comps
    from types import SimpleNamespace

    from .fits import fit_diode

    h = acc.current.offset_u
    try:
        moved = fit_diode(fit.current_a + h, fit.drop_v, acc, temperature_c=fit.temperature_c,
                          offset_removed=fit.offset_removed, point_index=fit.point_index)
    except FitError:
        return comps
    at = np.array([i_op])
    shifted = SimpleNamespace(t_s=column(data, "t_s"), current_a=column(data, "current_a") + h,
                              drop_v=column(data, "drop_v"), index=column(data, "index"))
    found = _zth_rise(moved, shifted, meta, spec, None, tempco, moved.curve.gradient(at)[0])
    if found is None:
        return comps
    error_shift = float(moved.curve.value(at)[0] - fit.curve.value(at)[0]) - tempco * (found[0] - rise)
    return [replace(c, u=abs(error_shift)) if c.name == name else c for c in comps]


def _pulse_zth(data, meta, spec: PartSpec, rows) -> np.ndarray | None:
    """Zth of each point's pulse, at its longest (from the previous stamp plus the cool-down), for `rows`."""
    th = spec.thermal
    t = column(data, "t_s")
    if th.zth_t_s is None or t is None or t.size < 2:
        return None
    from .junction import zth_at

    plan = meta.header.plan
    cool = plan.table.get("cooldown") if plan is not None else None
    off_s = cool.get("off_s") if hasattr(cool, "get") and isinstance(cool.get("off_s"), (int, float)) else 0.0
    on = np.empty_like(t)
    on[1:] = t[1:] - t[:-1] - float(off_s or 0.0)
    on[0] = on[1]
    on = np.where(np.isfinite(on) & (on > 0), on, np.inf)  # unknown: no tighter than RθJC
    return zth_at(th.zth_t_s, th.zth_k_per_w, th.rth_ja_k_per_w, np.where(np.isfinite(on), on, 1e9))[rows]


def reading_lag_s(header) -> float:
    """How long before its time stamp a point's drop was read, on average: the recorded drop is the
    mean of the settle rule's last `consecutive` readings, each `samples` integrations of NPLC/f_line
    (NPLC: integration time in power-line cycles), so its centre lies half of those windows before
    the last reading ended. 0 when the run does not say; the read-back query after the readings adds
    a few ms more, left inside the Zth rise's u."""
    m = header.meter
    f = header.line_frequency_hz
    if m is None or m.nplc is None or not f or not math.isfinite(m.nplc) or m.nplc <= 0:
        return 0.0
    plan = header.plan
    rule = plan.table.get("settle") if plan is not None else None
    consecutive = rule.get("consecutive") if hasattr(rule, "get") else None
    consecutive = consecutive if isinstance(consecutive, int) and not isinstance(consecutive, bool) \
        and consecutive >= 1 else 1
    return 0.5 * consecutive * (m.samples or 1) * m.nplc / float(f)


def _worse(upper: Verdict, lower: Verdict) -> Verdict:
    order = {"fail": 0, "conditional": 1, "pass": 2}
    return upper if order[upper.outcome] <= order[lower.outcome] else lower


def judge_run(data, meta, spec: PartSpec, at_a: float | None = None) -> Judgement:
    """Fit a loaded run (a DataFrame from `runs.load`, or `runs.load_points` arrays) and `judge` it."""
    cond = run_conditions(column(data, "current_a"), column(data, "supply_v"), meta, spec, at_a)
    model = fit_model_of(spec, cond.body_diode)
    if hasattr(data, "iloc"):
        from .fits import fit_run

        fit = fit_run(data, meta, model)
    else:
        from .fits import fit_points

        fit = fit_points(data, meta, model)
    return judge(fit, data, meta, spec, cond)


def check_run(frame, meta, spec: PartSpec, at_a: float | None = None) -> Check:
    """Judge a loaded run against `spec` at the operating current, by the one judging path (`judging.judge`).

    The value judged is R (a channel, a resistor) or Vf at the operating current (a junction), at
    the run's own junction temperature and gate drive; the drop and the loss at the operating
    current are that value times I (and I²), with the same verdict. An extrapolated operating
    current, an unmatched gate drive and an unfinished run are named in the verdict and the notes.
    """
    from .fits import fit_run  # the fit layer is imported late: a spec-only user never needs it
    from .judging import fit_model_of, judge

    cond = run_conditions(column(frame, "current_a"), column(frame, "supply_v"),
                          meta, spec, at_a)
    fit = fit_run(frame, meta, fit_model_of(spec, cond.body_diode))
    j = judge(fit, frame, meta, spec, cond)
    i = cond.current_a
    s = j.scale()
    drop, u_drop = j.drop_v, j.std_u * s
    loss, u_loss = drop * i, u_drop * i
    k = float(j.budget.k)  # the measurement's own k_p (the verdict's is the comparison's, j.decision_budget.k)

    def scaled(v: Verdict, factor: float, quantity: str) -> Verdict:
        return replace(v, quantity=quantity, measured=v.measured * factor, expanded_u=v.expanded_u * factor,
                       limit=None if v.limit is None else v.limit * factor)

    heated = predict(spec, i, cond.ambient_c, vin_v=cond.vin_v, zener_v=cond.zener_v)
    cold_spec = replace(spec, thermal=replace(spec.thermal, rth_ja_k_per_w=None))
    cold = predict(cold_spec, i, cond.ambient_c, vin_v=cond.vin_v, zener_v=cond.zener_v)
    complete, run_outcome, run_note = run_state(meta)
    notes = [n for n in (run_note, j.extrapolation.text()) if n]
    fit_notes = [n for n in fit.notes if not n.startswith("junction temperature:")]  # the judgement states its own
    notes += list(j.bars) + list(j.notes) + list(cond.notes) + list(heated.notes) + fit_notes
    return Check(
        part=spec.name, run=str(meta.path), current_a=i,
        current_source=cond.current_source, ambient_c=cond.ambient_c, model=fit.model,
        measured_drop_v=drop, drop_std_u_v=u_drop, measured_loss_w=loss, loss_std_u_w=u_loss, k=k,
        coverage_probability=j.budget.coverage_probability,
        predicted=heated, unheated=cold, verdict=scaled(j.verdict, s * i, "loss_w"),
        drop_verdict=scaled(j.verdict, s, "drop_v"),
        typical_comparison=typical_comparison(loss, k * u_loss, heated.typical, cold.typical),
        notes=tuple(dict.fromkeys(notes)), extrapolation=j.extrapolation, run_complete=complete,
        run_outcome=run_outcome, judgement=j,
        reverse=judge_reverse(meta.reverse, spec, frame, meta),
    )


def typical_comparison(loss_w: float, expanded_u_w: float, heated: OperatingPoint, cold: OperatingPoint) -> str:
    """How the measured loss sits against the typical predictions (self-heated and unheated), in words."""
    parts = []
    for label, point in (("self-heated", heated), ("unheated", cold)):
        if point.loss_w is None or point.loss_w <= 0:
            parts.append(f"no {label} typical prediction ({point.message})")
            continue
        t = point.loss_w
        rel = (loss_w - t) / t * 100.0
        agree = "within" if abs(loss_w - t) <= expanded_u_w else "outside"
        parts.append(f"{abs(rel):.1f} % {'above' if rel >= 0 else 'below'} the {label} typical {engineering(t, 'W')} "
                     f"({agree} ±U)")
    return f"measured {engineering(loss_w, 'W')}: " + "; ".join(parts)
