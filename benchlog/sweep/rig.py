"""The connected bench, wired as the bench file says: set the element current, read drop and current.

Two ways to force the current (Kelvin sense: the meter reads the drop at the
element's own terminals, so lead resistance stays out of the reading):

* force = "supply": the element sits across the supply; the supply's voltage is
  set to the plan's compliance and its current limit to the step, so it runs in
  CC and the current is the setpoint. Leaving CC (into CV) means the element
  needs more voltage than the compliance allows.
* force = "load": the supply holds the input voltage in CV (its current limit at
  the plan's max current), the element sits between supply and an electronic
  load in CC mode, the load sets the current. This is how the element sits on a
  board, so a P-MOSFET with its gate on the return sees V_GS = -input_v.

The current is read back from the supply, from the load, from a second meter in
DC current mode, or from a shunt's voltage read by that second meter.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable

from benchlog.instruments.contract import LoadRole, MeterRole, SupplyRole, TemperatureProbeRole
from benchlog.instruments.profile import Profile

from benchlog.accuracy import Accuracy, MeasurementAccuracy

from .bench_file import BenchSetup, Wiring
from .plan import Plan

BenchRole = SupplyRole | LoadRole | MeterRole | TemperatureProbeRole


@dataclass
class Rig:
    """The opened roles of one bench; tests may pass any object that keeps the bench contract."""

    setup: BenchSetup
    meter: MeterRole
    supply: SupplyRole
    load: LoadRole | None = None
    current_meter: MeterRole | None = None
    sensor: TemperatureProbeRole | None = None  # a meter whose probe sits on the element (bench [sensor])
    #: role name -> range the meter was configured on, filled by `configure`
    ranges: dict[str, float] = field(default_factory=dict)

    @property
    def wiring(self) -> Wiring:
        return self.setup.wiring

    def roles(self) -> tuple[BenchRole, ...]:
        """Every opened role, the power sources first (the order the safe state reaches them)."""
        return tuple(r for r in (self.supply, self.load, self.meter, self.current_meter, self.sensor)
                     if r is not None)

    def named_roles(self) -> dict[str, BenchRole]:
        named = {"supply": self.supply, "load": self.load, "meter": self.meter, "current_meter": self.current_meter,
                 "sensor": self.sensor}
        return {k: v for k, v in named.items() if v is not None}

    def close(self) -> None:
        close_roles(self.roles())

    # -- configuration (no power) -------------------------------------------
    def configure(self, plan: Plan, first_setpoint_a: float) -> None:
        """Put every instrument in its measuring state with the outputs still off."""
        w = self.wiring
        m = plan.meter
        drop_range = drop_range_v(plan, self.meter.profile)
        self.meter.configure_voltage(drop_range, m.nplc)
        if m.samples > 1 or self.meter.profile.has("set_samples"):
            self.meter.set_samples(m.samples)
        self.ranges["meter"] = drop_range
        if self.current_meter is not None and w.current_from in ("meter", "shunt"):
            if w.current_from == "meter":
                rng = current_range_a(plan, self.current_meter.profile)
                self.current_meter.configure_current(rng, m.nplc)
            else:
                rng = shunt_range_v(plan, w, self.current_meter.profile)
                self.current_meter.configure_voltage(rng, m.nplc)
            if m.samples > 1 or self.current_meter.profile.has("set_samples"):
                self.current_meter.set_samples(m.samples)
            self.ranges["current_meter"] = rng
        if self.sensor is not None:
            self.sensor.configure_temperature()
        supply = self.supply
        supply.set_output(False)
        if w.force == "supply":
            supply.set_voltage(plan.limits.compliance_v)
            supply.set_current_limit(first_setpoint_a)
            if self.load is not None:
                self.load.set_input(False)
        else:
            supply.set_voltage(w.input_v)
            supply.set_current_limit(supply_limit_for_load_wiring(plan, supply.profile))
            load = self._forcing_load()
            load.set_input(False)  # the load is put in CC when it connects (its profile's set_mode_cc)
            load.set_current(first_setpoint_a)

    def _forcing_load(self) -> LoadRole:
        if self.load is None:  # the bench file reader refuses force = "load" without a [load]
            raise ValueError("force = 'load' needs a load role")
        return self.load

    def _current_meter(self) -> MeterRole:
        if self.current_meter is None:  # the bench file reader refuses this wiring without one
            raise ValueError(f"current_from = {self.wiring.current_from!r} needs a current_meter role")
        return self.current_meter

    def check_errors(self, after: str) -> None:
        """Drain every role's error queue (a checkpoint, not a per-point query)."""
        for role in self.roles():
            role.check_new_errors(after)  # a queue read empty with nothing sent since holds no news

    # -- power ---------------------------------------------------------------
    def power_on(self) -> None:
        self.supply.set_output(True)
        if self.wiring.force == "load":
            self._forcing_load().set_input(True)

    def element_off(self) -> None:
        """Stop the element current (cool-down): the forcing instrument off, the rest as it was."""
        if self.wiring.force == "supply":
            self.supply.set_output(False)
        else:
            self._forcing_load().set_input(False)

    def element_on(self) -> None:
        if self.wiring.force == "supply":
            self.supply.set_output(True)
        else:
            self._forcing_load().set_input(True)

    def set_current(self, current_a: float) -> None:
        """Set the element current; returns once the forcing instrument reports it applied.

        The meter sits on its own link, and links are not ordered with each other: without
        the sync a reading could still see the previous step's current (the dwell then
        starts from a setpoint that is not yet there). Switching on needs no extra sync:
        `set_output(True)` / `set_input(True)` read the error queue on the same link after
        the command, and an instrument answers its queries in order.
        """
        if self.wiring.force == "supply":
            self.supply.set_current_limit(current_a)
            self.supply.sync()
        else:
            load = self._forcing_load()
            load.set_current(current_a)
            load.sync()

    # -- readings ------------------------------------------------------------
    def read_drop(self) -> tuple[float | None, ...]:
        return self.meter.read()

    def read_current(self) -> float | None:
        """The element current from the source the bench file names (None: overload)."""
        source = self.wiring.current_from
        if source == "supply":
            return self.supply.measure_current()
        if source == "load":
            return self._forcing_load().measure_current()
        samples = self._current_meter().read()
        if not samples or any(s is None for s in samples):
            return None
        value = sum(samples) / len(samples)
        return value if source == "meter" else value / self.wiring.shunt_ohm

    def read_case_temperature(self) -> float | None:
        """The element's case (or tab) temperature in °C from the bench's sensor; None without one or on overload."""
        if self.sensor is None:
            return None
        value = self.sensor.measure_temperature()
        return value if value is not None and math.isfinite(value) else None

    def read_back(self, supply_v: bool) -> tuple[float | None, str, float | None]:
        """(element current, supply mode, supply voltage or None), read once the drop has settled.

        The supply's mode is always read (compliance and a tripped output show only there); its
        voltage only when the plan records it, and its current only when the bench reads the
        current from it. What the supply gives is asked in one message where its profile allows.
        """
        from_supply = self.wiring.current_from == "supply"
        current = None if from_supply else self.read_current()
        mode, amps, volts = self.supply.read_back(current=from_supply, voltage=supply_v)
        return (amps if from_supply else current), mode, volts

    def reverse_current_reader(self, limit_a: float) -> Callable[[], float]:
        """A reader of the reverse current (magnitude) on the finest range that still holds `limit_a`."""
        w, m = self.wiring, self.current_meter
        if w.current_from == "meter" and m is not None:
            m.configure_current(_fitting(m.profile.limits.current_ranges_a, limit_a), m.nplc or 1.0)
            return lambda: abs(_mean(m.read()))
        if w.current_from == "shunt" and m is not None:
            m.configure_voltage(_fitting(m.profile.limits.voltage_ranges_v, limit_a * w.shunt_ohm), m.nplc or 1.0)
            return lambda: abs(_mean(m.read())) / w.shunt_ohm
        return lambda: abs(self.supply.measure_current())

    def expected_mode(self) -> str:
        """CC when the supply forces the current, CV when it holds the input for a load."""
        return "CC" if self.wiring.force == "supply" else "CV"


