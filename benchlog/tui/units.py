"""Numbers for people: SI prefixes, values with their uncertainty, short durations.

The uncertainty is shown as `value ± U (k = 1.73, 95.45 % coverage)` with U rounded to two significant
digits and the value to the same decimal place, as JCGM 100:2008 (GUM) 7.2.6 advises
("the numerical values ... should not be given with an excessive number of digits").
"""

from __future__ import annotations

import math

from benchlog.quantity import engineering, measured

_PREFIXES = ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"))


def prefix_for(magnitude: float) -> tuple[float, str]:
    """The SI prefix (scale, symbol) that puts `magnitude` in [1, 1000): one prefix for a plot's whole axis."""
    magnitude = abs(magnitude)
    if not math.isfinite(magnitude) or magnitude == 0.0:
        return 1.0, ""
    for scale, symbol in _PREFIXES:
        if magnitude >= scale * 0.9995:
            return scale, symbol
    return _PREFIXES[-1]


def si(value: float | None, unit: str, digits: int = 4) -> str:
    """`0.02612` Ω -> `26.12 mΩ`; None or non-finite -> `—` (`benchlog.quantity.engineering`, the one writer)."""
    return engineering(value, unit, digits)


def with_uncertainty(value: float, std_u: float, unit: str, k: float = 2.0, coverage: float | None = None) -> str:
    """`value ± k·u unit (k = 1.73, 95.45 % coverage)` written the one way (benchlog.quantity, GUM 7.2.6)."""
    expanded = k * std_u if std_u is not None and math.isfinite(std_u) else None
    return measured(value, expanded, unit, k, coverage)


def duration(seconds: float | None) -> str:
    """`75.4` -> `1:15`; hours as `1:02:03`; None -> `—`."""
    if seconds is None or not math.isfinite(seconds) or seconds < 0:
        return "—"
    whole = int(round(seconds))
    hours, rest = divmod(whole, 3600)
    minutes, secs = divmod(rest, 60)
    return f"{hours}:{minutes:02d}:{secs:02d}" if hours else f"{minutes}:{secs:02d}"
