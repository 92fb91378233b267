"""One way to write a result: value and uncertainty rounded together, with an engineering prefix and the unit.

JCGM 100:2008 (GUM) 7.2.6: the uncertainty is given to at most two significant
digits and the estimate is rounded to the same decimal place; 7.2.2 and 7.2.4
show the two forms this module writes (a standard uncertainty beside the value,
or `(y ± U) unit` with the coverage factor k stated). An uncertainty larger than
the value itself means the value is not determined by the data, and the text
says so rather than printing a number that looks like a measurement.

Leaf module: standard library only, so the CLI, the UI, the report and the JSON
text fields all write a quantity the same way.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: SI prefixes from 10^12 down to 10^-12 (SI Brochure, 9th ed., table 7).
PREFIXES: tuple[tuple[int, str], ...] = (
    (12, "T"), (9, "G"), (6, "M"), (3, "k"), (0, ""), (-3, "m"), (-6, "µ"), (-9, "n"), (-12, "p"),
)

#: SI key suffix -> unit symbol, longest suffix first (JSON keys end in their unit).
_UNITS = (
    ("_k_per_w", "K/W"), ("_v_per_k", "V/K"), ("_per_k", "1/K"), ("_ohm", "Ω"), ("_pct", "%"),
    ("_hz", "Hz"), ("_v", "V"), ("_a", "A"), ("_w", "W"), ("_c", "°C"), ("_k", "K"), ("_s", "s"),
)

# units that take no prefix: a prefix on these reads wrongly or not at all
_NO_PREFIX = {"", "%", "°C", "K", "1/K", "K/W", "V/K"}

NOT_DETERMINED = "not determined"


def unit_of(key: str) -> str:
    """The unit a JSON key's suffix names (`r_on_ohm` -> Ω); "" for a dimensionless key (`ideality`)."""
    for suffix, unit in _UNITS:
        if key.endswith(suffix):
            return unit
    return ""


def _finite(x: float | None) -> bool:
    return x is not None and not isinstance(x, bool) and math.isfinite(float(x))


def _prefix(magnitude: float, unit: str) -> tuple[int, str]:
    """The prefix (power of ten, symbol) that puts `magnitude` in [1, 1000); none for prefix-less units."""
    if unit in _NO_PREFIX or magnitude == 0.0 or not math.isfinite(magnitude):
        return 0, ""
    for power, symbol in PREFIXES:
        if magnitude >= 10.0 ** power:
            return power, symbol
    return PREFIXES[-1]


@dataclass(frozen=True)
class Rounded:
    """A value and its uncertainty rounded together (GUM 7.2.6), in the unit scaled by `prefix`."""

    value: str
    uncertainty: str
    prefix: str
    unit: str
    determined: bool  # False when the uncertainty exceeds the value's magnitude

    @property
    def unit_text(self) -> str:
        return f"{self.prefix}{self.unit}"


def _round_u(u: float) -> tuple[float, int]:
    """`u` to two significant digits and the decimal place (power of ten) of its last digit, carry included."""
    place = math.floor(math.log10(u)) - 1
    rounded = round(u / 10.0 ** place) * 10.0 ** place
    if rounded >= 10.0 ** (place + 2):  # 0.0996 -> 0.100: three digits, so one place up (0.10)
        place += 1
        rounded = round(u / 10.0 ** place) * 10.0 ** place
    return rounded, place


def round_together(value: float, u: float, unit: str = "") -> Rounded:
    """Round `u` to two significant digits and `value` to the same place; choose one prefix for both.

    The prefix follows the larger of |value| and u after rounding, so a carry
    (999.96 mΩ -> 1.0000 Ω) moves the prefix too.
    """
    value, u = float(value), float(u)
    if not (math.isfinite(value) and math.isfinite(u)) or u <= 0.0:
        raise ValueError(f"round_together needs a finite value and a positive uncertainty, got {value!r}, {u!r}")
    u_r, place = _round_u(u)
    v_r = round(value / 10.0 ** place) * 10.0 ** place
    power, symbol = _prefix(max(abs(v_r), u_r), unit)
    decimals = max(0, power - place)
    scale = 10.0 ** power
    v_text = f"{v_r / scale:.{decimals}f}"
    if float(v_text) == 0.0:
        v_text = v_text.lstrip("-")  # no "-0.00"
    return Rounded(v_text, f"{u_r / scale:.{decimals}f}", symbol, unit, determined=u_r <= abs(v_r))


