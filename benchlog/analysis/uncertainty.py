"""Measurement uncertainty per the GUM (JCGM 100:2008): type A and B, combination, dof, expanded.

Type A comes from the scatter of a fit; type B from an instrument's accuracy
spec ±(% of reading + % of range), read as a rectangular distribution with
half-width a, so u = a/√3 (GUM 4.3.7). Uncorrelated components add in
quadrature (GUM 5.1.2), the effective degrees of freedom follow
Welch–Satterthwaite (GUM G.4.1, eq. G.2b), and the expanded uncertainty is
U = k_p·u_c for a coverage probability p = 95.45 % (GUM 6.2, 6.3), with k_p the
coverage factor of the combined distribution of the budget's terms, each as the
budget models it (`coverage`: type A terms Student t with their ν, type B terms
from a spec or tolerance rectangular, a term stated normal normal). A fixed k = 2
gives 95.45 % only when that distribution is normal; one dominant rectangular term
makes k_p near 1.65 (GUM G.1.3), so k = 2 would cover nearly all of it. The
Welch–Satterthwaite t factor k_t (GUM G.4, table G.2) stays beside it for information.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable

# The accuracy type is the leaf `benchlog.accuracy`, shared with profiles and the run header.
from benchlog.accuracy import SQRT3, Accuracy, MeasurementAccuracy  # noqa: F401 - re-exported

from .coverage import COVERAGE_P, coverage_factor  # noqa: F401 - COVERAGE_P re-exported


def type_b_u(value: float, acc: Accuracy) -> float:
    """Standard uncertainty of one reading from its accuracy spec: a/√3 (rectangular, GUM 4.3.7)."""
    return acc.half_width(value) / SQRT3


@dataclass(frozen=True)
class Component:
    """One line of an uncertainty budget, already in the unit of the result (sensitivity applied)."""

    name: str
    kind: str  # "A" (statistics of the data) or "B" (other information, e.g. the accuracy spec)
    u: float
    dof: float = math.inf  # a rectangular with well-known limits has ν = ∞ (GUM G.4.2)
    shape: str = ""  # "rectangular" | "normal" | "t"; "" = by kind: A a t with ν (normal at ν = ∞), B rectangular

    @property
    def distribution(self) -> str:
        """How the coverage factor models this term (module docstring)."""
        if self.shape:
            return self.shape
        if self.kind == "A":
            return "t" if math.isfinite(self.dof) else "normal"
        return "rectangular"


@dataclass(frozen=True)
class Budget:
    """A combined standard uncertainty with its components, ν_eff and the expanded uncertainty."""

    components: tuple[Component, ...]
    u: float
    dof: float
    k: float  # k_p of the combined distribution for `coverage_probability`
    expanded_u: float
    k_t: float  # Welch–Satterthwaite t coverage factor for ν_eff at the same p, for information
    coverage_probability: float = COVERAGE_P

    def component(self, name: str) -> Component:
        for item in self.components:
            if item.name == name:
                return item
        raise KeyError(name)


def welch_satterthwaite(us: Iterable[float], dofs: Iterable[float]) -> float:
    """ν_eff = u_c⁴ / Σ u_i⁴/ν_i (GUM G.4.1, eq. G.2b); components with ν = ∞ add nothing below."""
    us = [float(u) for u in us]
    dofs = [float(d) for d in dofs]
    u_c2 = sum(u * u for u in us)
    denom = sum(u**4 / d for u, d in zip(us, dofs) if math.isfinite(d) and u > 0)
    if denom <= 0.0 or u_c2 <= 0.0:
        return math.inf
    return u_c2 * u_c2 / denom


def t_coverage_factor(dof: float, p: float = COVERAGE_P) -> float:
    """k_p = t_{(1+p)/2}(ν): Student's t coverage factor (GUM G.3); 2.00 at ν = ∞ for p = 95.45 %."""
    from .student_t import t_quantile  # scipy.stats.t.ppf's value without scipy's import time

    if dof <= 0:
        return math.inf
    return t_quantile(dof if math.isfinite(dof) and dof <= 1e12 else math.inf, 0.5 + p / 2.0)


def combine(components: Iterable[Component], p: float = COVERAGE_P) -> Budget:
    """Combine uncorrelated components in quadrature (GUM 5.1.2) and expand with k_p for p (GUM 6.2, 6.3)."""
    items = tuple(c for c in components if c.u > 0.0 or c.kind == "A")
    u = math.sqrt(sum(c.u * c.u for c in items))
    dof = welch_satterthwaite((c.u for c in items), (c.dof for c in items))
    k = coverage_factor(((c.distribution, c.u, c.dof) for c in items), p)
    return Budget(items, u, dof, k, k * u, t_coverage_factor(dof, p), p)
