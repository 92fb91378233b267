"""Measurement uncertainty per the GUM (JCGM 100:2008): type A and B, combination, dof, expanded.

Type A comes from the scatter of a fit; type B from an instrument's accuracy
spec ±(% of reading + % of range), read as a rectangular distribution with
half-width a, so u = a/√3 (GUM 4.3.7). Uncorrelated components add in
quadrature (GUM 5.1.2), the effective degrees of freedom follow
Welch–Satterthwaite (GUM G.4.1, eq. G.2b), and the expanded uncertainty is
U = k·u_c with k = 2 (GUM 6.2, 6.3.3). The coverage factor from Student's t
for ν_eff at p = 95.45 % (GUM G.3, table G.2) is reported beside it as
information: k = 2 is what the issue and common practice ask for.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Iterable, Mapping

from benchlog.badinput import BadInput

#: Coverage probability that k = 2 stands for with a normal distribution (GUM G.3, table G.2).
COVERAGE_P = 0.9545

SQRT3 = math.sqrt(3.0)


@dataclass(frozen=True)
class Accuracy:
    """An accuracy spec ±(reading_pct % of reading + range_pct % of range) on one range.

    `range` is in the unit of the reading (V for a voltage range, A for a current range).
    The two terms are read as two independent errors that stay fixed over a sweep:
    a gain error (the % of reading) and an offset (the % of range).
    """

    reading_pct: float
    range_pct: float
    range: float

    def half_width(self, value: float) -> float:
        """a = reading_pct/100·|value| + range_pct/100·range: the spec's bound for one reading."""
        return self.reading_pct / 100.0 * abs(value) + self.range_pct / 100.0 * self.range

    @property
    def gain_u(self) -> float:
        """Relative standard uncertainty of the gain: (reading_pct/100)/√3 (GUM 4.3.7)."""
        return self.reading_pct / 100.0 / SQRT3

    @property
    def offset_u(self) -> float:
        """Standard uncertainty of the offset: (range_pct/100·range)/√3 (GUM 4.3.7)."""
        return self.range_pct / 100.0 * self.range / SQRT3


def type_b_u(value: float, acc: Accuracy) -> float:
    """Standard uncertainty of one reading from its accuracy spec: a/√3 (rectangular, GUM 4.3.7)."""
    return acc.half_width(value) / SQRT3


@dataclass(frozen=True)
class MeasurementAccuracy:
    """The accuracy of the two readings a sweep makes: the element drop and the current."""

    drop: Accuracy | None = None
    current: Accuracy | None = None

    @classmethod
    def from_header(cls, header: Mapping[str, Any], source: str = "run header") -> "MeasurementAccuracy":
        """Read `header["accuracy"]` = {"drop": {reading_pct, range_pct, range_v}, "current": {..., range_a}}.

        A missing `accuracy` (or a missing role in it) gives None for that reading;
        a present but malformed one is bad input.
        """
        block = header.get("accuracy")
        if block is None:
            return cls()
        if not isinstance(block, Mapping):
            raise BadInput(source, "accuracy", f"is {type(block).__name__}", "a table with drop/current")
        return cls(
            drop=_accuracy_entry(block, "drop", "range_v", source),
            current=_accuracy_entry(block, "current", "range_a", source),
        )


def _accuracy_entry(block: Mapping[str, Any], role: str, range_key: str, source: str) -> Accuracy | None:
    entry = block.get(role)
    if entry is None:
        return None
    if not isinstance(entry, Mapping):
        raise BadInput(source, f"accuracy.{role}", f"is {type(entry).__name__}", "a table")
    values = {}
    for key in ("reading_pct", "range_pct", range_key):
        raw = entry.get(key)
        where = f"accuracy.{role}.{key}"
        if raw is None:
            raise BadInput(source, where, "is missing", "a number")
        if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw):
            raise BadInput(source, where, f"is {raw!r}", "a finite number")
        if raw < 0 or (key == range_key and raw <= 0):
            raise BadInput(source, where, f"is {raw!r}", "a positive number" if key == range_key else ">= 0")
        values[key] = float(raw)
    return Accuracy(values["reading_pct"], values["range_pct"], values[range_key])


@dataclass(frozen=True)
class Component:
    """One line of an uncertainty budget, already in the unit of the result (sensitivity applied)."""

    name: str
    kind: str  # "A" (statistics of the data) or "B" (other information, e.g. the accuracy spec)
    u: float
    dof: float = math.inf  # a rectangular with well-known limits has ν = ∞ (GUM G.4.2)


@dataclass(frozen=True)
class Budget:
    """A combined standard uncertainty with its components, ν_eff and the expanded uncertainty."""

    components: tuple[Component, ...]
    u: float
    dof: float
    k: float
    expanded_u: float
    k_t: float  # t-based coverage factor for ν_eff at p = 95.45 %, for information

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


def combine(components: Iterable[Component], k: float = 2.0) -> Budget:
    """Combine uncorrelated components in quadrature (GUM 5.1.2) and expand with k (GUM 6.2.1)."""
    items = tuple(c for c in components if c.u > 0.0 or c.kind == "A")
    u = math.sqrt(sum(c.u * c.u for c in items))
    dof = welch_satterthwaite((c.u for c in items), (c.dof for c in items))
    return Budget(items, u, dof, k, k * u, t_coverage_factor(dof))