#: In the load wiring the supply's current limit sits this far above max_current_a, so the
#: load (not the supply) sets the current up to the limit; a supply that reaches its
#: limit then means the current ran past max_current_a.
LOAD_WIRING_SUPPLY_HEADROOM = 1.05


def close_roles(roles: "tuple[BenchRole, ...] | list[BenchRole]") -> None:
    """Close every link; closing after a fault must not hide the fault."""
    for role in roles:
        try:
            role.close()
        except Exception:  # noqa: BLE001
            pass


def supply_limit_for_load_wiring(plan: Plan, supply_profile: Profile) -> float:
    limit = plan.limits.max_current_a * LOAD_WIRING_SUPPLY_HEADROOM
    most = supply_profile.limits.max_current_a
    return min(limit, most) if most else limit


def reverse_limit_a(plan: Plan, supply_profile: Profile | None = None) -> float:
    """The supply's current limit in the reverse step.

    Above the pass limit, so a leaky element reads above it instead of being held
    at it, and at least four times the supply's zero error on current (its
    read-back spec's % of range stands in for its programming accuracy): a limit
    set below that may come out as zero, and the reverse voltage would never be
    applied. Never above the plan's max current.
    """
    wanted = 1.5 * plan.reverse.max_current_a
    spec = _spec_for(supply_profile, "readback_current", plan.limits.max_current_a) if supply_profile else None
    if spec is not None:
        wanted = max(wanted, 4 * spec.range_pct / 100 * spec.range)
    return min(plan.limits.max_current_a, wanted)


