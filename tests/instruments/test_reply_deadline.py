"""A reply must be complete within the timeout in total, not per byte (the sim's trickle fault).

pyvisa-py's socket read waits anew after every byte; an instrument that sends one byte
every 0.2 s would hold a 15-byte reply for 3 s against a 0.5 s timeout. The transport
abandons the read at its deadline, closes the link, and the guard reopens a fresh one to
switch off and read back.
"""

from __future__ import annotations

import time

import pytest

from benchlog.instruments import open_role, safe_state_guard
from benchlog.instruments.errors import InstrumentTimeout
from benchlog.sim.faults import FaultPlan

TIMEOUT_S = 0.5
BYTE_S = 0.2


def test_a_trickling_reply_is_abandoned_at_its_deadline_and_outputs_go_off(sim_bench):
    bench = sim_bench(faults=FaultPlan(trickle_after=16, trickle_byte_s=BYTE_S, role="supply"))
    supply = open_role("supply", bench.resources["supply"], "sim-supply", timeout_s=TIMEOUT_S)
    load = open_role("load", bench.resources["load"], "sim-load", timeout_s=TIMEOUT_S)
    try:
        guard = safe_state_guard(supply, load, report=None)
        with pytest.raises(InstrumentTimeout) as info:
            with guard:
                supply.set_voltage(12.0)
                supply.set_current_limit(2.0)
                load.set_current(0.5)
                load.set_input(True)
                supply.set_output(True)
                for _ in range(40):
                    started = time.monotonic()
                    supply.measure_voltage()  # "+1.200000E+01\n": 14 bytes, 2.6 s when trickled
        took = time.monotonic() - started
        assert "incomplete after 0.5 s" in str(info.value) and "link closed" in str(info.value)
        # Abandoned near its 0.5 s deadline, not after the 2.6 s the whole reply takes; the bound is
        # loose (1.5 s) so a loaded test machine cannot fail it, yet far below the trickle's time.
        assert took < 1.5
        assert guard.outcome.state == "verified"  # a fresh link switched off and read back
        assert not bench.bench.supply.output_on and not bench.bench.load.input_on
    finally:
        supply.close()
        load.close()


def test_a_normal_reply_still_reads_whole(sim_bench):
    bench = sim_bench()
    supply = open_role("supply", bench.resources["supply"], "sim-supply", timeout_s=TIMEOUT_S)
    try:
        assert supply.idn.model == "SIM-SUPPLY"
        assert supply.power_is_on() is False
        for _ in range(20):  # many in a row: no reply shifts by one or loses a byte
            assert supply.sync() is None
    finally:
        supply.close()
