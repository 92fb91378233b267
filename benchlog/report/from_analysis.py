"""Views for the figures made from the analysis' own results (FitResult, Prediction, lot and design reviews).

These are the only places where the report reads analysis objects for drawing;
the figures themselves stay free of them.
"""

from __future__ import annotations

import math

import numpy as np

from benchlog.analysis.columns import column
from benchlog.analysis.fit_result import FitResult
from benchlog.analysis.predict import predict
from benchlog.analysis.spec import PartSpec

from .views import FitCurve, MeasuredSeries, OperatingPoint, Residuals, SpecCurve
from .text import unit_of, with_uncertainty

GRID_POINTS = 60


def current_grid(max_current_a: float, points: int = GRID_POINTS) -> np.ndarray:
    """Currents from a small fraction of the top current up to 5 % beyond it (0 A is not a valid prediction)."""
    top = max(float(max_current_a), 1e-6) * 1.05
    return np.linspace(top / points, top, points)


def fit_label(fit: FitResult) -> str:
    """The headline parameter of a fit, e.g. "resistive, r_on_ohm = 26.12 ± 0.26 mΩ (k = 1.73, 95.45 % coverage)"."""
    key = {"resistive": "r_on_ohm", "knee": "r_d_ohm", "diode": "ideality"}.get(fit.model)
    if key is None or key not in fit.params:
        return fit.model
    b = fit.budgets.get(key)
    return (f"{fit.model}, {key} = "
            f"{with_uncertainty(fit.params[key], fit.expanded_u.get(key), unit_of(key), fit.k, b and b.coverage_probability)}")


def measured_series(frame, fit: FitResult | None, label: str, offset_v: float | None = None) -> MeasuredSeries:
    """All recorded points (offset-corrected like the fit), with the fit's outlier flags mapped onto them."""
    current = column(frame, "current_a")
    drop = column(frame, "drop_v")
    if fit is not None and fit.offset_removed and offset_v is not None and math.isfinite(offset_v):
        drop = drop - offset_v
    keep = np.isfinite(current) & np.isfinite(drop)
    outlier = np.zeros(current.shape, dtype=bool)
    index = column(frame, "index")
    if fit is not None and index is not None and fit.outliers.any():
        flagged = set(np.asarray(fit.point_index)[np.asarray(fit.outliers, dtype=bool)].tolist())
        outlier = np.isin(index.astype(np.int64), sorted(flagged))
    return MeasuredSeries(label, current[keep], drop[keep], outlier=outlier[keep])


def fit_curve(fit: FitResult, grid: np.ndarray) -> FitCurve:
    """The fitted drop and its ±U band over `grid`, U = k_p·u of the drop's own budget (GUM 6.3) at each current."""
    values, half, _ = zip(*(fit.drop_expanded_at(float(i)) for i in grid))
    values = np.asarray(values)
    half = np.asarray(half)
    return FitCurve(fit_label(fit), grid, values, values - half, values + half, k=fit.k)


def residuals(fit: FitResult, label: str) -> Residuals:
    """Residuals of the points the fit used, with the residual scatter s = √(Σe²/ν) as the ± line.

    Points with no weight in the fit (current not resolved from zero) are left out of the plot and
    of s: their residuals say nothing about the fit and would hide the scale of the others.
    """
    used = np.ones(len(fit.residuals_v), dtype=bool) if fit.excluded is None else ~np.asarray(fit.excluded, bool)
    e = np.asarray(fit.residuals_v, dtype=float)[used]
    s = math.sqrt(float(e @ e) / fit.dof) if fit.dof > 0 else None
    outliers = None if fit.outliers is None else np.asarray(fit.outliers, bool)[used]
    dropped = int(np.count_nonzero(~used))
    label = f"{label} ({dropped} unweighted points not shown)" if dropped else label
    return Residuals(label, np.asarray(fit.current_a)[used], e, outliers, u_v=s, k=fit.k, u_label="residual scatter s")


def spec_curves(spec: PartSpec, grid: np.ndarray, ambient_c: float, vin_v: float | None,
                zener_v: float | None = None) -> tuple[SpecCurve, SpecCurve]:
    """Predicted drop and loss, typical and maximum, over `grid` (each point with its own thermal loop)."""
    typ_v, max_v, typ_w, max_w = [], [], [], []
    for i in grid:
        p = predict(spec, float(i), ambient_c=ambient_c, vin_v=vin_v, zener_v=zener_v)
        typ_v.append(_num(p.typical.drop_v))
        typ_w.append(_num(p.typical.loss_w))
        if p.maximum is not None:
            max_v.append(_num(p.maximum.drop_v))
            max_w.append(_num(p.maximum.loss_w))
    has_max = len(max_v) == len(grid)
    label = spec.name
    return (
        SpecCurve(label, grid, typ_v, max_v if has_max else None, quantity="drop"),
        SpecCurve(label, grid, typ_w, max_w if has_max else None, quantity="loss"),
    )


def operating_point(fit: FitResult | None, current_a: float, prediction=None) -> OperatingPoint:
    """Measured loss at the operating current from the fit (P = I·V, U = I·U(V)) and the predicted ones."""
    measured = u_w = None
    if fit is not None:
        v, big_u, _ = fit.drop_expanded_at(current_a)
        measured, u_w = current_a * v, current_a * big_u
    typ = mx = None
    if prediction is not None:
        typ = prediction.typical.loss_w
        mx = prediction.maximum.loss_w if prediction.maximum is not None else None
    return OperatingPoint(current_a, measured, u_w, typ, mx)


def _num(value) -> float:
    return float("nan") if value is None else float(value)


#: the band drawn around a lot's median curve: 10 % to 90 % of the parts (quantiles of the fitted curves)
BAND_QUANTILES = (0.10, 0.90)


def lot_band(fits: list[FitResult], points: int = GRID_POINTS,
             quantiles: tuple[float, float] = BAND_QUANTILES) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(grid, median, low, high) of the fitted drops over the current range every run measured (no extrapolation).

    Quantiles by numpy's default (linear interpolation, Hyndman & Fan type 7).
    """
    top = min(float(np.nanmax(f.current_a)) for f in fits)
    grid = np.linspace(top / points, top, points)
    drops = np.vstack([np.asarray(f.curve.value(grid), dtype=float) for f in fits])
    low, median, high = np.quantile(drops, [quantiles[0], 0.5, quantiles[1]], axis=0)
    return grid, median, low, high
