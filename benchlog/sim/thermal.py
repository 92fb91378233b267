"""Junction temperature: the first-order junction-to-ambient model.

Steady state Tj = Ta + P·RθJA is the definition of RθJA in JESD51-2
("junction-to-ambient thermal resistance"). The transient is one thermal
capacitance Cth (J/K) against RθJA:  dTj/dt = (P·RθJA - (Tj - Ta)) / (RθJA·Cth),
time constant τ = RθJA·Cth. For a constant P over a step dt the exact
solution is Tj(t+dt) = Tss + (Tj - Tss)·exp(-dt/τ).
"""

from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass(frozen=True)
class Thermal:
    rth_ja_k_per_w: float
    cth_j_per_k: float

    @property
    def tau_s(self) -> float:
        return self.rth_ja_k_per_w * self.cth_j_per_k


def steady_junction_c(ambient_c: float, power_w: float, rth_ja_k_per_w: float) -> float:
    """Tj = Ta + P·RθJA (JESD51-2)."""
    return ambient_c + power_w * rth_ja_k_per_w


def step_junction_c(junction_c: float, ambient_c: float, power_w: float, thermal: Thermal, dt_s: float) -> float:
    """Advance Tj by dt at constant power (exact solution of the first-order model)."""
    if dt_s <= 0:
        return junction_c
    target = steady_junction_c(ambient_c, power_w, thermal.rth_ja_k_per_w)
    return target + (junction_c - target) * math.exp(-dt_s / thermal.tau_s)
