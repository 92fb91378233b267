"""Instrument accuracy ±(% of reading + % of range): the one type from instrument profile to uncertainty budget.

A profile lists these per function and range; the rig picks the ones a sweep
uses; the run header records them (`to_table` / `from_table`, the only place
that spells their JSON keys); the uncertainty budget reads them back. A leaf
module (stdlib only, like `badinput.py`) because four layers use it and none of
them may import another for it: `instruments/` (profiles), `sweep/` (the rig),
`runs/` (the header) and `analysis/` (the budget).

The spec's bound for one reading is a = reading_pct/100·|x| + range_pct/100·range;
read as a rectangular distribution its standard uncertainty is a/√3
(JCGM 100:2008, GUM 4.3.7).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from benchlog.badinput import BadInput

SQRT3 = math.sqrt(3.0)


@dataclass(frozen=True)
class Accuracy:
    """An accuracy spec ±(reading_pct % of reading + range_pct % of range) on one range.

    `range` is in the unit of the reading (V for a voltage range, A for a current range).
    The two terms are read as two independent errors that stay fixed over a sweep:
    a gain error (the % of reading) and an offset (the % of range).
    """

    reading_pct: float
    range_pct: float
    range: float

    def half_width(self, value: float) -> float:
        """a = reading_pct/100·|value| + range_pct/100·range: the spec's bound for one reading."""
        return self.reading_pct / 100.0 * abs(value) + self.range_pct / 100.0 * self.range

    @property
    def gain_u(self) -> float:
        """Relative standard uncertainty of the gain: (reading_pct/100)/√3 (GUM 4.3.7)."""
        return self.reading_pct / 100.0 / SQRT3

    @property
    def offset_u(self) -> float:
        """Standard uncertainty of the offset: (range_pct/100·range)/√3 (GUM 4.3.7)."""
        return self.range_pct / 100.0 * self.range / SQRT3

    def through_shunt(self, shunt_ohm: float) -> Accuracy:
        """A voltage spec read as a current I = V/R: the range (and so the offset) divides by R.

        The shunt's own tolerance is not part of it: the operator adds it to the budget.
        """
        return Accuracy(self.reading_pct, self.range_pct, self.range / shunt_ohm)


#: The reading each entry of a run header's accuracy table describes, and the key of its range.
RANGE_KEYS = {"drop": "range_v", "current": "range_a", "reverse_current": "range_a"}


#: What reads the current, by the bench's [wiring].current_from: the budget names each source for what it is.
CURRENT_SOURCE_NAMES = {
    "supply": "supply read-back",
    "load": "load read-back",
    "meter": "series meter",
    "shunt": "shunt meter reading",
}

#: How far a shunt's temperature is taken to stray while it carries the test current, when nothing
#: better is known: ±10 K, rectangular (from memory: a shunt run at a fraction of its rating warms by a
#: few kelvin to some tens of kelvin).
SHUNT_TEMPERATURE_HALF_WIDTH_K = 10.0


@dataclass(frozen=True)
class MeasurementAccuracy:
    """The accuracy of the readings a sweep makes: the element drop, the current and, with a reverse step,
    the reverse current (None: not known).

    `current_from` names what reads the current (the bench's wiring); with a shunt, its
    tolerance and temperature coefficient are two more gain errors of the current
    (I = V/R_shunt), rectangular (GUM 4.3.7). These three come from the bench's wiring,
    not from the header's `accuracy` table, and are not written into it.
    """

    drop: Accuracy | None = None
    current: Accuracy | None = None
    current_from: str = ""
    #: the reverse-current reading on the range the reverse step used (a run with a reverse step)
    reverse_current: Accuracy | None = None
    shunt_tolerance_pct: float | None = None
    shunt_tempco_ppm_per_k: float | None = None

    @property
    def known(self) -> bool:
        return self.drop is not None or self.current is not None

    @property
    def empty(self) -> bool:
        return not self.known and not self.current_gain_terms()

    @property
    def current_name(self) -> str:
        """The current reading's name in a budget ("load read-back", "series meter", ...)."""
        return CURRENT_SOURCE_NAMES.get(self.current_from, "current reading")

    def current_gain_terms(self) -> list[tuple[str, float]]:
        """(name, relative standard uncertainty) of each gain error of the current reading."""
        terms = []
        if self.current is not None:
            terms.append((f"{self.current_name} gain", self.current.gain_u))
        if self.shunt_tolerance_pct is not None:
            terms.append(("shunt tolerance", self.shunt_tolerance_pct / 100.0 / SQRT3))
        if self.shunt_tempco_ppm_per_k is not None:
            terms.append(("shunt tempco", abs(self.shunt_tempco_ppm_per_k) * 1e-6
                          * SHUNT_TEMPERATURE_HALF_WIDTH_K / SQRT3))
        return terms

    def to_table(self) -> dict[str, Any]:
        """The run header's `accuracy` table: {"drop": {reading_pct, range_pct, range_v}, "current": {..., range_a},
        "reverse_current": {..., range_a}} (entries not known are left out)."""
        out: dict[str, Any] = {}
        for name, range_key in RANGE_KEYS.items():
            acc = getattr(self, name)
            if acc is not None:
                out[name] = {"reading_pct": acc.reading_pct, "range_pct": acc.range_pct, range_key: acc.range}
        return out

    @classmethod
    def from_table(cls, block: Any, source: str = "run header") -> MeasurementAccuracy:
        """Read a header's `accuracy` table; a missing entry is None, a malformed one is bad input."""
        if block is None:
            return cls()
        if not isinstance(block, Mapping):
            raise BadInput(source, "accuracy", f"is {type(block).__name__}", "a table with drop/current")
        return cls(**{name: _entry(block, name, key, source) for name, key in RANGE_KEYS.items()})


def _entry(block: Mapping[str, Any], role: str, range_key: str, source: str) -> Accuracy | None:
    entry = block.get(role)
    if entry is None:
        return None
    if not isinstance(entry, Mapping):
        raise BadInput(source, f"accuracy.{role}", f"is {type(entry).__name__}", "a table")
    values = {}
    for key in ("reading_pct", "range_pct", range_key):
        raw = entry.get(key)
        where = f"accuracy.{role}.{key}"
        if raw is None:
            raise BadInput(source, where, "is missing", "a number")
        if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw):
            raise BadInput(source, where, f"is {raw!r}", "a finite number")
        if raw < 0 or (key == range_key and raw <= 0):
            raise BadInput(source, where, f"is {raw!r}", "a positive number" if key == range_key else ">= 0")
        values[key] = float(raw)
    return Accuracy(values["reading_pct"], values["range_pct"], values[range_key])
