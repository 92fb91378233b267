"""The coverage factor k_p of a budget's combined distribution, by numerical convolution (deterministic).

GUM 6.2 and 6.3 (JCGM 100:2008) define the expanded uncertainty U = k_p·u_c for a stated
coverage probability p; k = 2 gives p ≈ 95.45 % only when the combined distribution is
normal (GUM G.1.3, G.2). A budget dominated by one rectangular term is far from normal:
alone, such a term has k_p = p·√3 (GUM G.1.3 and JCGM 101:2008 §5.1 / 6.4.2.2), 1.65 at
95.45 %, so k = 2 would cover all of it. Here the distribution of the sum of the budget's
terms, each as the budget models it, is formed and k_p read from it:
  - rectangular (the type B terms from an accuracy spec, a tolerance, a translation):
    uniform on ±√3·u (GUM 4.3.7);
  - Student t with ν degrees of freedom (type A terms): u·T_ν, the scaled t of JCGM 101
    6.4.9.7, whose coverage factor alone is the t quantile (GUM G.3.2);
  - normal (ν = ∞, or a term stated normal).
The terms are independent (the budget adds them in quadrature, GUM 5.1.2), so the density of
the sum is the convolution of the terms' densities (JCGM 101 §5.11 names this route beside
Monte Carlo). Each term's probability is put in the cells of one grid (exact cell masses for
the rectangular and normal terms, the density times the cell width for a t term, whose tails
beyond a two-sided 1e-6, or 1e-4 for ν < 3, are left out and counted as outside any interval:
that only raises k_p, by under 0.5 % at ν = 1 and far less above), the cells (at most 1/100 of
u_c wide) are convolved by FFT, and the smallest symmetric interval holding p is read off the
cumulative sum. The same terms always give the same k_p (no random draws), so the
same run always gets the same U; tests/analysis/test_coverage.py checks it against the cases
above and against a JCGM 101 Monte Carlo.
"""

from __future__ import annotations

import math
from typing import Iterable, Sequence

#: Coverage probability the expanded uncertainty is stated for (the normal distribution's ±2σ,
#: GUM G.3, table G.1: 95.45 %).
COVERAGE_P = 0.9545

#: Cells in the grid the densities are convolved on (powers of two for the FFT): at least the
#: first, as many as cells of CELL_U·u_c need, at most the last (only a t term with ν < 3 needs more).
GRID_CELLS = (1 << 14, 1 << 21)
CELL_U = 0.01

#: A t term's tails beyond this two-sided probability are left out of the grid (ν < 3: the second).
T_TAIL = (1e-6, 1e-4)

#: Above this ν a t term is taken as normal (its coverage factor differs by < 1e-4).
NORMAL_DOF = 1e4

SHAPES = ("rectangular", "normal", "t")


def _normal_cdf(x):
    import numpy as np

    return 0.5 * (1.0 + _erf(np.asarray(x) / math.sqrt(2.0)))


def _erf(x):
    """math.erf over an array (numpy has no erf; this keeps scipy out of the fit's import)."""
    import numpy as np

    return np.vectorize(math.erf, otypes=[float])(x)


def _t_pdf(x, dof: float):
    import numpy as np

    log_c = math.lgamma(0.5 * (dof + 1.0)) - math.lgamma(0.5 * dof) - 0.5 * math.log(dof * math.pi)
    return np.exp(log_c - 0.5 * (dof + 1.0) * np.log1p(x * x / dof))


def _half_width(shape: str, u: float, dof: float) -> float:
    """How far a term's grid must reach."""
    if shape == "rectangular":
        return math.sqrt(3.0) * u
    if shape == "t" and math.isfinite(dof) and dof < NORMAL_DOF:
        from .student_t import t_quantile

        tail = T_TAIL[0] if dof >= 3.0 else T_TAIL[1]
        return u * t_quantile(dof, 1.0 - tail / 2.0)
    return 7.0 * u  # normal: 1e-11 beyond


