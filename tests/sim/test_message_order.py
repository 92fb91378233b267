"""One connection's messages are executed in the order sent, so `*OPC?` after a setpoint means it is applied.

IEEE 488.2 10.18: `*OPC?` places 1 in the output queue when all pending
operations are complete. The sim executes each message before it reads the
next one from the same connection, so by the time the reply arrives the
setpoint is in effect for every other socket too (the sweep runner relies on it).
"""

from __future__ import annotations

import socket

import pytest

from benchlog.scpi.replies import parse_number


def _no_delay(inst):
    """TCP_NODELAY, as benchlog's transport sets it: a query right after a write is not held by Nagle."""
    inst.visalib.sessions[inst.session].interface.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
    return inst


@pytest.mark.parametrize("latency_s", [0.0, 0.002])
def test_opc_reply_means_the_setpoint_is_applied(sim_bench, clients, latency_s):
    running = sim_bench("resistor", seed=2, latency_s=latency_s)
    supply, load, meter = (_no_delay(clients.open(running.resources[r])) for r in ("supply", "load", "meter"))
    supply.write("VOLT 5")
    supply.write("CURR 3")
    supply.write("OUTP ON")
    load.write("INP ON")
    meter.write("CONF:VOLT:DC 1")
    assert supply.query("*OPC?") == "1" and load.query("*OPC?") == "1" and meter.query("*OPC?") == "1"
    r_ohm = running.truth()["r_on_ohm"]
    previous = None
    for k in range(40):
        setpoint = 0.5 + 0.025 * k
        load.write(f"CURR {setpoint}")
        assert load.query("*OPC?") == "1"
        # no wait: the setting is already the instrument's state, and the meter on its own socket sees it
        assert running.bench.load.current_set_a == setpoint
        drop = parse_number(meter.query("READ?"))
        # the load's programming error (0.1 % of setting + 0.05 % of 30 A, sim specs) is fixed,
        # so the absolute check is loose but each step must rise by one whole 25 mA step
        assert drop == pytest.approx(r_ohm * setpoint, abs=r_ohm * 0.02), (k, drop)
        if previous is not None:
            assert drop - previous == pytest.approx(r_ohm * 0.025, rel=0.05), (k, drop, previous)
        previous = drop
