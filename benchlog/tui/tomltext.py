"""Writing the edited plan back as TOML text: tables of plain values only, as our plan files are.

tomllib reads TOML but does not write it; a plan is one level of tables holding
strings, numbers, booleans and lists of numbers, which is all this writes.
Strings are written as TOML basic strings with every control character escaped
(TOML v1.0.0, "String"), so a serial typed in the UI cannot end the line.
"""

from __future__ import annotations

import math
from typing import Any


def _value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"  # TOML v1.0.0 spells them so; the plan reader then names the key it refuses
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        out = []
        for ch in value:
            if ch == '"':
                out.append('\\"')
            elif ch == "\\":
                out.append("\\\\")
            elif ord(ch) < 0x20 or ord(ch) == 0x7F:
                out.append(f"\\u{ord(ch):04X}")
            else:
                out.append(ch)
        return '"' + "".join(out) + '"'
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_value(v) for v in value) + "]"
    raise ValueError(f"{type(value).__name__} cannot be written to a plan")


def dump_tables(doc: dict[str, Any]) -> str:
    """`{"element": {"id": "D1"}}` -> `[element]\\nid = "D1"\\n`; None values are left out."""
    lines: list[str] = []
    top = {k: v for k, v in doc.items() if not isinstance(v, dict) and v is not None}
    for key, value in top.items():
        lines.append(f"{key} = {_value(value)}")
    for name, table in doc.items():
        if not isinstance(table, dict):
            continue
        if lines:
            lines.append("")
        lines.append(f"[{name}]")
        for key, value in table.items():
            if value is not None:
                lines.append(f"{key} = {_value(value)}")
    return "\n".join(lines) + "\n"