def _cell_masses(shape: str, u: float, dof: float, x, h: float):
    """The probability of each grid cell [x − h/2, x + h/2] for one term."""
    import numpy as np

    lo, hi = x - h / 2.0, x + h / 2.0
    if shape == "rectangular":
        a = math.sqrt(3.0) * u
        overlap = np.clip(np.minimum(hi, a) - np.maximum(lo, -a), 0.0, None)
        return overlap / (2.0 * a) if a > 0 else (np.abs(x) < h / 2.0).astype(float)
    if shape == "t" and math.isfinite(dof) and dof < NORMAL_DOF:
        m = _t_pdf(x / u, dof) * h / u
        return m
    inside = np.abs(x) <= 8.0 * u + h
    m = np.zeros_like(x)
    m[inside] = _normal_cdf(hi[inside] / u) - _normal_cdf(lo[inside] / u)
    return m


def coverage_factor(terms: Iterable[tuple[str, float, float]], p: float = COVERAGE_P) -> float:
    """k_p with P(|Σ X_i| ≤ k_p·u_c) = p; `terms` are (shape, u, ν) with shape in SHAPES.

    u_c = √Σu² (GUM 5.1.2). With no term of any size, the normal distribution's value.
    """
    import numpy as np

    items = [(s, float(u), float(d)) for s, u, d in terms if u > 0.0 and math.isfinite(u)]
    for s, _, _ in items:
        if s not in SHAPES:
            raise ValueError(f"unknown distribution {s!r}; expected one of {', '.join(SHAPES)}")
    if not 0.0 < p < 1.0:
        raise ValueError(f"coverage probability must be in (0, 1), got {p!r}")
    from .student_t import normal_quantile

    if not items:
        return normal_quantile(0.5 + p / 2.0)
    u_c = math.sqrt(sum(u * u for _, u, _ in items))
    items = [(s, u / u_c, d) for s, u, d in items]  # in units of u_c
    reach = sum(_half_width(s, u, d) for s, u, d in items)
    lo_n, hi_n = GRID_CELLS
    n = min(max(lo_n, 1 << math.ceil(math.log2(4.0 * reach / CELL_U))), hi_n)
    h = 2.0 * reach / (n // 2)  # the sum's support fills half the circular grid: no wrap-around
    x = np.fft.fftfreq(n, d=1.0 / (n * h))  # 0, h, 2h, ..., then the negative cells: FFT order
    spectrum = np.ones(n // 2 + 1, dtype=complex)
    for s, u, d in items:
        spectrum *= np.fft.rfft(_cell_masses(s, u, d, x, h))
    mass = np.fft.irfft(spectrum, n)
    mass = np.clip(mass, 0.0, None)  # FFT round-off
    # P(|E| ≤ (j + ½)h) = mass at 0 plus both sides out to cell j (the sum is symmetric)
    half = n // 2
    pos = mass[:half]
    neg = np.concatenate(([0.0], mass[::-1][: half - 1]))  # mass at −h, −2h, ... aligned with +h, +2h
    cum = np.cumsum(pos + neg)
    j = int(np.searchsorted(cum, p))
    if j >= half:
        return math.inf
    below = cum[j - 1] if j > 0 else 0.0
    # inside cell j the mass is spread evenly over [(j − ½)h, (j + ½)h] on either side
    frac = (p - below) / (cum[j] - below) if cum[j] > below else 1.0
    edge = (j - 0.5) * h if j > 0 else 0.0
    width = h if j > 0 else h / 2.0
    return float(edge + frac * width)


def coverage_factor_of(shapes: Sequence[str], us: Sequence[float], dofs: Sequence[float],
                       p: float = COVERAGE_P) -> float:
    """`coverage_factor` over parallel sequences."""
    return coverage_factor(zip(shapes, us, dofs), p)
