"""SIGTERM and Ctrl-C delivered to a real process that holds the bench: the guard switches everything off.

The simulated bench runs in this (the test) process so its in-process state can be read;
a child process connects to it over real sockets through pyvisa-py, switches power on
inside `safe_state_guard` and is then signalled.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]

CHILD = textwrap.dedent(
    """
    import sys, time
    from benchlog.instruments import open_role, safe_state_guard
    supply = open_role("supply", sys.argv[1], "sim-supply")
    load = open_role("load", sys.argv[2], "sim-load")
    with safe_state_guard(supply, load):
        supply.set_voltage(12.0)
        supply.set_current_limit(1.0)
        load.set_current(0.5)
        load.set_input(True)
        supply.set_output(True)
        print("on", flush=True)
        time.sleep(60)
    print("not reached", flush=True)
    """
)


def _start_child(sim_bench) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    child = subprocess.Popen(
        [sys.executable, "-c", CHILD, sim_bench.resources["supply"], sim_bench.resources["load"]],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env, cwd=REPO,
    )
    line = child.stdout.readline().strip()
    if line != "on":
        child.kill()
        pytest.fail(f"child did not switch on: {line!r} {child.stderr.read()}")
    return child


@pytest.mark.parametrize("signum, expected_rc", [(signal.SIGTERM, 143), (signal.SIGINT, None)])
def test_signal_to_a_sweeping_process_leaves_outputs_off(sim_bench, signum, expected_rc):
    running = sim_bench()
    child = _start_child(running)
    try:
        state = running.bench
        assert state.supply.output_on and state.load.input_on  # really on before the signal
        child.send_signal(signum)
        out, err = child.communicate(timeout=30)
    finally:
        if child.poll() is None:
            child.kill()
    assert "not reached" not in out
    if expected_rc is not None:
        assert child.returncode == expected_rc, err
    else:
        assert child.returncode != 0 and "KeyboardInterrupt" in err
    assert state.supply.output_on is False and state.load.input_on is False
    assert state.supply.voltage_set_v == 0.0 and state.load.current_set_a == 0.0
