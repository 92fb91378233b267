"""A JCGM 101:2008 Monte Carlo coverage factor with numpy: the reference the convolution is checked against.

Propagation of distributions (JCGM 101 §5.9, §7): draw every input from its distribution
(rectangular on ±√3·u, JCGM 101 6.4.2; the scaled t u·T_ν, 6.4.9.7; normal, 6.4.7), add
them (the budget's model is the sum), and read the probabilistically symmetric coverage
interval of the sum (§7.7): here the quantile p of |sum|, since every input is symmetric about 0.
"""

from __future__ import annotations

import math

import numpy as np


def monte_carlo_k(terms, p: float = 0.9545, draws: int = 2_000_000, seed: int = 20261202) -> float:
    """k_p of Σ X_i for (shape, u, ν) terms by Monte Carlo, in units of u_c = √Σu²."""
    rng = np.random.default_rng(seed)
    total = np.zeros(draws)
    u_c = math.sqrt(sum(u * u for _, u, _ in terms))
    for shape, u, dof in terms:
        if shape == "rectangular":
            total += rng.uniform(-1.0, 1.0, draws) * u * math.sqrt(3.0)
        elif shape == "t":
            total += rng.standard_t(dof, draws) * u
        else:
            total += rng.normal(0.0, u, draws)
    return float(np.quantile(np.abs(total), p)) / u_c
