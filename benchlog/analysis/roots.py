"""A bracketed root of f(x) = 0 by Brent's method, so that the loss prediction does not wait for scipy to import.

Brent, "Algorithms for Minimization without Derivatives" (1973), ch. 4: inverse
quadratic interpolation or the secant step when it stays well inside the
bracket and shrinks it fast enough, bisection otherwise; the same algorithm as
scipy.optimize.brentq (checked against it in tests/analysis/test_roots.py).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

_EPS = 2.220446049250313e-16  # double precision machine epsilon (IEEE 754)


@dataclass(frozen=True)
class RootInfo:
    """How the search went, as scipy's RootResults: iterations, converged, and a flag in words."""

    iterations: int
    converged: bool
    flag: str


def brent_root(f: Callable[[float], float], a: float, b: float, *, xtol: float = 2e-12,
               rtol: float = 4 * _EPS, maxiter: int = 100) -> tuple[float, RootInfo]:
    """A root of f in [a, b] where f(a) and f(b) differ in sign; the answer is within xtol + rtol·|x|."""
    fa, fb = f(a), f(b)
    if fa * fb > 0:
        raise ValueError("f(a) and f(b) must have different signs")
    if fa == 0.0:
        return a, RootInfo(0, True, "converged")
    if fb == 0.0:
        return b, RootInfo(0, True, "converged")
    c, fc = a, fa
    d = e = b - a
    for iteration in range(1, maxiter + 1):
        if (fb > 0) == (fc > 0):
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 0.5 * (xtol + rtol * abs(b))
        m = 0.5 * (c - b)
        if fb == 0.0 or abs(m) <= tol:
            return b, RootInfo(iteration, True, "converged")
        if abs(e) >= tol and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:  # secant
                p, q = 2.0 * m * s, 1.0 - s
            else:  # inverse quadratic interpolation
                q, r = fa / fc, fb / fc
                p = s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0:
                q = -q
            else:
                p = -p
            if 2.0 * p < min(3.0 * m * q - abs(tol * q), abs(e * q)):
                e, d = d, p / q
            else:
                d = e = m
        else:
            d = e = m
        a, fa = b, fb
        b += d if abs(d) > tol else math.copysign(tol, m)
        fb = f(b)
    return b, RootInfo(maxiter, False, "convergence error")
