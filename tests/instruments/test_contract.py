"""One contract suite for the bench roles, run over every implementation the sweep may be handed.

The implementations:
- "sim": the real roles over pyvisa-py and loopback sockets to the simulated bench;
- "scripted": the real roles over `ScriptedTransport`, whose replies follow what was sent;
- "fake": the stand-ins of the sweep's unit tests (`tests/sweep/fakes.py`);
- "hardware": the real roles on the bench file named by BENCHLOG_HARDWARE (marked `hardware`,
  skipped unless that variable is set; the checks that switch power on never run there: power
  into a real board is switched by a plan the operator reviewed, under the lab's own safety rules).

The contract is `benchlog.instruments.contract`: the members and their argument names, setpoints
beyond the profile refused with `SafetyLimit`, the output or input off after `safe_state()`.
"""

from __future__ import annotations

import inspect
import math
import os
import re
from dataclasses import dataclass
from typing import Any, Callable

import pytest

from benchlog.instruments import SafetyLimit, load_profile, open_role
from benchlog.instruments.contract import SUPPLY_MODES, BenchRole, LoadRole, MeterRole, SupplyRole
from benchlog.instruments.profile import Profile
from benchlog.instruments.roles import Load, Meter, Supply
from benchlog.scpi.replies import Idn

from ..sweep.fakes import FakeClock, fake_rig
from .scripted import ScriptedTransport


@dataclass
class Roles:
    supply: Any
    load: Any
    meter: Any
    can_power: bool = True  # False on real hardware: these tests never switch its power on


# -- the implementations ------------------------------------------------------


def _last(sent: list[str], pattern: str) -> re.Match | None:
    for command in reversed(sent):
        match = re.fullmatch(pattern, command)
        if match:
            return match
    return None


def _scripted_roles() -> Roles:
    """Real roles on scripted links; the replies depend on what the role sent (that is what is checked)."""
    st = ScriptedTransport("BENCHLOG,SIM-SUPPLY,7,1.0", resource="SCRIPTED::supply")

    def supply_on() -> bool:
        last = _last(st.sent, r"OUTPut:STATe (ON|OFF)")
        return last is not None and last.group(1) == "ON"

    st.replies.update({
        # CC bit 10 of the operation condition register while on, nothing while off (as the sim-supply profile decodes)
        "STATus:OPERation:CONDition?": lambda: str(1 << 10) if supply_on() else "0",
        "MEASure:VOLTage:DC?": lambda: "1.000" if supply_on() else "0.000",
        "MEASure:CURRent:DC?": lambda: "0.100" if supply_on() else "0.000",
        "OUTPut:PROTection:TRIPped?": "0",
        "*OPC?": "1",
    })
    lt = ScriptedTransport("BENCHLOG,SIM-LOAD,3,1.0", resource="SCRIPTED::load")
    lt.replies.update({"MEAS:VOLT?": "0.0", "MEAS:CURR?": "0.0", "*OPC?": "1"})
    mt = ScriptedTransport("BENCHLOG,SIM-METER,5,1.0", resource="SCRIPTED::meter")

    def fetch() -> str:
        count = _last(mt.sent, r"SAMPle:COUNt (\d+)")
        return ",".join(["+1.234E-03"] * (int(count.group(1)) if count else 1))

    mt.replies.update({"FETCh?": fetch, "*OPC?": "1"})
    return Roles(Supply(st, load_profile("sim-supply")), Load(lt, load_profile("sim-load")),
                 Meter(mt, load_profile("sim-meter")))


def _sim_roles(sim_bench) -> Roles:
    running = sim_bench("rectifier", seed=2)
    r = running.resources
    return Roles(open_role("supply", r["supply"], "sim-supply"), open_role("load", r["load"], "sim-load"),
                 open_role("meter", r["meter"], "sim-meter"))


def _fake_roles() -> Roles:
    rig, _ = fake_rig(FakeClock())
    return Roles(rig.supply, rig.load, rig.meter)


def _hardware_roles() -> Roles:
    from benchlog.sweep.bench_file import load_bench

    setup = load_bench(os.environ["BENCHLOG_HARDWARE"])
    opened: dict[str, Any] = {}
    try:
        for name in ("supply", "load", "meter"):
            if name in setup.roles:
                spec = setup.roles[name]
                opened[name] = open_role(name, spec.resource, spec.profile, backend=spec.backend)
    except BaseException:
        for role in opened.values():
            role.close()
        raise
    return Roles(opened.get("supply"), opened.get("load"), opened.get("meter"), can_power=False)