def _mean(samples: tuple[float | None, ...]) -> float:
    if not samples or any(s is None for s in samples):
        return math.inf  # an overload: far above any limit
    return sum(samples) / len(samples)  # type: ignore[arg-type]


def _fitting(ranges: tuple[float, ...], needed: float) -> float:
    chosen = _smallest_range(tuple(ranges), needed)
    return chosen if chosen is not None else max(ranges)


def reverse_resolution_a(rig: "Rig", plan: Plan) -> tuple[float, str]:
    """Half-width of the reverse-current reading at zero (the accuracy's % of range), and what reads it."""
    w, limit = rig.wiring, reverse_limit_a(plan, rig.supply.profile)
    if w.current_from == "meter" and rig.current_meter is not None:
        p = rig.current_meter.profile
        spec = _spec_for(p, "dc_current", _fitting(p.limits.current_ranges_a, limit))
        return (spec.range_pct / 100 * spec.range if spec else 0.0), f"current meter {p.name!r}"
    if w.current_from == "shunt" and rig.current_meter is not None:
        p = rig.current_meter.profile
        spec = _spec_for(p, "dc_voltage", _fitting(p.limits.voltage_ranges_v, limit * w.shunt_ohm))
        return (spec.range_pct / 100 * spec.range / w.shunt_ohm if spec else 0.0), f"shunt meter {p.name!r}"
    p = rig.supply.profile
    spec = _spec_for(p, "readback_current", limit)
    return (spec.range_pct / 100 * spec.range if spec else 0.0), f"supply read-back {p.name!r}"


# -- ranges and accuracy ------------------------------------------------------


def _smallest_range(ranges: tuple[float, ...], needed: float) -> float | None:
    fits = [r for r in ranges if r >= needed * (1 - 1e-9)]
    return min(fits) if fits else None


def drop_range_v(plan: Plan, meter_profile: Profile) -> float:
    """The plan's meter range, or the smallest range holding max_drop_v (or the compliance)."""
    if plan.meter.range_v is not None:
        return plan.meter.range_v
    ranges = meter_profile.limits.voltage_ranges_v
    needed = plan.limits.max_drop_v or plan.limits.compliance_v or 1.0
    chosen = _smallest_range(ranges, needed)
    if chosen is None:
        chosen = max(ranges) if ranges else needed
    return chosen


def current_range_a(plan: Plan, meter_profile: Profile) -> float:
    ranges = meter_profile.limits.current_ranges_a
    chosen = _smallest_range(ranges, plan.limits.max_current_a)
    return chosen if chosen is not None else (max(ranges) if ranges else plan.limits.max_current_a)


def shunt_range_v(plan: Plan, wiring: Wiring, meter_profile: Profile) -> float:
    ranges = meter_profile.limits.voltage_ranges_v
    needed = plan.limits.max_current_a * wiring.shunt_ohm
    chosen = _smallest_range(ranges, needed)
    return chosen if chosen is not None else (max(ranges) if ranges else needed)


def _spec_for(profile: Any, function: str, value: float) -> Accuracy | None:
    """The accuracy of `function` on the smallest range that holds `value` (the largest if none does)."""
    specs = [s for s in getattr(profile, "accuracy", ()) if s.function == function]
    if not specs:
        return None
    fits = [s for s in specs if s.range >= value * (1 - 1e-9)]
    return (min(fits, key=lambda s: s.range) if fits else max(specs, key=lambda s: s.range)).accuracy


