"""Safety faults, end to end: `benchlog sweep` in one process against `benchlog sim` in another.

Counted in the suite's "faults survived" line:
- an output that does not obey "off": declared `OUTPUTS MAY BE ON` (one line, naming the
  role and resource), exit 1, the run's end record `unverified` -- and the sim, asked from
  the test side, confirms the output really is still on (the statement is true);
- two sessions on one bench: the second is refused at once (one line naming the holder,
  exit 75) and the first completes undisturbed;
- a profile whose connect commands switch an output on: refused before connecting (one
  line, exit 2) and the sim's output, asked from the test side, stays off.
The lost link verified off again after a reopen and the trickling reply are scenarios of
test_faults_survived.py (same tally).
"""

from __future__ import annotations

import json
import re
import time
from pathlib import Path

import pytest

from benchlog.runs import read_events
from benchlog.runs.events import RunFinished

from .procs import (
    OutputState,
    SimProcess,
    child_env,
    messages,
    output_state,
    run_benchlog,
    start_benchlog,
    write_bench_file,
)

PLANS = Path(__file__).parent / "plans"
PMOS_PLAN = PLANS / "pmos-40.toml"
LONG_PLAN = PLANS / "pmos-300.toml"
LOAD_WIRING = {"force": "load", "current_from": "load", "input_v": 12.0}

#: sim options this module injects (test_faults_survived checks every FaultPlan field is exercised)
SIM_OPTIONS_USED = ("--stuck-on-after",)


@pytest.mark.fault_survival("link lost or output not obeying off: verified off or declared unverified")
def test_an_output_that_will_not_switch_off_is_declared_not_hidden(tmp_path):
    with SimProcess("--stuck-on-after", "40", "--fault-role", "supply") as sim:
        bench = write_bench_file(tmp_path / "bench.toml", sim.resources, **LOAD_WIRING)
        done = run_benchlog("sweep", str(PMOS_PLAN), "--bench", str(bench), "--out", str(tmp_path / "runs"),
                            "--json", timeout_s=60)
        state = output_state(sim.resources)  # asked over a fresh pyvisa-py connection, as any client would
    context = f"exit {done.returncode}\nstdout {done.stdout}\nstderr {done.stderr}"
    assert state.supply_output_on and not state.load_input_on, context  # the truth the statement must tell
    assert done.returncode == 1 and "Traceback" not in done.stderr, context
    told = messages(done.stderr)
    supply = sim.resources["supply"]
    assert told == [f"benchlog: OUTPUTS MAY BE ON: supply {supply} did not confirm off (output_state reads ON "
                    "after the off command) -- switch it off by hand now"], context
    assert not any("verified off" in line for line in done.stderr.splitlines()), context  # no contradiction
    summary = json.loads(done.stdout)
    assert summary["safe_state"] == "unverified"
    end = list(read_events(summary["run_file"]))[-1]
    assert isinstance(end, RunFinished) and end.safe_state == "unverified"


@pytest.mark.fault_survival("two sessions on one bench")
def test_a_second_session_on_a_bench_in_use_is_refused_at_once(tmp_path):
    with SimProcess() as sim:
        bench = write_bench_file(tmp_path / "bench.toml", sim.resources, **LOAD_WIRING)
        first = start_benchlog("sweep", str(LONG_PLAN), "--bench", str(bench), "--out", str(tmp_path / "a"),
                               "--json")
        try:
            deadline = time.monotonic() + 30
            while time.monotonic() < deadline and not list((tmp_path / "a").glob("*.run")):
                assert first.poll() is None, first.stderr.read()
                time.sleep(0.05)
            started = time.monotonic()
            second = run_benchlog("sweep", str(PMOS_PLAN), "--bench", str(bench), "--out", str(tmp_path / "b"),
                                  "--json", timeout_s=60)
            refused_in_s = time.monotonic() - started
            out, err = first.communicate(timeout=120)
        finally:
            if first.poll() is None:
                first.kill()
        state = output_state(sim.resources)
    context = f"second: exit {second.returncode}\n{second.stderr}\nfirst: {err}"
    assert second.returncode == 75, context
    told = messages(second.stderr)
    assert len(told) == 1 and re.match(rf"benchlog: TCPIP0::127\.0\.0\.1::\d+::SOCKET: in use by PID {first.pid} "
                                       r"on .* one sweep per bench", told[0]), context
    assert second.stdout == "" and not (tmp_path / "b").exists(), context  # nothing started, nothing recorded
    assert refused_in_s < 20, context  # at once: not after waiting for the first sweep (loose bound)
    summary = json.loads(out)
    assert first.returncode == 0 and summary["outcome"] == "complete" and summary["points"] == 299, context
    assert summary["safe_state"] == "verified"
    assert state == OutputState(supply_output_on=False, load_input_on=False)


@pytest.mark.fault_survival("connect commands that switch on")
def test_a_profile_that_switches_on_at_connect_is_refused_before_connecting(tmp_path):
    from benchlog.instruments.profile import load_profile

    folder = tmp_path / "profiles"
    folder.mkdir()
    text = load_profile("sim-supply").path.read_text()
    text = text.replace('name = "sim-supply"', 'name = "eager-supply"').replace(
        'connect_commands = ["*CLS", "OUTPut:POLarity NORMal"]',
        'connect_commands = ["*CLS", "OUTPut:STATe ON", "SOURce:VOLTage 25"]')
    (folder / "eager-supply.toml").write_text(text)
    with SimProcess() as sim:
        bench = write_bench_file(tmp_path / "bench.toml", sim.resources, **LOAD_WIRING)
        bench.write_text(bench.read_text().replace('profile = "sim-supply"', 'profile = "eager-supply"'))
        env = dict(child_env(), BENCHLOG_PROFILE_PATH=str(folder))
        import subprocess
        import sys

        done = subprocess.run([sys.executable, "-m", "benchlog", "sweep", str(PMOS_PLAN), "--bench", str(bench),
                               "--out", str(tmp_path / "runs"), "--json"], capture_output=True, text=True,
                              env=env, timeout=60, stdin=subprocess.DEVNULL)
        state = output_state(sim.resources)
    context = f"exit {done.returncode}\n{done.stderr}"
    assert done.returncode == 2 and "Traceback" not in done.stderr, context
    told = messages(done.stderr)
    assert len(told) == 1 and "eager-supply.toml: [link].connect_commands[1]: switches an output or input on" \
        in told[0], context
    assert state == OutputState(supply_output_on=False, load_input_on=False)
    assert not (tmp_path / "runs").exists()