IMPLEMENTATIONS = ["sim", "scripted", "fake", pytest.param("hardware", marks=pytest.mark.hardware)]


@pytest.fixture(params=IMPLEMENTATIONS)
def roles(request, sim_bench):
    kind = request.param
    made: Roles = {"sim": lambda: _sim_roles(sim_bench), "scripted": _scripted_roles, "fake": _fake_roles,
                   "hardware": _hardware_roles}[kind]()
    yield made
    for role in (made.supply, made.load, made.meter):
        if role is not None:
            role.safe_state()
            role.close()


def _present(role: Any, name: str) -> Any:
    if role is None:
        pytest.skip(f"this bench has no {name}")
    return role


def _power(roles: Roles) -> None:
    if not roles.can_power:
        pytest.skip("switches power on: never run by the test suite against real instruments")


# -- members and their argument names ----------------------------------------------


def _protocol_methods(protocol: type) -> dict[str, Callable]:
    methods: dict[str, Callable] = {}
    for klass in reversed(protocol.__mro__):
        if klass in (object,) or not getattr(klass, "_is_protocol", False):
            continue
        for name, value in vars(klass).items():
            if inspect.isfunction(value) and not name.startswith("_"):
                methods[name] = value
    return methods


def _protocol_attributes(protocol: type) -> list[str]:
    names: list[str] = []
    for klass in protocol.__mro__:
        if getattr(klass, "_is_protocol", False):
            names += [n for n in getattr(klass, "__annotations__", {}) if not n.startswith("_")]
            names += [n for n, v in vars(klass).items() if isinstance(v, property)]
    return names


def _check_keeps(role: Any, protocol: type) -> None:
    assert isinstance(role, protocol), f"{type(role).__name__} lacks a member of {protocol.__name__}"
    for name, declared in _protocol_methods(protocol).items():
        wanted = [(p.name, p.kind) for p in inspect.signature(declared).parameters.values()][1:]
        got = [(p.name, p.kind) for p in inspect.signature(getattr(role, name)).parameters.values()]
        assert got == wanted, f"{type(role).__name__}.{name}{got} differs from {protocol.__name__}.{name}{wanted}"
    for name in _protocol_attributes(protocol):
        assert hasattr(role, name), f"{type(role).__name__} has no {name}"
    assert isinstance(role.profile, Profile) and isinstance(role.idn, Idn) and isinstance(role.resource, str)


def test_the_protocols_list_what_the_sweep_uses():
    # The suite below is only as good as its list of members: these are the calls the sweep makes.
    assert {"set_voltage", "set_current_limit", "set_output", "measure_current", "measure_voltage", "mode",
            "tripped", "set_reversed", "sync", "check_errors", "safe_state", "close"} <= set(_protocol_methods(SupplyRole))
    assert {"set_current", "set_input", "measure_current", "sync"} <= set(_protocol_methods(LoadRole))
    assert {"configure_voltage", "configure_current", "set_samples", "read"} <= set(_protocol_methods(MeterRole))
    assert {"output_on", "can_report_mode", "can_reverse", "resource", "profile", "idn"} <= set(
        _protocol_attributes(SupplyRole))


def test_an_object_missing_a_member_does_not_keep_the_contract():
    class NoRead:
        resource, profile, idn, nplc, samples = "X", None, None, None, 1

        def check_errors(self, after=None): ...
        def check_new_errors(self, after=None): ...
        def sync(self): ...
        def safe_state(self): ...
        def close(self): ...
        def configure_voltage(self, range_v, nplc): ...
        def configure_current(self, range_a, nplc): ...
        def set_samples(self, count): ...

    assert isinstance(NoRead(), BenchRole) and not isinstance(NoRead(), MeterRole)


def test_each_role_keeps_its_protocol(roles):
    _check_keeps(_present(roles.supply, "supply"), SupplyRole)
    _check_keeps(_present(roles.load, "load"), LoadRole)
    _check_keeps(_present(roles.meter, "meter"), MeterRole)


# -- the supply -----------------------------------------------------------------------


