"""Student's t distribution without scipy: the tail probability and the quantile a fit's uncertainty needs.

A command that fits one small run should not wait for scipy to import; these
few functions are all the fit needs of it. Checked against scipy.special in
tests/analysis/test_student_t.py.

* Tail: for t > 0, P(T > t) = ½·I_x(ν/2, ½) with x = ν/(ν + t²)
  (Abramowitz & Stegun 26.7.1 with 26.5.27); the regularised incomplete beta
  I_x(a, b) by its continued fraction (A&S 26.5.8), evaluated with the modified
  Lentz method, on the side of x where it converges fast (Numerical Recipes,
  2nd ed., §6.4).
* Quantile: Newton's method on that tail, kept inside a bracket (bisection when
  a step leaves it).
* Large ν (quantile: > LARGE_DOF; tail: > LARGE_DOF_TAIL): the Cornish–Fisher expansion of the t quantile in the
  normal quantile z (A&S 26.7.5, terms to ν⁻⁴; for ν > 1000 and quantiles
  out to 1 − 1e-9 it agrees with scipy to 1e-9), and its inverse for the tail.
  Below, the same expansion is Newton's starting point.
"""

from __future__ import annotations

import math
from functools import lru_cache

LARGE_DOF = 1e3  # quantiles from the expansion above this
LARGE_DOF_TAIL = 1e5  # tails from the inverted expansion above this
_TINY = 1e-300
_EPS = 1e-15


def _beta_cf(x: float, a: float, b: float) -> float:
    """Continued fraction of I_x(a, b) (A&S 26.5.8), modified Lentz."""
    qab, qap, qam = a + b, a + 1.0, a - 1.0
    c, d = 1.0, 1.0 - qab * x / qap
    d = 1.0 / (d if abs(d) > _TINY else _TINY)
    h = d
    for m in range(1, 100000):
        m2 = 2 * m
        aa = m * (b - m) * x / ((qam + m2) * (a + m2))
        d = 1.0 + aa * d
        d = 1.0 / (d if abs(d) > _TINY else _TINY)
        c = 1.0 + aa / c
        c = c if abs(c) > _TINY else _TINY
        h *= d * c
        aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2))
        d = 1.0 + aa * d
        d = 1.0 / (d if abs(d) > _TINY else _TINY)
        c = 1.0 + aa / c
        c = c if abs(c) > _TINY else _TINY
        step = d * c
        h *= step
        if abs(step - 1.0) < _EPS:
            break
    return h


def incomplete_beta(x: float, a: float, b: float) -> float:
    """Regularised incomplete beta I_x(a, b) for 0 <= x <= 1, a, b > 0."""
    if x <= 0.0:
        return 0.0
    if x >= 1.0:
        return 1.0
    log_front = (math.lgamma(a + b) - math.lgamma(a) - math.lgamma(b)
                 + a * math.log(x) + b * math.log1p(-x))
    if x < (a + 1.0) / (a + b + 2.0):
        return math.exp(log_front) * _beta_cf(x, a, b) / a
    return 1.0 - math.exp(log_front) * _beta_cf(1.0 - x, b, a) / b


def normal_quantile(p: float) -> float:
    """z with Φ(z) = p: A&S 26.2.23 as the start (|error| < 4.5e-4), then Newton on Φ by math.erfc.

    Written here rather than taken from statistics.NormalDist, whose import pulls in decimal and
    fractions; checked against scipy.special.ndtri.
    """
    if not 0.0 < p < 1.0:
        return math.nan if not 0.0 <= p <= 1.0 else math.copysign(math.inf, p - 0.5)
    if p == 0.5:
        return 0.0
    if p < 0.5:
        return -_normal_upper_quantile(p)  # the lower tail p itself, not 1 − p: no digits lost
    return _normal_upper_quantile(1.0 - p)


def _normal_upper_quantile(q: float) -> float:
    """z > 0 with P(Z > z) = q, 0 < q < 0.5."""
    t = math.sqrt(-2.0 * math.log(q))
    z = t - (2.515517 + 0.802853 * t + 0.010328 * t * t) / (1.0 + 1.432788 * t + 0.189269 * t * t
                                                             + 0.001308 * t ** 3)
    for _ in range(8):
        f = 0.5 * math.erfc(z / math.sqrt(2.0)) - q  # upper tail minus target
        step = f / (math.exp(-0.5 * z * z) / math.sqrt(2.0 * math.pi))
        z += step
        if abs(step) <= 1e-15 * max(1.0, abs(z)):
            break
    return z


