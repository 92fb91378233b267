"""The reverse-polarity result as a verdict: the recorded leakage against the limit at the test's voltage and temperature.

Limit: the spec's reverse leakage (a diode's IR at its stated voltage and
temperature, a MOSFET's IDSS), moved to the temperature of the test with the
exponential model I(T) = I(T0)·2^((T − T0)/ΔT_d): leakage doubles every ΔT_d
kelvin, the spec's `ir_doubling_k` or 10 K (common practice for Schottky and
silicon junctions) when the spec gives none. Voltage: leakage rises with the
reverse voltage, so a limit stated at a higher voltage than the test's is
applied as it is (a part above it at the lower test voltage would be above it at
the stated voltage too). A test above the stated voltage is outside what the
spec promises: the limit is scaled in proportion (`predict.reverse_leakage`)
and the result cannot pass. The plan's own `[reverse].max_current_a` is a limit
too; the tighter of the two decides, and the result says which.

Temperature of the test: the element's case temperature recorded on the points
(`measured`; with no forward current the junction sits at its case), else the
run's ambient (`assumed`). Decision rule: ILAC-G8:09/2019 §4.2.2 guard bands on
both sides. The reading's expanded uncertainty U = k_p·a/√3 comes from the reader's
accuracy on the reverse range (header `accuracy.reverse_current`; a/√3 is GUM
4.3.7), with k_p of that one rectangular term for 95.45 % coverage (√3·0.9545 =
1.653, GUM G.1.3; `coverage`), and the temperature's uncertainty (taken as normal:
k = 2 is its 95.45 %) moves the limit: pass needs I + U ≤ limit at T − 2u(T); fail
needs I − U > limit at T + 2u(T); between them the result is conditional. A run recorded before the header kept the reverse
accuracy is judged with U = 0 and says so.

A supply that could not hold the reverse voltage (the runner's `passed` false
with a current inside the plan's limit) means the element conducted: fail.
"""

from __future__ import annotations

from benchlog.quantity import engineering, measured

import math
from dataclasses import dataclass

import numpy as np

from benchlog.ambient import DEFAULT_AMBIENT_C

from .spec import DEFAULT_IR_DOUBLING_K, PartSpec

#: Standard uncertainty of the test temperature (ours): a case sensor next to the junction, or a plan's
#: ambient nobody measured at the element.
U_MEASURED_K = 1.0
U_ASSUMED_K = 2.0
K = 2.0

REVERSE_RULE = (f"pass if I + U ≤ limit at T − {K:g}·u(T); fail if I − U > limit at T + {K:g}·u(T) "
                f"(ILAC-G8:09/2019 guard bands, U = k_p·u(I) for 95.45 % coverage); otherwise conditional")

_RANK = {"pass": 0, "conditional": 1, "fail": 2}


def worse(*outcomes: str) -> str:
    """The worse of several outcomes: fail over conditional over pass."""
    return max(outcomes, key=lambda o: _RANK.get(o, 1))


@dataclass(frozen=True)
class ReverseVerdict:
    """The reverse step of a run judged against the spec (or the plan) at the test's temperature."""

    voltage_v: float
    duration_s: float
    current_a: float
    limit_a: float  # at the test's temperature (centre value)
    expanded_u_a: float | None  # U of the reading (95.45 % coverage), None when the run kept no reverse accuracy
    outcome: str
    limit_at: str  # the conditions and source of the limit, in words
    tj_c: float
    tj_u_c: float
    tj_source: str  # "measured" | "assumed"
    plan_limit_a: float
    spec_limit_a: float | None
    rule: str
    reason: str

    def text(self) -> str:
        return reverse_line(self.outcome, self.current_a, self.expanded_u_a, self.voltage_v, self.duration_s,
                            self.limit_a, self.limit_at, self.reason)


def reverse_line(outcome: str, current_a: float, expanded_u_a: float | None, voltage_v: float, duration_s: float,
                 limit_a: float, limit_at: str, reason: str) -> str:
    """The reverse verdict in one line (`fit` writes it from `--json`'s entry, `check` from the verdict)."""
    current = measured(current_a, expanded_u_a, "A", None) if expanded_u_a else engineering(current_a, "A")
    return (f"reverse {outcome.upper()}: {current} at {voltage_v:g} V reversed for {duration_s:g} s "
            f"against {engineering(limit_a, 'A', 3)} ({limit_at}); {reason}")


def reverse_test_temperature_c(points, meta) -> tuple[float, float, str]:
    """(T, u(T), source) of the reverse step: the last recorded case temperature, else the run's ambient."""
    from .case_temperature import measured_case_temperature

    case = measured_case_temperature(points, meta) if points is not None and meta is not None else None
    if case is not None:
        t = float(case.values_c[np.isfinite(case.values_c)][-1])
        return t, max(case.u_c or 0.0, U_MEASURED_K), "measured"
    ambient = meta.element.ambient_c if meta is not None else None
    if ambient is not None and math.isfinite(ambient):
        return float(ambient), U_ASSUMED_K, "assumed"
    return DEFAULT_AMBIENT_C, U_ASSUMED_K, "assumed"


