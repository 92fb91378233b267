"""The simulated instruments survive any input: arbitrary messages give replies or queued errors only."""

from __future__ import annotations

import pytest
from hypothesis import given, settings, strategies as st

from benchlog.scpi.replies import parse_error_entry
from benchlog.sim.bench import SimBench
from benchlog.sim.config import SimConfig

_BENCH = SimBench(SimConfig(element="pmos", current_meter=True), clock=lambda: 0.0)
_WORDS = st.sampled_from(["VOLT", "CURR", "OUTP", "INP", "MEAS:VOLT?", "READ?", "CONF:VOLT", "SAMP:COUN",
                          "VOLT:NPLC", "*RST", "*IDN?", "SYST:ERR?", "OUTP:POL", "FUNC", "ON", "OFF", "MAX",
                          "1e3", "-5", "0.1", "INV", ";", ",", " ", ":", "?", '"', "NAN", "9.9E37"])


@pytest.mark.slow
@settings(max_examples=300, deadline=None)
@given(st.one_of(st.text(max_size=80), st.lists(_WORDS, max_size=12).map("".join)))
def test_any_message_yields_a_reply_or_a_queued_error(message):
    for device in _BENCH.devices().values():
        with _BENCH.lock:
            reply = device.execute(message)
        assert reply is None or isinstance(reply, str) and "\n" not in reply
        for _ in range(25):
            entry = parse_error_entry(device.execute("SYST:ERR?"))
            if not entry.is_error:
                break
        device.execute("*RST")


def test_default_bench_listens_on_loopback_only(sim_bench):
    running = sim_bench("pmos")
    assert all(server.listener.getsockname()[0] == "127.0.0.1" for server in running._servers)
    assert all("::127.0.0.1::" in r for r in running.resources.values())


def test_an_endless_message_is_refused_with_223(sim_bench, clients):
    running = sim_bench("resistor")
    supply = clients.open(running.resources["supply"])
    supply.write_raw(b"X" * 70000)
    supply.write("")  # the terminator ends the refused remainder: one harmless empty message
    entry = parse_error_entry(supply.query("SYST:ERR?"))
    assert entry.code == -223