def _cornish_fisher(z: float, dof: float) -> float:
    """t quantile from the normal quantile z (A&S 26.7.5)."""
    z2 = z * z
    g1 = (z2 + 1.0) * z / 4.0
    g2 = ((5.0 * z2 + 16.0) * z2 + 3.0) * z / 96.0
    g3 = (((3.0 * z2 + 19.0) * z2 + 17.0) * z2 - 15.0) * z / 384.0
    g4 = ((((79.0 * z2 + 776.0) * z2 + 1482.0) * z2 - 1920.0) * z2 - 945.0) * z / 92160.0
    return z + g1 / dof + g2 / dof**2 + g3 / dof**3 + g4 / dof**4


def t_sf(t: float, dof: float) -> float:
    """P(T > t) for Student's t with `dof` degrees of freedom (scipy.stats.t.sf)."""
    if math.isnan(t) or not dof > 0:
        return math.nan
    if math.isinf(t):
        return 0.0 if t > 0 else 1.0
    if t < 0:
        return 1.0 - t_sf(-t, dof)
    if not math.isfinite(dof) or dof > LARGE_DOF_TAIL:
        if not math.isfinite(dof):
            return 0.5 * math.erfc(t / math.sqrt(2.0))
        # invert the expansion: find z with t(z) = t (t(z) is increasing), then the normal tail of z
        z = t
        for _ in range(50):
            f = _cornish_fisher(z, dof) - t
            h = 1e-6 * max(1.0, abs(z))
            slope = (_cornish_fisher(z + h, dof) - _cornish_fisher(z - h, dof)) / (2.0 * h)
            step = f / slope
            z -= step
            if abs(step) < 1e-15 * max(1.0, abs(z)):
                break
        return 0.5 * math.erfc(z / math.sqrt(2.0))
    t2 = t * t
    if t < 1.0:  # near the centre: P(0 < T < t) = ½·I_y(½, ν/2), y = t²/(ν + t²), keeps its precision
        return 0.5 - 0.5 * incomplete_beta(t2 / (dof + t2), 0.5, 0.5 * dof)
    return 0.5 * incomplete_beta(dof / (dof + t2), 0.5 * dof, 0.5)


def _pdf(t: float, dof: float) -> float:
    log_c = math.lgamma(0.5 * (dof + 1.0)) - math.lgamma(0.5 * dof) - 0.5 * math.log(dof * math.pi)
    return math.exp(log_c - 0.5 * (dof + 1.0) * math.log1p(t * t / dof))


@lru_cache(maxsize=4096)
def t_quantile(dof: float, p: float) -> float:
    """t with P(T <= t) = p (scipy.special.stdtrit(dof, p)); the normal quantile for infinite dof."""
    if not 0.0 < p < 1.0 or not dof > 0:
        return math.nan
    if p < 0.5:
        return -t_quantile(dof, 1.0 - p)
    if p == 0.5:
        return 0.0
    z = normal_quantile(p)
    if not math.isfinite(dof):
        return z
    guess = _cornish_fisher(z, dof)
    # the ν⁻⁴ term times z²/ν stands in for the first term left out: below 1e-13 of t the expansion is the answer
    z2 = z * z
    last = abs(((((79.0 * z2 + 776.0) * z2 + 1482.0) * z2 - 1920.0) * z2 - 945.0) * z / 92160.0) / dof**4
    if dof > LARGE_DOF or last * z2 / dof < 1e-13 * guess:
        return guess
    tail = 1.0 - p
    lo, hi = 0.0, math.inf  # the bracket tightens as the tail is evaluated on either side of the root
    t = guess if guess > 0 else 1.0
    for _ in range(400):
        f = t_sf(t, dof) - tail  # decreasing in t
        if f > 0:
            lo = t
        else:
            hi = t
        step = f / _pdf(t, dof)
        nxt = t + step
        if abs(step) <= 1e-5 * t and lo < nxt < hi:
            # Newton converges quadratically: after a step this small the error is ~step²/t, under 1e-10·t
            return nxt
        if not lo < nxt < hi:
            nxt = 2.0 * max(lo, 1.0) if math.isinf(hi) else 0.5 * (lo + hi)
            if nxt > 1e300:
                return math.inf
        if abs(nxt - t) <= 1e-14 * max(1.0, abs(nxt)) or (math.isfinite(hi) and hi - lo <= 1e-15 * hi):
            return nxt
        t = nxt
    return t
