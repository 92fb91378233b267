"""A reverse-leakage sweep: leakage against reverse voltage, judged per voltage; for a Schottky, hot leakage and runaway.

Per voltage the limit is the plan's `[reverse].max_current_a`, or the spec's
leakage moved to the recorded temperature when that is tighter
(`predict.reverse_leakage`: the doubling model, and at or below the spec's test
voltage the spec's value as it stands).

Leakage at Tj max — a model, named in every result: reverse leakage doubles
every ΔT_d kelvin, I_R(T) = I_R(T_rec)·2^((T − T_rec)/ΔT_d), with ΔT_d the spec's
`ir_doubling_k` or 10 K ("doubles every ~10 K", common practice for Schottky
barriers), applied to the reading at the highest voltage that passed.

Thermal runaway of the leakage itself: the blocking element dissipates
P(Tj) = V·I_R(Tj), and Tj = Ta + Rθ·P(Tj) (the spec's RθJA). The loop is solved
by fixed-point iteration from Tj = Ta; it is stable while the loop gain
g = Rθ·dP/dTj = Rθ·P·ln2/ΔT_d stays below 1, and runs away when g ≥ 1 or the
iteration does not settle. The highest ambient with a stable solution is found by
bisection (its closed form, for this exponential model, is in the tests).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .spec import DEFAULT_IR_DOUBLING_K

#: The iteration gives up (runaway) above this junction temperature.
RUNAWAY_TJ_C = 400.0
MAX_ITERATIONS = 10_000


@dataclass(frozen=True)
class LeakagePoint:
    voltage_v: float
    current_a: float
    limit_a: float
    limit_source: str  # "plan" | "spec"
    passed: bool  # within the limit and the supply held the voltage


@dataclass(frozen=True)
class RunawayCheck:
    reverse_v: float
    ambient_c: float
    rth_k_per_w: float
    tj_c: float | None  # None: no stable solution (runaway)
    power_w: float | None
    loop_gain: float | None  # Rθ·dP/dTj at the solution
    runaway: bool
    critical_ambient_c: float | None  # the highest ambient with a stable solution
    text: str


@dataclass(frozen=True)
class LeakageSweep:
    points: tuple[LeakagePoint, ...]
    temperature_c: float
    temperature_source: str
    outcome: str  # "pass" | "fail"
    hot_a: float | None = None  # the leakage at Tj max by the doubling model
    hot_tj_c: float | None = None
    hot_model: str = ""
    runaway: RunawayCheck | None = None
    notes: tuple[str, ...] = ()


def doubling_model(spec) -> tuple[float, str]:
    """ΔT_d and the model's name in words."""
    value = None if spec is None else spec.part.leakage[3]
    if value is None:
        value, _why = DEFAULT_IR_DOUBLING_K
        return value, f"reverse leakage doubles every ~{value:g} K (common practice)"
    return value, f"reverse leakage doubles every {value:g} K (the spec's ir_doubling_k)"


def solve_leakage_loop(i_ref_a: float, t_ref_c: float, doubling_k: float, reverse_v: float, ambient_c: float,
                       rth_k_per_w: float) -> tuple[float | None, int]:
    """Tj of P = V·I_R(Tj) through Rθ by fixed-point iteration from Ta; (None, n) when it runs away."""
    tj = ambient_c
    for n in range(1, MAX_ITERATIONS + 1):
        new = ambient_c + rth_k_per_w * reverse_v * i_ref_a * 2.0 ** ((tj - t_ref_c) / doubling_k)
        if not math.isfinite(new) or new > RUNAWAY_TJ_C:
            return None, n
        if abs(new - tj) < 1e-9:
            return new, n
        tj = new
    return None, MAX_ITERATIONS


def runaway_check(i_ref_a: float, t_ref_c: float, doubling_k: float, reverse_v: float, ambient_c: float,
                  rth_k_per_w: float) -> RunawayCheck:
    tj, _n = solve_leakage_loop(i_ref_a, t_ref_c, doubling_k, reverse_v, ambient_c, rth_k_per_w)
    gain = power = None
    if tj is not None:
        power = reverse_v * i_ref_a * 2.0 ** ((tj - t_ref_c) / doubling_k)
        gain = rth_k_per_w * power * math.log(2.0) / doubling_k
    runaway = tj is None or (gain is not None and gain >= 1.0)
    lo, hi = -60.0, RUNAWAY_TJ_C
    if solve_leakage_loop(i_ref_a, t_ref_c, doubling_k, reverse_v, lo, rth_k_per_w)[0] is None:
        critical = None
    else:
        while hi - lo > 0.01:
            mid = 0.5 * (lo + hi)
            if solve_leakage_loop(i_ref_a, t_ref_c, doubling_k, reverse_v, mid, rth_k_per_w)[0] is None:
                hi = mid
            else:
                lo = mid
        critical = lo
    where = f"{reverse_v:g} V reversed, {ambient_c:g} °C ambient, Rθ {rth_k_per_w:g} K/W"
    if runaway:
        text = f"thermal runaway of the leakage at {where}: no stable junction temperature"
    else:
        text = (f"stable at {where}: Tj {tj:.1f} °C, {power * 1e3:.3g} mW, loop gain Rθ·dP/dTj {gain:.2g} (< 1)")
    if critical is not None:
        text += f"; runs away above about {critical:.0f} °C ambient"
    return RunawayCheck(reverse_v, ambient_c, rth_k_per_w, tj, power, gain, runaway, critical, text)


