"""The electronic load's own input protection: programmed through the Load role, tripped in the simulator.

Over real pyvisa-py to the simulated bench: the supply holds 12 V, the element sits between
supply and load, the load sinks 1 A in CC (about 11 V at its input, about 11 W). A level below
what flows trips the load: its input goes off (read back with its state query), its trip query
reads 1 and the cause's bit is set in STATus:QUEStionable:CONDition? (SCPI-99 questionable
summary bits: 0 voltage, 1 current, 3 power; from memory).
"""

from __future__ import annotations

import pytest

from benchlog.instruments import open_role
from benchlog.instruments.errors import InstrumentError, SafetyLimit


def _powered(bench, **levels):
    supply = open_role("supply", bench.resources["supply"], "sim-supply")
    load = open_role("load", bench.resources["load"], "sim-load")
    supply.set_voltage(12.0)
    supply.set_current_limit(3.0)
    load.set_current(1.0)
    done = load.program_protection(**{"over_current_a": None, "over_power_w": None, "over_voltage_v": None,
                                      **levels})
    supply.set_output(True)
    load.set_input(True)
    return supply, load, done


def _questionable(load) -> int:
    """The load's questionable condition register, asked on its own link (a query outside its profile)."""
    return int(load.transport.query("STATus:QUEStionable:CONDition?"))


@pytest.mark.parametrize("levels, said, bit, trips", [
    ({"over_current_a": 0.5}, "over-current 0.5 A", 1, True),
    ({"over_current_a": 1.5}, "over-current 1.5 A", 1, False),
    ({"over_power_w": 5.0}, "over-power 5 W", 3, True),
    ({"over_power_w": 20.0}, "over-power 20 W", 3, False),
    ({"over_voltage_v": 5.0}, "over-voltage 5 V", 0, True),
    ({"over_voltage_v": 15.0}, "over-voltage 15 V", 0, False),
])
def test_each_level_is_programmed_and_trips_the_load_input_off(sim_bench, levels, said, bit, trips):
    bench = sim_bench("pmos")
    supply, load, done = _powered(bench, **levels)
    try:
        assert done == [said]
        sim = bench.bench.load
        assert (sim.ocp_a, sim.opp_w, sim.ovp_v) == (levels.get("over_current_a"), levels.get("over_power_w"),
                                                     levels.get("over_voltage_v"))  # as the instrument holds them
        assert load.power_is_on() is (not trips) and load.tripped() is trips
        assert _questionable(load) == ((1 << bit) if trips else 0)
        if trips:
            assert supply.power_is_on()  # the load's protection acts on the load alone
    finally:
        load.set_input(False)
        supply.set_output(False)
        supply.close()
        load.close()


def test_a_tripped_load_refuses_its_input_until_cleared(sim_bench):
    bench = sim_bench("pmos")
    supply, load, _ = _powered(bench, over_current_a=0.5)
    try:
        assert load.tripped()
        with pytest.raises(InstrumentError) as info:
            load.set_input(True)
        assert info.value.code == -200 and not bench.bench.load.input_on
        load.clear_protection()
        assert not load.tripped() and _questionable(load) == 0
        load.program_protection(over_current_a=0.0, over_power_w=None, over_voltage_v=None)  # 0: off again
        load.set_input(True)
        assert load.power_is_on() and not load.tripped()
    finally:
        load.set_input(False)
        supply.set_output(False)
        supply.close()
        load.close()


def test_a_level_the_load_refuses_is_an_error_not_a_protection(sim_bench):
    bench = sim_bench("pmos")
    load = open_role("load", bench.resources["load"], "sim-load")
    try:
        with pytest.raises(InstrumentError) as info:
            load.program_protection(over_current_a=None, over_power_w=None, over_voltage_v=500.0)  # > 66 V
        assert info.value.code == -222
        with pytest.raises(SafetyLimit):
            load.program_protection(over_current_a=float("nan"), over_power_w=None, over_voltage_v=None)
    finally:
        load.close()


def test_only_the_operations_a_profile_has_are_offered(sim_bench):
    bench = sim_bench("pmos")
    load = open_role("load", bench.resources["load"], "sim-load")
    try:
        assert load.protection_operations == ("over_current_protection", "over_power_protection",
                                              "over_voltage_protection")
        assert load.can_detect_trip
    finally:
        load.close()
