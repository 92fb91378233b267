"""Numbers as a reader wants them: a unit from the SI key suffix, and a value rounded to its uncertainty.

Rounding follows GUM 7.2.6: the uncertainty is given to at most two significant
digits and the value to the same decimal place.
"""

from __future__ import annotations

import json
import math
from typing import Any, Mapping

from benchlog.quantity import measured, unit_of  # noqa: F401  (unit_of is re-exported)

def number(value: Any, unit: str = "", digits: int = 6) -> str:
    """A value with `digits` significant digits and its unit; "—" when there is none."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)) or hasattr(value, "item"):
        v = float(value)
        if not math.isfinite(v):
            return "—"
        text = f"{v:.{digits}g}"
        return f"{text} {unit}".strip()
    return f"{value} {unit}".strip()


def with_uncertainty(value: float | None, expanded_u: float | None, unit: str = "", k: float | None = 2.0,
                     coverage: float | None = None) -> str:
    """`value ± U unit (k = 1.73, 95.45 % coverage)` written the one way (benchlog.quantity, GUM 7.2.6)."""
    return measured(value, expanded_u, unit, k, coverage)


def flatten(data: Any, prefix: str = "") -> list[tuple[str, str]]:
    """A nested JSON-like value as (dotted key, text) rows, for showing a plan or bench as a table."""
    rows: list[tuple[str, str]] = []
    if isinstance(data, Mapping):
        if not data and prefix:
            rows.append((prefix, "(empty)"))
        for key, value in data.items():
            rows.extend(flatten(value, f"{prefix}.{key}" if prefix else str(key)))
    elif isinstance(data, (list, tuple)) and any(isinstance(v, (Mapping, list, tuple)) for v in data):
        for i, value in enumerate(data):
            rows.extend(flatten(value, f"{prefix}[{i}]"))
    elif isinstance(data, (list, tuple)):
        rows.append((prefix, ", ".join(_scalar(v) for v in data) or "(empty)"))
    else:
        unit = unit_of(prefix.rsplit(".", 1)[-1]) if isinstance(data, (int, float)) and not isinstance(data, bool) else ""
        rows.append((prefix, f"{_scalar(data)} {unit}".strip()))
    return rows


def _scalar(value: Any) -> str:
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.10g}"
    if isinstance(value, (int, str)):
        return str(value)
    return json.dumps(value, ensure_ascii=False, default=str)
