"""Process capability of a lot and how sure we are of it: Cpk/Cpu/Cpl with a lower confidence bound.

Index (ISO 22514-2; AIAG SPC manual): Cpk = min(USL − μ, μ − LSL)/(3σ) with both
limits, Cpu = (USL − μ)/(3σ) for a one-sided maximum, Cpl = (μ − LSL)/(3σ).

The index of a sample is itself an estimate. Its lower confidence bound is
Bissell's normal approximation (A. F. Bissell, "How reliable is your capability
index?", Applied Statistics 39 (1990) 331–340), for Cpk and for either one-sided
index alike:
    C_lower = Ĉ − z_{1−α} · √(1/(9n) + Ĉ²/(2(n − 1)))
with z the standard normal quantile. A lot "demonstrates" a capability only when
this bound, not the point estimate, reaches the minimum.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: One-sided confidence of the lower bound (95 %, common practice for capability studies).
CAPABILITY_CONFIDENCE = 0.95
#: The usual minimum for a capable process (common practice, e.g. AIAG PPAP).
CAPABILITY_MIN = 1.33

BOUND_METHOD = "Bissell 1990 normal approximation"


@dataclass(frozen=True)
class Capability:
    """A capability index with its one-sided lower confidence bound."""

    name: str  # "Cpk" | "Cpu" | "Cpl" | "none"
    value: float | None
    lower: float | None  # None when the index is None or n < 2
    confidence: float
    method: str

    @property
    def demonstrated(self) -> bool:
        """True when the lower bound reaches CAPABILITY_MIN (not merely the point estimate)."""
        return self.lower is not None and self.lower >= CAPABILITY_MIN

    def text(self) -> str:
        if self.value is None:
            return f"{self.name}: not computed"
        if self.lower is None:
            return f"{self.name} = {self.value:.3g} (no confidence bound)"
        word = "demonstrated" if self.demonstrated else "not demonstrated"
        return (f"{self.name} = {self.value:.3g}, {self.confidence:.0%} lower bound {self.lower:.3g} "
                f"({self.method}): capability ≥ {CAPABILITY_MIN:g} {word} at {self.confidence:.0%} confidence")


def capability_index(mean: float, sigma: float, usl: float | None = None,
                     lsl: float | None = None) -> tuple[str, float | None]:
    """(name, value) of the capability index for the limits given: Cpk, Cpu or Cpl (module docstring)."""
    if usl is None and lsl is None:
        return "none", None
    if not (sigma > 0 and math.isfinite(sigma)):
        return ("Cpk" if usl is not None and lsl is not None else "Cpu" if usl is not None else "Cpl"), None
    cpu = (usl - mean) / (3 * sigma) if usl is not None else None
    cpl = (mean - lsl) / (3 * sigma) if lsl is not None else None
    if cpu is not None and cpl is not None:
        return "Cpk", min(cpu, cpl)
    return ("Cpu", cpu) if cpu is not None else ("Cpl", cpl)


def lower_bound(index: float, n: int, confidence: float = CAPABILITY_CONFIDENCE) -> float | None:
    """Bissell's (1990) one-sided lower confidence bound of a capability index from n values."""
    from statistics import NormalDist  # the standard library's normal quantile: no scipy import for a lot

    if n < 2 or not math.isfinite(index) or not 0.5 <= confidence < 1:
        return None
    z = NormalDist().inv_cdf(confidence)
    return index - z * math.sqrt(1.0 / (9 * n) + index * index / (2.0 * (n - 1)))


def capability_with_bound(mean: float, sigma: float, n: int, usl: float | None = None, lsl: float | None = None,
                          confidence: float = CAPABILITY_CONFIDENCE) -> Capability:
    name, value = capability_index(mean, sigma, usl, lsl)
    lower = lower_bound(value, n, confidence) if value is not None else None
    return Capability(name, value, lower, confidence, BOUND_METHOD)
