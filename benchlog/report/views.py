"""What a figure needs to know, as small frozen values: arrays in SI units and the labels to print.

The figures never read a run file or call the analysis; `report.build` turns
loaded runs and analysis results into these views. That keeps the drawing code
testable with plain arrays and keeps one-way imports (report -> analysis).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


def _arr(values) -> np.ndarray:
    return np.asarray(values, dtype=float)


@dataclass(frozen=True, eq=False)
class MeasuredSeries:
    """Measured points of one run: current through and drop across the element."""

    label: str
    current_a: np.ndarray
    drop_v: np.ndarray
    outlier: np.ndarray | None = None  # bool mask, same length; flagged, never dropped

    def __post_init__(self) -> None:
        object.__setattr__(self, "current_a", _arr(self.current_a))
        object.__setattr__(self, "drop_v", _arr(self.drop_v))
        if self.outlier is not None:
            object.__setattr__(self, "outlier", np.asarray(self.outlier, dtype=bool))
        if self.current_a.shape != self.drop_v.shape:
            raise ValueError("current_a and drop_v differ in length")

    @property
    def power_w(self) -> np.ndarray:
        return self.current_a * self.drop_v


@dataclass(frozen=True, eq=False)
class FitCurve:
    """The fitted drop over a current grid, with its expanded-uncertainty band (coverage factor k)."""

    label: str
    current_a: np.ndarray
    drop_v: np.ndarray
    band_lo_v: np.ndarray
    band_hi_v: np.ndarray
    k: float = 2.0

    def __post_init__(self) -> None:
        for name in ("current_a", "drop_v", "band_lo_v", "band_hi_v"):
            object.__setattr__(self, name, _arr(getattr(self, name)))


@dataclass(frozen=True, eq=False)
class SpecCurve:
    """What the part spec predicts over a current grid: typical and (when the spec has it) maximum.

    `quantity` is "drop" (values in V) or "loss" (values in W).
    """

    label: str
    current_a: np.ndarray
    typical: np.ndarray
    maximum: np.ndarray | None = None
    quantity: str = "drop"

    def __post_init__(self) -> None:
        object.__setattr__(self, "current_a", _arr(self.current_a))
        object.__setattr__(self, "typical", _arr(self.typical))
        if self.maximum is not None:
            object.__setattr__(self, "maximum", _arr(self.maximum))


@dataclass(frozen=True)
class OperatingPoint:
    """The loss at the operating current: measured (from the fit, with expanded U) and predicted."""

    current_a: float
    measured_loss_w: float | None
    measured_expanded_u_w: float | None
    predicted_typical_w: float | None = None
    predicted_max_w: float | None = None


@dataclass(frozen=True, eq=False)
class Residuals:
    """Fit residuals (measured minus fitted drop) with each point's standard uncertainty when known."""

    label: str
    current_a: np.ndarray
    residual_v: np.ndarray
    outlier: np.ndarray | None = None
    u_v: float | None = None  # a typical standard uncertainty of one reading
    k: float = 2.0
    u_label: str = "u of one reading"

    def __post_init__(self) -> None:
        object.__setattr__(self, "current_a", _arr(self.current_a))
        object.__setattr__(self, "residual_v", _arr(self.residual_v))
        if self.outlier is not None:
            object.__setattr__(self, "outlier", np.asarray(self.outlier, dtype=bool))


@dataclass(frozen=True, eq=False)
class LotView:
    """One parameter over the parts of a lot, with the spec limits and the process capability."""

    quantity: str  # e.g. "R_DS(on)" or "Vf at 2 A"
    unit: str  # e.g. "Ω" or "V"
    values: np.ndarray
    lower_limit: float | None = None
    upper_limit: float | None = None
    capability: float | None = None  # Cpk, or Cpu/Cpl for a one-sided limit
    capability_name: str = "Cpk"
    outlier: np.ndarray | None = None
    scale: float = 1.0  # display multiplier (1e3 to show mΩ)
    scaled_unit: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", _arr(self.values))
        if self.outlier is not None:
            object.__setattr__(self, "outlier", np.asarray(self.outlier, dtype=bool))


@dataclass(frozen=True)
class CandidateView:
    """One candidate part of a design review at its worst-case operating point."""

    name: str
    kind: str
    loss_w: float
    tj_c: float | None = None
    tj_max_c: float | None = None
    #: margins in percent of the rating, e.g. ("Tj", 35.0), ("Vds headroom", 70.0); negative = exceeded
    margins_pct: tuple[tuple[str, float], ...] = field(default=())
