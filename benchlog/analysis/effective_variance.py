"""Errors in the current as well as the drop: effective-variance weights and unresolved points.

A sweep's current is a reading too. Its error moves a point along the curve,
which shows as a drop error of slope·δI, so each point's variance in the drop
direction is the effective variance (Orear, "Least squares when both variables
have uncertainties", Am. J. Phys. 50 (1982) 912; also Bevington & Robinson,
"Data Reduction and Error Analysis", 3rd ed., §6.5):

    u_eff² = u(V)² + (dV/dI · u(I))²,   weight w = 1/u_eff².

dV/dI depends on the parameters being fitted (R for a line, n·Vt/(I + Is) + Rs
for the diode law), so the fit alternates: weights from the current estimate,
fit, new weights, until the parameters stop moving (Orear's iteration). Where
u(I) is large against I (a supply readback on a 10 A range at a few mA), the
points on the steep part of a diode curve get almost no weight, as they should.

What goes into u(V) and u(I): only the errors the curve cannot take up. A
meter's accuracy ±(% of reading + % of range) is read as a gain and an offset
fixed over the sweep (`fit_result`). A gain is absorbed by the parameters —
I·(1+g) moves ln Is and Rs, V·(1+g) scales n and Rs, and both scale a line's
slope — so it leaves the residuals alone and belongs in the type B budget only;
putting it in the weights would make a sweep with even scatter look uneven
(the top points would lose weight they deserve and a clean low point could be
flagged as an outlier). An offset of the current shifts every point along the
curve by the same δI, which a curve of changing slope cannot absorb: that is
the error that ruins the steep part of a diode curve, so u(I) is the offset's
a/√3 (GUM 4.3.7, rectangular), and u(V) the drop offset's unless the
zero-current offset was subtracted. Per-point values given by the caller are
taken as they are. Without any u(I) the weights are what they were (1/u(V)²
when given, or equal), so a fit with an exact current is an ordinary least
squares; on a straight line, where the slope is one number, the weights from
offsets alone are equal too.

A point whose current is not resolved from zero (|I| ≤ 2·u(I)), or, for a
junction, whose drop is not resolved above zero (V ≤ 2·u(V): no forward
conduction, whatever the current reading says), is flagged "unresolved": it is
kept in the result and reported, with zero weight in the fit. These two
tests use the whole reading uncertainty a/√3, gain and offset together.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .uncertainty import Accuracy, MeasurementAccuracy

SQRT3 = math.sqrt(3.0)

#: A reading within RESOLVE_K standard uncertainties of zero is not resolved (k = 2, as for U).
RESOLVE_K = 2.0
#: Relative change of every weight below which the iteration has converged.
WEIGHT_RTOL = 1e-9
#: Most weight iterations before the fit gives up converging (and says so in a note).
MAX_ITERATIONS = 50


def reading_u(values: np.ndarray, acc: Accuracy) -> np.ndarray:
    """a/√3 per reading, a = reading_pct/100·|x| + range_pct/100·range (GUM 4.3.7, rectangular)."""
    a = np.abs(values) * (acc.reading_pct / 100.0)
    a += acc.range_pct / 100.0 * acc.range
    a /= SQRT3
    return a


def _per_point(value, shape, what: str, error) -> np.ndarray:
    u = np.array(np.broadcast_to(np.asarray(value, dtype=float), shape))
    if not np.all(np.isfinite(u)) or np.any(u < 0):
        raise error(f"every point's {what} uncertainty must be finite and >= 0")
    return u


def _resolution_floor(acc: Accuracy) -> float:
    """The |x| at and below which a reading is within RESOLVE_K·u(x) of zero, u = a(x)/√3 (GUM 4.3.7).

    |x| ≤ k·(g·|x| + o)/√3  ⇔  |x| ≤ (k·o/√3) / (1 − k·g/√3): one number for the whole sweep.
    """
    gain = RESOLVE_K * acc.reading_pct / 100.0 / SQRT3
    offset = RESOLVE_K * acc.range_pct / 100.0 * acc.range / SQRT3
    return math.inf if gain >= 1.0 else offset / (1.0 - gain)


@dataclass(frozen=True)
class PointUncertainty:
    """Standard uncertainties of each point, for the weights and for the resolution tests.

    Each is an array (one per point), one number for every point, or None (not
    known); `reading_*` may also be the meter's Accuracy, the whole reading u.
    """

    u_drop_v: np.ndarray | float | None
    u_current_a: np.ndarray | float | None
    reading_drop: np.ndarray | Accuracy | None = None
    reading_current: np.ndarray | Accuracy | None = None

    @property
    def errors_in_current(self) -> bool:
        return self.u_current_a is not None and bool(np.any(np.asarray(self.u_current_a) > 0))

    def subset(self, rows) -> "PointUncertainty":
        def take(a):
            return a[rows] if isinstance(a, np.ndarray) else a

        return PointUncertainty(take(self.u_drop_v), take(self.u_current_a), take(self.reading_drop),
                                take(self.reading_current))

    @property
    def equal_weights(self) -> bool:
        """u_eff is one number at every point whatever the slope (no per-point values)."""
        return not isinstance(self.u_drop_v, np.ndarray) and not isinstance(self.u_current_a, np.ndarray)

    def drop_weights(self) -> np.ndarray | None:
        """1/u(V)² (the weights with an exact current); None for equal weights (u(V) one number,
        unknown, or 0 somewhere)."""
        if not isinstance(self.u_drop_v, np.ndarray) or not np.all(self.u_drop_v > 0):
            return None
        return 1.0 / (self.u_drop_v * self.u_drop_v)

    def weights(self, slope) -> np.ndarray | None:
        """w = 1/u_eff² at the curve's slope dV/dI (an array, one per point); None for equal weights.

        Without u(I) this is 1/u(V)² (the slope does not matter). If some u_eff is 0
        (no u(V) where the slope vanishes) the weights cannot be formed: None.
        """
        if not self.errors_in_current:
            return self.drop_weights()
        var = np.asarray(slope, dtype=float) * self.u_current_a
        var = var * var
        if self.u_drop_v is not None:
            var = var + self.u_drop_v * self.u_drop_v
        if np.ndim(var) == 0 or not np.all(var > 0) or not np.all(np.isfinite(var)):
            return None
        return 1.0 / var


def point_uncertainty(current_a: np.ndarray, drop_v: np.ndarray, accuracy: MeasurementAccuracy | None,
                      u_drop_v=None, u_current_a=None, *, offset_removed: bool = False,
                      error=ValueError) -> PointUncertainty:
    """u(V) and u(I) of every point (module docstring): given ones first, else the accuracy spec, else None."""
    u_i = reading_i = None
    if u_current_a is not None:
        u_i = reading_i = _per_point(u_current_a, current_a.shape, "current", error)
    elif accuracy is not None and accuracy.current is not None:
        u_i, reading_i = accuracy.current.offset_u, accuracy.current
    u_v = reading_v = None
    if u_drop_v is not None:
        u_v = reading_v = _per_point(u_drop_v, drop_v.shape, "drop", error)
        if np.any(u_v <= 0):
            raise error("every point's standard uncertainty must be finite and > 0")
    elif accuracy is not None and accuracy.drop is not None:
        reading_v = accuracy.drop
        if u_i is not None:  # with an exact current, keep the fit an ordinary least squares
            u_v = 0.0 if offset_removed else accuracy.drop.offset_u
    return PointUncertainty(u_v, u_i, reading_v, reading_i)


def unresolved_points(current_a: np.ndarray, drop_v: np.ndarray, pu: PointUncertainty, *,
                      conduction: bool) -> np.ndarray:
    """Points whose current is within RESOLVE_K·u(I) of zero, or (`conduction`) whose drop is not
    resolved above zero: V ≤ RESOLVE_K·u(V), or V ≤ 0 when u(V) is unknown (whole reading u)."""
    flags = np.zeros(current_a.shape, dtype=bool)
    reading = pu.reading_current
    if isinstance(reading, Accuracy):
        flags |= np.abs(current_a) <= _resolution_floor(reading)
    elif reading is not None:
        flags |= np.abs(current_a) <= RESOLVE_K * reading
    if conduction:
        reading = pu.reading_drop
        if isinstance(reading, Accuracy):
            floor = _resolution_floor(reading)
        else:
            floor = 0.0 if reading is None else RESOLVE_K * reading
        flags |= drop_v <= floor
    return flags


def weights_converged(old: np.ndarray | None, new: np.ndarray | None) -> bool:
    if old is None or new is None:
        return old is None and new is None
    return bool(np.all(np.abs(new - old) <= WEIGHT_RTOL * np.abs(old)))


def describe(n_unresolved: int, iterations: int, converged: bool, indices=None, *, weighted: bool = True) -> list[str]:
    """Notes a fit adds about its weighting and its unresolved points (none for equal weights on a line)."""
    notes = []
    if weighted:
        notes.append(f"effective-variance weights u_eff² = u(V)² + (dV/dI·u(I))² (Orear 1982), "
                     f"{iterations} iteration(s)" + ("" if converged else ", NOT converged"))
    if n_unresolved:
        where = ""
        if indices is not None:
            shown = [str(int(k)) for k in np.asarray(indices)[:10]]
            where = " (points " + ", ".join(shown) + (", ..." if n_unresolved > 10 else "") + ")"
        notes.append(f"{n_unresolved} point(s) unresolved{where}: current within {RESOLVE_K:g}·u(I) of zero "
                     f"or drop not above {RESOLVE_K:g}·u(V); kept, with zero weight")
    return notes