def test_supply_refuses_setpoints_beyond_its_profile_before_anything_changes(roles):
    supply = _present(roles.supply, "supply")
    most_v = supply.profile.limits.max_voltage_v
    most_a = supply.profile.limits.max_current_a
    for bad in (most_v * 1.01, -0.1, math.nan, math.inf, "5", True):
        with pytest.raises(SafetyLimit):
            supply.set_voltage(bad)
    for bad in (most_a * 1.01, -0.001, math.nan):
        with pytest.raises(SafetyLimit):
            supply.set_current_limit(bad)
    assert supply.output_on is False


def test_supply_output_on_then_safe_state_reads_back_off(roles):
    _power(roles)
    supply = _present(roles.supply, "supply")
    assert supply.mode() in ("OFF", "UNKNOWN")
    supply.set_voltage(1.0)
    supply.set_current_limit(0.1)
    supply.sync()
    supply.set_output(True)
    assert supply.output_on is True
    assert supply.mode() in ("CV", "CC")
    current, voltage = supply.measure_current(), supply.measure_voltage()
    mode, current_back, voltage_back = supply.read_back(current=True, voltage=True)  # the same, asked together
    assert mode in ("CV", "CC") and isinstance(current_back, float) and isinstance(voltage_back, float)
    assert supply.read_back() == (supply.mode(), None, None)
    assert isinstance(current, float) and isinstance(voltage, float) and math.isfinite(current)
    assert supply.tripped() is False
    supply.safe_state()
    assert supply.output_on is False
    # read back, not assumed: the instrument itself must report the output off
    assert supply.mode() == "OFF"
    assert supply.mode() in SUPPLY_MODES


def test_supply_refuses_a_polarity_change_while_on(roles):
    _power(roles)
    supply = _present(roles.supply, "supply")
    assert supply.can_reverse
    supply.set_voltage(0.5)
    supply.set_current_limit(0.05)
    supply.set_output(True)
    with pytest.raises(SafetyLimit):
        supply.set_reversed(True)
    assert supply.reversed is False
    supply.set_output(False)
    supply.set_reversed(True)
    assert supply.reversed is True
    supply.set_reversed(False)
    assert supply.reversed is False


# -- the load -------------------------------------------------------------------------


def test_load_refuses_currents_beyond_its_profile(roles):
    load = _present(roles.load, "load")
    for bad in (load.profile.limits.max_current_a * 1.01, -0.5, math.nan, None):
        with pytest.raises(SafetyLimit):
            load.set_current(bad)
    assert load.input_on is False


def test_load_input_on_then_safe_state_leaves_it_off(roles):
    _power(roles)
    load = _present(roles.load, "load")
    load.set_current(0.05)
    load.sync()
    load.set_input(True)
    assert load.input_on is True
    assert isinstance(load.measure_current(), float) and isinstance(load.measure_voltage(), float)
    load.safe_state()
    assert load.input_on is False


# -- the meter ------------------------------------------------------------------------


def test_meter_takes_only_its_profiles_ranges_and_nplc(roles):
    meter = _present(roles.meter, "meter")
    limits = meter.profile.limits
    with pytest.raises(SafetyLimit):
        meter.configure_voltage(limits.voltage_ranges_v[0] * 0.7, 1.0)  # between ranges: not a range
    with pytest.raises(SafetyLimit):
        meter.configure_current(max(limits.current_ranges_a) * 2, 1.0)
    too_many = (limits.nplc_max or max(limits.nplc_choices)) * 10
    with pytest.raises(SafetyLimit):
        meter.configure_voltage(limits.voltage_ranges_v[-1], too_many)
    for bad in (0, limits.max_samples + 1, 2.5, True):
        with pytest.raises(SafetyLimit):
            meter.set_samples(bad)


def test_meter_reads_as_many_samples_as_set(roles):
    meter = _present(roles.meter, "meter")
    top = meter.profile.limits.voltage_ranges_v[-1]  # an unknown signal is safest on the highest range
    meter.configure_voltage(top, 1.0)
    assert meter.nplc == 1.0
    for count in (1, 3):
        meter.set_samples(count)
        assert meter.samples == count
        values = meter.read()
        assert isinstance(values, tuple) and len(values) == count
        assert all(v is None or (isinstance(v, float) and abs(v) <= top * 1.2) for v in values)
