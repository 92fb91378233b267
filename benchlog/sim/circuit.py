"""The bench wiring, solved for one operating point.

    supply(+) -> element -> load(+) -> load(-) -> supply(-)

The meter senses across the element (Kelvin), so lead drops never reach it.
With the load input off the loop closes through the lead resistance (a small
fixed resistance, so the supply in CC can force the current itself); with the
load on in CC the load sets the current as long as the supply's limits allow,
and below its headroom it saturates to a small resistance.

The supply regulates whichever limit binds (CV/CC crossover): the loop
current is min(current limit, load setting, what the set voltage can drive).
Reversed polarity: the supply's voltage appears the other way round; the
element blocks (or a resistor conducts) and the load's input protection closes
the loop like the leads.
"""

from __future__ import annotations

from dataclasses import dataclass

from scipy.optimize import brentq

from benchlog.kinds import kind as element_kind

from .elements import Element


@dataclass(frozen=True)
class Drive:
    """What the instruments impose (actual values, programming errors already applied)."""

    output_on: bool
    inverted: bool
    voltage_v: float
    current_limit_a: float
    load_on: bool
    load_current_a: float
    lead_ohm: float
    load_min_ohm: float


@dataclass(frozen=True)
class OperatingPoint:
    current_a: float  # through the element, + = forward
    element_v: float  # across the element, input minus output (what the meter sees)
    supply_v: float  # magnitude at the supply's terminals
    load_v: float  # at the load's terminals, signed
    supply_mode: str  # "CV", "CC" or "OFF"
    vgs_v: float | None  # for a gate-driven element
    conduction: str

    @property
    def power_w(self) -> float:
        return self.current_a * self.element_v


OFF = OperatingPoint(0.0, 0.0, 0.0, 0.0, "OFF", None, "none")


def solve(element: Element, drive: Drive, junction_c: float) -> OperatingPoint:
    if not drive.output_on:
        return OFF
    if drive.inverted:
        return _solve_reverse(element, drive, junction_c)
    return _solve_forward(element, drive, junction_c)


def _vgs(element: Element, input_v: float, drop_v: float) -> float | None:
    if not element.gate_driven:
        return None
    return element.vgs_v(input_v, drop_v)  # type: ignore[attr-defined]


def _solve_forward(element: Element, drive: Drive, tj: float) -> OperatingPoint:
    v_set = max(0.0, drive.voltage_v)
    limit = max(0.0, drive.current_limit_a)
    r_path = drive.load_min_ohm if drive.load_on else drive.lead_ohm

    def saturated_total(i: float) -> float:
        # supply voltage needed to push i through the element and a passive path
        return element.forward_drop_v(i, tj, source_v=i * r_path) + i * r_path

    if v_set == 0.0 or limit == 0.0:
        return OperatingPoint(0.0, 0.0, 0.0, 0.0, "CV" if v_set == 0.0 else "CC", _vgs(element, 0.0, 0.0), "none")
    cap = min(limit, drive.load_current_a) if drive.load_on else limit
    if cap > 0 and saturated_total(cap) <= v_set:
        current = cap
        if drive.load_on and drive.load_current_a < limit:
            # the load holds its CC setting; the supply stays in CV at its set voltage
            drop = element.forward_drop_v(current, tj, input_v=v_set)
            return OperatingPoint(current, drop, v_set, v_set - drop, "CV", _vgs(element, v_set, drop),
                                  element.conduction(current, tj, _vgs(element, v_set, drop)))
        # the supply's current limit binds: CC, the voltage is what the loop needs
        drop = element.forward_drop_v(current, tj, source_v=current * r_path)
        supply_v = drop + current * r_path
        vgs = _vgs(element, supply_v, drop)
        return OperatingPoint(current, drop, supply_v, current * r_path if drive.load_on else 0.0, "CC", vgs,
                              element.conduction(current, tj, vgs))
    if cap <= 0:
        current = 0.0
    else:
        current = brentq(lambda i: saturated_total(i) - v_set, 0.0, cap, xtol=1e-15, rtol=1e-13)
    drop = element.forward_drop_v(current, tj, source_v=current * r_path)
    vgs = _vgs(element, v_set, drop)
    return OperatingPoint(current, drop, v_set, current * r_path if drive.load_on else 0.0, "CV", vgs,
                          element.conduction(current, tj, vgs))


def _solve_reverse(element: Element, drive: Drive, tj: float) -> OperatingPoint:
    v_set = max(0.0, drive.voltage_v)
    limit = max(0.0, drive.current_limit_a)
    r_path = drive.lead_ohm
    vgs = _vgs(element, -v_set, 0.0)

    def total(vr: float) -> float:
        return vr + element.reverse_current_a(vr, tj) * r_path

    if v_set == 0.0:
        return OperatingPoint(0.0, 0.0, 0.0, 0.0, "CV", vgs, "none")
    vr = brentq(lambda v: total(v) - v_set, 0.0, v_set, xtol=1e-15, rtol=1e-13)
    current = element.reverse_current_a(vr, tj)
    mode = "CV"
    if current > limit:
        mode = "CC"
        current = limit
        vr = brentq(lambda v: element.reverse_current_a(v, tj) - limit, 0.0, v_set, xtol=1e-15, rtol=1e-13)
    supply_v = vr + current * r_path
    return OperatingPoint(-current, -vr, supply_v, -current * r_path, mode, vgs,
                          "blocking" if element_kind(element.kind).blocks_reverse else "reverse")
