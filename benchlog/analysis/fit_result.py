"""What a fit returns: parameters with GUM budgets, residuals, outlier flags, and the drop at any current.

The meter's accuracy spec enters every fitted quantity the same way: each reading
is modelled as  V_m = V·(1 + g_V) + o_V  and  I_m = I·(1 + g_I) + o_I  with the
gains g and offsets o fixed over the sweep and rectangular within the spec
(GUM 4.3.7). The drop the fitted curve f predicts at a true current I then has
the first-order sensitivities (GUM 5.1.3)
    ∂/∂g_V = f(I),   ∂/∂o_V = 1,   ∂/∂g_I = f'(I)·I,   ∂/∂o_I = f'(I),
and these type B terms add in quadrature to the fit's own type A term
gᵀ·C·g (g the gradient of f in the fitted parameters, C their covariance).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping, Protocol

import numpy as np

from .tempco import TEMPERATURE_SHAPE, TEMPERATURE_TERM
from .uncertainty import COVERAGE_P, Budget, Component, MeasurementAccuracy, combine

#: Outlier rule: the Bonferroni outlier test on externally studentised residuals (Weisberg, "Applied
#: Linear Regression", 3rd ed., §9.1.3; Cook & Weisberg 1982): a point is flagged when |t_i| exceeds the
#: t quantile 1 − α/(2n) with ν − 1 degrees of freedom, so a clean sweep of any length is flagged with
#: probability at most α. A fixed |t| > 3.5 would flag about one clean 25-point sweep in 20.
OUTLIER_ALPHA = 0.01
OUTLIER_RULE = f"Bonferroni outlier test: |externally studentised residual| > t(1 - {OUTLIER_ALPHA:g}/2n, n - p - 1)"


def outlier_threshold(n: int, dof: int) -> float:
    """Critical |t| of the Bonferroni outlier test for n points and ν = dof of the fit."""
    from .student_t import t_quantile  # the inverse t CDF (scipy.stats.t.isf) without scipy's import time

    if dof < 2:
        return math.inf
    return t_quantile(dof - 1, 1.0 - OUTLIER_ALPHA / (2.0 * n))


class FitError(ValueError):
    """The data cannot be fitted as asked (too few points, no spread in current, no convergence)."""


class Curve(Protocol):
    """A fitted drop-versus-current curve in its internal parameters."""

    def value(self, current_a: np.ndarray) -> np.ndarray: ...

    def slope(self, current_a: np.ndarray) -> np.ndarray: ...

    def gradient(self, current_a: np.ndarray) -> np.ndarray: ...  # shape (n, p)


@dataclass(frozen=True)
class Line:
    """V = v0 + r·I; internal parameters (v0, r)."""

    v0_v: float
    r_ohm: float

    def value(self, current_a):
        return self.v0_v + self.r_ohm * np.asarray(current_a, dtype=float)

    def slope(self, current_a):
        return np.full_like(np.asarray(current_a, dtype=float), self.r_ohm)

    def gradient(self, current_a):
        i = np.atleast_1d(np.asarray(current_a, dtype=float))
        return np.column_stack([np.ones_like(i), i])


@dataclass(frozen=True)
class Shockley:
    """V = n·Vt·ln(I/Is + 1) + Rs·I (Shockley diode law with series resistance).

    Internal parameters are (n, ln Is, Rs): Is spans decades, its logarithm keeps
    the fit well conditioned.
    """

    ideality: float
    ln_i_s: float
    r_s_ohm: float
    vt_v: float

    def value(self, current_a):
        i = np.asarray(current_a, dtype=float)
        return self.ideality * self.vt_v * np.log1p(i * np.exp(-self.ln_i_s)) + self.r_s_ohm * i

    def slope(self, current_a):
        i = np.asarray(current_a, dtype=float)
        return self.ideality * self.vt_v / (i + np.exp(self.ln_i_s)) + self.r_s_ohm

    def curvature(self, current_a):
        """d²V/dI² = −n·Vt/(I + Is)²."""
        i = np.asarray(current_a, dtype=float)
        return -self.ideality * self.vt_v / (i + np.exp(self.ln_i_s)) ** 2

    def gradient(self, current_a):
        i = np.atleast_1d(np.asarray(current_a, dtype=float))
        x = i * np.exp(-self.ln_i_s)
        return np.column_stack(
            [self.vt_v * np.log1p(x), -self.ideality * self.vt_v * x / (1.0 + x), i]
        )


@dataclass(frozen=True, eq=False)
class FitResult:
    """One fitted model of a sweep.

    `params` / `std_u` / `expanded_u` use SI-suffixed keys (`r_on_ohm`, `v0_v` |
    `ideality`, `i_s_a`, `r_s_ohm` | `v_knee_v`, `r_d_ohm`); `budgets` holds the
    GUM budget behind each. `residuals_v`, `outliers`, `unresolved`, `excluded`
    and `weights` are aligned with `current_a` / `drop_v` / `point_index` (the
    points given to the fit; `excluded` marks those with zero weight in it).
    """

    model: str
    params: dict[str, float]
    std_u: dict[str, float]
    expanded_u: dict[str, float]
    budgets: dict[str, Budget]
    residuals_v: np.ndarray
    outliers: np.ndarray
    reason: str
    notes: tuple[str, ...]
    temperature_c: float | None
    current_a: np.ndarray
    drop_v: np.ndarray
    point_index: np.ndarray
    curve: Curve
    covariance: np.ndarray  # type A covariance of the curve's internal parameters
    dof: int  # the ν of every type A term (points − parameters, less what the scatter leaves out)
    accuracy: MeasurementAccuracy | None = None
    offset_removed: bool = False  # the zero-current offset was subtracted, so o_V has cancelled
    outlier_rule: str = OUTLIER_RULE
    criterion: dict[str, float] = field(default_factory=dict)  # AICc per candidate, when chosen automatically
    excluded: np.ndarray | None = None  # zero weight: unresolved points, and outliers when asked to refit without
    unresolved: np.ndarray | None = None  # current (or a junction's drop) not resolved from zero (effective_variance)
    weights: np.ndarray | None = None  # the fit's weights 1/u_eff² (None: equal weights)
    tj: object = None  # junction.JunctionTemperature the fit stands at, when `fits.fit_run` stated one
    # the drop's temperature sensitivity behind the budget's temperature term: ("relative", 1/K) for a
    # resistance (dV/dT = f(I)·α), ("absolute", V/K) for a junction
    drop_tempco: tuple[str, float] | None = None
    # each type B error's shift of the fitted parameters (the data's shift projected through the fit,
    # GUM 5.1.3 to first order): the fit's own response to it, used for the drop at a current
    b_shifts: tuple[tuple[str, np.ndarray], ...] | None = None
    # a diode fit's point scatter told apart into the drop and current readings' (`point_noise.PointNoise`)
    point_noise: object = None

    @property
    def k(self) -> float:
        """The coverage factor of the headline (first) parameter's U, for one caption; each parameter's own
        k_p is `budgets[key].k` (GUM 6.3: k_p of that quantity's combined distribution)."""
        return float(next(iter(self.budgets.values())).k) if self.budgets else 2.0

    @property
    def coverage_probability(self) -> float:
        """The coverage probability every U of this fit is stated for."""
        return float(next(iter(self.budgets.values())).coverage_probability) if self.budgets else COVERAGE_P

    @property
    def points(self) -> int:
        return int(self.current_a.size)

    @property
    def points_used(self) -> int:
        """Points with weight in the fit (the others are unresolved or excluded outliers)."""
        return self.points if self.excluded is None else int(self.points - np.count_nonzero(self.excluded))

    @property
    def unresolved_index(self) -> np.ndarray:
        """Run indices of the unresolved points."""
        if self.unresolved is None:
            return np.zeros(0, dtype=int)
        return np.asarray(self.point_index)[self.unresolved]

    def drop_budget_at(self, current_a: float) -> Budget:
        """The GUM budget of the drop at a true current (see the module docstring)."""
        i = float(current_a)
        value = float(self.curve.value(np.array([i]))[0])
        g = self.curve.gradient(np.array([i]))[0]
        u_a = math.sqrt(max(float(g @ self.covariance @ g), 0.0))
        comps = [Component("fit residuals", "A", u_a, float(self.dof))]
        if self.b_shifts is not None:
            # the curve follows part of each error (a current offset moves n and Is as well as the drop):
            # its effect at I is ∇f(I)·Δp, not the first-order f'(I)·o of a curve that does not move
            comps += [Component(name, "B", abs(float(g @ dp))) for name, dp in self.b_shifts]
        else:
            comps += [Component(name, "B", abs(float(dv[0])))
                      for name, dv in error_shapes(self.curve, self.accuracy, self.offset_removed, np.array([i]))]
        if self.tj is not None and self.drop_tempco is not None:
            how, tc = self.drop_tempco
            sens = abs(value * tc) if how == "relative" else abs(tc)
            comps.append(Component(TEMPERATURE_TERM, "B", sens * self.tj.u_c, shape=TEMPERATURE_SHAPE))
        return combine(comps)

    def drop_expanded_at(self, current_a: float) -> tuple[float, float, float]:
        """(drop_v, expanded U, k_p) of the element at `current_a`: U from the drop's own budget (GUM 6.3)."""
        value = float(self.curve.value(np.array([float(current_a)]))[0])
        b = self.drop_budget_at(current_a)
        return value, b.expanded_u, b.k

    def drop_at(self, current_a: float) -> tuple[float, float]:
        """(drop_v, standard uncertainty) of the element at `current_a`."""
        value = float(self.curve.value(np.array([float(current_a)]))[0])
        return value, self.drop_budget_at(current_a).u


def error_shapes(curve, accuracy: MeasurementAccuracy | None, offset_removed: bool, current_a) -> list[
        tuple[str, np.ndarray]]:
    """Each meter error's shift of the drop at these currents, at its standard uncertainty (δV_i).

    The first-order sensitivities of the module docstring, one column per error: drop gain
    f(I)·u(g_V), drop offset u(o_V) (unless subtracted), current gain f'(I)·I·u(g_I), current offset
    f'(I)·u(o_I).
    """
    i = np.asarray(current_a, dtype=float)
    shapes: list[tuple[str, np.ndarray]] = []
    if accuracy is None:
        return shapes
    if accuracy.drop is not None:
        shapes.append(("drop meter gain", curve.value(i) * accuracy.drop.gain_u))
        if not offset_removed:
            shapes.append(("drop meter offset", np.full(i.size, accuracy.drop.offset_u)))
    slope = curve.slope(i)
    for name, rel in accuracy.current_gain_terms():
        shapes.append((name, slope * i * rel))
    if accuracy.current is not None:
        shapes.append((f"{accuracy.current_name} offset", slope * accuracy.current.offset_u))
    return shapes


def offset_curvature_shapes(curve, accuracy: MeasurementAccuracy | None, current_a) -> list[np.ndarray]:
    """The current offset's second order f''(I)·u(o_I)²/2 (none for a line): on a junction's low end,
    where the offset is a sizeable part of the current, it is as large as the noise."""
    if accuracy is None or accuracy.current is None or not hasattr(curve, "curvature"):
        return []
    return [curve.curvature(np.asarray(current_a, dtype=float)) * accuracy.current.offset_u ** 2 / 2.0]


def scatter_shapes(curve, accuracy: MeasurementAccuracy | None, offset_removed: bool, current_a) -> list[np.ndarray]:
    """The shapes the fit's scatter leaves out: each meter error's (`error_shapes`) and the current
    offset's second order (`offset_curvature_shapes`)."""
    return ([dv for _, dv in error_shapes(curve, accuracy, offset_removed, current_a)]
            + offset_curvature_shapes(curve, accuracy, current_a))


#: A shape whose part the model cannot follow is below this fraction of its own size is one the
#: model follows (a gain is taken up by n and Rs, or by R; an offset by a line's intercept).
UNFOLLOWED_MIN = 1e-3


def unfollowed_shapes(model_directions: np.ndarray, shapes: list[np.ndarray], dof: int) -> np.ndarray:
    """An orthonormal basis of the parts of the (weighted) error shapes the fitted model cannot follow.

    A fixed meter error with a shape the model cannot take up (a current offset bends a diode's
    log law at its low end) leaves that bend in the residuals; it is already a type B term, so the
    type A scatter leaves it out, one degree of freedom for each direction (as a fitted nuisance
    parameter would, GUM H.3). At most ν − 2 directions, the largest first, so a scatter remains.
    """
    n = model_directions.shape[0]
    if not shapes or dof <= 2:
        return np.zeros((n, 0))
    m = np.column_stack(shapes)
    size = np.linalg.norm(m, axis=0)
    m = m[:, size > 0] / size[size > 0]
    if m.shape[1] == 0:
        return np.zeros((n, 0))
    coef, *_ = np.linalg.lstsq(model_directions, m, rcond=None)
    left, sv, _ = np.linalg.svd(m - model_directions @ coef, full_matrices=False)
    return left[:, sv > UNFOLLOWED_MIN][:, : dof - 2]


def without(basis: np.ndarray, values: np.ndarray) -> np.ndarray:
    """`values` with their components along the orthonormal `basis` removed."""
    return values - basis @ (basis.T @ values) if basis.shape[1] else values


def externally_studentised(residuals: np.ndarray, leverage: np.ndarray, weights, dof: int) -> np.ndarray:
    """t_i = e_i·√w_i / (s_(i)·√(1−h_i)), s_(i) the scatter without point i (Belsley, Kuh & Welsch 1980).

    Leaving the point out of its own scale keeps one gross outlier from hiding itself.
    """
    ew = residuals if weights is None else residuals * np.sqrt(weights)
    one_minus_h = np.clip(1.0 - leverage, 1e-12, None)
    sse = float(ew @ ew)
    if dof < 2:
        return np.zeros_like(residuals)
    s2_i = (sse - ew * ew / one_minus_h) / (dof - 1)
    s2_i = np.clip(s2_i, 1e-300, None)
    return ew / np.sqrt(s2_i * one_minus_h)


def outlier_flags(t: np.ndarray, dof: int) -> np.ndarray:
    return np.abs(t) > outlier_threshold(t.size, dof)


def budgets_to_dicts(budgets: Mapping[str, Budget]) -> tuple[dict[str, float], dict[str, float]]:
    std_u = {key: b.u for key, b in budgets.items()}
    expanded = {key: b.expanded_u for key, b in budgets.items()}
    return std_u, expanded
