"""Fits of a sweep with GUM uncertainties: the public names, and `fit_run` over a loaded run.

The work is split by model: `fit_resistive` (R_DS(on), knee line), `fit_diode`
(Shockley with series resistance), `model_choice` (AICc), `self_heating`; the
shared result type is in `fit_result`, the GUM arithmetic in `uncertainty`.
"""

from __future__ import annotations

import math

import numpy as np

from benchlog.badinput import BadInput
from benchlog.kinds import ELEMENT_KINDS, kind as element_kind

from .fit_diode import fit_diode, shockley_drop_v, thermal_voltage_v
from .fit_resistive import fit_knee, fit_resistive, studentised_residuals
from .fit_result import OUTLIER_RULE, FitError, FitResult
from .model_choice import aicc, fit_auto
from .self_heating import SelfHeating, detect_self_heating
from .uncertainty import MeasurementAccuracy

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

#: Temperature taken when a run records none at all (common practice: the datasheet reference).
DEFAULT_TEMPERATURE_C = 25.0


def _has_flag(frame, flag: str) -> np.ndarray:
    """Rows whose "|"-joined flags hold `flag`; a loaded run's flags are categorical, so test the categories."""
    column = frame["flags"]
    if hasattr(frame, "has_flag"):  # runs.PointArrays (the light loader, no pandas): "" when a point has none
        flags = column.to_numpy()
        marked = np.flatnonzero(flags != "")  # one C-level pass; only flagged points are split in Python
        hit = np.zeros(flags.shape, dtype=bool)
        if marked.size:
            hit[marked] = [flag in str(x).split("|") for x in flags[marked]]
        return hit
    if hasattr(column, "cat"):
        names = [str(c).split("|") for c in column.cat.categories]
        hits = np.flatnonzero([flag in parts for parts in names])
        return np.isin(column.cat.codes.to_numpy(), hits)
    return np.array([flag in str(x).split("|") for x in column.fillna("")], dtype=bool)


def usable_points(frame) -> tuple[np.ndarray, list[str]]:
    """Rows that can be fitted: finite current and drop, no overload flag; and notes on the rest.

    `frame` is `runs.load`'s DataFrame or `runs.load_points`' arrays (same columns, no pandas).
    """
    current = frame["current_a"].to_numpy(dtype=float)
    drop = frame["drop_v"].to_numpy(dtype=float)
    rows = np.isfinite(current) & np.isfinite(drop)
    overload = np.zeros(rows.shape, dtype=bool)
    notes = []
    if "flags" in frame.columns:
        overload = _has_flag(frame, "overload")
        unsettled = _has_flag(frame, "unsettled") & rows & ~overload
        if overload.any():
            notes.append(f"{int(overload.sum())} overload point(s) left out")
        if unsettled.any():
            notes.append(f"{int(unsettled.sum())} unsettled point(s) kept in the fit")
    missing = int((~rows & ~overload).sum())
    if missing:
        notes.append(f"{missing} point(s) without a reading left out")
    return rows & ~overload, notes


def run_temperature_c(frame, meta) -> tuple[float, str]:
    """The temperature a diode fit uses: recorded point temperatures, else the element's ambient, else 25 °C."""
    if "temperature_c" in frame.columns:
        t = frame["temperature_c"].to_numpy(dtype=float)
        t = t[np.isfinite(t)]
        if t.size:
            return float(t.mean()), f"temperature {t.mean():.2f} °C: mean of {t.size} recorded point(s)"
    ambient = (getattr(meta, "element", None) or {}).get("ambient_c")
    if isinstance(ambient, (int, float)) and not isinstance(ambient, bool) and math.isfinite(ambient):
        return float(ambient), f"temperature {float(ambient):.2f} °C: the element's recorded ambient"
    return DEFAULT_TEMPERATURE_C, f"no temperature recorded: {DEFAULT_TEMPERATURE_C:g} °C assumed"


def fit_run(frame, meta, model: str = "auto", *, exclude_outliers: bool = False) -> FitResult:
    """Fit a loaded run (`benchlog.runs.load`): header accuracy, element ambient, offset subtracted.

    Raises BadInput naming the run file when the run cannot be fitted as asked.
    """
    source = str(getattr(meta, "path", "run"))
    if model not in MODELS:
        raise BadInput(source, "--model", f"unknown model {model!r}", " or ".join(MODELS))
    header = getattr(meta, "header", None) or {}
    accuracy = MeasurementAccuracy.from_header(header, source)
    if accuracy.drop is None and accuracy.current is None:
        accuracy = None
    rows, notes = usable_points(frame)
    every = bool(rows.all())  # the usual case: no copies of a long run
    current = frame["current_a"].to_numpy(dtype=float)
    drop = frame["drop_v"].to_numpy(dtype=float)
    index = frame["index"].to_numpy() if "index" in frame.columns else np.arange(rows.size)
    if not every:
        current, drop, index = current[rows], drop[rows], index[rows]
    offset = getattr(meta, "offset_v", None)
    offset_removed = offset is not None and math.isfinite(float(offset))
    if offset_removed:
        drop = drop - float(offset)
        notes.append(f"zero-current offset {float(offset) * 1e6:.4g} µV subtracted")
    temperature_c, t_note = run_temperature_c(frame, meta)
    common = dict(offset_removed=offset_removed, exclude_outliers=exclude_outliers, point_index=index)
    try:
        if model == "resistive":
            fit = fit_resistive(current, drop, accuracy, temperature_c=temperature_c, **common)
        elif model == "knee":
            fit = fit_knee(current, drop, accuracy, temperature_c=temperature_c, **common)
        elif model == "diode":
            fit = fit_diode(current, drop, temperature_c, accuracy, **common)
            notes.append(t_note)
        else:
            kind = str((getattr(meta, "element", None) or {}).get("kind") or "")
            # A junction kind (the registry's conduction) breaks an AICc tie towards the diode law.
            tie = element_kind(kind).tie_break() if kind in ELEMENT_KINDS else "resistive"
            why = f"the run records a {kind} element" if kind else ""
            fit = fit_auto(current, drop, temperature_c, accuracy, tie_break=tie, tie_why=why, **common)
            if fit.model == "diode":
                notes.append(t_note)
    except FitError as exc:
        raise BadInput(source, "points", str(exc), f"a sweep the {model} model can be fitted to") from exc
    from dataclasses import replace

    return replace(fit, notes=tuple(notes) + fit.notes)
