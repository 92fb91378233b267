"""Checks made before any output is switched on: can this wiring measure what the plan asks, within every range?

A refusal is `BadInput` naming the plan or bench key to change and why, so the
operator fixes the setup instead of recording a curve of the wrong thing.
"""

from __future__ import annotations

import math
from typing import Any

from benchlog.badinput import BadInput
from benchlog.kinds import MIN_ENHANCE_V, kind as element_kind

from .bench_file import BenchSetup
from .plan import Plan
from .rig import Rig, reverse_resolution_a

#: The least voltages (forward conduction, gate enhancement) are the registry's
#: data (benchlog.kinds: ElementKind.min_forward_v_for, MIN_ENHANCE_V); the rules are here.


def check_plan_on_bench(plan: Plan, bench: BenchSetup) -> list[str]:
    """Static checks from the two files; returns warnings, raises BadInput for a refusal."""
    warnings: list[str] = []
    e, w, lim = plan.element, bench.wiring, plan.limits
    k = element_kind(e.kind)
    floor = k.min_forward_v_for(e.measure)
    gate_on_supply = e.gate_on_supply and e.measure == "channel"
    if gate_on_supply and w.force == "supply":
        raise BadInput(
            bench.source, "[wiring].force",
            f"a {k.title} with its gate tied to {k.gate_to}, forced by the supply into a near-short, "
            "cannot enhance (|V_GS| is only the element drop), so its body diode would be measured instead",
            "force = 'load' with input_v above the gate threshold, [element].gate = 'driven', or "
            "[element].measure = 'body_diode' to measure the body diode on purpose",
        )
    if plan.input is not None and w.force != "load":
        raise BadInput(bench.source, "[wiring].force", "is 'supply', but the plan sweeps the input voltage ([input])",
                       "force = 'load': the supply holds each input voltage while the load sets the current")
    if w.force == "supply":
        if lim.compliance_v is None:
            raise BadInput(plan.source, "[limits].compliance_v", "is missing",
                           "the supply voltage limit when the supply forces the current (force = 'supply')")
        if lim.compliance_v < floor:
            raise BadInput(plan.source, "[limits].compliance_v",
                           f"is {lim.compliance_v:g} V, below the {floor:g} V a {e.kind} needs before any "
                           "forward current flows: the supply would leave CC at once",
                           f"a compliance above {floor:g} V and above the expected drop")
    elif plan.input is not None:
        _check_input_sweep(plan, bench, floor, gate_on_supply, warnings)
    else:
        if lim.compliance_v is not None and w.input_v > lim.compliance_v:
            raise BadInput(bench.source, "[wiring].input_v",
                           f"is {w.input_v:g} V, above the plan's compliance_v {lim.compliance_v:g} V",
                           "an input voltage within [limits].compliance_v")
        if w.input_v <= floor:
            raise BadInput(bench.source, "[wiring].input_v",
                           f"is {w.input_v:g} V, not enough to drive current through a {e.kind}",
                           f"an input voltage well above {floor:g} V")
        if gate_on_supply:
            if e.zener_v is not None and e.zener_v < MIN_ENHANCE_V:
                warnings.append(f"the gate clamp zener ({e.zener_v:g} V) limits |V_GS| below "
                                f"{MIN_ENHANCE_V:g} V: the channel may not enhance fully")
            if w.input_v < MIN_ENHANCE_V:
                raise BadInput(bench.source, "[wiring].input_v",
                               f"is {w.input_v:g} V: with the gate on {k.gate_to}, |V_GS| = input_v is too low "
                               "to enhance the channel, so the body diode would carry the current",
                               f"at least {MIN_ENHANCE_V:g} V")
    if plan.reverse is not None and plan.reverse.voltage_v > 0 and w.force == "load":
        warnings.append("reverse step: the load's input is off during the reverse step; the reverse "
                        "current is read from the supply")
    return warnings


def _check_input_sweep(plan: Plan, bench: BenchSetup, floor: float, gate_on_supply: bool,
                       warnings: list[str]) -> None:
    """An input-voltage sweep: the load wiring only (the supply holds each input), each input within the limits."""
    w, lim, e = bench.wiring, plan.limits, plan.element
    for i, v in enumerate(plan.input.voltages_v):
        if lim.compliance_v is not None and v > lim.compliance_v:
            raise BadInput(plan.source, f"[input].voltages_v[{i}]",
                           f"is {v:g} V, above the plan's compliance_v {lim.compliance_v:g} V",
                           "input voltages within [limits].compliance_v")
        if v <= floor:
            raise BadInput(plan.source, f"[input].voltages_v[{i}]",
                           f"is {v:g} V, not enough to drive current through a {e.kind}",
                           f"input voltages well above {floor:g} V")
    if gate_on_supply and min(plan.input.voltages_v) < MIN_ENHANCE_V:
        warnings.append(f"input sweep: below about {MIN_ENHANCE_V:g} V input the channel may not enhance and the "
                        "body diode carries the current, at a far higher loss: keep max_power_w and max_drop_v "
                        "set for the body diode")
    if w.input_v not in plan.input.voltages_v:
        warnings.append(f"input sweep: the bench file's input_v {w.input_v:g} V is not used; the supply holds "
                        "each of [input].voltages_v in turn")