def _spec_leakage(spec: PartSpec | None):
    """(value, at_v, at_c, doubling_k, doubling words, name) of the spec's reverse leakage, or None."""
    if spec is None or not spec.element.blocks_reverse:
        return None
    value, at_v, at_c, doubling = spec.part.leakage
    if value is None:
        return None
    words = "spec's doubling interval"
    if doubling is None:
        doubling, words = DEFAULT_IR_DOUBLING_K
    name = "IR max" if spec.part.family == "diode" else "IDSS"
    return value, at_v, at_c, doubling, words, name


def judge_reverse(record, spec: PartSpec | None = None, points=None, meta=None) -> ReverseVerdict | None:
    """The verdict of a run's reverse step (None when the run has none). Module docstring for the rule."""
    if record is None:
        return None
    t, u_t, source = reverse_test_temperature_c(points, meta)
    v, i = float(record.voltage_v), float(record.current_a)
    plan_limit = float(record.limit_a)
    leak = _spec_leakage(spec)
    spec_limit = lo = hi = None
    above_stated = False
    if leak is not None:
        value, at_v, at_c, doubling, words, name = leak
        scale = 1.0
        if at_v is not None and v > at_v:
            above_stated, scale = True, v / at_v

        def at(temp: float) -> float:
            return value * scale * 2.0 ** ((temp - at_c) / doubling)

        spec_limit, lo, hi = at(t), at(t - K * u_t), at(t + K * u_t)
        spec_words = (f"spec {name} {engineering(value, 'A', 3)} at {at_v:g} V, {at_c:g} °C, moved to {t:.1f} °C ({source}, "
                      f"u = {u_t:g} K) by doubling every {doubling:g} K ({words})")
        if above_stated:
            spec_words += f"; the test's {v:g} V is above the stated {at_v:g} V: scaled in proportion, cannot pass"
    if spec_limit is not None and spec_limit < plan_limit:
        limit, limit_at = spec_limit, spec_words
    else:
        limit, lo, hi = plan_limit, plan_limit, plan_limit
        limit_at = f"plan's [reverse].max_current_a {engineering(plan_limit, 'A', 3)}"
        if spec_limit is not None:
            limit_at += f" (tighter than the {engineering(spec_limit, 'A', 3)} of the {spec_words})"
        elif spec is not None:
            limit_at += "; the spec gives no reverse leakage"
    big_u = reading_expanded_u_a(meta, i)
    u = big_u or 0.0
    held = bool(record.passed) or i > plan_limit  # not passed and within the plan's limit: voltage not held
    if not held:
        outcome, reason = "fail", (f"the supply could not hold {v:g} V reversed: the element conducts in reverse")
    elif not math.isfinite(i) or i - u > hi:
        outcome, reason = "fail", f"{engineering(i, 'A', 3)} − U is above the limit even at the warm end ({engineering(hi, 'A', 3)})"
    elif i + u <= lo and not above_stated:
        outcome, reason = "pass", f"{engineering(i, 'A', 3)} + U is within the limit even at the cool end ({engineering(lo, 'A', 3)})"
    elif above_stated:
        outcome, reason = "conditional", "tested above the voltage the spec's limit is stated at"
    else:
        outcome, reason = "conditional", (f"{engineering(i, 'A', 3)} ± U overlaps the limit between the cool and warm ends of the "
                                          f"test temperature ({engineering(lo, 'A', 3)} to {engineering(hi, 'A', 3)})")
    if big_u is None:
        reason += "; the run kept no accuracy for the reverse reading: judged with U = 0"
    return ReverseVerdict(v, float(record.duration_s), i, float(limit), big_u, outcome, limit_at, t, u_t, source,
                          plan_limit, spec_limit, REVERSE_RULE, reason)


def reading_expanded_u_a(meta, current_a: float) -> float | None:
    """U of the reverse reading from header `accuracy.reverse_current`: k_p·a/√3 (GUM 4.3.7, G.1.3), k_p that of
    one rectangular term for 95.45 % coverage; None without it."""
    from .coverage import COVERAGE_P, coverage_factor

    accuracy = meta.header.accuracy.reverse_current if meta is not None else None
    if accuracy is None:
        return None
    a = accuracy.half_width(current_a)
    if not (math.isfinite(a) and a >= 0):
        return None
    u = a / math.sqrt(3.0)
    return coverage_factor([("rectangular", u, math.inf)], COVERAGE_P) * u if u > 0 else 0.0


def reverse_entry(r: ReverseVerdict | None) -> dict | None:
    """The `reverse` object of `--json` output (null when the run has no reverse step)."""
    if r is None:
        return None
    return {"voltage_v": r.voltage_v, "current_a": r.current_a, "limit_a": r.limit_a, "verdict": r.outcome,
            "expanded_u_a": r.expanded_u_a,
            "duration_s": r.duration_s, "limit_at": r.limit_at, "tj_c": r.tj_c, "tj_u_c": r.tj_u_c,
            "tj_source": r.tj_source, "plan_limit_a": r.plan_limit_a, "spec_limit_a": r.spec_limit_a,
            "rule": r.rule, "reason": r.reason}
