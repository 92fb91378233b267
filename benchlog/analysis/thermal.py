"""The electro-thermal loop: the junction temperature at which a part's own loss holds it, Tj = Ta + P(Tj)·RθJA.

Steady-state junction temperature from the junction-to-ambient thermal
resistance (JEDEC JESD51 definition of RθJA: ΔT = P·RθJA). The loss depends
on Tj (Vf falls, R_DS(on) rises), so Tj is found self-consistently:

1. fixed-point iteration T[k+1] = Ta + P(T[k])·Rθ from T[0] = Ta. It converges
   when |dP/dT|·Rθ < 1 and, starting from Ta, lands on the lowest (stable)
   equilibrium;
2. if it is slow, the lowest root of g(T) = Ta + P(T)·Rθ − T above Ta is
   bracketed on a grid and refined with Brent's method (`roots.brent_root`, as scipy.optimize.brentq);
3. if g stays positive all the way up to `CEILING_C` there is no equilibrium:
   the loss grows faster with temperature than the package can shed it
   (thermal runaway). For P = P0·(1 + α(T − T0)) that happens exactly when
   P0·α·Rθ ≥ 1.

A loss that cannot be computed (NaN) is "not converged", never a number.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from .roots import brent_root

#: Above this the models (linear tempcos, diode law) mean nothing and silicon is long gone.
CEILING_C = 500.0
TOLERANCE_K = 1e-6
MAX_FIXED_POINT = 60
_GRID = 400


@dataclass(frozen=True)
class ThermalSolution:
    tj_c: float | None  # None when there is no equilibrium or it could not be computed
    power_w: float | None
    iterations: int
    converged: bool
    runaway: bool
    method: str
    message: str


def solve_junction(
    power_w_at: Callable[[float], float],
    ambient_c: float,
    rth_ja_k_per_w: float | None,
    *,
    ceiling_c: float = CEILING_C,
    tolerance_k: float = TOLERANCE_K,
) -> ThermalSolution:
    """Solve Tj = Ta + P(Tj)·Rθ; `power_w_at(tj_c)` is the part's loss at a junction temperature."""
    if rth_ja_k_per_w is None:
        p = _power(power_w_at, ambient_c)
        if p is None:
            return ThermalSolution(None, None, 0, False, False, "none", f"loss undefined at Tj = {ambient_c:g} °C")
        return ThermalSolution(
            ambient_c, p, 0, True, False, "none",
            "no thermal data (rth_ja_k_per_w) in the spec: Tj taken as the ambient, self-heating not included",
        )
    rth = float(rth_ja_k_per_w)
    t = float(ambient_c)
    for k in range(1, MAX_FIXED_POINT + 1):
        p = _power(power_w_at, t)
        if p is None:
            return ThermalSolution(None, None, k, False, False, "fixed-point", f"loss undefined at Tj = {t:.6g} °C")
        t_next = ambient_c + p * rth
        if t_next > ceiling_c:
            return ThermalSolution(
                None, None, k, False, True, "fixed-point",
                f"thermal runaway: Tj passed {ceiling_c:g} °C without reaching an equilibrium",
            )
        if abs(t_next - t) <= tolerance_k:
            p_final = _power(power_w_at, t_next)
            return ThermalSolution(t_next, p_final, k, True, False, "fixed-point",
                                   f"converged in {k} fixed-point iterations")
        t = t_next
    return _bracketed(power_w_at, ambient_c, rth, ceiling_c, tolerance_k, MAX_FIXED_POINT)


def _power(power_w_at: Callable[[float], float], tj_c: float) -> float | None:
    p = float(power_w_at(tj_c))
    return p if math.isfinite(p) else None


def _bracketed(power_w_at, ambient_c, rth, ceiling_c, tolerance_k, spent) -> ThermalSolution:
    grid = np.linspace(ambient_c, ceiling_c, _GRID)

    def g(t: float) -> float:
        p = _power(power_w_at, t)
        return math.nan if p is None else ambient_c + p * rth - t

    previous_t, previous_g = grid[0], g(grid[0])
    for t in grid[1:]:
        value = g(t)
        if math.isnan(value) or math.isnan(previous_g):
            return ThermalSolution(None, None, spent, False, False, "brentq", f"loss undefined near Tj = {t:.6g} °C")
        if value <= 0.0:
            root, info = brent_root(g, float(previous_t), float(t), xtol=tolerance_k)
            if not info.converged:
                return ThermalSolution(None, None, spent + info.iterations, False, False, "brentq", info.flag)
            return ThermalSolution(
                float(root), _power(power_w_at, float(root)), spent + info.iterations, True, False,
                "fixed-point then brentq",
                f"fixed point slow after {spent} iterations; brentq converged in {info.iterations} more",
            )
        previous_t, previous_g = t, value
    return ThermalSolution(
        None, None, spent, False, True, "brentq",
        f"thermal runaway: no equilibrium between {ambient_c:g} °C and {ceiling_c:g} °C "
        "(loss rises with temperature faster than the package sheds it)",
    )