def check_plan_on_rig(plan: Plan, rig: Rig) -> list[str]:
    """Checks against the opened instruments' profiles: every setpoint and setting inside their ranges."""
    warnings: list[str] = []
    lim, w, bench = plan.limits, rig.wiring, rig.setup
    sup = rig.supply.profile
    s_lim = sup.limits
    if w.force == "supply":
        if s_lim.max_current_a is not None and lim.max_current_a > s_lim.max_current_a:
            raise _over(plan, "[limits].max_current_a", lim.max_current_a, "A", sup, s_lim.max_current_a)
        if s_lim.max_voltage_v is not None and lim.compliance_v > s_lim.max_voltage_v:
            raise _over(plan, "[limits].compliance_v", lim.compliance_v, "V", sup, s_lim.max_voltage_v)
    else:
        if s_lim.max_voltage_v is not None and w.input_v > s_lim.max_voltage_v:
            raise BadInput(bench.source, "[wiring].input_v", f"is {w.input_v:g} V, above the supply profile "
                           f"{sup.name!r} maximum {s_lim.max_voltage_v:g} V", "an input voltage the supply can set")
        if s_lim.max_current_a is not None and lim.max_current_a > s_lim.max_current_a:
            raise _over(plan, "[limits].max_current_a", lim.max_current_a, "A", sup, s_lim.max_current_a)
        load = rig.load.profile
        if load.limits.max_current_a is not None and lim.max_current_a > load.limits.max_current_a:
            raise _over(plan, "[limits].max_current_a", lim.max_current_a, "A", load, load.limits.max_current_a)
        if load.limits.max_voltage_v is not None and w.input_v > load.limits.max_voltage_v:
            raise BadInput(bench.source, "[wiring].input_v", f"is {w.input_v:g} V, above the load profile "
                           f"{load.name!r} maximum {load.limits.max_voltage_v:g} V", "an input the load can take")
    from .protection import protection_warning

    unprotected = protection_warning(rig)
    if unprotected:
        warnings.append(unprotected)
    meter = rig.meter.profile
    ranges = tuple(meter.limits.voltage_ranges_v)
    if plan.meter.range_v is not None and ranges and not any(math.isclose(plan.meter.range_v, r, rel_tol=1e-9) for r in ranges):
        raise BadInput(plan.source, "[meter].range_v", f"is {plan.meter.range_v:g} V, not a range of meter profile "
                       f"{meter.name!r}", "one of " + ", ".join(f"{r:g}" for r in ranges))
    if plan.limits.max_drop_v is not None and ranges and plan.limits.max_drop_v > max(ranges):
        warnings.append(f"max_drop_v {plan.limits.max_drop_v:g} V is above the meter's largest range; "
                        "an overload reading stops the sweep first")
    for role_name, role in (("meter", rig.meter), ("current_meter", rig.current_meter)):
        if role is None:
            continue
        ml = role.profile.limits
        if plan.meter.samples > ml.max_samples:
            raise BadInput(plan.source, "[meter].samples", f"is {plan.meter.samples}, more than the {role_name} "
                           f"profile {role.profile.name!r} takes ({ml.max_samples})",
                           f"at most {ml.max_samples}, or average with [settle].consecutive instead")
        warnings += _check_nplc(plan, role_name, role.profile)
    if w.current_from == "meter" and rig.current_meter is not None:
        if not rig.current_meter.profile.has("configure_current"):
            raise BadInput(bench.source, "[wiring].current_from", "is 'meter', but the current_meter profile "
                           f"{rig.current_meter.profile.name!r} has no DC current function",
                           "current_from = 'shunt' with shunt_ohm, or a meter profile with configure_current")
    if plan.reverse is not None:
        if not rig.supply.can_reverse:
            raise BadInput(plan.source, "[reverse]",
                           f"needs a supply that can reverse its polarity, but profile {sup.name!r} has no "
                           "polarity_normal / polarity_reversed commands",
                           "a supply profile with polarity commands (or a polarity relay it drives), "
                           "or no [reverse] table")
        if s_lim.max_voltage_v is not None and plan.reverse.voltage_v > s_lim.max_voltage_v:
            raise _over(plan, "[reverse].voltage_v", plan.reverse.voltage_v, "V", sup, s_lim.max_voltage_v)
        resolution_a, reader = reverse_resolution_a(rig, plan)
        if plan.reverse.max_current_a <= 2 * resolution_a:
            raise BadInput(plan.source, "[reverse].max_current_a",
                           f"is {plan.reverse.max_current_a:g} A, within twice the ±{resolution_a:g} A zero error of "
                           f"the {reader}: the reverse test could not tell a pass from a fail",
                           "a current meter in series (current_from = 'meter' or 'shunt') or a higher limit")
    return warnings


def _check_nplc(plan: Plan, role_name: str, profile: Any) -> list[str]:
    ml = profile.limits
    nplc = plan.meter.nplc
    if not getattr(profile, "sets_nplc", True):
        return [f"the {role_name} profile {profile.name!r} has no NPLC command: [meter].nplc = {nplc:g} cannot be "
                "set, the meter integrates at its own setting (not recorded in the run)"]
    if ml.nplc_choices:
        if not any(math.isclose(nplc, c, rel_tol=1e-9) for c in ml.nplc_choices):
            raise BadInput(plan.source, "[meter].nplc", f"is {nplc:g}, not offered by the {role_name} profile "
                           f"{profile.name!r}", "one of " + ", ".join(f"{c:g}" for c in ml.nplc_choices))
    elif ml.nplc_min is not None and not (ml.nplc_min <= nplc <= ml.nplc_max):
        raise BadInput(plan.source, "[meter].nplc", f"is {nplc:g}, outside the {role_name} profile "
                       f"{profile.name!r} range", f"{ml.nplc_min:g} to {ml.nplc_max:g}")
    return []


def _over(plan: Plan, where: str, value: float, unit: str, profile: Any, most: float) -> BadInput:
    return BadInput(plan.source, where, f"is {value:g} {unit}, above what profile {profile.name!r} allows "
                    f"({most:g} {unit})", f"at most {most:g} {unit}, or another instrument")
