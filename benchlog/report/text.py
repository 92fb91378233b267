"""Numbers as a reader wants them: a unit from the SI key suffix, and a value rounded to its uncertainty.

Rounding follows GUM 7.2.6: the uncertainty is given to at most two significant
digits and the value to the same decimal place.
"""

from __future__ import annotations

import json
import math
from typing import Any, Mapping

#: SI key suffix -> unit symbol (longest suffix first).
_UNITS = (
    ("_k_per_w", "K/W"),
    ("_v_per_k", "V/K"),
    ("_per_k", "1/K"),
    ("_ohm", "Ω"),
    ("_pct", "%"),
    ("_hz", "Hz"),
    ("_v", "V"),
    ("_a", "A"),
    ("_w", "W"),
    ("_c", "°C"),
    ("_s", "s"),
)


def unit_of(key: str) -> str:
    """The unit named by a key's suffix (`r_on_ohm` -> Ω); "" for a dimensionless key (`ideality`)."""
    for suffix, unit in _UNITS:
        if key.endswith(suffix):
            return unit
    return ""


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


def with_uncertainty(value: float | None, u: float | None, unit: str = "") -> str:
    """`value ± u unit` with u to two significant digits and value to the same place (GUM 7.2.6)."""
    if value is None or not math.isfinite(float(value)):
        return "—"
    if u is None or not math.isfinite(float(u)) or u <= 0:
        return number(value, unit)
    value, u = float(value), float(u)
    exponent = math.floor(math.log10(u)) - 1  # place of the second significant digit of u
    scale = 10.0 ** exponent
    u_r = math.ceil(round(u / scale, 6)) * scale  # never round an uncertainty down
    v_r = round(value / scale) * scale
    decimals = max(0, -exponent)
    if abs(v_r) >= 1e6 or (abs(v_r) < 1e-3 and v_r != 0) or u_r < 1e-6:
        # scientific form for very large or small numbers: mantissas with a shared exponent
        e = math.floor(math.log10(abs(v_r))) if v_r else math.floor(math.log10(u_r))
        m_digits = max(0, e - exponent)
        return f"({v_r / 10**e:.{m_digits}f} ± {u_r / 10**e:.{m_digits}f})e{e} {unit}".strip()
    return f"{v_r:.{decimals}f} ± {u_r:.{decimals}f} {unit}".strip()


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
