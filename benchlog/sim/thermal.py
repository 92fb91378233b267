"""Junction temperature: a two-stage Cauer network, junction – case – ambient.

The element's heat P enters the junction node (heat capacity Cj: die and lead
frame), flows through RθJC to the case node (Cc: package and the copper under
it), and through RθCA to the ambient:

    Cj·dTj/dt = P − (Tj − Tc)/RθJC
    Cc·dTc/dt = (Tj − Tc)/RθJC − (Tc − Ta)/RθCA

This is the ladder ("Cauer") form of a lumped thermal network (JESD51-14 and
the transient-thermal literature use both the Cauer ladder and its equivalent
Foster sum; common practice). In steady state Tj = Ta + P·RθJA with
RθJA = RθJC + RθCA (JESD51-2's definition) and Tj − Tc = P·RθJC (JESD51's
junction-to-case resistance).

The junction's step response is a sum of two exponentials, the Foster form
Tj(t) − Ta = P·Σ Rᵢ·(1 − e^(−t/τᵢ)) with τᵢ = −1/λᵢ from the eigenvalues λᵢ of
the 2×2 system and Rᵢ from its residues; ΣRᵢ = RθJA. A network with Cc = 0 is
the single-pole model (one τ = RθJA·Cj), the special case the first version
of the simulator used.

Over a step dt at constant P the exact solution is x(t+dt) = x∞ + e^(A·dt)·(x − x∞);
the 2×2 matrix exponential is taken in closed form (Sylvester's formula for
distinct eigenvalues): e^(Ah) = (e^(λ1·h)(A − λ2·I) − e^(λ2·h)(A − λ1·I))/(λ1 − λ2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace


@dataclass(frozen=True)
class Thermal:
    """The two-stage network of one element; `cth_case_j_per_k = 0` is the single-pole model."""

    rth_ja_k_per_w: float
    cth_j_per_k: float
    rth_jc_k_per_w: float = 0.0
    cth_case_j_per_k: float = 0.0

    def __post_init__(self) -> None:
        if not self.rth_ja_k_per_w > 0 or not self.cth_j_per_k > 0:
            raise ValueError("rth_ja_k_per_w and cth_j_per_k must be > 0")
        if not 0 <= self.rth_jc_k_per_w < self.rth_ja_k_per_w:
            raise ValueError("rth_jc_k_per_w must be >= 0 and below rth_ja_k_per_w")
        if self.cth_case_j_per_k < 0:
            raise ValueError("cth_case_j_per_k must be >= 0")

    @property
    def rth_ca_k_per_w(self) -> float:
        return self.rth_ja_k_per_w - self.rth_jc_k_per_w

    @property
    def two_pole(self) -> bool:
        return self.cth_case_j_per_k > 0 and self.rth_jc_k_per_w > 0

    def scaled(self, factor: float) -> "Thermal":
        """The same resistances with every heat capacity times `factor`: every τ scales by it."""
        return replace(self, cth_j_per_k=self.cth_j_per_k * factor,
                       cth_case_j_per_k=self.cth_case_j_per_k * factor)

    # -- the linear system dx/dt = A·x + b·P, x = (Tj − Ta, Tc − Ta) ---------------------------
    def _matrix(self) -> tuple[float, float, float, float]:
        r1, r2, cj, cc = self.rth_jc_k_per_w, self.rth_ca_k_per_w, self.cth_j_per_k, self.cth_case_j_per_k
        return -1.0 / (r1 * cj), 1.0 / (r1 * cj), 1.0 / (r1 * cc), -(1.0 / r1 + 1.0 / r2) / cc

    def _eigenvalues(self) -> tuple[float, float]:
        a, b, c, d = self._matrix()
        tr, det = a + d, a * d - b * c
        root = math.sqrt(max(0.0, tr * tr / 4.0 - det))  # real for an RC network (A is similar to symmetric)
        return tr / 2.0 + root, tr / 2.0 - root  # λ1 (slow, nearer 0) first

    @property
    def tau_s(self) -> tuple[float, ...]:
        """The time constants, dominant (slowest) first."""
        if not self.two_pole:
            return (self.rth_ja_k_per_w * self.cth_j_per_k,)
        return tuple(-1.0 / lam for lam in self._eigenvalues())

    @property
    def dominant_tau_s(self) -> float:
        return self.tau_s[0]

    def foster(self) -> tuple[tuple[float, float], ...]:
        """The junction's step response as Foster terms (Rᵢ K/W, τᵢ s), dominant first; ΣRᵢ = RθJA."""
        if not self.two_pole:
            return ((self.rth_ja_k_per_w, self.rth_ja_k_per_w * self.cth_j_per_k),)
        a, b, _, _ = self._matrix()
        l1, l2 = self._eigenvalues()
        xj, xc = self.rth_ja_k_per_w, self.rth_ca_k_per_w  # x∞ per watt
        # Tj step = x∞_j − [e^(At) x∞]_j; Sylvester's formula gives the residues
        r1 = ((a - l2) * xj + b * xc) / (l1 - l2)
        r2 = -((a - l1) * xj + b * xc) / (l1 - l2)
        return ((r1, -1.0 / l1), (r2, -1.0 / l2))

    def step_response_k(self, power_w: float, t_s: float) -> float:
        """Tj − Ta at t after a power step from ambient: P·Σ Rᵢ(1 − e^(−t/τᵢ))."""
        return power_w * sum(r * -math.expm1(-t_s / tau) for r, tau in self.foster())

    def advance(self, junction_c: float, case_c: float, ambient_c: float, power_w: float,
                dt_s: float) -> tuple[float, float]:
        """(Tj, Tc) after dt at constant power (exact solution of the network)."""
        if dt_s <= 0:
            return junction_c, case_c
        if not self.two_pole:
            tj = step_junction_c(junction_c, ambient_c, power_w, self, dt_s)
            return tj, ambient_c + (tj - ambient_c) * self.rth_ca_k_per_w / self.rth_ja_k_per_w
        a, b, c, d = self._matrix()
        l1, l2 = self._eigenvalues()
        sj, sc = power_w * self.rth_ja_k_per_w, power_w * self.rth_ca_k_per_w
        yj, yc = junction_c - ambient_c - sj, case_c - ambient_c - sc
        e1, e2 = math.exp(l1 * dt_s), math.exp(l2 * dt_s)
        den = l1 - l2
        m11 = (e1 * (a - l2) - e2 * (a - l1)) / den
        m12 = (e1 - e2) * b / den
        m21 = (e1 - e2) * c / den
        m22 = (e1 * (d - l2) - e2 * (d - l1)) / den
        return (ambient_c + sj + m11 * yj + m12 * yc, ambient_c + sc + m21 * yj + m22 * yc)


def steady_junction_c(ambient_c: float, power_w: float, rth_ja_k_per_w: float) -> float:
    """Tj = Ta + P·RθJA (JESD51-2)."""
    return ambient_c + power_w * rth_ja_k_per_w


def step_junction_c(junction_c: float, ambient_c: float, power_w: float, thermal: Thermal, dt_s: float) -> float:
    """Advance Tj by dt at constant power in the single-pole model (its exact solution)."""
    if dt_s <= 0:
        return junction_c
    target = steady_junction_c(ambient_c, power_w, thermal.rth_ja_k_per_w)
    return target + (junction_c - target) * math.exp(-dt_s / (thermal.rth_ja_k_per_w * thermal.cth_j_per_k))
