"""Two lots compared: difference of means with its uncertainty, Welch's t-test, the capability of each.

Welch's t (Welch 1947): t = (x̄_A − x̄_B) / √(s_A²/n_A + s_B²/n_B) with the
Welch–Satterthwaite degrees of freedom ν = (a + b)² / (a²/(n_A−1) + b²/(n_B−1)),
a = s_A²/n_A, b = s_B²/n_B; p two-sided from Student's t. The standard
uncertainty of the difference is the same √(a + b) (GUM 5.1.2, independent
lots), expanded with the t quantile at 95 % for ν (GUM G.3).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class LotStats:
    name: str
    n: int
    mean: float
    sd: float
    capability_name: str
    capability: float | None


@dataclass(frozen=True)
class LotComparison:
    a: LotStats
    b: LotStats
    difference: float  # mean A − mean B
    std_u: float
    dof: float
    expanded_u_95: float
    t: float
    p_two_sided: float
    test: str = "Welch's t-test (unequal variances), two-sided"


def lot_stats(name: str, values, usl: float | None = None, lsl: float | None = None) -> LotStats:
    from benchlog.analysis.lot import capability

    x = np.asarray(values, dtype=float)
    sd = float(x.std(ddof=1)) if x.size > 1 else math.nan
    cap_name, cap = capability(float(x.mean()), sd, usl, lsl)
    return LotStats(name, int(x.size), float(x.mean()), sd, cap_name, cap)


def compare(name_a: str, a, name_b: str, b, usl: float | None = None, lsl: float | None = None) -> LotComparison:
    """Welch's comparison of two lots (module docstring); each needs at least two values."""
    from scipy import stats

    sa, sb = lot_stats(name_a, a, usl, lsl), lot_stats(name_b, b, usl, lsl)
    if sa.n < 2 or sb.n < 2:
        raise ValueError("each lot needs at least two values")
    va, vb = sa.sd ** 2 / sa.n, sb.sd ** 2 / sb.n
    u = math.sqrt(va + vb)
    dof = (va + vb) ** 2 / (va ** 2 / (sa.n - 1) + vb ** 2 / (sb.n - 1)) if u > 0 else math.inf
    diff = sa.mean - sb.mean
    t = diff / u if u > 0 else math.copysign(math.inf, diff) if diff else 0.0
    p = float(2 * stats.t.sf(abs(t), dof)) if math.isfinite(t) else 0.0
    return LotComparison(sa, sb, diff, u, dof, float(stats.t.ppf(0.975, dof)) * u, t, p)


def compare_lots(archive, quantity: str, lot_a: str, lot_b: str, usl: float | None = None,
                 lsl: float | None = None, flt=None) -> LotComparison:
    """Two lots of the archive compared on one fitted quantity (`archive compare-lots` and the UI's trend `c`);
    BadInput when a lot holds fewer than two fitted runs. `flt` (a `queries.RunFilter`) narrows the runs."""
    from dataclasses import replace

    from benchlog.badinput import BadInput

    from .queries import RunFilter, quantity_values

    base = flt if flt is not None else RunFilter()
    a = [v.value for v in quantity_values(archive, quantity, replace(base, lot=lot_a))]
    b = [v.value for v in quantity_values(archive, quantity, replace(base, lot=lot_b))]
    for name, values in ((lot_a, a), (lot_b, b)):
        if len(values) < 2:
            raise BadInput(archive.shown_url, f"lot {name!r}", f"{len(values)} runs with {quantity}",
                           "at least two fitted runs per lot")
    return compare(lot_a, a, lot_b, b, usl, lsl)