def engineering(value: float | None, unit: str = "", digits: int = 4, trim: bool = False) -> str:
    """A bare value with `digits` significant digits and a prefix: `0.02612` Ω -> `26.12 mΩ`; None -> `—`.

    `trim` drops trailing zeros, for a setting someone typed (2e-05 V -> `20 µV`, not `20.0000 µV`).
    """
    if not _finite(value):
        return "—"
    value = float(value)
    if value == 0.0:
        return f"0 {unit}".strip()
    power, symbol = _prefix(abs(value), unit)
    scaled = value / 10.0 ** power
    decimals = max(0, digits - 1 - math.floor(math.log10(abs(scaled))))
    text = f"{scaled:.{decimals}f}"
    if unit not in _NO_PREFIX and abs(float(text)) >= 1000.0 and power < PREFIXES[0][0]:
        # rounding reached the next prefix: 999.96 mV -> 1.000 V
        power += 3
        symbol = dict((p, s) for p, s in PREFIXES)[power]
        text = f"{value / 10.0 ** power:.{digits - 1}f}"
    if trim and "." in text:
        text = text.rstrip("0").rstrip(".")
    return f"{text} {symbol}{unit}".strip()


def coverage_text(k: float, coverage: float | None = None) -> str:
    """`k = 1.73, 95.45 % coverage` (GUM 7.2.4: U is stated with k and the coverage probability p it is for);
    without p, `k = 2` alone (a factor chosen, not derived from a distribution)."""
    if coverage is None:
        return f"k = {k:.3g}"
    return f"k = {k:.2f}, {coverage * 100:g} % coverage"


def measured(value: float | None, expanded_u: float | None, unit: str = "", k: float | None = 2.0,
             coverage: float | None = None) -> str:
    """`10.514 ± 0.012 mΩ (k = 1.73, 95.45 % coverage)`: the GUM 7.2.4 form with the coverage factor stated.

    `coverage` is the coverage probability U was expanded for (k then is k_p of that p); without it
    the factor is written alone, `(k = 2)`. Without a known uncertainty the value is written alone
    with "(no uncertainty)"; when U exceeds |value| the text ends "— not determined". `k=None` leaves
    the coverage factor out, for a table whose heading states it.
    """
    if not _finite(value):
        return "—"
    if not _finite(expanded_u) or float(expanded_u) <= 0.0:
        return f"{engineering(value, unit)} (no uncertainty)"
    r = round_together(float(value), float(expanded_u), unit)
    text = f"{r.value} ± {r.uncertainty} {r.unit_text}".rstrip() + (
        f" ({coverage_text(k, coverage)})" if k is not None else "")
    return text if r.determined else f"{text} — {NOT_DETERMINED}"


def with_standard(value: float | None, std_u: float | None, unit: str = "") -> str:
    """`100.02147 g (u = 0.00035 g)`: the GUM 7.2.2 form, value and standard uncertainty rounded together."""
    if not _finite(value):
        return "—"
    if not _finite(std_u) or float(std_u) <= 0.0:
        return f"{engineering(value, unit)} (no uncertainty)"
    r = round_together(float(value), float(std_u), unit)
    text = f"{r.value} {r.unit_text}".rstrip() + f" (u = {r.uncertainty} {r.unit_text})".replace(" )", ")")
    return text if r.determined else f"{text} — {NOT_DETERMINED}"


def margin(amount: float | None, unit: str, reference: str, *, digits: int = 1,
           under: str = "below", over: str = "above") -> str:
    """A distance from a limit in words, never a double negative: `21.0 K below Tj max`, `3.0 K above Tj max`."""
    if not _finite(amount):
        return f"— {unit} from {reference}"
    amount = float(amount)
    word = under if amount >= 0.0 else over
    return f"{abs(amount):.{digits}f} {unit} {word} {reference}"


#: The symbol a fitted or judged quantity is written with, by its JSON key (one table for CLI, UI and report).
LABELS = {
    "r_on_ohm": "R_on", "v0_v": "V0", "ideality": "n", "i_s_a": "Is", "r_s_ohm": "Rs", "v_knee_v": "V_knee",
    "r_d_ohm": "r_d", "drop_v": "Vf", "loss_w": "loss",
}


def label_of(key: str) -> str:
    """The symbol for a quantity's JSON key (`r_on_ohm` -> `R_on`); the key itself when none is known."""
    return LABELS.get(key, key)


def p_value(p: float | None) -> str:
    """A test's p-value in words: `p = 0.012`, and `p < 0.001` below that (common practice in reporting tests)."""
    if not _finite(p):
        return "p —"
    p = float(p)
    return "p < 0.001" if p < 0.001 else f"p = {p:.2g}"
