"""The shared `sim_bench` fixture starts a bench that a plain pyvisa-py client can identify."""

from __future__ import annotations

import pyvisa


def test_fixture_serves_three_instruments(sim_bench):
    running = sim_bench("rectifier", seed=2)
    assert set(running.resources) == {"supply", "load", "meter"}
    rm = pyvisa.ResourceManager("@py")
    try:
        for role, model in (("supply", "SIM-SUPPLY"), ("load", "SIM-LOAD"), ("meter", "SIM-METER")):
            inst = rm.open_resource(running.resources[role], read_termination="\n", write_termination="\n",
                                    timeout=2000)
            assert inst.query("*IDN?").split(",")[:2] == ["BENCHLOG", model]
            inst.close()
    finally:
        rm.close()
