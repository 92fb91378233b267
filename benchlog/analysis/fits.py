"""Fits of a sweep with GUM uncertainties: the public names, and `fit_run` over a loaded run.

The work is split by model: `fit_resistive` (R_DS(on), knee line), `fit_diode`
(Shockley with series resistance), `model_choice` (AICc), `self_heating`; the
shared result type is in `fit_result`, the GUM arithmetic in `uncertainty`.
"""

from __future__ import annotations

import math

import numpy as np

from benchlog.ambient import DEFAULT_AMBIENT_C
from benchlog.badinput import BadInput
from benchlog.kinds import ELEMENT_KINDS, kind as element_kind

from .fit_diode import fit_diode, shockley_drop_v, thermal_voltage_v
from .fit_resistive import fit_knee, fit_resistive, studentised_residuals
from .fit_result import OUTLIER_RULE, FitError, FitResult
from .model_choice import aicc, fit_auto
from .columns import column
from .self_heating import SelfHeating, detect_self_heating
from .uncertainty import Component

__all__ = [
    "FitError",
    "FitResult",
    "MODELS",
    "OUTLIER_RULE",
    "SelfHeating",
    "aicc",
    "detect_self_heating",
    "fit_auto",
    "fit_diode",
    "fit_knee",
    "fit_resistive",
    "fit_run",
    "run_temperature_c",
    "shockley_drop_v",
    "studentised_residuals",
    "thermal_voltage_v",
    "usable_points",
]

MODELS = ("auto", "resistive", "diode", "knee")

#: Temperature taken when a run records none at all (the default ambient, `benchlog.ambient`).
DEFAULT_TEMPERATURE_C = DEFAULT_AMBIENT_C


def _has_flag(frame, flag: str) -> np.ndarray:
    """Rows whose "|"-joined flags hold `flag`; a loaded run's flags are categorical, so test the categories."""
    if hasattr(frame, "has_flag"):  # runs.PointArrays (the light loader, no pandas)
        return frame.has_flag(flag)
    flags = frame["flags"]
    if hasattr(flags, "cat"):
        names = [str(c).split("|") for c in flags.cat.categories]
        hits = np.flatnonzero([flag in parts for parts in names])
        return np.isin(flags.cat.codes.to_numpy(), hits)
    return np.array([flag in str(x).split("|") for x in flags.fillna("")], dtype=bool)


def usable_points(frame) -> tuple[np.ndarray, list[str]]:
    """Rows that can be fitted: finite current and drop, no overload flag; and notes on the rest.

    `frame` is `runs.load`'s DataFrame or `runs.load_points`' arrays (same columns, no pandas).
    """
    current, drop = column(frame, "current_a"), column(frame, "drop_v")
    rows = np.isfinite(current) & np.isfinite(drop)
    overload = np.zeros(rows.shape, dtype=bool)
    notes = []
    soak = np.zeros(rows.shape, dtype=bool)
    if hasattr(frame, "has_flag") or "flags" in frame.columns:
        overload = _has_flag(frame, "overload")
        # heat-soak readings (one current held while the element heats) are not points of the sweep
        soak = _has_flag(frame, "soak") | _has_flag(frame, "cool")
        unsettled = _has_flag(frame, "unsettled") & rows & ~overload
        if overload.any():
            notes.append(f"{int(overload.sum())} overload point(s) left out")
        if unsettled.any():
            notes.append(f"{int(unsettled.sum())} unsettled point(s) kept in the fit")
    missing = int((~rows & ~overload & ~soak).sum())
    if missing:
        notes.append(f"{missing} point(s) without a reading left out")
    if soak.any():
        notes.append(f"{int(soak.sum())} heat-soak reading(s) analysed apart, not in this fit")
    return rows & ~overload & ~soak, notes


def run_temperature_c(temperature_c: np.ndarray, meta) -> tuple[float, str]:
    """The temperature a diode fit uses: recorded point temperatures, else the element's ambient, else 25 °C.

    `temperature_c` is the run's point column (NaN where not read); `meta` a `runs.RunMeta`.
    """
    t = np.asarray(temperature_c, dtype=float)
    t = t[np.isfinite(t)]
    if t.size:
        return float(t.mean()), f"temperature {t.mean():.2f} °C: mean of {t.size} recorded point(s)"
    ambient = meta.header.element.ambient_c
    if ambient is not None:
        return ambient, f"temperature {ambient:.2f} °C: the element's recorded ambient"
    return DEFAULT_TEMPERATURE_C, f"no temperature recorded: {DEFAULT_TEMPERATURE_C:g} °C assumed"