def analyse_leakage(results, temperature_c: float, temperature_source: str, *, spec=None,
                    ambient_c: float | None = None) -> LeakageSweep | None:
    """Judge the reverse records of a run (`ReverseResult`s in the order taken); None without any."""
    results = list(results)
    if not results:
        return None
    notes: list[str] = []
    rows: list[LeakagePoint] = []
    for r in results:
        limit, source = r.limit_a, "plan"
        if spec is not None and spec.element.blocks_reverse:
            from .predict import reverse_leakage

            leak = reverse_leakage(spec, r.voltage_v, temperature_c)
            if leak.current_a is not None and leak.current_a < limit:
                limit, source = leak.current_a, "spec"
        rows.append(LeakagePoint(r.voltage_v, r.current_a, limit, source,
                                 bool(r.passed) and r.current_a <= limit))
    outcome = "pass" if all(p.passed for p in rows) else "fail"
    hot = hot_tj = None
    model = ""
    runaway = None
    if spec is not None and spec.element.blocks_reverse:
        doubling, model = doubling_model(spec)
        good = [p for p in rows if p.passed and p.current_a > 0]
        ref = max(good, key=lambda p: p.voltage_v) if good else None
        tj_max = spec.thermal.tj_max_c
        if ref is not None and tj_max is not None:
            hot_tj = tj_max
            hot = ref.current_a * 2.0 ** ((tj_max - temperature_c) / doubling)
        rth = spec.thermal.rth_ja_k_per_w
        if ref is not None and rth is not None:
            runaway = runaway_check(ref.current_a, temperature_c, doubling, ref.voltage_v,
                                    temperature_c if ambient_c is None else ambient_c, rth)
            if runaway.runaway:
                outcome = "fail"
        elif ref is not None:
            notes.append("the spec gives no rth_ja_k_per_w: no runaway check")
    return LeakageSweep(tuple(rows), temperature_c, temperature_source, outcome, hot, hot_tj, model, runaway,
                        tuple(notes))


def run_temperature(frame, meta) -> tuple[float, str]:
    """The temperature the leakage was recorded at: the points' recorded temperature, else the element's ambient."""
    import numpy as np

    from .columns import column

    t = column(frame, "temperature_c") if frame is not None else None
    if t is not None:
        t = t[np.isfinite(t)]
        if t.size:
            return float(t[-1]), "measured (the last recorded point temperature)"
    ambient = meta.element.ambient_c
    if isinstance(ambient, (int, float)) and not isinstance(ambient, bool) and math.isfinite(ambient):
        return float(ambient), "assumed (the plan's ambient; no temperature recorded)"
    return 25.0, "assumed (25 °C; no temperature or ambient recorded)"


def leakage_entry(s: LeakageSweep | None) -> dict | None:
    """The JSON form (SI keys)."""
    if s is None:
        return None
    r = s.runaway
    return {
        "leakage": [{"voltage_v": p.voltage_v, "current_a": p.current_a, "limit_a": p.limit_a,
                     "limit_source": p.limit_source, "passed": p.passed} for p in s.points],
        "temperature_c": s.temperature_c, "temperature_source": s.temperature_source, "outcome": s.outcome,
        "hot_a": s.hot_a, "hot_tj_c": s.hot_tj_c, "hot_model": s.hot_model,
        "runaway": None if r is None else {
            "reverse_v": r.reverse_v, "ambient_c": r.ambient_c, "rth_k_per_w": r.rth_k_per_w, "tj_c": r.tj_c,
            "power_w": r.power_w, "loop_gain": r.loop_gain, "runaway": r.runaway,
            "critical_ambient_c": r.critical_ambient_c, "text": r.text},
        "notes": list(s.notes),
    }


__all__ = ["LeakagePoint", "LeakageSweep", "RunawayCheck", "analyse_leakage", "runaway_check",
           "solve_leakage_loop", "doubling_model", "run_temperature", "leakage_entry"]
