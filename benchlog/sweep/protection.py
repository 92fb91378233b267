"""The instrument's own protection as a second line of defence, programmed from the plan's limits.

benchlog stops a sweep on its own limits, but only between readings and only while
it runs. A supply's over-voltage and over-current protection act inside the
instrument, at once, even if benchlog or its link dies; an output timer switches
the output off after a fixed time with nothing else working. They are programmed
with the output off, before the first output-on, where the supply profile has the
operations (`over_voltage_protection`, `over_current_protection`, `output_timer`).
An electronic load's own protection on its input is programmed the same way, with
its input off, where the load profile has the operations (`over_current_protection`,
`over_power_protection`, `over_voltage_protection`: whichever it offers).

The levels sit a margin above the highest setting the sweep itself programs, so
ordinary regulation and read-back error never trip them: a trip means something
went wrong (common practice: set protection about 10 % above the working level).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from .plan import Plan

#: Protection levels sit this fraction above the highest voltage / current the sweep programs.
PROTECTION_MARGIN = 0.10
#: The output timer allows the plan's max_time_s this many times over, plus TIMER_EXTRA_S, so that
#: benchlog's own time limit, the cool-downs and the reverse step always come first.
TIMER_FACTOR = 1.5
TIMER_EXTRA_S = 60.0


def _at_most(level: float | None, most: float | None) -> float | None:
    """A protection level capped at what the instrument's profile says it can be set to (None: not set / no cap)."""
    return level if level is None or most is None else min(level, most)


@dataclass(frozen=True)
class ProtectionLevels:
    """What the supply's own protection is set to (None: not set from this plan)."""

    over_voltage_v: float | None
    over_current_a: float | None
    timer_s: float | None


def protection_levels(plan: Plan, rig: Any) -> ProtectionLevels:
    """Levels from the plan's limits and the wiring, capped at the supply profile's own maxima."""
    from .rig import supply_limit_for_load_wiring

    wiring, lim = rig.wiring, plan.limits
    profile = rig.supply.profile
    volts = [lim.compliance_v if wiring.force == "supply" else wiring.input_v]
    if plan.input is not None and wiring.force == "load":
        volts = [max(plan.input.voltages_v)]  # the highest input of the sweep, not the bench file's
    if plan.reverse is not None:
        volts.append(plan.reverse.voltage_v)
    volts = [v for v in volts if v is not None]
    amps = lim.max_current_a if wiring.force == "supply" else supply_limit_for_load_wiring(plan, profile)
    ovp = max(volts) * (1 + PROTECTION_MARGIN) if volts else None
    ocp = amps * (1 + PROTECTION_MARGIN) if amps else None
    most_v, most_a = profile.limits.max_voltage_v, profile.limits.max_current_a
    ovp, ocp = _at_most(ovp, most_v), _at_most(ocp, most_a)
    timer = lim.max_time_s * TIMER_FACTOR + TIMER_EXTRA_S if lim.max_time_s is not None else None
    return ProtectionLevels(ovp, ocp, timer)


@dataclass(frozen=True)
class LoadProtectionLevels:
    """What the electronic load's own input protection is set to (None: not set from this plan)."""

    over_current_a: float | None
    over_power_w: float | None
    over_voltage_v: float | None


def load_protection_levels(plan: Plan, rig: Any) -> LoadProtectionLevels:
    """Levels for the load's input from the plan's limits and the wiring, capped at the load profile's maxima.

    Programmed in the load wiring only (there the load carries the element current). The
    load never carries more than the plan's max_current_a (the heat-soak's current is held
    below it too) and its input never sees more than the supply's input voltage (the highest
    input of an input-voltage sweep); the power is the product of the two, the most the sweep
    can put into the load.
    """
    wiring, lim = rig.wiring, plan.limits
    profile = rig.load.profile
    volts = max(plan.input.voltages_v) if plan.input is not None else wiring.input_v
    amps = lim.max_current_a
    ocp = amps * (1 + PROTECTION_MARGIN)
    ovp = volts * (1 + PROTECTION_MARGIN) if volts else None
    opp = volts * amps * (1 + PROTECTION_MARGIN) if volts else None
    most_v, most_a = profile.limits.max_voltage_v, profile.limits.max_current_a
    most_w = most_v * most_a if most_v is not None and most_a is not None else None
    ocp, ovp, opp = _at_most(ocp, most_a), _at_most(ovp, most_v), _at_most(opp, most_w)
    return LoadProtectionLevels(ocp, opp, ovp)


def program_protection(rig: Any, plan: Plan) -> list[str]:
    """Program the supply's and the load's own protection where their profiles can; one note per instrument."""
    notes: list[str] = []
    supply = rig.supply
    program = getattr(supply, "program_protection", None)
    if program is not None and getattr(supply, "protection_operations", ()):
        levels = protection_levels(plan, rig)
        done = program(over_voltage_v=levels.over_voltage_v, over_current_a=levels.over_current_a,
                       timer_s=levels.timer_s)
        if done:
            notes.append(f"supply protection set before power-on: {', '.join(done)}")
    load = getattr(rig, "load", None) if rig.wiring.force == "load" else None  # only a load that carries current
    program = getattr(load, "program_protection", None)
    if program is not None and getattr(load, "protection_operations", ()):
        levels = load_protection_levels(plan, rig)
        done = program(over_current_a=levels.over_current_a, over_power_w=levels.over_power_w,
                       over_voltage_v=levels.over_voltage_v)
        if done:
            notes.append(f"load protection set before input-on: {', '.join(done)}")
    return notes


def protection_warning(rig: Any) -> str | None:
    """The plan check's note when a power profile cannot program the instrument's own protection."""
    lines: list[str] = []
    ops = getattr(rig.supply, "protection_operations", None)
    if ops is not None:
        missing = [name for name in ("over_voltage_protection", "over_current_protection") if name not in ops]
        if missing:
            name = getattr(rig.supply.profile, "name", "?")
            lines.append(f"supply profile {name!r} has no {' or '.join(missing)} operation")
    load = getattr(rig, "load", None)
    wiring = getattr(rig, "wiring", None)
    ops = getattr(load, "protection_operations", None)
    if ops is not None and not ops and getattr(wiring, "force", "load") == "load":
        name = getattr(load.profile, "name", "?")
        lines.append(f"load profile {name!r} has no over_current_protection, over_power_protection or "
                     "over_voltage_protection operation")
    if not lines:
        return None
    return ("; ".join(lines) + ": the instrument's own protection is not programmed there, only benchlog's "
            "limits guard this sweep")