def fit_run(frame, meta, model: str = "auto", *, exclude_outliers: bool = False) -> FitResult:
    """Fit a loaded run (`benchlog.runs.load`): header accuracy, element ambient, offset subtracted.

    Raises BadInput naming the run file when the run cannot be fitted as asked.
    """
    source = str(meta.path)
    if model not in MODELS:
        raise BadInput(source, "--model", f"unknown model {model!r}", " or ".join(MODELS))
    accuracy = meta.header.accuracy if meta.header.accuracy.known else None
    rows, notes = usable_points(frame)
    every = bool(rows.all())  # the usual case: no copies of a long run
    current, drop = column(frame, "current_a"), column(frame, "drop_v")
    index = column(frame, "index")
    index = index.astype(np.int64) if index is not None else np.arange(rows.size)
    if not every:
        current, drop, index = current[rows], drop[rows], index[rows]
    offset = meta.offset_v
    offset_removed = offset is not None and math.isfinite(float(offset))
    if offset_removed:
        drop = drop - float(offset)
        notes.append(f"zero-current offset {float(offset) * 1e6:.4g} µV subtracted")
    recorded = column(frame, "temperature_c")
    temperature_c, t_note = run_temperature_c(recorded if recorded is not None else np.array([]), meta)
    common = dict(offset_removed=offset_removed, exclude_outliers=exclude_outliers, point_index=index)
    try:
        if model == "resistive":
            fit = fit_resistive(current, drop, accuracy, temperature_c=temperature_c, **common)
        elif model == "knee":
            fit = fit_knee(current, drop, accuracy, temperature_c=temperature_c, **common)
        elif model == "diode":
            fit = fit_diode(current, drop, accuracy, temperature_c=temperature_c, **common)
            notes.append(t_note)
        else:
            kind = meta.header.kind or ""
            # A junction kind (the registry's conduction) breaks an AICc tie towards the diode law.
            tie = element_kind(kind).tie_break() if kind in ELEMENT_KINDS else "resistive"
            why = f"the run records a {kind} element" if kind else ""
            fit = fit_auto(current, drop, accuracy, temperature_c=temperature_c, tie_break=tie, tie_why=why, **common)
            if fit.model == "diode":
                notes.append(t_note)
    except FitError as exc:
        raise BadInput(source, "points", str(exc), f"a sweep the {model} model can be fitted to") from exc
    from dataclasses import replace

    fit = replace(fit, notes=tuple(notes) + fit.notes)
    return with_temperature_term(fit, frame, meta)


def with_temperature_term(fit: FitResult, frame, meta) -> FitResult:
    """The fit with the junction temperature it stands at and a temperature term in its budgets.

    Without a part spec the kind's common-practice coefficient is used (`tempco.default_sensitivity`);
    a verdict replaces the term by the spec's own (`judging.judge`). u(Tj) as in `junction`.
    """
    from dataclasses import replace

    from .fit_result import budgets_to_dicts
    from .tempco import TEMPERATURE_SHAPE, TEMPERATURE_TERM, default_sensitivity
    from .junction import ambient_u, junction_temperature, sweep_heating
    from .uncertainty import combine

    header = meta.header
    element = header.element
    kind = element.kind or ""
    found = default_sensitivity(kind, fit.model, body_diode=element.measure == "body_diode")
    if found is None or not fit.params:
        return fit
    tc, why = found
    measured = column(frame, "temperature_c")
    ambient, _ = run_temperature_c(measured if measured is not None else np.array([]), meta)
    u_amb, amb_why = ambient_u(element.ambient_u_c, header.bench is not None and header.bench.simulated)
    if fit.model == "diode":
        top = float(np.max(fit.current_a))
        grad = fit.curve.gradient(np.array([top]))[0]
        heating = sweep_heating(fit, lambda i, v: np.full_like(i, tc), grad, tc)
        drop_tempco = ("absolute", tc)
    else:
        slope_key = "r_on_ohm" if fit.model == "resistive" else "r_d_ohm"
        r = fit.params[slope_key]
        heating = sweep_heating(fit, lambda i, v: r * tc * i, np.array([0.0, 1.0]), r * tc)
        drop_tempco = ("relative", tc)
    tj = junction_temperature(ambient, u_amb, amb_why, heating, measured)
    budgets = dict(fit.budgets)
    for key, b in fit.budgets.items():
        if key in ("r_on_ohm", "r_d_ohm"):
            sens = abs(fit.params[key] * tc)
        elif key == "v_knee_v":
            sens = abs(fit.params[key] * tc)
        else:
            continue
        comps = [c for c in b.components if c.name != TEMPERATURE_TERM]
        comps.append(Component(TEMPERATURE_TERM, "B", sens * tj.u_c, shape=TEMPERATURE_SHAPE))
        budgets[key] = combine(comps, b.coverage_probability)
    std_u, expanded = budgets_to_dicts(budgets)
    note = f"junction temperature: {tj.text()}; temperature coefficient: {why}"
    return replace(fit, budgets=budgets, std_u=std_u, expanded_u=expanded, tj=tj, drop_tempco=drop_tempco,
                   notes=fit.notes + (note,))


def fit_points(points, meta, model: str):
    """`fits.fit_run(frame, meta, model)` for the arrays of `runs.load_points`, without a DataFrame per run.

    The same points (finite current and drop, no overload flag), the header's accuracy,
    the zero-current offset subtracted, the same temperature (`run_temperature_c`) and
    the same BadInput when the model cannot be fitted; the test suite holds the two to
    1e-12. `model` is "resistive" or "diode"; notes on left-out points are not kept
    (the lot does not show per-run notes).
    """
    from .fit_diode import fit_diode
    from .fit_resistive import fit_resistive
    from .fit_result import FitError
    source = str(meta.path)
    accuracy = meta.header.accuracy if meta.header.accuracy.known else None
    current, drop, index = points.current_a, points.drop_v, points.index
    rows = np.isfinite(current) & np.isfinite(drop) & ~points.has_flag("overload")
    if not rows.all():
        current, drop, index = current[rows], drop[rows], index[rows]
    offset = meta.offset_v
    offset_removed = offset is not None and math.isfinite(float(offset))
    if offset_removed:
        drop = drop - float(offset)
    temperature_c, _ = run_temperature_c(points.temperature_c, meta)
    common = dict(offset_removed=offset_removed, exclude_outliers=False, point_index=index)
    try:
        if model == "resistive":
            return with_temperature_term(fit_resistive(current, drop, accuracy, temperature_c=temperature_c,
                                                       **common), points, meta)
        if model == "diode":
            return with_temperature_term(fit_diode(current, drop, accuracy, temperature_c=temperature_c, **common),
                                         points, meta)
    except FitError as exc:
        raise BadInput(source, "points", str(exc), f"a sweep the {model} model can be fitted to") from exc
    raise ValueError(f"fit_points fits 'resistive' or 'diode', not {model!r}")