def measurement_accuracy(rig: Rig, plan: Plan) -> MeasurementAccuracy:
    """The accuracy of the drop and current readings, from the profiles and the ranges used."""
    drop_range = rig.ranges.get("meter") or drop_range_v(plan, rig.meter.profile)
    drop = _spec_for(rig.meter.profile, "dc_voltage", drop_range)
    w = rig.wiring
    if w.current_from == "supply":
        current = _spec_for(rig.supply.profile, "readback_current", plan.limits.max_current_a)
    elif w.current_from == "load":
        current = _spec_for(rig.load.profile, "readback_current", plan.limits.max_current_a)
    elif w.current_from == "meter":
        rng = rig.ranges.get("current_meter") or current_range_a(plan, rig.current_meter.profile)
        current = _spec_for(rig.current_meter.profile, "dc_current", rng)
    else:
        # I = V/R_shunt: the meter's % of range becomes a current through the shunt; the
        # shunt's own tolerance is not known here and is left to the operator's budget.
        rng = rig.ranges.get("current_meter") or shunt_range_v(plan, w, rig.current_meter.profile)
        current = _spec_for(rig.current_meter.profile, "dc_voltage", rng)
        current = current.through_shunt(w.shunt_ohm) if current is not None else None
    reverse = reverse_accuracy(rig, plan) if plan.reverse is not None else None
    return MeasurementAccuracy(drop=drop, current=current, reverse_current=reverse)


def reverse_accuracy(rig: Rig, plan: Plan) -> Accuracy | None:
    """The accuracy of the reverse-current reading on the range `reverse_current_reader` picks, in A."""
    w, limit = rig.wiring, reverse_limit_a(plan, rig.supply.profile)
    if w.current_from == "meter" and rig.current_meter is not None:
        p = rig.current_meter.profile
        spec, scale = _spec_for(p, "dc_current", _fitting(p.limits.current_ranges_a, limit)), 1.0
    elif w.current_from == "shunt" and rig.current_meter is not None:
        p = rig.current_meter.profile
        spec = _spec_for(p, "dc_voltage", _fitting(p.limits.voltage_ranges_v, limit * w.shunt_ohm))
        scale = 1.0 / w.shunt_ohm
    else:
        spec, scale = _spec_for(rig.supply.profile, "readback_current", limit), 1.0
    if spec is None:
        return None
    return Accuracy(spec.reading_pct, spec.range_pct, spec.range * scale)


def finite(value: float | None) -> bool:
    return value is not None and math.isfinite(value)


def open_rig(setup: BenchSetup, *, timeout_s: float | None = None, on_open: Any = None) -> Rig:
    """Connect every role of the bench (no output is switched on); closes what it opened on failure.

    `on_open(role)` is called as soon as each role is connected (the safe-state guard takes
    it there, switching it off and reading it back); the caller then owns every role handed
    to it, also on failure, and closes them after its guard is done.
    """
    from benchlog.instruments.connect import open_role

    profiles = load_role_profiles(setup)  # every profile checked before any link is opened
    opened: dict[str, Any] = {}
    try:
        for name, spec in setup.roles.items():
            role = profile_role(name)
            opened[name] = open_role(role, spec.resource, profiles[name], backend=spec.backend, timeout_s=timeout_s)
            if on_open is not None:
                on_open(opened[name])
    except BaseException:
        if on_open is not None:
            raise
        close_roles(list(opened.values()))
        raise
    return Rig(setup, **opened)


def profile_role(bench_role: str) -> str:
    """The profile role of a bench role: a current meter and a temperature probe's meter are meters."""
    return "meter" if bench_role in ("current_meter", "sensor") else bench_role


def load_role_profiles(setup: BenchSetup) -> dict[str, Profile]:
    """Load and check the profile of every role, so a bad profile is reported as such before connecting.

    A profile name that matches no file is the bench file's fault and is reported at its key;
    a broken profile file is reported at its own file and key.
    """
    from benchlog.badinput import BadInput
    from benchlog.instruments.errors import ProfileError
    from benchlog.instruments.profile import load_profile

    profiles: dict[str, Profile] = {}
    for name, spec in setup.roles.items():
        try:
            profile = load_profile(spec.profile)
        except ProfileError as exc:
            if exc.source == "profile" and exc.where == spec.profile:  # no profile of that name
                raise BadInput(setup.source or "bench", f"[{name}].profile", f"{exc.problem}: {spec.profile!r}",
                               exc.expected) from None
            raise
        if profile.role != profile_role(name):
            raise BadInput(setup.source or "bench", f"[{name}].profile",
                           f"{profile.name!r} is a {profile.role} profile",
                           f"a profile whose role is {profile_role(name)!r}")
        if name == "sensor" and not profile.has("measure_temperature"):
            raise BadInput(setup.source or "bench", "[sensor].profile",
                           f"{profile.name!r} has no [commands].measure_temperature",
                           "a meter profile with a temperature function (measure_temperature)")
        profiles[name] = profile
    return profiles
