"""Plan, bench and meter keys as a reader names them, with their values in engineering units.

A traceability table is read by someone checking a measurement, not by the
program: `settle.tolerance_v 2e-05 V` becomes `settle: tolerance | 20 µV`. The
dotted key stays findable in the run file's header (the label says which table).
"""

from __future__ import annotations

from typing import Any

from benchlog.quantity import engineering, unit_of

from .text import flatten

#: labels for the keys a reader meets most; others are made from the key itself
LABELS = {
    "element.id": "element: reference designator", "element.kind": "element: kind",
    "element.label": "element: part", "element.serial": "element: serial number", "element.lot": "element: lot",
    "element.ambient_c": "element: ambient", "element.note": "element: note",
    "element.operating_a": "element: operating current", "element.gate": "element: gate tied to",
    "element.zener_v": "element: gate clamp (zener)", "element.measure": "element: what is measured",
    "steps.mode": "steps: mode", "steps.start_a": "steps: first current", "steps.stop_a": "steps: last current",
    "steps.count": "steps: number of steps", "steps.currents_a": "steps: listed currents",
    "steps.spacing": "steps: spacing", "steps.target_rel_u": "steps: target relative uncertainty",
    "settle.dwell_s": "settle: dwell before reading", "settle.tolerance_v": "settle: tolerance",
    "settle.consecutive": "settle: readings within tolerance", "settle.timeout_s": "settle: give up after",
    "settle.max_reads": "settle: most readings", "meter.nplc": "meter: integration (NPLC)",
    "meter.range_v": "meter: range", "meter.samples": "meter: samples per reading",
    "limits.max_current_a": "limit: current", "limits.compliance_v": "limit: supply compliance",
    "limits.max_drop_v": "limit: drop", "limits.max_power_w": "limit: element power",
    "limits.max_time_s": "limit: sweep time", "cooldown.off_s": "cool-down: output off between steps",
    "offset.enabled": "zero-current offset measured", "record.supply_v": "record the supply voltage",
    "wiring.force": "wiring: current forced by", "wiring.current_from": "wiring: current read from",
    "wiring.shunt_ohm": "wiring: shunt", "wiring.input_v": "wiring: board input voltage",
    "line_frequency_hz": "mains frequency", "simulated": "simulated bench",
    "lab.operator": "operator", "lab.board_revision": "board revision",
    "lab.ambient_measured_c": "ambient, measured",
}

_WORDS = {"_a": "", "_v": "", "_w": "", "_c": "", "_s": "", "_ohm": "", "_hz": "", "_pct": " (%)"}


def label_of(key: str) -> str:
    """A dotted key as words: a known label, else `table: key words` with the unit suffix dropped."""
    if key in LABELS:
        return LABELS[key]
    parts = key.split(".")
    last = parts[-1]
    for suffix, tail in _WORDS.items():
        if last.endswith(suffix) and unit_of(last):
            last = last[: -len(suffix)] + tail
            break
    words = [p.replace("_", " ") for p in parts[:-1]] + [last.replace("_", " ")]
    return ": ".join(words) if len(words) > 1 else words[0]


def value_text(key: str, value: Any) -> str:
    """A number in engineering units from the key's suffix (2e-05 with `_v` -> `20 µV`); other values as given."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if not isinstance(value, (int, float)):
        return value if isinstance(value, str) else str(value)
    return engineering(value, unit_of(key.rsplit(".", 1)[-1]), digits=6, trim=True)


def readable_rows(data: Any) -> tuple[tuple[str, str], ...]:
    """A nested table as (label, value) rows for a traceability table."""
    rows = []
    for key, text in flatten(data):
        raw = _lookup(data, key)
        rows.append((label_of(key), value_text(key, raw) if raw is not _MISSING else text))
    return tuple(rows)


_MISSING = object()


def _lookup(data: Any, dotted: str) -> Any:
    node = data
    for part in dotted.split("."):
        if isinstance(node, dict) and part in node:
            node = node[part]
        elif hasattr(node, "get") and not isinstance(node, (list, tuple, str)):
            got = node.get(part, _MISSING)
            if got is _MISSING:
                return _MISSING
            node = got
        else:
            return _MISSING
    return node if not isinstance(node, (dict, list, tuple)) or isinstance(node, (str,)) else _MISSING
