"""Preferred number series for resistors and zeners (IEC 60063:2015), so a computed value becomes one you can buy.

The E3...E24 lists are not the rounded geometric values 10**(i/n): IEC 60063
keeps the historic values (2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2), so they are
written out here. E48 and E96 are the geometric values rounded to three
significant figures, and are also written out so the table is the reference.
"""

from __future__ import annotations

import math

from benchlog.badinput import BadInput

E3 = (1.0, 2.2, 4.7)
E6 = (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
E24 = (
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
)
E96 = tuple(
    v / 100
    for v in (
        100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130,
        133, 137, 140, 143, 147, 150, 154, 158, 162, 165, 169, 174,
        178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232,
        237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309,
        316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412,
        422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549,
        562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732,
        750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976,
    )
)
E48 = E96[::2]  # IEC 60063: each E48 value is every second E96 value

SERIES: dict[str, tuple[float, ...]] = {
    "E3": E3, "E6": E6, "E12": E12, "E24": E24, "E48": E48, "E96": E96,
}

# Relative slack so 4700.000000001 still counts as the standard 4.7 kΩ.
_REL = 1e-9


def series(name: str) -> tuple[float, ...]:
    """The mantissas of one series, 1.0 <= m < 10, in rising order."""
    key = name.strip().upper()
    if key not in SERIES:
        raise BadInput("argument", "series", f"{name!r} is not a known E-series", "one of " + ", ".join(SERIES))
    return SERIES[key]


def _check(value: float) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value <= 0:
        raise BadInput("argument", "value", f"{value!r} cannot be matched to a series", "a positive finite number")
    return float(value)


def _neighbours(value: float, name: str) -> list[float]:
    """Standard values in the decades around `value` (enough to bracket it)."""
    decade = math.floor(math.log10(value))
    mantissas = series(name)
    return [m * 10.0**d for d in (decade - 1, decade, decade + 1) for m in mantissas]


def _tidy(value: float) -> float:
    # 4.7 * 10**3 is 4700.000000000001 in binary; give the value people write.
    return float(f"{value:.4g}")


def at_least(value: float, name: str = "E24") -> float:
    """The smallest standard value >= `value` (a resistor that keeps the current at or below target)."""
    value = _check(value)
    return _tidy(min(v for v in _neighbours(value, name) if v >= value * (1 - _REL)))


def at_most(value: float, name: str = "E24") -> float:
    """The largest standard value <= `value`."""
    value = _check(value)
    return _tidy(max(v for v in _neighbours(value, name) if v <= value * (1 + _REL)))


def nearest(value: float, name: str = "E24") -> float:
    """The standard value closest to `value` on a logarithmic scale (series are geometric)."""
    value = _check(value)
    return _tidy(min(_neighbours(value, name), key=lambda v: abs(math.log(v / value))))


def values(name: str, lo: float, hi: float) -> tuple[float, ...]:
    """All standard values of a series within [lo, hi]."""
    lo, hi = _check(lo), _check(hi)
    out = []
    for decade in range(math.floor(math.log10(lo)), math.floor(math.log10(hi)) + 1):
        for m in series(name):
            v = m * 10.0**decade
            if lo * (1 - _REL) <= v <= hi * (1 + _REL):
                out.append(_tidy(v))
    return tuple(out)
