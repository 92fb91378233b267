"""Each injected fault is visible from a plain pyvisa-py client, and only on the role it is scoped to."""

from __future__ import annotations

import time

import pytest
from pyvisa.errors import VisaIOError

from benchlog.scpi.errors import ScpiReplyError
from benchlog.scpi.replies import parse_bool, parse_error_entry, parse_idn, parse_number
from benchlog.sim.faults import FaultCounter, FaultPlan

from .visa_helpers import errors


def test_dropped_connection_resets_and_a_new_connection_works(sim_bench, clients):
    running = sim_bench("pmos", faults=FaultPlan(drop_after_commands=2, role="meter"))
    meter = clients.open(running.resources["meter"])
    meter.write("CONF:VOLT 1")
    meter.query("*IDN?")
    with pytest.raises(OSError):  # the sim resets the connection (TCP RST): ConnectionResetError
        meter.query("READ?")
    again = clients.open(running.resources["meter"])
    assert parse_idn(again.query("*IDN?")).model == "SIM-METER"  # one-shot: reconnecting recovers
    assert parse_number(again.query("VOLT:RANG?")) == 1.0  # settings live in the instrument


def test_extra_latency_past_the_timeout_is_a_timeout(sim_bench, clients):
    running = sim_bench("resistor", faults=FaultPlan(extra_latency_s=0.4, role="supply"))
    supply = clients.open(running.resources["supply"], timeout_ms=150)
    with pytest.raises(VisaIOError) as info:
        supply.query("*IDN?")
    assert "TMO" in str(info.value) or "imeout" in str(info.value)
    supply.timeout = 2000
    time.sleep(0.4)  # the late reply arrives after the client gave up and is stale now
    stale = supply.read()
    assert parse_idn(stale).model == "SIM-SUPPLY"
    load = clients.open(running.resources["load"], timeout_ms=150)
    assert parse_idn(load.query("*IDN?")).model == "SIM-LOAD"  # other roles are not slowed


def test_garbage_reply_is_not_a_number(sim_bench, clients):
    running = sim_bench("pmos", faults=FaultPlan(garbage_after=1))
    meter = clients.open(running.resources["meter"])
    meter.write("CONF:VOLT 1")
    with pytest.raises(ScpiReplyError):
        parse_number(meter.query("READ?"))
    assert parse_number(meter.query("READ?")) is not None  # the next reply is sane again


def test_hung_query_times_out_and_the_next_one_is_answered(sim_bench, clients):
    running = sim_bench("pmos", faults=FaultPlan(hang_after=0, role="supply"))
    supply = clients.open(running.resources["supply"], timeout_ms=200)
    supply.write("VOLT 2")  # a command without reply does not spend the fault
    with pytest.raises(VisaIOError):
        supply.query("VOLT?")
    assert parse_number(supply.query("VOLT?")) == 2.0


def test_spurious_error_appears_in_the_queue(sim_bench, clients):
    running = sim_bench("pmos", faults=FaultPlan(queue_error_after=1, role="load"))
    load = clients.open(running.resources["load"])
    load.write("CURR 1")
    load.write("INP OFF")
    entry = parse_error_entry(load.query("SYST:ERR?"))
    assert entry.code == -300 and "injected" in entry.text
    supply = clients.open(running.resources["supply"])
    supply.write("VOLT 1")
    supply.write("VOLT 1")
    assert errors(supply) == []


def test_supply_trips_into_protection(sim_bench, clients):
    running = sim_bench("pmos", faults=FaultPlan(supply_trip_after=2))
    supply = clients.open(running.resources["supply"])
    supply.write("VOLT 12;CURR 1")
    supply.write("OUTP ON")
    assert supply.query("OUTP?") == "0"  # third message: the trip has switched the output off
    assert parse_bool(supply.query("OUTP:PROT:TRIP?"))
    assert running.bench.supply.output_on is False and running.bench.supply.tripped
    supply.write("OUTP:PROT:CLE")
    assert not parse_bool(supply.query("OUTP:PROT:TRIP?"))


def test_fault_counter_fires_once_and_waits_for_a_query():
    counter = FaultCounter(FaultPlan(hang_after=1, drop_after_commands=3), "meter")
    assert counter.next_message(True) == set()
    assert counter.next_message(False) == set()  # hang waits for a message with a reply
    assert counter.next_message(True) == {"hang"}
    assert counter.next_message(True) == {"drop"}
    assert counter.next_message(True) == set()


def test_fault_plan_validation():
    with pytest.raises(ValueError):
        FaultPlan(drop_after_commands=-1)
    with pytest.raises(ValueError):
        FaultPlan(role="oscilloscope")
    assert not FaultCounter(FaultPlan(supply_trip_after=0), "meter")._pending["trip"]
